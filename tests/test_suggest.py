"""Tests for clashcheck.analysis.suggest: each suggestion against a hand computation.

No-load fixtures (no resistances, no C_P) make the drive exact and linear:
f_rotor = Kv·d·V (REFERENCES.md §4); hover n = √(m·g/(N·C_T·ρ·D⁴)) (§5,
ρ = 1.225 kg/m³ at 0 m, §6); required margin from the API rule (§1: ζ = 0.05
→ AF 10 → 15 %).  Each expected value below is derived from these by hand.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import replace

import pytest

from clashcheck.analysis.clash import check_build
from clashcheck.analysis.suggest import suggest
from clashcheck.inputs.buildfile import parse_build

SM = 0.15                  # ζ = 0.05 → AF = 10 → 17 %·(1 − 1/8.5) = 15.0 % (REFERENCES.md §1 check value)
KV = 2000 / 60             # Hz/V
V_FULL, V_EMPTY = 4 * 4.2, 4 * 3.5
MASS = 0.4                 # kg
N_HOVER = math.sqrt(MASS * 9.80665 / (4 * 0.12 * 1.225 * 0.127**4))   # ≈ 160 Hz

TEMPLATE = """
name = "suggest quad"
[frame]
motors = 4
mass = "400 g"
[[frame.modes]]
name = "plate"
frequency = "{mode_hz} Hz"
damping = 0.05
kind = "{kind}"
[motor]
kv = "2000 rpm/V"
poles = 14
slots = 12
[prop]
diameter = "5 in"
blades = 3
thrust_coefficient = 0.12
[battery]
cells = 4
[flight]
idle = "4 %"
cruise = "60 %"
cruise_dwell = true     # a cruiser: the window at cruise lies in a dwell zone (issue 10's verdict)
dwell_spread = "0 %"    # dwell exactly at hover and cruise, so the derived edges below hold
[check]
families = []
[[check.orders]]
order = 1
label = "1× shaft"
weight = 1.0
"""


def _build(mode_hz: float, kind: str = "plate"):
    return parse_build(tomllib.loads(TEMPLATE.format(mode_hz=mode_hz, kind=kind)), path="s.toml")


def _by_kind(suggestions):
    return {s.kind: s for s in suggestions}


def _apply(build, s):
    """The changed build, written out here from the suggestion's kind and value (not by the module)."""
    from clashcheck.analysis.pick import kv_variant

    if s.kind == "cruise":
        return replace(build, flight=replace(build.flight, cruise=s.value))
    if s.kind == "kv":
        return replace(build, motor=kv_variant(build.motor, s.value))
    if s.kind == "cells":
        return replace(build, pack=replace(build.pack, cells=int(s.value)))
    if s.kind == "mass":
        return replace(build, mass_kg=s.value)
    mode = next(m for m in build.modes if m.name == s.mode)
    if s.kind == "damping":
        new = replace(mode, damping=s.value)
    else:
        k = s.value / mode.frequency_hz
        new = replace(mode, frequency_hz=s.value, frequency_low_hz=mode.frequency_low_hz * k,
                      frequency_high_hz=mode.frequency_high_hz * k)
    return replace(build, modes=tuple(new if m.name == s.mode else m for m in build.modes))


def test_window_above_hover_cruise_kv_and_cells():
    # mode 300 Hz: margin band 255–345 Hz; 1× at hover (≈160 Hz) is below it, 1× at cruise on a full
    # pack (Kv·0.6·16.8 ≈ 336 Hz) is inside it → the 1× window touches the band from above hover
    build = _build(300.0)
    assert check_build(build).verdict == "clash"
    found = _by_kind(suggest(build))
    assert {"cruise", "kv", "cells"} <= set(found)
    edge = 300.0 * (1 - SM)
    # the window starts where Kv·d·V_full = 255 Hz (derived)
    cruise = found["cruise"]
    assert cruise.details["window_starts_throttle"] == pytest.approx(edge / (KV * V_FULL), rel=1e-9)
    assert cruise.value < edge / (KV * V_FULL) and cruise.is_fix
    # the Kv that puts 1× at cruise on a full pack at 255 Hz: Kv = 255/(0.6·16.8) (derived)
    kv = found["kv"]
    assert kv.value == pytest.approx(edge / (0.6 * V_FULL) * (1 - 1e-3), rel=1e-6)
    assert kv.change == pytest.approx(edge / (0.6 * V_FULL) / KV * (1 - 1e-3) - 1, rel=1e-6)
    assert kv.is_fix and kv.verdict_after != "clash"
    # cells: 1× at cruise, full pack = Kv·0.6·4.2·c = 84·c Hz < 255 → 3 cells (derived); hover then
    # n/(Kv·3·3.5) ≈ 46 % on an empty pack, inside the usable 25–50 %
    assert found["cells"].value == 3 and found["cells"].is_fix
    assert N_HOVER / (KV * 3 * 3.5) < 0.5


def test_hover_inside_the_margin_mode_and_mass():
    # mode 150 Hz: 1× at hover (≈160 Hz) keeps 6.7 % < 15 % at every pack state
    build = _build(150.0)
    found = _by_kind(suggest(build))
    assert {"mode-frequency", "mass"} <= set(found)
    assert not {"cruise", "kv", "cells"} & set(found)        # they move the hover throttle, not its rotor rate
    # hover rotor rate ∝ √m: n' = f_m(1 ± SM) → m' = m·(f_m(1 ± SM)/n)² (derived); the lighter side,
    # 0.4·(150·0.85/160)² = 0.254 kg (−36 %), is beyond the ±25 % proposed, the heavier one is not
    mass = found["mass"]
    assert mass.value == pytest.approx(MASS * (150 * (1 + SM) * (1 + 1e-3) / N_HOVER) ** 2, rel=1e-6)
    assert mass.is_fix and 0 < mass.change <= 0.25
    # the mode moved: below n/(1 + SM) or above n/(1 − SM) hover keeps the margin (derived from
    # |n − f|/f ≥ SM); both sides are fixes (between hover and cruise the 1× line only passes), and
    # the nearer one, the lower, is proposed with the other beside it
    mode = found["mode-frequency"]
    assert mode.value == pytest.approx(N_HOVER / (1 + SM) * (1 - 1e-3), rel=1e-6)
    assert mode.is_fix
    assert mode.details["other_side_hz"] == pytest.approx(N_HOVER / (1 - SM) * (1 + 1e-3), rel=1e-6)
    assert mode.details["other_side_is_fix"] == 1.0


def _with_brackets(*hz: float):
    extra = "".join(f"""
[[frame.modes]]
name = "bracket {f:g}"
frequency = "{f} Hz"
damping = 0.05
kind = "other"
""" for f in hz)
    return parse_build(tomllib.loads(TEMPLATE.format(mode_hz=150.0, kind="plate") + extra), path="s.toml")


def test_a_moved_mode_that_lands_close_to_another_says_so():
    # as above, moving the 150 Hz mode to n/(1 + SM)·(1 − 1e-3) ≈ 139.1 Hz or n/(1 − SM)·(1 + 1e-3)
    # ≈ 188.6 Hz clears hover (derived).  Brackets at 137 and 192 Hz keep more than SM from hover
    # (16.8 % and 16.6 %: no clash of their own) and sit 1.6 % and 1.8 % from those two figures,
    # closer than the 5 % default separation of close modes (analysis/close_modes.py).
    low, high = N_HOVER / (1 + SM) * (1 - 1e-3), N_HOVER / (1 - SM) * (1 + 1e-3)
    from clashcheck.report.decide import suggestion_text

    # only the lower figure lands close: the upper one, also a fix, is proposed instead
    one = _by_kind(suggest(_with_brackets(137.0)))["mode-frequency"]
    assert one.value == pytest.approx(high, rel=1e-6) and one.is_fix and one.close_after == ()
    assert one.details["other_side_hz"] == pytest.approx(low, rel=1e-6)
    # both land close: the nearer fix, with the mode it comes close to and the gap
    both = _with_brackets(137.0, 192.0)
    assert not {"bracket 137", "bracket 192"} & {mr.mode.name for mr in check_build(both).modes
                                                 if mr.verdict == "clash"}
    mode = _by_kind(suggest(both))["mode-frequency"]
    assert mode.value == pytest.approx(low, rel=1e-6) and mode.is_fix
    assert mode.close_after == ("bracket 137",)
    assert mode.details["close_gap"] == pytest.approx((low - 137.0) / 137.0, rel=1e-6)
    assert "from bracket 137: close modes exchange energy" in suggestion_text(mode)
    # without the brackets, nothing is said
    assert _by_kind(suggest(_build(150.0)))["mode-frequency"].close_after == ()


def test_damping_that_drops_the_required_margin():
    # mode 170 Hz: 1× at hover (≈160 Hz) keeps |160 − 170|/170 ≈ 5.7 % (derived); the API rule asks
    # 15 % at ζ = 0.05 and 0 % once AF < 2.5 (ζ > 0.2).  An item on soft mounts ("other") can get there.
    build = _build(170.0, kind="other")
    found = _by_kind(suggest(build))
    d = found["damping"]
    present = abs(N_HOVER - 170.0) / 170.0
    assert present < SM
    # with a zero dwell spread the dwell zone is the hover point: the dwell margin is hover's (derived)
    assert d.details["dwell_margin"] == pytest.approx(present, rel=1e-6)
    # SM(ζ) = 17 %·(1 − 1/(1/(2ζ) − 1.5)) = m → ζ = 1/(2·(1.5 + 1/(1 − m/0.17))) (derived from REFERENCES.md §1)
    m = d.details["dwell_margin"] * (1 - 1e-3)        # solved a step inside the present margin
    if m > 0:
        expected = 1 / (2 * (1.5 + 1 / (1 - m / 0.17)))
        assert d.value == pytest.approx(expected * (1 + 1e-3), rel=1e-6)
    assert d.value <= 0.25 and d.details["required_margin_after"] < m + 1e-12


def test_no_impossible_damping_for_an_arm():
    # the same build with an arm mode: the damping it would need (> 0.08) is not proposed
    found = _by_kind(suggest(_build(160.0, kind="arm")))
    assert check_build(_build(160.0, kind="arm")).verdict == "clash" and "damping" not in found


@pytest.mark.parametrize("mode_hz", [150.0, 160.0, 170.0, 220.0, 300.0, 320.0])
def test_every_fix_is_confirmed_by_its_own_check(mode_hz):
    build = _build(mode_hz, kind="other")
    before = check_build(build)
    clashing = {mr.mode.name for mr in before.modes if mr.verdict == "clash"}
    for s in suggest(build, before):
        after = check_build(_apply(build, s))
        mode_after = next(mr.verdict for mr in after.modes if mr.mode.name == s.mode)
        assert mode_after == s.mode_verdict_after
        new_clash = {mr.mode.name for mr in after.modes if mr.verdict == "clash"} - clashing
        no_hover = [b.pack_state for b in after.bands if not b.hover.can_hover]
        if s.is_fix:
            assert mode_after != "clash" and not new_clash and not no_hover, s
        else:
            assert mode_after == "clash" or new_clash or no_hover, s
        # hover stays in the usable range (pick's 25–50 %) at every pack state (this build is inside it)
        assert all(0.25 <= b.hover.throttle <= 0.5 for b in after.bands), s


def test_no_suggestion_without_a_clash():
    # mode 400 Hz: 1× reaches its margin (340 Hz) only above cruise → watch, nothing to suggest
    build = _build(400.0)
    assert check_build(build).verdict == "watch"
    assert suggest(build) == ()


def test_suggestions_follow_the_numbers():
    from clashcheck.report.decide import suggestion_text

    # the texts are computed: another mode frequency gives other figures
    a = _by_kind(suggest(_build(300.0)))["kv"]
    b = _by_kind(suggest(_build(320.0)))["kv"]
    assert a.value != b.value and suggestion_text(a) != suggestion_text(b)
    assert f"{60 * a.value:.0f} rpm/V" in suggestion_text(a)
    assert b.value == pytest.approx(320.0 * (1 - SM) / (0.6 * V_FULL) * (1 - 1e-3), rel=1e-6)


def test_cli_suggestions_in_every_format_without_matplotlib(tmp_path):
    import json
    import subprocess
    import sys

    path = tmp_path / "s.toml"
    path.write_text(TEMPLATE.format(mode_hz=300.0, kind="plate"), encoding="utf-8")
    code = (
        "import sys, json\n"
        "from click.testing import CliRunner\n"
        "from clashcheck.cli import main\n"
        f"r = CliRunner().invoke(main, ['check', {str(path)!r}, '--suggest', '--format', 'json'])\n"
        "data = json.loads(r.stdout)\n"
        "print(json.dumps({'exit': r.exit_code, 'n': len(data['suggestions']), "
        "'mpl': 'matplotlib' in sys.modules}))\n"
    )
    out = json.loads(subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                                    check=True).stdout)
    assert out == {"exit": 1, "n": out["n"], "mpl": False} and out["n"] >= 3
    from click.testing import CliRunner

    from clashcheck.cli import main

    runner = CliRunner()
    data = json.loads(runner.invoke(main, ["check", str(path), "--suggest", "--format", "json"]).stdout)
    kinds = {s["kind"]: s for s in data["suggestions"]}
    assert kinds["kv"]["unit"] == "hz_per_v" and kinds["kv"]["status"] == "fix"
    assert data["schema_version"] and "verdict" in data
    table = runner.invoke(main, ["check", str(path), "--suggest"]).stdout
    assert "Suggestions (each checked in full):" in table and "checked: fix" in table
    md = runner.invoke(main, ["check", str(path), "--suggest", "--format", "markdown"]).stdout
    assert "## Suggestions" in md and "rpm/V" in md
    # without --suggest the check stays as it was
    assert "Suggestions" not in runner.invoke(main, ["check", str(path)]).stdout


def test_mass_clears_the_whole_hover_dwell_zone():
    # dwell zone hover ± 1 % throttle; no-load model: rotor = Kv·d·V, so the zone's top is n + 0.01·Kv·V and
    # the zone clears the 175 Hz mode's margin (175·0.85 = 148.75 Hz) when n' + 0.01·Kv·V_full sits a step
    # below it (derived); hover rate ∝ √m gives m' = m·(n'/n)²
    text = TEMPLATE.format(mode_hz=175.0, kind="plate").replace('dwell_spread = "0 %"', 'dwell_spread = "1 %"')
    build = parse_build(tomllib.loads(text), path="s.toml")
    assert build.flight.dwell_spread == pytest.approx(0.01)
    mass = _by_kind(suggest(build))["mass"]
    n_new = 175.0 * (1 - SM) * (1 - 1e-3) - 0.01 * KV * V_FULL
    assert mass.value == pytest.approx(MASS * (n_new / N_HOVER) ** 2, rel=1e-6)
    assert mass.is_fix and -0.25 <= mass.change < 0
    after = check_build(_apply(build, mass))
    assert next(mr.verdict for mr in after.modes if mr.mode.name == "plate") != "clash"
