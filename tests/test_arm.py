"""Tests of clashcheck.model.arm (beam estimate of arm modes) and the `arm` command.

Reference values come from REFERENCES.md §3 (Blevins table 8-1; Karnovsky &
Lebed 2004 §7.5.3, table 7.6; the derived steel worked examples), from the
closed-form limits of the model, and from an independent finite-element model
written here (Euler–Bernoulli Hermite beam elements with consistent mass, a
lumped tip mass and inertia and an optional root spring, solved with
scipy.linalg.eigh).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from click.testing import CliRunner
from hypothesis import given, settings
from hypothesis import strategies as st

from clashcheck.cli import main
from clashcheck.errors import InputError
from clashcheck.inputs import armfile
from clashcheck.inputs.armfile import parse_arm_table
from clashcheck.model import arm
from clashcheck.model.arm import (
    ArmGeometry,
    Material,
    beam_frequency_hz,
    estimate_arm,
    estimated_modes,
    frequency_parameters,
    rayleigh_frequency_hz,
    tip_mass_equation,
)
from clashcheck.report.arm import arm_json, arm_table

# Steel worked example of REFERENCES.md §3: L = 1 m, 10 × 10 mm, E 200 GPa, ρ 7850 kg/m³.
STEEL = Material("steel", "worked example", 200e9, 200e9, 200e9, 7850.0, 7850.0, 7850.0)
STEEL_BEAM_MASS = 7850.0 * 1e-4 * 1.0  # 0.785 kg
STEEL_I = 0.01**4 / 12.0

# A 5-inch-class arm (the CLI example): 110 × 12 × 5 mm, carbon-qi, 48 g tip.
ARM_TABLE = {
    "length": "110 mm",
    "width": "12 mm",
    "thickness": "5 mm",
    "material": "carbon-qi",
    "tip_mass": "48 g",
}
ARM_FLAGS = ["--length", "110 mm", "--width", "12 mm", "--thickness", "5 mm",
             "--material", "carbon-qi", "--tip-mass", "48 g"]


def steel_arm(tip_mass_kg: float = 0.0, **kwargs) -> ArmGeometry:
    return ArmGeometry(1.0, STEEL, tip_mass_kg, width_m=0.01, thickness_m=0.01, **kwargs)


def fe_frequencies(
    length_m: float,
    ei: float,
    rho_a: float,
    tip_mass_kg: float,
    tip_inertia_kg_m2: float = 0.0,
    clamp_stiffness: float | None = None,
    elements: int = 40,
    count: int = 2,
) -> np.ndarray:
    """Natural frequencies [Hz] of a finite-element cantilever (independent model)."""
    from scipy.linalg import eigh

    h = length_m / elements
    ke = ei / h**3 * np.array([
        [12, 6 * h, -12, 6 * h],
        [6 * h, 4 * h**2, -6 * h, 2 * h**2],
        [-12, -6 * h, 12, -6 * h],
        [6 * h, 2 * h**2, -6 * h, 4 * h**2],
    ])
    me = rho_a * h / 420.0 * np.array([
        [156, 22 * h, 54, -13 * h],
        [22 * h, 4 * h**2, 13 * h, -3 * h**2],
        [54, 13 * h, 156, -22 * h],
        [-13 * h, -3 * h**2, -22 * h, 4 * h**2],
    ])
    n = 2 * (elements + 1)
    k, m = np.zeros((n, n)), np.zeros((n, n))
    for e in range(elements):
        sl = slice(2 * e, 2 * e + 4)
        k[sl, sl] += ke
        m[sl, sl] += me
    m[-2, -2] += tip_mass_kg
    m[-1, -1] += tip_inertia_kg_m2
    if clamp_stiffness is None:
        free = slice(2, n)  # deflection and slope fixed at the root
    else:
        k[1, 1] += clamp_stiffness
        free = slice(1, n)  # deflection fixed, slope on a spring
    w2 = eigh(k[free, free], m[free, free], eigvals_only=True, subset_by_index=[0, count - 1])
    return np.sqrt(w2) / (2.0 * math.pi)


# --------------------------------------------------------------------------
# Bare cantilever


BLEVINS_LAMBDA = (1.87510407, 4.69409113, 7.85475744, 10.99554073)


def test_bare_cantilever_roots():
    roots = frequency_parameters(count=4)
    for got, want in zip(roots, BLEVINS_LAMBDA):
        assert got == pytest.approx(want, abs=1e-8)  # Blevins table 8-1 (confirmed)
        assert math.cos(got) * math.cosh(got) == pytest.approx(-1.0, abs=1e-9)  # cos λ cosh λ = −1


def test_steel_worked_example_bare():
    est = estimate_arm(steel_arm(0.0), modes_per_plane=3)
    flap = [e.frequency_hz for e in est.estimates if e.plane == "flap"]
    # REFERENCES.md §3 steel worked example (derived)
    assert flap == pytest.approx([8.1538, 51.0990, 143.0788], abs=5e-5)
    lead_lag = [e.frequency_hz for e in est.estimates if e.plane == "lead-lag"]
    assert lead_lag == pytest.approx(flap, rel=1e-12)  # square section: both planes alike
    assert beam_frequency_hz(BLEVINS_LAMBDA[0], 1.0, 200e9, STEEL_I, 7850.0, 1e-4) == (
        pytest.approx(8.1538, abs=5e-5)
    )


def test_rayleigh_bare_reads_high_by_1465():
    est = estimate_arm(steel_arm(0.0))
    first = est.estimates[0]
    assert first.rayleigh_difference == pytest.approx(0.01465, abs=5e-6)  # REFERENCES.md §3 (derived)


# --------------------------------------------------------------------------
# Tip mass


@pytest.mark.parametrize("mu, want", [(0.1, 1.722742), (1.0, 1.247917), (10.0, 0.735782)])
def test_tip_mass_roots(mu, want):
    # Karnovsky & Lebed 2004 §7.5.3, table 7.6 (confirmed); roots derived in REFERENCES.md §3
    assert frequency_parameters(mu, count=1)[0] == pytest.approx(want, abs=1e-6)


def test_steel_tip_mass_example():
    est = estimate_arm(steel_arm(STEEL_BEAM_MASS))
    first = est.estimates[0]
    assert first.frequency_hz == pytest.approx(3.61145, abs=1e-5)  # REFERENCES.md §3 (derived)
    assert first.rayleigh_hz == pytest.approx(3.61336, abs=1e-5)  # REFERENCES.md §3 (derived)
    assert first.rayleigh_difference == pytest.approx(0.00053, abs=5e-6)  # "0.053 % high"
    # k = 3EI/L³ = 500 N/m (REFERENCES.md §3)
    assert 3 * 200e9 * STEEL_I / 1.0**3 == pytest.approx(500.0)


def test_limit_small_tip_mass_gives_bare_beam():
    roots = frequency_parameters(1e-9, count=4)
    assert roots == pytest.approx(BLEVINS_LAMBDA, abs=1e-7)  # Blevins table 8-1


@pytest.mark.parametrize("ratio", [1e2, 1e3, 1e4])
def test_limit_large_tip_mass_gives_spring_mass(ratio):
    tip = ratio * STEEL_BEAM_MASS
    f = estimate_arm(steel_arm(tip)).estimates[0].frequency_hz
    spring_mass = math.sqrt(3 * 200e9 * STEEL_I / (tip * 1.0**3)) / (2 * math.pi)  # derived
    # the beam adds about 33/140 of its mass, so the gap closes like 0.118/μ (derived)
    assert f == pytest.approx(spring_mass, rel=0.2 / ratio)
    assert f < spring_mass


def test_determinant_is_twice_the_closed_form():
    lam = np.linspace(0.05, 12.0, 97)
    for mu, j in [(0.0, 0.0), (0.7, 0.0), (3.0, 0.05), (0.5, 1.0)]:
        det = arm._boundary_determinant(lam, mu, j, 0.0) * np.cosh(lam)
        # the 4 × 4 boundary-condition determinant equals 2 × the frequency equation (derived)
        np.testing.assert_allclose(det, 2.0 * tip_mass_equation(lam, mu, j), rtol=1e-9, atol=1e-9)


@settings(max_examples=30, deadline=None, derandomize=True)
@given(
    mu=st.floats(0.0, 50.0),
    j=st.floats(0.0, 0.5),
    phi=st.floats(0.0, 5.0),
)
def test_rayleigh_is_an_upper_bound(mu, j, phi):
    # Rayleigh's quotient bounds the first eigenvalue from above (Rao, Mechanical
    # Vibrations 5th ed. §8, recalled from memory); unit beam, EI = ρA = L = 1.
    lam = frequency_parameters(mu, j, phi, count=1)[0]
    exact = lam**2 / (2 * math.pi)
    stiffness = None if phi == 0.0 else 1.0 / phi
    rayleigh = rayleigh_frequency_hz(1.0, 1.0, 1.0, 1.0, mu, j, stiffness)
    assert rayleigh >= exact * (1 - 1e-12)
    if j == 0.0 and phi == 0.0:
        # for a point tip mass the error is largest on the bare beam: 1.465 % (REFERENCES.md §3)
        assert rayleigh <= exact * 1.01466


# --------------------------------------------------------------------------
# Independent finite-element model


def _carbon_arm(**extra) -> ArmGeometry:
    return parse_arm_table({**ARM_TABLE, **extra})


def test_fe_agrees_with_first_flap_mode():
    geo = _carbon_arm()
    est = estimate_arm(geo)
    area, inertia = geo.section_properties("flap")
    mat = geo.material
    fe = fe_frequencies(geo.length_m, mat.modulus_pa * inertia, mat.density_kg_m3 * area,
                        geo.tip_mass_kg)
    flap = [e for e in est.estimates if e.plane == "flap"]
    # issue 4 §5: within 0.5 % on the first flap mode; converged elements agree far closer
    assert abs(flap[0].frequency_hz / fe[0] - 1) < 0.005
    assert flap[0].frequency_hz == pytest.approx(fe[0], rel=1e-6)
    assert flap[1].frequency_hz == pytest.approx(fe[1], rel=1e-5)


def test_fe_agrees_with_inertia_and_root_spring():
    geo = _carbon_arm(tip_inertia="30 g*cm^2", clamp_stiffness="150 N*m/rad")
    est = estimate_arm(geo)
    mat = geo.material
    for plane in ("flap", "lead-lag"):
        area, inertia = geo.section_properties(plane)
        fe = fe_frequencies(geo.length_m, mat.modulus_pa * inertia, mat.density_kg_m3 * area,
                            geo.tip_mass_kg, 30e-7, 150.0)
        mine = [e.frequency_hz for e in est.estimates if e.plane == plane]
        assert mine == pytest.approx(fe[: len(mine)], rel=1e-5)  # independent FE model


@pytest.mark.parametrize("mu, j", [(0.0, 0.2), (2.0, 0.1), (5.0, 1.0)])
def test_fe_agrees_with_rotary_inertia_roots(mu, j):
    # unit beam: EI = ρA = L = 1, so f = λ²/2π
    lams = frequency_parameters(mu, j, count=2)
    fe = fe_frequencies(1.0, 1.0, 1.0, mu, j)
    np.testing.assert_allclose(np.square(lams) / (2 * math.pi), fe, rtol=1e-5)


def test_stiff_clamp_tends_to_rigid_and_soft_clamp_lowers():
    rigid = estimate_arm(_carbon_arm()).estimates[0].frequency_hz
    stiff = estimate_arm(_carbon_arm(clamp_stiffness="1e9 N*m/rad")).estimates[0].frequency_hz
    soft = estimate_arm(_carbon_arm(clamp_stiffness="50 N*m/rad")).estimates[0].frequency_hz
    assert stiff == pytest.approx(rigid, rel=1e-6)  # derived: φ → 0 is the clamped beam
    assert soft < rigid


def test_effective_length_factor_is_a_longer_beam():
    with_factor = estimate_arm(_carbon_arm(effective_length_factor=1.2))
    longer = estimate_arm(parse_arm_table({**ARM_TABLE, "length": "132 mm"}))
    # derived: the factor models a rigidly clamped beam of factor × length
    for a, b in zip(with_factor.estimates, longer.estimates):
        assert a.frequency_hz == pytest.approx(b.frequency_hz, rel=1e-9)
    assert not with_factor.clamp_rigid


# --------------------------------------------------------------------------
# Material range, sections and modes


def test_material_range_corners():
    geo = _carbon_arm()
    est = estimate_arm(geo)
    mat = geo.material

    def at(modulus, density):
        m = Material("x", "", modulus, modulus, modulus, density, density, density)
        return estimate_arm(ArmGeometry(geo.length_m, m, geo.tip_mass_kg, width_m=geo.width_m,
                                        thickness_m=geo.thickness_m))

    low = at(mat.modulus_low_pa, mat.density_high_kg_m3)
    high = at(mat.modulus_high_pa, mat.density_low_kg_m3)
    for e, lo, hi in zip(est.estimates, low.estimates, high.estimates):
        assert e.frequency_low_hz == pytest.approx(lo.frequency_hz, rel=1e-12)  # E low, ρ high
        assert e.frequency_high_hz == pytest.approx(hi.frequency_hz, rel=1e-12)  # E high, ρ low
        assert e.frequency_low_hz < e.frequency_hz < e.frequency_high_hz


def test_rectangle_and_tube_sections():
    geo = _carbon_arm()
    b, t = 0.012, 0.005
    assert geo.section_properties("flap") == pytest.approx((b * t, b * t**3 / 12))  # derived
    assert geo.section_properties("lead-lag") == pytest.approx((b * t, t * b**3 / 12))
    tube = parse_arm_table({"length": "250 mm", "outer_diameter": "16 mm", "wall": "1 mm",
                            "material": "al-6061-t6", "tip_mass": "150 g"})
    outer, inner = 0.016, 0.014
    assert tube.section_properties("flap") == pytest.approx(
        (math.pi * (outer**2 - inner**2) / 4, math.pi * (outer**4 - inner**4) / 64)  # derived
    )
    est = estimate_arm(tube)
    flap = [e.frequency_hz for e in est.estimates if e.plane == "flap"]
    lead = [e.frequency_hz for e in est.estimates if e.plane == "lead-lag"]
    assert flap == pytest.approx(lead, rel=1e-12)
    assert any("Round tube" in n for n in est.notes)


def test_lead_lag_uses_width_as_depth():
    est = estimate_arm(_carbon_arm())
    flap = est.estimates[0]
    lead = next(e for e in est.estimates if e.plane == "lead-lag")
    # same μ, I ratio (12/5)², so f ratio 12/5 (derived)
    assert lead.frequency_hz / flap.frequency_hz == pytest.approx(12 / 5, rel=1e-9)


def test_modes_above_limit_are_dropped_with_a_note():
    est = estimate_arm(_carbon_arm())
    names = [e.name for e in est.estimates]
    assert names == ["arm flap (est.)", "arm flap 2 (est.)", "arm lead-lag (est.)"]
    assert any("lead-lag mode 2" in n and "2000 Hz" in n for n in est.notes)
    assert all(e.frequency_low_hz < 2000.0 for e in est.estimates)


def test_estimated_modes_for_check():
    est = estimate_arm(_carbon_arm())
    modes = estimated_modes(est)
    assert [m.name for m in modes] == [e.name for e in est.estimates]
    for mode, e in zip(modes, est.estimates):
        assert mode.origin == "estimated" and mode.kind == "arm" and mode.damping is None
        assert (mode.frequency_low_hz, mode.frequency_hz, mode.frequency_high_hz) == (
            e.frequency_low_hz, e.frequency_hz, e.frequency_high_hz)
        assert mode.source.startswith("beam estimate (carbon-qi")
    assert modes[0].axis == "any" and modes[2].axis == "yaw"


def test_rigid_clamp_and_point_mass_are_noted():
    est = estimate_arm(_carbon_arm())
    assert est.clamp_rigid
    assert any("Clamp taken as rigid" in n for n in est.notes)
    assert any("point mass" in n for n in est.notes)
    assert any("shear deformation" in n for n in est.notes)  # L/width = 9.2 < 10


# --------------------------------------------------------------------------
# Catalog and parsing


def test_material_catalog_matches_references():
    cat = armfile.materials()
    assert set(cat) >= {"carbon-qi", "carbon-woven", "al-6061-t6", "al-7075-t6",
                        "glass-laminate", "nylon-moulded", "pc-moulded"}
    qi, woven = cat["carbon-qi"], cat["carbon-woven"]
    # REFERENCES.md §8: plate QI 45–55 GPa, woven 55–70 GPa, 1.5–1.6 g/cm³ (memory)
    assert (qi.modulus_low_pa, qi.modulus_high_pa) == pytest.approx((45e9, 55e9))
    assert (woven.modulus_low_pa, woven.modulus_high_pa) == pytest.approx((55e9, 70e9))
    assert (qi.density_low_kg_m3, qi.density_high_kg_m3) == pytest.approx((1500, 1600))
    assert "46.4" in qi.source  # CLT-derived figure, REFERENCES.md §8
    for mat in cat.values():
        assert mat.source and mat.description


def test_default_tip_mass_from_motor_and_prop():
    table = {k: v for k, v in ARM_TABLE.items() if k != "tip_mass"}
    geo = parse_arm_table(table, motor_mass_kg=0.033, prop_mass_kg=0.0046)
    assert geo.tip_mass_kg == pytest.approx(0.0376)
    assert geo.tip_mass_origin == "motor + prop"
    assert any("motor plus propeller" in n for n in estimate_arm(geo).notes)


def test_explicit_modulus_collapses_its_range_only():
    geo = _carbon_arm(modulus="48 GPa")
    mat = geo.material
    assert mat.modulus_low_pa == mat.modulus_pa == mat.modulus_high_pa == pytest.approx(48e9)
    assert (mat.density_low_kg_m3, mat.density_high_kg_m3) == pytest.approx((1500, 1600))
    custom = parse_arm_table({k: v for k, v in ARM_TABLE.items() if k != "material"}
                             | {"modulus": "200 GPa", "density": "7850 kg/m^3"})
    assert custom.material.id == "custom" and not custom.material.has_range


@pytest.mark.parametrize("text, want", [
    ("150 N*m/rad", 150.0),
    ("150 N*m", 150.0),  # SI: the radian counts as 1
    ("2.618 N*m/deg", 2.618 * 180 / math.pi),  # derived: 1 rad = 180/π deg
])
def test_clamp_stiffness_is_per_radian(text, want):
    geo = _carbon_arm(clamp_stiffness=text)
    assert geo.clamp_stiffness_n_m_per_rad == pytest.approx(want, rel=1e-12)


_BAD = [
    ({"lenght": "110 mm"}, r"frame\.arm\.lenght.*did you mean 'length'"),
    ({"length": "0 mm"}, r"frame\.arm\.length"),
    ({"length": "-110 mm"}, r"frame\.arm\.length"),
    ({"length": "4 mm"}, r"frame\.arm\.length.*larger than the section"),
    ({"width": "0 mm"}, r"frame\.arm\.width"),
    ({"thickness": "-5 mm"}, r"frame\.arm\.thickness"),
    ({"thickness": "14 mm"}, r"frame\.arm\.thickness.*no larger than the width.*swapped"),
    ({"material": "carbon-quasi"}, r"frame\.arm\.material.*did you mean 'carbon-qi'"),
    ({"tip_mass": "48 mm"}, r"frame\.arm\.tip_mass.*dimension"),
    ({"tip_mass": 48}, r"frame\.arm\.tip_mass.*unit"),
    ({"outer_diameter": "16 mm", "wall": "1 mm"}, r"frame\.arm\.outer_diameter.*either"),
    ({"clamp_stiffness": "150 N"}, r"frame\.arm\.clamp_stiffness.*dimension"),
    ({"effective_length_factor": 0.9}, r"frame\.arm\.effective_length_factor.*1 to 2"),
    ({"effective_length_factor": "1.1"}, r"frame\.arm\.effective_length_factor.*bare number"),
    ({"effective_length_factor": 1.1, "clamp_stiffness": "150 N*m/rad"}, r"not both"),
]


@pytest.mark.parametrize("change, match", _BAD)
def test_bad_arm_tables(change, match):
    with pytest.raises(InputError, match=match):
        parse_arm_table({**ARM_TABLE, **change})


@pytest.mark.parametrize(
    "table, match",
    [
        ({"length": "250 mm", "outer_diameter": "16 mm", "wall": "8 mm"},
         r"frame\.arm\.wall.*thinner than the outer radius"),
        ({"length": "250 mm", "outer_diameter": "16 mm", "wall": "9 mm"}, r"frame\.arm\.wall"),
        ({"length": "250 mm", "outer_diameter": "16 mm"}, r"frame\.arm\.wall.*nothing"),
        ({"length": "250 mm"}, r"frame\.arm\.width.*cross-section"),
    ],
)
def test_bad_tubes_and_sections(table, match):
    with pytest.raises(InputError, match=match):
        parse_arm_table({**table, "material": "al-6061-t6", "tip_mass": "150 g"})


def test_missing_tip_mass_and_material():
    table = {k: v for k, v in ARM_TABLE.items() if k != "tip_mass"}
    with pytest.raises(InputError, match=r"frame\.arm\.tip_mass.*nothing"):
        parse_arm_table(table)
    with pytest.raises(InputError, match=r"only the motor mass is known"):
        parse_arm_table(table, motor_mass_kg=0.033)
    table = {k: v for k, v in ARM_TABLE.items() if k != "material"} | {"modulus": "50 GPa"}
    with pytest.raises(InputError, match=r"frame\.arm\.density.*catalog material"):
        parse_arm_table(table)
    with pytest.raises(InputError, match=r"frame\.arm: expected a table"):
        parse_arm_table(["not", "a", "table"])  # type: ignore[arg-type]


# --------------------------------------------------------------------------
# Report and command line


def test_report_table_and_json():
    est = estimate_arm(_carbon_arm())
    text = arm_table(est)
    assert "clamp taken as rigid" in text
    assert "propellers removed" in text and "aviation rules" in text
    data = arm_json(est)
    assert json.loads(json.dumps(data)) == data
    assert [m["name"] for m in data["modes"]] == [e.name for e in est.estimates]


def test_cli_flags_json_matches_library():
    result = CliRunner().invoke(main, ["arm", *ARM_FLAGS, "--format", "json"])
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    lib = estimate_arm(parse_arm_table(ARM_TABLE))
    assert len(data["modes"]) == len(lib.estimates)
    for got, want in zip(data["modes"], lib.estimates):
        assert got["name"] == want.name and got["plane"] == want.plane
        for key in ("frequency_hz", "frequency_low_hz", "frequency_high_hz"):
            assert got[key] == pytest.approx(getattr(want, key), rel=1e-12)
        assert got["method"] == want.method
    assert data["arm"]["clamp"]["rigid"] is True


def test_cli_table_says_rigid_and_cautions():
    result = CliRunner().invoke(main, ["arm", *ARM_FLAGS])
    assert result.exit_code == 0, result.output
    assert "clamp taken as rigid" in result.stdout
    assert "propellers removed" in result.stdout


_BUILD = """
[frame]
motors = 4
mass = "720 g"

[frame.arm]
length = "110 mm"
width = "12 mm"
thickness = "5 mm"
material = "carbon-qi"

[motor]
kv = "1750 rpm/V"
poles = 14
slots = 12
mass = "33 g"

[prop]
diameter = "5.1 in"
blades = 3
mass = "4.6 g"

[battery]
cells = 6
"""


def test_cli_build_file(tmp_path):
    path = tmp_path / "quad.toml"
    path.write_text(_BUILD, encoding="utf-8")
    result = CliRunner().invoke(main, ["arm", str(path), "--format", "json"])
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    assert data["arm"]["tip_mass_kg"] == pytest.approx(0.0376)  # motor + prop
    assert data["arm"]["tip_mass_origin"] == "motor + prop"
    lib = estimate_arm(parse_arm_table(ARM_TABLE | {"tip_mass": "37.6 g"}))
    assert data["modes"][0]["frequency_hz"] == pytest.approx(lib.estimates[0].frequency_hz)


def test_cli_build_without_arm_and_with_flags(tmp_path):
    path = tmp_path / "quad.toml"
    path.write_text(_BUILD, encoding="utf-8")
    both = CliRunner().invoke(main, ["arm", str(path), "--length", "100 mm"])
    assert both.exit_code == 2 and "not both" in both.stderr
    no_arm = tmp_path / "plain.toml"
    text = _BUILD.split("[frame.arm]")[0] + '[[frame.modes]]\nname = "a"\nfrequency = "200 Hz"\n'
    no_arm.write_text(text + _BUILD.split('material = "carbon-qi"')[1], encoding="utf-8")
    result = CliRunner().invoke(main, ["arm", str(no_arm)])
    assert result.exit_code == 2
    assert result.stderr.count("\n") == 1 and "frame.arm" in result.stderr


@pytest.mark.parametrize(
    "replace, match",
    [
        (("--width", "0 mm"), "arm.width"),
        (("--length", "-110 mm"), "arm.length"),
        (("--thickness", "14 mm"), "arm.thickness"),
        (("--material", "carbon-quasi"), "did you mean 'carbon-qi'"),
        (("--tip-mass", "48 mm"), "arm.tip_mass"),
    ],
)
def test_cli_bad_geometry_exits_2_with_one_line(replace, match):
    flags = list(ARM_FLAGS)
    flags[flags.index(replace[0]) + 1] = replace[1]
    result = CliRunner().invoke(main, ["arm", *flags])
    assert result.exit_code == 2
    assert result.stderr.count("\n") == 1 and match in result.stderr
    assert "Traceback" not in result.output


def test_cli_tube_wall_too_thick_exits_2():
    result = CliRunner().invoke(main, ["arm", "--length", "250 mm", "--outer-diameter", "16 mm",
                                       "--wall", "8 mm", "--material", "al-6061-t6",
                                       "--tip-mass", "150 g"])
    assert result.exit_code == 2
    assert result.stderr.count("\n") == 1 and "arm.wall" in result.stderr
