"""Tests for clashcheck.analysis.pick: candidate search, vectorised scoring, ranking.

The reference is a plain Python loop: for every candidate it builds the
candidate with ``dataclasses.replace``, shifts the arm modes with the analytic
single-degree-of-freedom ratio written out here, and scores it with
``tests/_reference_scorer.py`` (shared with ``bench/bench_pick.py``), which runs
the core engine's full ``check_build`` (exact clash windows) and computes the
peak weighted response over the operating band with scalar arithmetic.  The
vectorised search must agree with it exactly (same flags, same ranking).
"""

from __future__ import annotations

import math
import sys
import tomllib
from pathlib import Path
from dataclasses import replace

import numpy as np
import pytest
from click.testing import CliRunner

from clashcheck.analysis.clash import check_build
from clashcheck.analysis.pick import (
    MotorOption,
    PropOption,
    SearchSpace,
    candidate_build,
    kv_variant,
    pick,
    rank,
    score_candidates,
    search_space,
)
from clashcheck.cli import main
from clashcheck.errors import InputError
from clashcheck.inputs.buildfile import parse_build, parse_prop
from clashcheck.model.excitation import build_orders
from clashcheck.model.modes import magnification

sys.path.insert(0, str(Path(__file__).resolve().parent))
from _reference_scorer import peak_m, reference_score  # noqa: E402  (shared with bench/bench_pick.py)

# Invented test frame (fixture data, not a reference).  The low-rate 700 Hz
# sensor has a gentle anti-alias filter at 250 Hz, so aliased lines matter
# (they give the peak response for some candidates); one mode has no damping
# figure (assumed); two are arm modes that shift with the tip mass.  A few
# candidates are not `clash`, so both sides of the first ranking key occur.
FRAME = """
name = "test frame"
[frame]
motors = 4
mass = "650 g"
[[frame.modes]]
name = "arm flap"
frequency = "110 Hz"
damping = 0.03
kind = "arm"
[[frame.modes]]
name = "arm sway"
frequency = "60 Hz"
kind = "arm"
[[frame.modes]]
name = "plate"
frequency = "850 Hz"
damping = 0.05
kind = "plate"
[motor]
kv = "1900 rpm/V"
poles = 14
slots = 12
resistance = "60 mohm"
no_load_current = "1.0 A"
mass = "32 g"
[prop]
catalog = "5in-3b-mid"
[battery]
cells = 6
cell_resistance = "3 mohm"
[sensor]
sample_rate = "700 Hz"
antialias_cutoff = "250 Hz"
[flight]
idle = "4 %"
cruise = "45 %"
"""

# The same idea with an estimated arm (modes with a frequency range, arm mass known).
ARM_FRAME = """
name = "arm frame"
[frame]
motors = 4
mass = "650 g"
[frame.arm]
length = "95 mm"
width = "12 mm"
thickness = "5 mm"
material = "carbon-qi"
[[frame.modes]]
name = "plate"
frequency = "430 Hz"
damping = 0.05
kind = "plate"
[motor]
kv = "1900 rpm/V"
poles = 14
slots = 12
resistance = "60 mohm"
mass = "32 g"
[prop]
catalog = "5in-3b-mid"
[battery]
cells = 6
[sensor]
sample_rate = "8 kHz"
antialias_cutoff = "1 kHz"
[flight]
cruise = "60 %"
"""


def _build(text: str):
    return parse_build(tomllib.loads(text), path="test.toml")


def _space(build, kv_rpm=(1500, 1900, 2300), poles=(12, 14), cells=(4, 6),
           props=("5in-3b-low", "5in-3b-mid", "5in-4b", "5in-2b")):
    return search_space(build, kv_range=(kv_rpm[0] / 60, kv_rpm[-1] / 60, (kv_rpm[1] - kv_rpm[0]) / 60),
                        poles=poles, cells=cells, props=list(props))


# --- the reference: a plain loop over candidates --------------------------------


def _reference_candidate(base, kv_hz, poles, prop, cells):
    """The candidate built by hand (not with pick.candidate_build)."""
    motor = replace(base.motor, kv_hz_per_v=kv_hz, poles=poles,
                    resistance_ohm=base.motor.resistance_ohm * (base.motor.kv_hz_per_v / kv_hz) ** 2)
    parts0 = base.motor.mass_kg + base.prop.mass_kg
    parts1 = motor.mass_kg + prop.mass_kg
    mass = base.mass_kg + base.motors * (parts1 - parts0)
    if base.arm is not None:
        old_tip, arm_mass = base.arm.tip_mass_kg, base.arm.beam_mass_kg()
    else:
        old_tip, arm_mass = parts0, 0.0
    new_tip = old_tip + (parts1 - parts0)
    # SDOF: f ∝ √(k/m_eff), ζ ∝ 1/√(k·m_eff), m_eff = tip + 33/140 arm  (REFERENCES.md §2–3; derived)
    ratio = math.sqrt((old_tip + 33.0 / 140.0 * arm_mass) / (new_tip + 33.0 / 140.0 * arm_mass))
    modes = []
    for m in base.modes:
        if m.kind == "arm":
            m = replace(m, frequency_hz=m.frequency_hz * ratio, frequency_low_hz=m.frequency_low_hz * ratio,
                        frequency_high_hz=m.frequency_high_hz * ratio,
                        damping=None if m.damping is None else m.damping * ratio, origin="shifted")
        modes.append(m)
    flight = replace(base.flight, hover=None) if prop.thrust_coefficient is not None else base.flight
    return replace(base, motor=motor, prop=prop, pack=replace(base.pack, cells=cells), mass_kg=mass,
                   modes=tuple(modes), flight=flight)






def _brute_force(base, kvs, poles_list, props, cells_list):
    rows = []
    for kv in kvs:                       # same order as the search space's axes
        for poles in poles_list:
            for prop in props:
                for cells in cells_list:
                    rows.append(reference_score(_reference_candidate(base, kv, poles, prop, cells)))
    return rows


def _reference_rank(rows):
    keys = [(not r["flies"], not r["band_clear"], not r["in_range"], r["response"], i) for i, r in enumerate(rows)]
    return [k[-1] for k in sorted(keys)]


@pytest.mark.parametrize("text", [FRAME, ARM_FRAME], ids=["point-modes-aliasing", "estimated-arm"])
def test_vectorised_matches_brute_force(text):
    base = _build(text)
    kv_rpm = (1500, 1900, 2300)
    props_ids = ("5in-3b-low", "5in-3b-mid", "5in-4b", "5in-2b")
    space = _space(base, kv_rpm=kv_rpm, props=props_ids)
    props = [parse_prop({"catalog": p}) for p in props_ids]
    rows = _brute_force(base, [k / 60 for k in kv_rpm], (12, 14), props, (4, 6))
    scores = score_candidates(base, space, block=7)          # odd block size: block edges must not matter
    assert space.size == len(rows) == 48
    assert scores.flies.tolist() == [r["flies"] for r in rows]
    assert scores.band_clear.tolist() == [r["band_clear"] for r in rows]
    assert scores.hover_in_range.tolist() == [r["in_range"] for r in rows]
    np.testing.assert_allclose(scores.response, [r["response"] for r in rows], rtol=1e-12)
    np.testing.assert_allclose(scores.hover_throttle, [r["hover"] for r in rows], rtol=1e-12)
    # the whole ranking, and so the top choice, matches the loop exactly
    assert rank(scores).tolist() == _reference_rank(rows)
    # the mix of outcomes makes the comparison meaningful
    assert len({r["in_range"] for r in rows}) == 2
    if text is FRAME:
        assert 0 < sum(r["band_clear"] for r in rows) < len(rows)
        assert np.any(scores.response_at[:, 3] > 0)          # some peaks come from aliased lines


def test_candidate_build_agrees_with_reference():
    base = _build(FRAME)
    space = _space(base)
    index = 17
    motor, prop, cells, _label = space.parts(index)
    ours = candidate_build(base, space, index)
    ref = _reference_candidate(base, motor.kv_hz_per_v, motor.poles, prop, cells)
    assert ours.mass_kg == pytest.approx(ref.mass_kg, rel=1e-15)
    for a, b in zip(ours.modes, ref.modes):
        assert a.frequency_hz == pytest.approx(b.frequency_hz, rel=1e-15)
        assert (a.damping is None) == (b.damping is None)


def test_peak_response_is_the_maximum_over_the_band():
    # M has a single maximum, so the end-and-peak rule must not be beaten by a dense sample
    # of the band (Rao §3.4; direct lines, point modes)
    base = _build(FRAME)
    cand = _reference_candidate(base, 1900 / 60, 14, base.prop, 6)
    drive = cand.drive()
    result = check_build(cand)
    dense = closed = -math.inf
    for band in result.bands:
        d = np.linspace(band.throttle_low, band.throttle_high, 4001)
        rotor = drive.rotor_hz(d, band.pack_state)
        for mode in cand.modes:
            zeta, _ = cand.check.policy.damping_of(mode)
            for o in build_orders(cand.motor, cand.prop, cand.check.families):
                m = o.weight * magnification(o.order * rotor / mode.frequency_hz, zeta)
                dense = max(dense, float(np.max(m)))
                closed = max(closed, o.weight * peak_m(o.order * rotor[0], o.order * rotor[-1], mode, zeta))
    assert dense <= closed * (1 + 1e-12)
    assert dense == pytest.approx(closed, rel=2e-3)


def test_pick_top_is_fully_checked():
    base = _build(FRAME)
    result = pick(base, _space(base), top=3)
    assert result.searched == 48
    assert [p.rank for p in result.top] == [1, 2, 3]
    for p in result.top:
        assert (p.result.verdict != "clash") == p.band_clear
    assert result.disagreements == ()


def test_kv_variant_scales_resistance():
    m = kv_variant(_build(FRAME).motor, 2000 / 60)
    # R ∝ 1/Kv² for the same stator (common practice)
    assert m.resistance_ohm == pytest.approx(0.060 * (1900 / 2000) ** 2, rel=1e-12)


# --- bad input -------------------------------------------------------------------


def test_contradictory_pins():
    base = _build(FRAME)
    with pytest.raises(InputError, match="contradictory"):
        search_space(base, cells=(4, 6), pins=("cells",))
    with pytest.raises(InputError, match="contradictory"):
        search_space(base, kv_range=(25.0, 30.0, 1.0), pins=("motor",))
    with pytest.raises(InputError, match="not both"):
        search_space(base, motors="catalog", kv_range=(25.0, 30.0, 1.0))


def test_empty_candidate_sets():
    base = _build(FRAME)
    with pytest.raises(InputError, match="empty candidate set"):
        search_space(base, stators=("9999",))
    with pytest.raises(InputError, match="empty candidate set"):
        search_space(base, kv_range=(30.0, 25.0, 1.0))
    with pytest.raises(InputError, match="empty candidate set"):
        SearchSpace((), (PropOption("p", base.prop, "build"),), (6,))
    with pytest.raises(InputError, match="every part pinned"):
        search_space(base, pins=("motor", "prop"))


def _write(tmp_path, text, name="quad.toml"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def test_cli_pick_json_and_errors(tmp_path):
    import json

    path = _write(tmp_path, FRAME)
    runner = CliRunner()
    res = runner.invoke(main, ["pick", str(path), "--kv-from", "1500 rpm/V", "--kv-to", "2300 rpm/V",
                               "--kv-step", "400 rpm/V", "--cells", "4,6", "--props", "5in-3b-mid,5in-2b",
                               "--top", "2", "--format", "json"])
    assert res.exit_code in (0, 1), res.output
    data = json.loads(res.stdout)
    assert data["searched"] == 12 and len(data["top"]) == 2
    assert 0 <= data["top"][0]["hover"]["full"] <= 1           # fractions, not percentages
    for args, needle in [
        (["--cells", "4,6", "--pin", "cells"], "contradictory"),
        (["--stator", "9999"], "empty candidate set"),
        (["--kv-from", "2000 rpm/V", "--kv-to", "1500 rpm/V"], "empty candidate set"),
        (["--cells", "four"], "cells"),
        (["--cells", "4,6", "-o", str(tmp_path / "missing" / "pick.md")], "does not exist"),
        (["--cells", "4,6", "-o", str(path)], "input"),
    ]:
        res = runner.invoke(main, ["pick", str(path), *args])
        assert res.exit_code == 2, (args, res.output)
        assert needle in res.stderr and "Traceback" not in res.output


# --- the top candidate written out as a build ------------------------------------------


@pytest.mark.parametrize("example", ["freestyle-5in", "ducted-3in"])
def test_write_build_gives_the_verdict_pick_scored(tmp_path, example):
    import json

    from clashcheck.inputs.buildfile import load_build

    demo = Path(__file__).resolve().parent.parent / "examples" / f"{example}.toml"
    out = tmp_path / "best.toml"
    runner = CliRunner()
    picked = runner.invoke(main, ["pick", str(demo), "--top", "3", "--format", "json", "--write-build", str(out)])
    assert picked.exit_code in (0, 1), picked.output
    data = json.loads(picked.stdout)
    top = data["top"][0]
    written = load_build(out)
    check = check_build(written)
    assert check.verdict == top["verdict"]
    assert {mr.mode.name: mr.verdict for mr in check.modes} == {m["name"]: m["verdict"] for m in top["modes"]}
    assert written.mass_kg == pytest.approx(top["mass_kg"], rel=1e-12)
    assert written.pack.cells == top["cells"]
    # pick's "no clash" flag is check's verdict, and pick exits 0 exactly when its top has no clash
    assert top["band_clear"] is (check.verdict != "clash")
    assert (data["clear_count"] > 0) is top["band_clear"]
    assert picked.exit_code == (0 if top["band_clear"] else 1)
    # the check command on the written file exits as its verdict says
    res = runner.invoke(main, ["check", str(out)])
    assert res.exit_code == (1 if check.verdict == "clash" else 0)
    # issue 10: every shipped example has a pick that is not a clash; the demo itself is one (its roll
    # arm flap), so pick has found a real fix there and exits 0
    assert data["clear_count"] > 0 and check.verdict != "clash" and picked.exit_code == 0
    if example == "freestyle-5in":
        assert check_build(load_build(demo)).verdict == "clash"


def test_write_build_never_over_an_input_or_the_report(tmp_path):
    path = _write(tmp_path, FRAME)
    before = path.read_bytes()
    runner = CliRunner()
    res = runner.invoke(main, ["pick", str(path), "--cells", "4,6", "--write-build", str(path)])
    assert res.exit_code == 2 and "input" in res.stderr and path.read_bytes() == before
    same = tmp_path / "same.txt"
    res = runner.invoke(main, ["pick", str(path), "--cells", "4,6", "--write-build", str(same), "-o", str(same)])
    assert res.exit_code == 2 and "different files" in res.stderr and not same.exists()


def test_library_errors_name_fields_and_the_cli_names_flags(tmp_path):
    base = _build(FRAME)
    with pytest.raises(InputError, match=r"^cells: "):
        SearchSpace((MotorOption("m", base.motor, "build"),), (PropOption("p", base.prop, "build"),), (0,))
    with pytest.raises(InputError, match=r"^kv_range: "):
        search_space(base, kv_range=(30.0, 25.0, 1.0))
    path = _write(tmp_path, FRAME)
    runner = CliRunner()
    for args, flag in ((["--cells", "0"], "--cells"), (["--kv-from", "2000 rpm/V", "--kv-to", "1500 rpm/V"],
                                                       "--kv-from/--kv-to/--kv-step"),
                       (["--hover-low", "60 %"], "--hover-low/--hover-high")):
        res = runner.invoke(main, ["pick", str(path), *args])
        assert res.exit_code == 2 and f"error: {flag}: " in res.stderr, res.stderr
