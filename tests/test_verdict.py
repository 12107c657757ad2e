"""The verdict rule of issue 10, end to end through the command line and its exit code.

Builds here use the no-load rule (no resistances), so every throttle follows
from rotor rate = Kv × throttle × pack voltage by hand (derived), and only the
orders the test names (``[[check.orders]]``, no families) excite the modes.
Figures are invented for the tests; no value here stands in for a reference.
"""

from __future__ import annotations

import json
import math

import pytest

# Kv 1950 rpm/V = 32.5 Hz/V; 6 lipo cells nominal 22.2 V (REFERENCES.md §7): rotor = 721.5 Hz × throttle (derived)
KV_HZ_PER_V = 1950 / 60
V_NOMINAL = 6 * 3.7


def build_text(mode_hz: float, *, weight: float = 1.0, extra_flight: str = "", damping: float = 0.03,
               states: str = '["nominal"]', hover: str = 'hover = "30 %"', mass: str = "700 g",
               prop_extra: str = "") -> str:
    return f"""
name = "verdict test"
[frame]
motors = 4
mass = "{mass}"
[[frame.modes]]
name = "arm flap"
frequency = "{mode_hz} Hz"
damping = {damping}
[motor]
kv = "1950 rpm/V"
poles = 14
slots = 12
[prop]
diameter = "5 in"
blades = 3
{prop_extra}
[battery]
cells = 6
[flight]
idle = "4 %"
cruise = "70 %"
{hover}
{extra_flight}
[check]
pack_states = {states}
families = []
[[check.orders]]
order = 1
label = "shaft line"
weight = {weight}
"""


def _check(runner, write_build, text, *args):
    path = write_build(text)
    res = runner.invoke(__import__("clashcheck.cli", fromlist=["main"]).main,
                        ["check", str(path), "--format", "json", *args])
    return res, (json.loads(res.stdout) if res.stdout.strip().startswith("{") else None)


def test_passage_only_is_watch_and_exits_0(runner, write_build):
    # hover 30 % → 216.5 Hz; cruise 70 % → 505 Hz.  A 360 Hz mode (ζ 0.03, margin 15.9 %) is met
    # between 42 % and 58 % throttle: crossed between hover and cruise, far from both (derived)
    res, data = _check(runner, write_build, build_text(360.0))
    assert res.exit_code == 0, res.output
    assert data["verdict"] == "watch"
    (w,) = data["windows"]
    sm = data["modes"][0]["required_margin"]
    assert w["throttle_low"] == pytest.approx(360 * (1 - sm) / (KV_HZ_PER_V * V_NOMINAL), rel=1e-9)
    assert w["lies_in"] == "passage" and w["level"] == "watch" and w["significant"]
    assert data["modes"][0]["lies_in"] == "passage"
    assert data["modes"][0]["reason"]["lies_in"] == "passage"
    assert data["findings"] == []
    # --fail-on watch turns it into exit 1
    res, _ = _check(runner, write_build, build_text(360.0), "--fail-on", "watch")
    assert res.exit_code == 1


def test_rotor_line_on_a_mode_at_hover_is_clash_and_exits_1(runner, write_build):
    # the mode sits on the 1× line at hover (30 % → 216.5 Hz)
    res, data = _check(runner, write_build, build_text(0.30 * KV_HZ_PER_V * V_NOMINAL))
    assert res.exit_code == 1
    assert data["verdict"] == "clash"
    (w,) = data["windows"]
    assert w["lies_in"] == "dwell" and w["dwell_zone"] == "hover" and w["level"] == "clash"
    assert w["dwell_low"] == pytest.approx(0.27) and w["dwell_high"] == pytest.approx(0.33)   # ± 3 % default
    assert w["significance"] == pytest.approx(1 / (2 * 0.03), rel=1e-3)   # M(1) = 1/(2ζ), Rao §3.4
    assert data["modes"][0]["lies_in"] == "dwell"


def test_table_reason_names_hover_margin_and_requirement(runner, write_build):
    from clashcheck.cli import main

    path = write_build(build_text(0.31 * KV_HZ_PER_V * V_NOMINAL))
    res = runner.invoke(main, ["check", str(path)])
    assert res.exit_code == 1
    line = next(s for s in res.stdout.splitlines() if s.strip().startswith("- arm flap (clash)"))
    assert "hover (27 %–33 %" in line and "shaft line" in line and "3.2 % from it" in line
    assert "asks for 15.9 %" in line
    assert "hover rotor rate" in res.stdout and "rpm" in res.stdout


def test_a_weak_order_alone_at_hover_is_no_clash(runner, write_build):
    # weight 0.01 × M(1) = 0.01 × 16.7 = 0.17 < 1: reported, at watch at most
    res, data = _check(runner, write_build, build_text(0.30 * KV_HZ_PER_V * V_NOMINAL, weight=0.01))
    assert res.exit_code == 0
    assert data["verdict"] == "watch"
    (w,) = data["windows"]
    assert w["lies_in"] == "dwell" and not w["significant"] and w["level"] == "watch"


def test_a_weak_order_in_passage_only_is_clear(runner, write_build):
    res, data = _check(runner, write_build, build_text(360.0, weight=0.01))
    assert res.exit_code == 0 and data["verdict"] == "clear"
    assert data["windows"][0]["level"] == "clear"        # reported, counts for nothing
    assert data["modes"][0]["danger_ranges"] == []


def test_cannot_hover_at_the_empty_pack_exits_1(runner, write_build):
    # computed hover: n = √(m g / (N C_T ρ D⁴)) (REFERENCES.md §5); no-load rule d = n/(Kv·V).
    # Choose m so that the full pack (25.2 V) reaches n and the empty one (21.0 V) does not (derived)
    ct, rho, d_m = 0.12, 1.225, 5 * 0.0254
    n = KV_HZ_PER_V * 0.5 * (25.2 + 21.0)
    mass = n**2 * 4 * ct * rho * d_m**4 / 9.80665
    text = build_text(900.0, states='["full", "nominal", "empty"]', hover="",
                      mass=f"{1000 * mass:.3f} g", prop_extra=f"thrust_coefficient = {ct}")
    res, data = _check(runner, write_build, text)
    assert res.exit_code == 1
    assert data["verdict"] == "clash"
    kinds = {(f["kind"], f["pack_state"], f["level"]) for f in data["findings"]}
    assert ("cannot_hover", "empty", "clash") in kinds and not any(s == "full" for _k, s, _l in kinds)
    assert data["hover"]["full"]["can_hover"] is True
    from clashcheck.cli import main

    table = runner.invoke(main, ["check", str(write_build(text, name="b2.toml"))]).stdout
    assert "Findings" in table and "cannot hover at the empty pack" in table
    md = runner.invoke(main, ["check", str(write_build(text, name="b3.toml")), "--format", "markdown"]).stdout
    assert "## Findings" in md and "cannot hover at the empty pack" in md


def test_cruise_dwell_and_spread_keys(runner, write_build):
    # a window at cruise (70 % → 505 Hz) is passage by default and dwell for a cruiser
    mode = 0.70 * KV_HZ_PER_V * V_NOMINAL
    _res, data = _check(runner, write_build, build_text(mode))
    assert data["verdict"] == "watch"
    res, data = _check(runner, write_build, build_text(mode, extra_flight="cruise_dwell = true"))
    assert res.exit_code == 1 and data["windows"][0]["dwell_zone"] == "cruise"
    assert data["dwell"]["cruise"] is True
    # a spread wide enough to reach the 360 Hz window from hover makes it dwell
    _res, data = _check(runner, write_build, build_text(360.0, extra_flight='dwell_spread = "15 %"'))
    assert data["verdict"] == "clash" and data["dwell"]["spread"] == pytest.approx(0.15)


def test_measured_dwell_replaces_the_defaults(runner, write_build, tmp_path):
    # the recording says the craft spends most of its time at 50–60 %: the 42–58 % window is in it
    from clashcheck.cli import main

    modes = tmp_path / "measured.toml"
    modes.write_text(
        '[[frame.modes]]\nname = "plate"\nfrequency = "900 Hz"\ndamping = 0.05\n'
        "[dwell]\nthrottle = [0.0, 0.2, 0.3, 0.5, 0.6, 1.0]\nshare = [0.02, 0.03, 0.15, 0.7, 0.10]\n",
        encoding="utf-8")
    path = write_build(build_text(360.0))
    res = runner.invoke(main, ["check", str(path), "--modes", str(modes), "--format", "json"])
    data = json.loads(res.stdout)
    assert res.exit_code == 1 and data["verdict"] == "clash"
    assert data["dwell"]["source"] == "measured"
    assert data["dwell"]["zones"]["nominal"] == [{"what": "measured", "throttle_low": 0.3, "throttle_high": 0.6}]
    assert any("throttle occupancy" in n for n in data["notes"])
    table = runner.invoke(main, ["check", str(path), "--modes", str(modes)]).stdout
    assert "measured throttle occupancy" in table


@pytest.mark.parametrize("dwell, needle", [
    ("throttle = [0.0, 0.5]\nshare = [0.5, 0.5]", "one share per band"),
    ("throttle = [0.0, 0.5, 0.4]\nshare = [0.5, 0.5]", "increasing band edges"),
    ("throttle = [0.0, 0.5, 1.0]\nshare = [0.5, 0.6]", "sum to 1"),
    ('throttle = "0 %"\nshare = [1.0]', "list of bare numbers"),
])
def test_malformed_dwell_is_one_line_exit_2(runner, write_build, tmp_path, dwell, needle):
    from clashcheck.cli import main

    modes = tmp_path / "m.toml"
    modes.write_text(f'[[frame.modes]]\nname = "p"\nfrequency = "900 Hz"\n[dwell]\n{dwell}\n', encoding="utf-8")
    res = runner.invoke(main, ["check", str(write_build(build_text(360.0))), "--modes", str(modes)])
    assert res.exit_code == 2
    assert needle in res.stderr and "m.toml" in res.stderr and len(res.stderr.strip().splitlines()) == 1


@pytest.mark.parametrize("key, value, needle", [
    ("flight", 'dwell_spread = "80 %"', "flight.dwell_spread"),
    ("flight", 'cruise_dwell = "yes"', "flight.cruise_dwell"),
])
def test_bad_new_keys_exit_2(runner, write_build, key, value, needle):
    from clashcheck.cli import main

    res = runner.invoke(main, ["check", str(write_build(build_text(360.0, extra_flight=value)))])
    assert res.exit_code == 2 and needle in res.stderr and "Traceback" not in res.output


def test_old_build_files_stay_valid(runner, repo):
    from clashcheck.cli import main

    for path in sorted((repo / "examples").glob("*.toml")):
        res = runner.invoke(main, ["check", str(path), "--format", "json"])
        assert res.exit_code in (0, 1), (path, res.output)


def test_significance_floor_key(runner, write_build):
    text = build_text(0.30 * KV_HZ_PER_V * V_NOMINAL, weight=0.01).replace(
        "families = []", "families = []\nsignificance_floor = 0.1")
    res, data = _check(runner, write_build, text)
    assert res.exit_code == 1 and data["significance_floor"] == 0.1


def test_coinciding_orders_make_one_window(runner, write_build):
    # a 2-blade propeller: 2× rotor and blade pass are the same line → one window, both names
    text = build_text(0.30 * 2 * KV_HZ_PER_V * V_NOMINAL).replace("blades = 3", "blades = 2").replace(
        "families = []", 'families = ["rotor", "blade"]')
    _res, data = _check(runner, write_build, text)
    twos = [w for w in data["windows"] if w["order"] == 2.0]
    assert len(twos) == 1 and twos[0]["label"] == "2× rotor = blade pass (2×)"
    labels = [o["label"] for o in data["orders"]]
    assert "blade pass (2×)" not in labels and "2nd blade pass (4×)" in labels
    assert math.isclose(next(o["weight"] for o in data["orders"] if o["order"] == 2.0), 0.8)


def test_rotor_rate_occupancy_maps_to_throttle_per_pack_state(runner, write_build, tmp_path):
    # a log without throttle gives the occupancy in rotor rate; the no-load rule turns a band of
    # rotor rate into throttle = f/(Kv·V) at each pack state (derived)
    from clashcheck.cli import main

    modes = tmp_path / "hz.toml"
    modes.write_text('[[frame.modes]]\nname = "plate"\nfrequency = "900 Hz"\ndamping = 0.05\n'
                     "[dwell]\nrotor_hz = [0.0, 300.0, 400.0, 900.0]\nshare = [0.05, 0.9, 0.05]\n",
                     encoding="utf-8")
    text = build_text(360.0, states='["full", "empty"]')
    res = runner.invoke(main, ["check", str(write_build(text)), "--modes", str(modes), "--format", "json"])
    data = json.loads(res.stdout)
    for state, volts in (("full", 25.2), ("empty", 21.0)):
        (zone,) = data["dwell"]["zones"][state]
        assert zone["throttle_low"] == pytest.approx(300.0 / (KV_HZ_PER_V * volts), rel=1e-9)
        assert zone["throttle_high"] == pytest.approx(400.0 / (KV_HZ_PER_V * volts), rel=1e-9)
    both = tmp_path / "both.toml"
    both.write_text('[[frame.modes]]\nname = "p"\nfrequency = "900 Hz"\n'
                    "[dwell]\nrotor_hz = [0.0, 900.0]\nthrottle = [0.0, 1.0]\nshare = [1.0]\n", encoding="utf-8")
    res = runner.invoke(main, ["check", str(write_build(text, name="b.toml")), "--modes", str(both)])
    assert res.exit_code == 2 and "either throttle" in res.stderr


@pytest.mark.parametrize("quantity, edges", [("throttle", (0.0, 0.12, 0.15, 1.0)),
                                             ("rotor_hz", (0.0, 100.0, 130.0, 2000.0))])
def test_pick_follows_a_measured_dwell(repo, quantity, edges):
    # pick's vectorised scores against the shared brute-force reference, with a measured occupancy
    # (invented: 85 % of the time in one band) on the stiff-mount demo craft
    import sys
    from dataclasses import replace

    from clashcheck.analysis.pick import candidate_build, search_space, score_candidates
    from clashcheck.inputs.buildfile import load_build
    from clashcheck.model.build import ThrottleOccupancy

    sys.path.insert(0, str(repo / "tests"))
    from _reference_scorer import reference_score

    base = load_build(repo / "examples" / "ducted-3in-stiff-mount.toml")
    occ = ThrottleOccupancy(edges, (0.1, 0.85, 0.05), "test", quantity)
    base = replace(base, flight=replace(base.flight, occupancy=occ))
    space = search_space(base, kv_range=(2000 / 60, 3600 / 60, 400 / 60), cells=(4, 6))
    scores = score_candidates(base, space)
    rows = [reference_score(candidate_build(base, space, i)) for i in range(space.size)]
    assert scores.flies.tolist() == [r["flies"] for r in rows]
    assert scores.band_clear.tolist() == [r["band_clear"] for r in rows]
    if quantity == "throttle":      # the band catches the 1× crossing for some Kv and cell counts, not all
        assert 0 < sum(r["band_clear"] for r in rows) < len(rows)
    else:                           # a rotor-rate band is the same for every part: 100–130 Hz holds the 1× line
        assert not any(r["band_clear"] for r in rows)
