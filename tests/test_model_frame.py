"""Tests of clashcheck.model.frame: the free–free frame of beam arms on a rigid body.

References, named beside each check:
- the clamped cantilever with a tip mass and rotary inertia, Karnovsky & Lebed
  §7.5.3 (REFERENCES.md §3), through the frequency equation of
  ``clashcheck.model.arm`` (itself checked against the published roots in
  tests/test_arm.py);
- a derivation written out below for the collective flap on a free body;
- PyNiteFEA (a general 3-D frame finite-element library, test extra) on the
  same geometry;
- Roark's torsion table for a square section.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from clashcheck.errors import InputError
from clashcheck.model.arm import ArmGeometry, Material, beam_frequency_hz, frequency_parameters
from clashcheck.model.frame import (
    FrameBody,
    FrameLayout,
    FrameModel,
    box_inertia,
    calibrate_frame,
    element_mass,
    element_stiffness,
    estimate_frame,
    frame_modes,
    solve_frame,
    stretched_angles,
    torsion_constant,
)
from clashcheck.model.modes import Mode

E, RHO, G = 50e9, 1550.0, 4.0e9
CARBON = Material("custom", "test plate", E, E, E, RHO, RHO, RHO, "test", shear_modulus_pa=G)
L, W, T = 0.110, 0.012, 0.005
TIP_M, TIP_J = 0.040, 1.2e-6


def _arm(**kw) -> ArmGeometry:
    args = dict(length_m=L, material=CARBON, tip_mass_kg=TIP_M, width_m=W, thickness_m=T,
                tip_inertia_kg_m2=TIP_J)
    args.update(kw)
    return ArmGeometry(**args)


def _model(arm=None, body=None, angles=None, root=0.03, n=8) -> FrameModel:
    return FrameModel(arm or _arm(), body or FrameBody(0.30, (2.0e-3, 2.0e-3, 3.8e-3)),
                      FrameLayout(angles or stretched_angles(4), root), n)


# ---------------------------------------------------------------------------
# element matrices and section


def test_torsion_constant_square_against_roark():
    # Roark's Formulas for Stress and Strain, torsion table: square of side a, K = 0.1406 a^4
    sq = _arm(width_m=0.01, thickness_m=0.01)
    assert torsion_constant(sq) == pytest.approx(0.1406e-8, rel=2e-3)


def test_torsion_constant_tube_is_polar_moment():
    # exact for a round tube: J = pi (D^4 - d^4) / 32
    tube = ArmGeometry(L, CARBON, TIP_M, section="tube", outer_diameter_m=0.016, wall_m=0.001)
    assert torsion_constant(tube) == pytest.approx(math.pi * (0.016**4 - 0.014**4) / 32, rel=1e-12)


def test_thin_strip_torsion_tends_to_wt3_over_3():
    # Roark: for w >> t, J -> w t^3 / 3 (minus the 0.21 t/w edge correction)
    strip = _arm(width_m=0.05, thickness_m=0.001)
    assert torsion_constant(strip) == pytest.approx(0.05 * 1e-9 * (1 / 3 - 0.21 / 50), rel=1e-6)


def test_element_matrices_symmetric_and_rigid_motion_free():
    # derived: a rigid translation and a rigid rotation store no strain energy
    k = element_stiffness(0.02, E, G, 6e-5, 1e-10, 7e-10, 4e-10)
    m = element_mass(0.02, RHO, 6e-5, 8e-10)
    assert np.allclose(k, k.T) and np.allclose(m, m.T)
    shift = np.tile([1.0, 2.0, 3.0, 0, 0, 0], 2)
    assert np.allclose(k @ shift, 0.0)
    turn = np.array([0, 0, 0, 0, 0, 1.0, 0, 0.02, 0, 0, 0, 1.0])   # about z: v2 = θ·L
    assert np.allclose(k @ turn, 0.0, atol=1e-6 * np.abs(k).max())
    # the consistent mass carries the element's mass on each translation
    assert shift[:3] @ m[:3, :3] @ shift[:3] + 2 * shift[:3] @ m[:3, 6:9] @ shift[:3] \
        + shift[:3] @ m[6:9, 6:9] @ shift[:3] == pytest.approx(RHO * 6e-5 * 0.02 * 14, rel=1e-12)


# ---------------------------------------------------------------------------
# limits against closed forms


@pytest.mark.parametrize("clamp", [None, 60.0])
def test_heavy_body_tends_to_clamped_cantilever_with_tip_mass(clamp):
    # Karnovsky & Lebed §7.5.3 (REFERENCES.md §3), via clashcheck.model.arm's frequency
    # equation with tip rotary inertia and (for clamp = 60) the root-spring determinant
    arm = _arm(clamp_stiffness_n_m_per_rad=clamp)
    heavy = FrameBody(1e5, (1e5, 1e5, 2e5))
    f, _ = solve_frame(_model(arm, heavy, n=12), count=8)
    expected = []
    for plane in ("flap", "lead-lag"):
        area, inertia = arm.section_properties(plane)
        beam = RHO * area * L
        phi = 0.0 if clamp is None else E * inertia / (clamp * L)
        lam = frequency_parameters(TIP_M / beam, TIP_J / (beam * L**2), phi, count=1)[0]
        expected += [beam_frequency_hz(lam, L, E, inertia, RHO, area)] * 4
    assert f == pytest.approx(sorted(expected), rel=1e-3)


def _collective_flap_hz(body_share_kg: float) -> float:
    """Collective flap of N identical arms on a free body, derived here.

    By symmetry the body heaves without turning, so each arm is a beam whose
    root moves with the body: Y'(0) = 0 (rigid root, no body rotation) and the
    root shear accelerates the arm's share of the body mass, M0 = m_body/N.
    Mirroring the tip condition EI·Y'''(L) = −ω²M·Y(L) to the other end gives
    EI·Y'''(0) = +ω²M0·Y(0).  With ξ = x/L, λ⁴ = ω²ρAL⁴/(EI), μ = M/(ρAL),
    μ0 = M0/(ρAL), j = J/(ρAL³) and Y = A cosh λξ + B sinh λξ + C cos λξ + D sin λξ:

        Y'(0) = 0:                [0, 1, 0, 1]
        Y'''(0) = μ0 λ⁴ Y(0):     [−μ0 λ, 1, −μ0 λ, −1]            (÷ λ³)
        Y''(1) = j λ⁴ Y'(1):      [ch − jλ³sh, sh − jλ³ch, −c + jλ³s, −s − jλ³c]
        Y'''(1) = −μ λ⁴ Y(1):     [sh + μλch, ch + μλsh, s + μλc, −c + μλs]

    The lowest root of the determinant gives f = λ²/(2πL²)·√(EI/(ρA)).
    As μ0 → ∞ the second row becomes Y(0) = 0, the clamped cantilever.
    """
    from scipy.optimize import brentq

    area, inertia = _arm().section_properties("flap")
    beam = RHO * area * L
    mu, mu0, j = TIP_M / beam, body_share_kg / beam, TIP_J / (beam * L**2)

    def det(lam: float) -> float:
        c, s, ch, sh = math.cos(lam), math.sin(lam), math.cosh(lam), math.sinh(lam)
        rows = [[0, 1, 0, 1],
                [-mu0 * lam, 1, -mu0 * lam, -1],
                [ch - j * lam**3 * sh, sh - j * lam**3 * ch, -c + j * lam**3 * s, -s - j * lam**3 * c],
                [sh + mu * lam * ch, ch + mu * lam * sh, s + mu * lam * c, -c + mu * lam * s]]
        return float(np.linalg.det(np.array(rows))) / ch

    grid = np.linspace(0.05, 4.0, 4000)
    values = [det(x) for x in grid]
    i = next(k for k in range(len(grid) - 1) if np.sign(values[k]) != np.sign(values[k + 1]))
    lam = brentq(det, grid[i], grid[i + 1], xtol=1e-14)
    return beam_frequency_hz(lam, L, E, inertia, RHO, area)


@pytest.mark.parametrize("body_kg", [0.05, 0.3, 2.0])
def test_collective_flap_on_a_free_body_matches_derivation(body_kg):
    # derived (see _collective_flap_hz)
    est = estimate_frame(_model(body=FrameBody(body_kg, (2e-3, 2e-3, 3.8e-3)), n=12))
    collective = [m for m in est.modes if m.pattern == "flap, all arms"][0]
    assert collective.axis == "none"
    assert collective.frequency_hz == pytest.approx(_collective_flap_hz(body_kg / 4), rel=1e-3)


# ---------------------------------------------------------------------------
# against a general finite-element library


def _pynite_frequencies(model: FrameModel, count: int = 8) -> np.ndarray:
    """Same frame in PyNiteFEA, free–free, first elastic frequencies [Hz].

    PyNite builds the arms (its own 12-DOF frame element, consistent mass from
    self-weight, its own axis transformations and assembly) and the nodal
    masses.  Its modal solver shifts about 0 and cannot take a free–free
    structure, so its assembled K and M are solved here with
    scipy.linalg.eigh and the six rigid-body roots dropped.

    How the rest is modelled:
    - the rigid body is a node C at the origin carrying the body mass (a
      nodal load in the mass combination) and, added to PyNite's M, the body
      inertia; each arm's root node A0 is joined to it by a rigid link,
      written as a transformation of the degrees of freedom (A0 translation =
      u_C + θ_C × r; A0 twist = C's rotation about the arm).  Very stiff
      members were tried first, but a root spring then needs a second node at
      the root, and PyNite splits members at coincident nodes;
    - the two bending rotations of A0 equal C's (rigid root) or are free
      degrees of freedom held by the root spring k_θ, isotropic in the plane
      across the arm, added to K here;
    - tip rotary inertias, which PyNite's nodes do not carry, are added to its
      M on the tip's rotation DOFs.
    Axes: our (x, y, z down) map to PyNite (X, Z, Y), a mirror image (same
    frequencies), so its horizontal members get local y vertical: its Iz
    bends in flap and its Iy in lead-lag.
    """
    from Pynite import FEModel3D
    from Pynite.Analysis import _prepare_model
    from scipy.linalg import eigh

    arm, body, lay = model.arm, model.body, model.layout
    area, i_flap = arm.section_properties("flap")
    _, i_lag = arm.section_properties("lead-lag")
    fe = FEModel3D()
    fe.add_material("arm", E, G, 0.3, RHO)
    fe.add_section("arm", area, i_lag, i_flap, torsion_constant(arm))
    fe.add_node("C", 0.0, 0.0, 0.0)
    n = model.elements_per_arm
    ends = []
    for a, ang in enumerate(lay.angles_rad):
        ex = np.array([math.cos(ang), 0.0, math.sin(ang)])        # in PyNite axes
        for i in range(n + 1):
            fe.add_node(f"A{a}_{i}", *(ex * (lay.root_radius_m + i * arm.length_m / n)))
        for i in range(n):
            fe.add_member(f"M{a}_{i}", f"A{a}_{i}", f"A{a}_{i + 1}", "arm", "arm")
        fe.add_node_load(f"A{a}_{n}", "FY", arm.tip_mass_kg, case="Case 1")
        ends.append((f"A{a}_0", f"A{a}_{n}", ex))
    fe.add_node_load("C", "FY", body.mass_kg, case="Case 1")
    fe.add_member_self_weight("FY", 1.0, case="Case 1")
    fe.add_load_combo("Combo 1", {"Case 1": 1.0})
    _prepare_model(fe)
    k = np.asarray(fe.Ke("Combo 1", check_stability=False, sparse=False), dtype=float)
    m = np.asarray(fe.M("Combo 1", "Y", 1.0, sparse=False), dtype=float)

    def dof(node, i):
        return 6 * fe.nodes[node].ID + i

    c = [dof("C", i) for i in range(6)]
    m[np.ix_(c[3:], c[3:])] = np.diag([body.inertia_kg_m2[0], body.inertia_kg_m2[2],
                                       body.inertia_kg_m2[1]])   # PyNite X, Y, Z
    m[np.ix_(c[:3], c[:3])] = body.mass_kg * np.eye(3)
    clamp = arm.clamp_stiffness_n_m_per_rad
    size = k.shape[0]
    slaves = {dof(a0, i) for a0, _, _ in ends for i in range(6)}
    keep = [i for i in range(size) if i not in slaves]
    extra = 2 * len(ends) if clamp is not None else 0
    t = np.zeros((size, len(keep) + extra))
    t[keep, np.arange(len(keep))] = 1.0
    col_c = [keep.index(i) for i in c]
    springs = []
    for n_arm, (a0, tip, ex) in enumerate(ends):
        r = ex * lay.root_radius_m
        skew = np.array([[0, -r[2], r[1]], [r[2], 0, -r[0]], [-r[1], r[0], 0]])
        trans = [dof(a0, i) for i in range(3)]
        rot = [dof(a0, 3 + i) for i in range(3)]
        t[np.ix_(trans, col_c[:3])] = np.eye(3)
        t[np.ix_(trans, col_c[3:])] = -skew                        # θ × r
        if clamp is None:
            t[np.ix_(rot, col_c[3:])] = np.eye(3)
        else:
            t[np.ix_(rot, col_c[3:])] = np.outer(ex, ex)
            across = (np.array([0.0, 1.0, 0.0]), np.cross(ex, [0.0, 1.0, 0.0]))
            for j, u in enumerate(across):
                col = len(keep) + 2 * n_arm + j
                t[rot, col] = u
                springs.append((col, u))
        for i in range(3):
            m[dof(tip, 3 + i), dof(tip, 3 + i)] += arm.tip_inertia_kg_m2
    k, m = t.T @ k @ t, t.T @ m @ t
    for col, u in springs:   # energy k_θ/2 · (α − u·θ_C)²
        k[col, col] += clamp
        k[col, col_c[3:]] -= clamp * u
        k[col_c[3:], col] -= clamp * u
        k[np.ix_(col_c[3:], col_c[3:])] += clamp * np.outer(u, u)
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1, user_api="blas"):  # small dense problem: one thread is faster
        values = eigh(k, m, eigvals_only=True)
    return np.sqrt(np.abs(values[6:6 + count])) / (2 * math.pi)


@pytest.mark.parametrize("layout", ["x-tube-rigid", "stretched-rect-spring"])
def test_first_eight_against_pynite(layout):
    # PyNiteFEA (test extra), same geometry; first 8 elastic frequencies within 1 %
    pytest.importorskip("Pynite")
    if layout == "x-tube-rigid":
        arm = ArmGeometry(0.13, CARBON, 0.055, section="tube", outer_diameter_m=0.012,
                          wall_m=0.0012, tip_inertia_kg_m2=2e-6)
        model = _model(arm, FrameBody(0.35, (2.2e-3, 2.2e-3, 4.1e-3)), stretched_angles(4), 0.032)
    else:
        arm = _arm(clamp_stiffness_n_m_per_rad=90.0)
        model = _model(arm, FrameBody(0.31, (1.6e-3, 3.9e-3, 5.2e-3)),
                       stretched_angles(4, 1.35), 0.028)
    ours, _ = solve_frame(model, count=8)
    theirs = _pynite_frequencies(model, 8)
    assert ours == pytest.approx(theirs, rel=0.01)


# ---------------------------------------------------------------------------
# symmetry, patterns, gyro signature


def test_symmetric_x_patterns_and_signatures():
    est = estimate_frame(_model())
    by_pattern = {}
    for mode in est.modes:
        by_pattern.setdefault(mode.pattern, mode)
    alternating = by_pattern["flap, diagonals alternating"]
    # derived: on a symmetric X, the diagonal pairs' moments about roll and pitch cancel
    assert alternating.gyro_signature[0] == pytest.approx(0.0, abs=1e-9)
    assert alternating.gyro_signature[1] == pytest.approx(0.0, abs=1e-9)
    assert alternating.axis == "none"
    assert by_pattern["flap, left against right"].axis == "roll"
    assert by_pattern["flap, front against rear"].axis == "pitch"
    assert by_pattern["lead-lag, all arms"].axis == "yaw"
    assert by_pattern["flap, all arms"].axis == "none"
    # equal roll and pitch inertia on a symmetric X: the roll and pitch flap modes coincide
    assert by_pattern["flap, left against right"].frequency_hz == pytest.approx(
        by_pattern["flap, front against rear"].frequency_hz, rel=1e-9)
    # six near-zero rigid-body roots were dropped
    assert max(abs(x) for x in est.rigid_body_hz) < 1e-2 * est.modes[0].frequency_hz


def test_stretched_layout_pitch_flap_below_roll_flap_with_larger_pitch_inertia():
    # derived: a body that turns less stiffens the arms' root less, so the axis with
    # more inertia per arm moment arm squared has the lower flap mode
    body = FrameBody(0.31, (1.5e-3, 5.5e-3, 6.6e-3))
    est = estimate_frame(_model(body=body, angles=stretched_angles(4, 1.3)))
    roll = [m for m in est.modes if m.pattern == "flap, left against right"][0]
    pitch = [m for m in est.modes if m.pattern == "flap, front against rear"][0]
    assert (roll.axis, pitch.axis) == ("roll", "pitch")
    assert pitch.frequency_hz < roll.frequency_hz * 0.99


def test_heavier_axis_mode_is_lower_on_a_square_layout():
    # derived, same argument: on a symmetric X, raising only the pitch inertia lowers
    # only the pitch-wise flap mode
    base = estimate_frame(_model(body=FrameBody(0.3, (2e-3, 2e-3, 3.8e-3))))
    heavy = estimate_frame(_model(body=FrameBody(0.3, (2e-3, 3.5e-3, 5.3e-3))))

    def freq(est, pattern):
        return [m for m in est.modes if m.pattern == pattern][0].frequency_hz

    assert freq(heavy, "flap, front against rear") < freq(base, "flap, front against rear")
    assert freq(heavy, "flap, left against right") == pytest.approx(
        freq(base, "flap, left against right"), rel=1e-6)


def test_six_arms_name_neighbours_alternating():
    est = estimate_frame(_model(angles=stretched_angles(6)))
    assert "flap, neighbours alternating" in {m.pattern for m in est.modes}


def test_convergence_doubling_elements():
    # common practice: a mesh is converged when refining it changes nothing that matters
    for angles in (stretched_angles(4), stretched_angles(4, 1.3)):
        coarse, _ = solve_frame(_model(angles=angles, n=8), count=8)
        fine, _ = solve_frame(_model(angles=angles, n=16), count=8)
        assert np.max(np.abs(coarse / fine - 1)) < 1e-3


def test_material_range_and_modes_for_check():
    mat = Material("carbon-qi", "plate", 50e9, 45e9, 55e9, 1550.0, 1500.0, 1600.0, "x")
    est = estimate_frame(_model(arm=_arm(material=mat)), max_frequency_hz=600.0)
    assert all(m.frequency_low_hz < m.frequency_hz < m.frequency_high_hz for m in est.modes)
    assert all(m.frequency_low_hz < 600.0 for m in est.modes)
    modes = frame_modes(est)
    assert all(isinstance(m, Mode) and m.origin == "estimated" for m in modes)
    assert len({m.name for m in modes}) == len(modes)
    assert {m.axis for m in modes} <= {"roll", "pitch", "yaw", "any"}
    assert any("G = E/2.6" in n for n in est.notes)   # no shear modulus in this material


def test_effective_mass_of_alternating_flap_is_four_clamped_arms():
    # Rayleigh (REFERENCES.md §3): m_eff = M + 33/140 m for a clamped arm with a tip mass,
    # per arm; the alternating flap leaves the body still, so each arm is clamped, and the
    # four arms move alike (the exact shape differs little from the static one)
    est = estimate_frame(_model(arm=_arm(tip_inertia_kg_m2=0.0)))
    beam = RHO * W * T * L
    alternating = [m for m in est.modes if m.pattern == "flap, diagonals alternating"][0]
    assert alternating.effective_mass_kg == pytest.approx(4 * (TIP_M + 33 / 140 * beam), rel=0.02)


# ---------------------------------------------------------------------------
# calibration


def test_calibration_recovers_root_stiffness():
    # modes generated from a known root stiffness, rounded to 0.1 Hz as a tap test reads
    truth = 75.0
    base = _model(body=FrameBody(0.31, (1.6e-3, 3.9e-3, 5.2e-3)), angles=stretched_angles(4, 1.2))
    true_est = estimate_frame(base.with_clamp(truth))
    picked = [m for m in true_est.modes if m.plane in ("flap", "lead-lag")][:5]
    measured = [Mode(f"peak {i}", round(m.frequency_hz, 1), axis=m.axis if m.axis != "none" else "any",
                     origin="measured") for i, m in enumerate(picked)]
    cal = calibrate_frame(base, measured)     # starts from a rigid root
    assert cal.clamp_stiffness_n_m_per_rad == pytest.approx(truth, rel=0.02)
    assert cal.rms_residual < 1e-3
    assert [p.model_index for p in cal.pairs] == [m.index for m in picked]
    assert all(abs(p.residual) < 2e-3 for p in cal.pairs)


def test_calibration_with_modulus_stays_in_range():
    mat = Material("carbon-qi", "plate", 50e9, 45e9, 55e9, RHO, RHO, RHO, "x", shear_modulus_pa=G)
    base = _model(arm=_arm(material=mat))
    true_est = estimate_frame(base.with_clamp(120.0).with_modulus(53e9))
    measured = [Mode(f"p{i}", m.frequency_hz, origin="measured")
                for i, m in enumerate(true_est.modes[:6])]
    cal = calibrate_frame(base, measured, fit_modulus=True)
    assert 45e9 <= cal.modulus_pa <= 55e9
    assert cal.modulus_pa == pytest.approx(53e9, rel=0.02)
    assert cal.clamp_stiffness_n_m_per_rad == pytest.approx(120.0, rel=0.05)


def test_calibration_errors():
    with pytest.raises(InputError, match="at least one measured mode"):
        calibrate_frame(_model(), [])
    with pytest.raises(InputError, match="modulus range"):
        calibrate_frame(_model(), [Mode("a", 100.0), Mode("b", 200.0)], fit_modulus=True)
    with pytest.raises(InputError, match="at least 2 measured"):
        calibrate_frame(_model(), [Mode("a", 100.0)], fit_modulus=True)


# ---------------------------------------------------------------------------
# inputs


def test_box_inertia_and_stretched_angles():
    assert box_inertia(12.0, 1.0, 2.0, 3.0) == pytest.approx((13.0, 10.0, 5.0))
    a = stretched_angles(4, 2.0)
    assert math.tan(a[0]) == pytest.approx(0.5)     # x stretched twice: tan = 1/2
    assert [math.degrees(x) for x in stretched_angles(3)] == pytest.approx([60.0, 180.0, 300.0])


@pytest.mark.parametrize("kwargs, match", [
    ({"mass_kg": 0.0, "inertia_kg_m2": (1e-3, 1e-3, 2e-3)}, "body mass"),
    ({"mass_kg": 0.3, "inertia_kg_m2": (1e-3, 1e-3)}, "three inertias"),
    ({"mass_kg": 0.3, "inertia_kg_m2": (1e-3, 1e-3, 5e-3)}, "sum of the other two"),
    ({"mass_kg": 0.3, "inertia_kg_m2": (-1e-3, 1e-3, 5e-3)}, "above 0"),
])
def test_body_errors(kwargs, match):
    with pytest.raises(InputError, match=match):
        FrameBody(**kwargs)


def test_layout_and_model_errors():
    with pytest.raises(InputError, match="1 deg apart"):
        FrameLayout((0.0, 0.001, math.pi), 0.03)
    with pytest.raises(InputError, match="root radius"):
        FrameLayout(stretched_angles(4), -0.01)
    with pytest.raises(InputError, match="arm directions"):
        FrameLayout((0.0,), 0.03)
    with pytest.raises(InputError, match="whole number"):
        _model(n=0)
    with pytest.raises(InputError, match="stretch"):
        stretched_angles(4, 0.0)
    with pytest.raises(InputError, match="arms"):
        stretched_angles(1)
