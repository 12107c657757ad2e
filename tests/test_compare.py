"""Tests for clashcheck.model.shift and clashcheck.analysis.compare.

References: the single-degree-of-freedom ratio f ∝ √(k/m_eff), ζ ∝ 1/√(k·m_eff)
with m_eff = M + 33/140·m (REFERENCES.md §2, §3; derived), the exact
cantilever-with-tip-mass roots (Karnovsky & Lebed 2004 §7.5.3, REFERENCES.md
§3, via clashcheck.model.arm), the hover relation N·C_T·ρ·n²·D⁴ = m·g and the
no-load rule ω = Kv·d·V (REFERENCES.md §4–5), and ISA sea-level density
1.225 kg/m³ (REFERENCES.md §6).
"""

from __future__ import annotations

import json
import math
import tomllib
from dataclasses import replace
from pathlib import Path

import pytest
from click.testing import CliRunner

from clashcheck.analysis.clash import check_build
from clashcheck.analysis.compare import compare_builds
from clashcheck.cli import main
from clashcheck.errors import InputError
from clashcheck.inputs.buildfile import load_build, parse_build
from clashcheck.model.arm import frequency_parameters
from clashcheck.model.modes import Mode
from clashcheck.model.shift import (
    effective_mass_kg,
    frequency_ratio,
    shift_mode,
    shift_modes,
    swap_shift,
)

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
G = 9.80665            # standard gravity (ISO 80000-3)
RHO0 = 1.225           # ISA sea level, kg/m³ (REFERENCES.md §6, confirmed)


def _build(text: str, path: str = "test.toml"):
    return parse_build(tomllib.loads(text), path=path)


# --- the mass shift ----------------------------------------------------------------


def test_effective_mass_and_ratio_by_hand():
    # m_eff = 40 g + 33/140 × 14 g = 43.3 g (derived)
    assert effective_mass_kg(0.040, 0.014) == pytest.approx(0.0433, rel=1e-12)
    # 25 % heavier tip, arm mass negligible: f ratio = √(40/50) (derived)
    assert frequency_ratio(0.040, 0.050) == pytest.approx(math.sqrt(0.8), rel=1e-12)
    assert frequency_ratio(0.040, 0.050, 0.014) == pytest.approx(math.sqrt(0.0433 / 0.0533), rel=1e-12)


def test_ratio_against_published_tip_mass_roots():
    # λ₁ at μ = 1 and μ = 10: 1.247917 and 0.735782 (REFERENCES.md §3, derived from
    # Karnovsky & Lebed table 7.6); f ∝ λ², so the exact ratio is (λ₁₀/λ₁)²
    exact = (0.735782 / 1.247917) ** 2
    beam = 1.0                                   # beam mass; tip masses μ × beam
    assert frequency_ratio(1.0 * beam, 10.0 * beam, beam) == pytest.approx(exact, rel=1e-3)


@pytest.mark.parametrize("mu_old, mu_new", [(0.5, 0.8), (1.0, 1.4), (2.0, 3.0), (4.0, 2.5)])
def test_ratio_against_exact_tip_mass_equation(mu_old, mu_new):
    # the arm issue's exact frequency equation (Karnovsky & Lebed §7.5.3), solved by clashcheck.model.arm
    lam_old = frequency_parameters(mu_old, count=1)[0]
    lam_new = frequency_parameters(mu_new, count=1)[0]
    exact = (lam_new / lam_old) ** 2
    # Rayleigh's m_eff is within 1.5 % at μ = 0 and 0.05 % at μ = 1 (REFERENCES.md §3): ratios agree closer
    assert frequency_ratio(mu_old, mu_new, 1.0) == pytest.approx(exact, rel=2e-3)


ARM_A = """
name = "arm A"
[frame]
motors = 4
mass = "650 g"
[frame.arm]
length = "95 mm"
width = "12 mm"
thickness = "5 mm"
material = "carbon-qi"
[motor]
kv = "1900 rpm/V"
poles = 14
slots = 12
mass = "{motor_mass}"
[prop]
catalog = "5in-3b-mid"
[battery]
cells = 6
"""


def test_shift_against_beam_estimate_of_the_swapped_build():
    # A's arm modes shifted by the SDOF ratio for B's motor must land near B's own exact estimate
    a = _build(ARM_A.format(motor_mass="32 g"))
    b = _build(ARM_A.format(motor_mass="46 g"))
    modes, shift = shift_modes(a, b.motor.mass_kg, b.prop.mass_kg)
    assert shift.applied and shift.arm_mass_source == "frame.arm"
    assert shift.arm_mass_kg == pytest.approx(a.arm.beam_mass_kg(), rel=1e-12)
    exact = {m.name: m for m in b.modes}
    for m in modes:
        if m.kind != "arm":
            continue
        # a second-mode ratio is not a spring-mass one; only first modes compare
        if " 2 " in m.name:
            continue
        assert m.origin == "shifted"
        assert m.frequency_hz == pytest.approx(exact[m.name].frequency_hz, rel=5e-3)
        assert m.frequency_low_hz == pytest.approx(exact[m.name].frequency_low_hz, rel=5e-3)


def test_damping_ratio_shifts_with_the_same_factor():
    # ζ = c/(2√(k·m)): same c and k, heavier m → ζ × √(m_old/m_new) (Rao §2.6; derived)
    mode = Mode("arm flap", 200.0, 0.030, kind="arm")
    ratio = math.sqrt(37.3 / 49.8)
    out = shift_mode(mode, ratio, old_tip_kg=0.0373, new_tip_kg=0.0498)
    assert out.damping == pytest.approx(0.030 * math.sqrt(37.3 / 49.8), rel=1e-12)
    assert out.frequency_hz == pytest.approx(200.0 * math.sqrt(37.3 / 49.8), rel=1e-12)
    assert out.origin == "shifted"
    assert out.details["old_frequency_hz"] == 200.0
    assert out.details["old_damping"] == 0.030
    with pytest.raises(InputError, match="ratio"):
        shift_mode(mode, 0.0, old_tip_kg=0.03, new_tip_kg=0.04)


def test_swap_shift_rules_on_the_examples():
    a = load_build(EXAMPLES / "freestyle-5in.toml")
    b = load_build(EXAMPLES / "freestyle-5in-swap.toml")
    shifted, shift = swap_shift(a, b)
    # tip mass = motor + prop from the catalog (33 + 4.3 g → 45.5 + 4.3 g), no [frame.arm]
    assert shift.old_tip_kg == pytest.approx(0.0373, rel=1e-9)
    assert shift.new_tip_kg == pytest.approx(0.0498, rel=1e-9)
    assert shift.ratio == pytest.approx(math.sqrt(37.3 / 49.8), rel=1e-9)
    a_modes = {m.name: m for m in a.modes}
    for m in shifted.modes:
        if m.kind == "arm":
            assert m.frequency_hz == pytest.approx(a_modes[m.name].frequency_hz * shift.ratio, rel=1e-12)
        else:
            assert m == a_modes[m.name]
    # without masses: nothing shifts and the notes say so
    bare = replace(b, motor=replace(b.motor, mass_kg=None))
    same, none = swap_shift(a, bare)
    assert same.modes == bare.modes and not none.applied
    assert any("not shifted" in n and "[motor] mass" in n for n in none.notes)
    # a figure of B's own is kept
    own = replace(b, modes=tuple(
        replace(m, frequency_hz=m.frequency_hz + 1.0, frequency_low_hz=m.frequency_hz + 1.0,
                frequency_high_hz=m.frequency_hz + 1.0) if m.kind == "arm" else m
        for m in b.modes))
    kept, info = swap_shift(a, own)
    assert kept.modes == own.modes and any("own figure" in n for n in info.notes)


# --- comparing the examples ---------------------------------------------------------


def _clash_set(result):
    return {(w.mode, w.label, w.aliased) for w in result.windows if w.level == "clash"}


def _by_hand_shift(a, b):
    """B with its arm modes scaled by √(m_eff,A/m_eff,B), written out here."""
    old = a.motor.mass_kg + a.prop.mass_kg
    new = b.motor.mass_kg + b.prop.mass_kg
    r = math.sqrt(old / new)
    a_modes = {m.name: m for m in a.modes}
    return replace(b, modes=tuple(
        replace(a_modes[m.name], frequency_hz=a_modes[m.name].frequency_hz * r,
                frequency_low_hz=a_modes[m.name].frequency_low_hz * r,
                frequency_high_hz=a_modes[m.name].frequency_high_hz * r,
                damping=a_modes[m.name].damping * r, origin="shifted") if m.kind == "arm" else m
        for m in b.modes))


@pytest.mark.parametrize("forward", [True, False], ids=["swap", "swap-back"])
def test_examples_clashes_appear_and_disappear(forward):
    a = load_build(EXAMPLES / "freestyle-5in.toml")
    b = load_build(EXAMPLES / "freestyle-5in-swap.toml")
    if not forward:
        a, b = b, a
    cmp = compare_builds(a, b)
    ca, cb = _clash_set(check_build(a)), _clash_set(check_build(_by_hand_shift(a, b)))
    assert {(f.mode, f.label, f.aliased) for f in cmp.appeared} == cb - ca
    assert {(f.mode, f.label, f.aliased) for f in cmp.disappeared} == ca - cb
    # the swap adds clashes: the heavier motor lowers the arm modes onto hover's dwell zone.  Going back,
    # A's figures are the swap's (the catalog frame's, as if measured on the heavier build), so B's arm
    # modes move up instead: an asymmetric question with its own answer, checked by the sets above.
    if forward:
        assert cb - ca and cmp.appeared
        assert cmp.shift.ratio < 1
    else:
        assert cmp.shift.ratio > 1
    # B is worse exactly when a clash appears or deepens (+6 dB at a dwell point), or hover is lost
    assert cmp.worse_at("clash") is bool(cmp.appeared or cmp.deepened or cmp.lost_hover)
    assert cmp.worse_at("never") is False


def test_without_shift_fewer_clashes_appear():
    a = load_build(EXAMPLES / "freestyle-5in.toml")
    b = load_build(EXAMPLES / "freestyle-5in-swap.toml")
    with_shift = compare_builds(a, b)
    without = compare_builds(a, b, shift_modes=False)
    assert len(without.appeared) < len(with_shift.appeared)
    assert not without.shift.applied


# --- a hand-made pair with a known difference ----------------------------------------

PAIR = """
name = "{name}"
[frame]
motors = 4
mass = "{mass}"
[[frame.modes]]
name = "plate"
frequency = "200 Hz"
damping = 0.05
kind = "plate"
[motor]
kv = "2300 rpm/V"
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
dwell_spread = "0 %"    # dwell exactly at hover, so the hover margins below decide
[check]
families = ["rotor"]
"""


def _hover_hz(mass_kg):
    # N·C_T·ρ·n²·D⁴ = m·g (REFERENCES.md §5)
    return math.sqrt(mass_kg * G / (4 * 0.12 * RHO0 * 0.127**4))


def test_hand_made_pair_known_difference():
    a = _build(PAIR.format(name="A", mass="600 g"))
    b = _build(PAIR.format(name="B", mass="900 g"))
    cmp = compare_builds(a, b)
    n_a, n_b = _hover_hz(0.6), _hover_hz(0.9)
    margin_a, margin_b = abs(n_a - 200) / 200, abs(n_b - 200) / 200
    # ζ = 0.05 → AF 10 → required 15 % (REFERENCES.md §1 check values)
    assert margin_a < 0.15 < margin_b
    hover = {(m.point, m.pack_state): m for m in cmp.margin_changes if m.mode == "plate"}
    for state in ("full", "nominal", "empty"):
        m = hover[("hover", state)]
        assert m.order_a == m.order_b == "1× rotor"
        # ρ = 1.2250 to the 4 figures quoted, so agree to 1e-6 in margin
        assert m.margin_a == pytest.approx(margin_a, abs=1e-6)
        assert m.change == pytest.approx(margin_b - margin_a, abs=1e-6)
    assert [(f.mode, f.label) for f in cmp.appeared] == []
    assert [(f.mode, f.label) for f in cmp.disappeared] == [("plate", "1× rotor")]
    # no-load rule: hover throttle = n / (Kv·V), V = 4 × 3.5 V on an empty lipo pack (REFERENCES.md §4, §7)
    kv = 2300 / 60
    assert cmp.empty_hover_b.throttle == pytest.approx(n_b / (kv * 14.0), rel=1e-6)
    assert cmp.empty_hover_b.can_hover
    assert not cmp.worse_at("clash")


def test_losing_hover_on_an_empty_pack_is_worse():
    a = _build(PAIR.format(name="A", mass="600 g"))
    c = _build(PAIR.format(name="C", mass="5 kg"))
    kv = 2300 / 60
    # at 5 kg, hover needs n/(Kv·V) > 1 on the empty pack but not on the full one (derived)
    assert _hover_hz(5.0) / (kv * 14.0) > 1 > _hover_hz(5.0) / (kv * 16.8)
    cmp = compare_builds(a, c)
    assert not cmp.empty_hover_b.can_hover
    assert cmp.worse_at("clash") and cmp.worse_at("watch")
    assert cmp.lost_hover == ("empty",)
    from clashcheck.report.decide import render_compare

    assert "B cannot hover at the empty pack (A can)" in render_compare(cmp, "table")


# --- the command ---------------------------------------------------------------------


def test_cli_compare_exit_codes_and_json(tmp_path):
    runner = CliRunner()
    a, b = str(EXAMPLES / "freestyle-5in.toml"), str(EXAMPLES / "freestyle-5in-swap.toml")
    res = runner.invoke(main, ["compare", a, b, "--format", "json"])
    data = json.loads(res.stdout)
    # the exit code follows the judgement, which follows the changes listed
    assert res.exit_code == (1 if data["b_worse"]["clash"] else 0), res.output
    assert data["b_worse"]["clash"] is bool(data["changes"]["clashes_appeared"]
                                            or data["changes"]["clashes_deepened"]
                                            or data["changes"]["cannot_hover_b"]
                                            or any(v["verdict_b"] == "clash" and v["verdict_a"] != "clash"
                                                   for v in data["changes"]["verdict_changes"]))
    assert data["changes"]["clashes_appeared"]
    assert data["mode_shift"]["applied"] and 0 < data["mode_shift"]["frequency_ratio"] < 1
    assert all(0 <= m["margin_a"] <= 10 for m in data["changes"]["margin_changes"])   # fractions
    assert data["cautions"]
    # the swap adds clashes, so B is worse: exit 1 so a script can refuse the swap
    assert res.exit_code == 1
    assert runner.invoke(main, ["compare", a, b, "--fail-on", "never"]).exit_code == 0
    # back the other way the exit code follows that direction's own judgement
    back = runner.invoke(main, ["compare", b, a, "--format", "json"])
    assert back.exit_code == (1 if json.loads(back.stdout)["b_worse"]["clash"] else 0), back.output
    md = runner.invoke(main, ["compare", a, b, "--format", "markdown", "--fail-on", "never"])
    assert md.exit_code == 0 and "## Changes" in md.stdout and "propellers removed" in md.stdout


def test_cli_compare_bad_output(tmp_path):
    runner = CliRunner()
    a, b = str(EXAMPLES / "freestyle-5in.toml"), str(EXAMPLES / "freestyle-5in-swap.toml")
    for args in (["-o", str(tmp_path / "missing" / "out.md")], ["-o", a]):
        res = runner.invoke(main, ["compare", a, b, *args])
        assert res.exit_code == 2, res.output
        assert res.stderr.startswith("clashcheck: error:") and "Traceback" not in res.output
    res = runner.invoke(main, ["compare", a, str(tmp_path / "nope.toml")])
    assert res.exit_code == 2


# --- all-up mass: compare as pick ------------------------------------------------------


def _swap_with_mass(mass_kg: float):
    b = load_build(EXAMPLES / "freestyle-5in-swap.toml")
    return replace(b, mass_kg=mass_kg)


def test_same_stated_mass_gets_the_part_change_like_pick():
    from clashcheck.analysis.pick import MotorOption, PropOption, SearchSpace, candidate_build

    a = load_build(EXAMPLES / "freestyle-5in.toml")
    b = _swap_with_mass(a.mass_kg)            # B copied A's mass while swapping to heavier motors
    cmp = compare_builds(a, b)
    # 4 × ((motor + prop) of B − (motor + prop) of A) (derived)
    change = 4 * (b.motor.mass_kg + b.prop.mass_kg - a.motor.mass_kg - a.prop.mass_kg)
    assert cmp.mass.rule == "parts" and cmp.mass.reason == "same-mass-parts-differ"
    assert cmp.build_b.mass_kg == pytest.approx(a.mass_kg + change, rel=1e-12)
    # pick, given exactly B's parts for A's frame, scores the same mass and the same shifted modes
    space = SearchSpace((MotorOption("b", b.motor, "catalog"),), (PropOption("b", b.prop, "catalog"),),
                        (b.pack.cells,))
    cand = candidate_build(a, space, 0)
    assert cand.mass_kg == pytest.approx(cmp.build_b.mass_kg, rel=1e-12)
    assert [m.frequency_hz for m in cand.modes] == pytest.approx([m.frequency_hz for m in cmp.build_b.modes])
    assert check_build(cand).verdict == cmp.b.verdict


def test_own_stated_mass_is_kept_and_the_rule_can_be_forced():
    a = load_build(EXAMPLES / "freestyle-5in.toml")
    b = _swap_with_mass(0.75)
    auto = compare_builds(a, b)
    assert auto.mass.rule == "stated" and auto.mass.reason == "b-states-own-mass"
    assert auto.build_b.mass_kg == 0.75
    forced = compare_builds(a, b, mass="parts")
    assert forced.build_b.mass_kg == pytest.approx(a.mass_kg + forced.mass.parts_change_kg, rel=1e-12)
    same = compare_builds(a, _swap_with_mass(a.mass_kg), mass="stated")
    assert same.build_b.mass_kg == a.mass_kg and same.mass.reason == "asked"
    with pytest.raises(InputError, match="mass"):
        compare_builds(a, b, mass="guess")


def test_unknown_part_mass_keeps_the_stated_mass():
    a = _build(PAIR.format(name="A", mass="600 g"))
    b = _build(PAIR.format(name="B", mass="600 g"))
    cmp = compare_builds(a, b)
    assert cmp.mass.rule == "stated" and cmp.mass.reason == "part-mass-unknown"
    assert math.isnan(cmp.mass.parts_change_kg)


# --- a clash that gets much worse --------------------------------------------------------


def _mass_for_hover_hz(n_hz: float) -> float:
    # N·C_T·ρ·n²·D⁴ = m·g (REFERENCES.md §5)
    return 4 * 0.12 * RHO0 * n_hz**2 * 0.127**4 / G


def _magnification(r: float, zeta: float) -> float:
    # Rao, Mechanical Vibrations 5th ed. §3.4
    return 1 / math.sqrt((1 - r * r) ** 2 + (2 * zeta * r) ** 2)


def test_a_clash_that_deepens_is_reported_and_worse():
    # hover 1× at 9.8 % below the 200 Hz plate in A and 0.1 % below it in B: both clash (15 % asked)
    a = _build(PAIR.format(name="A", mass=f"{_mass_for_hover_hz(200 * (1 - 0.098))!r} kg"))
    b = _build(PAIR.format(name="B", mass=f"{_mass_for_hover_hz(200 * (1 - 0.001))!r} kg"))
    cmp = compare_builds(a, b)
    assert cmp.a.verdict == cmp.b.verdict == "clash"
    assert not cmp.appeared and not cmp.verdict_changes
    deep = {(d.point, d.pack_state): d for d in cmp.deepened}
    assert set(deep) == {("hover", s) for s in ("full", "nominal", "empty")}
    d = deep[("hover", "empty")]
    assert d.margin_a == pytest.approx(0.098, abs=1e-6) and d.margin_b == pytest.approx(0.001, abs=1e-6)
    # ζ = 0.05: M(0.902) ≈ 4.83, M(0.999) ≈ 10.0, a ratio above 2 (+6 dB) (derived)
    assert d.magnification_a == pytest.approx(_magnification(0.902, 0.05), rel=1e-5)
    assert d.magnification_b == pytest.approx(_magnification(0.999, 0.05), rel=1e-5)
    assert cmp.worse_at("clash") and cmp.worse_at("watch")
    # a small step within the clash (9.8 % → 8 %) is not "much worse"
    c = _build(PAIR.format(name="C", mass=f"{_mass_for_hover_hz(200 * (1 - 0.08))!r} kg"))
    small = compare_builds(a, c)
    assert small.deepened == () and not small.worse_at("clash")
    from clashcheck.report.decide import compare_to_dict, render_compare

    data = compare_to_dict(cmp)
    assert {(x["point"], x["pack_state"]) for x in data["changes"]["clashes_deepened"]} == set(deep)
    assert "clashes that get much worse in B: plate at hover" in render_compare(cmp, "table")


def test_margin_rows_once_and_ranges_per_pack_state():
    from clashcheck.report.decide import render_compare

    a = _build(PAIR.format(name="A", mass="600 g"))
    b = _build(PAIR.format(name="B", mass="900 g"))
    cmp = compare_builds(a, b)
    text = render_compare(cmp, "table")
    block = text.split("Margins at hover")[1].split("Changes")[0]
    # a computed hover has one rotor rate at every pack state: one row, marked "all"
    rows = [line for line in block.splitlines() if line.startswith("plate")]
    assert len(rows) == 1 and " all " in rows[0]
    # per pack state: the danger ranges of each state are kept apart
    assert set(cmp.ranges_a["plate"]) == {"full", "nominal", "empty"}
    for state, ranges in cmp.ranges_a["plate"].items():
        assert all(state in r.pack_states for r in ranges)


def test_cli_compare_names_the_bad_file(tmp_path):
    runner = CliRunner()
    a = EXAMPLES / "freestyle-5in.toml"
    bad = tmp_path / "b.toml"
    bad.write_text(a.read_text(encoding="utf-8").replace('[battery]\n', '[battery]\nbogus = 1\n', 1),
                   encoding="utf-8")
    res = runner.invoke(main, ["compare", str(a), str(bad)])
    assert res.exit_code == 2 and "Traceback" not in res.output
    assert str(bad) in res.stderr and "battery" in res.stderr and len(res.stderr.strip().splitlines()) == 1
    res = runner.invoke(main, ["compare", str(a), str(a), "--mass", "guess"])
    assert res.exit_code == 2
