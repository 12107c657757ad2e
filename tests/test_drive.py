"""Tests of clashcheck.model.drive: the closed-form steady state against scipy's root finder.

The steady state at throttle d (DESIGN.md physics step 5, derived from the DC motor
equations with a lossless speed controller, REFERENCES.md §4 for Ke = Kt):

    d·V = Ke·ω + I·(R_m + N·d²·R_pack),   I = I0 + kq·ω²/Ke,   kq = C_P ρ D⁵/(8π³)

Each check below solves that equation again with ``scipy.optimize.brentq``,
written out here, and compares with the library's closed forms.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from clashcheck.errors import InputError
from clashcheck.model.battery import Chemistry, Pack
from clashcheck.model.drive import (
    STANDARD_GRAVITY,
    Drive,
    hover_rotor_hz,
    rotor_rad_s,
    throttle_at_rad_s,
)
from clashcheck.model.motor import Motor
from clashcheck.model.propeller import Propeller

PROPS = settings(max_examples=120, deadline=None, derandomize=True)
RHO = 1.225
INCH = 0.0254


def _zero_or(low, high):
    """0 exactly (the term is absent) or a value in [low, high] (no subnormal figures)."""
    return st.one_of(st.just(0.0), st.floats(low, high))


@st.composite
def drive_params(draw, pack_sag=True):
    """Realistic drive parameters (ranges from the brief, issue 2 §8)."""
    kv_rpm = draw(st.floats(300.0, 12000.0))
    cells = draw(st.integers(1, 12))
    cell_v = draw(st.floats(3.0, 4.35))
    r_m = draw(_zero_or(1e-4, 0.3))
    i0 = draw(_zero_or(1e-3, 2.0))
    cp = draw(st.floats(0.02, 0.12))
    d_m = draw(st.floats(2.0, 10.0)) * INCH
    r_cell = draw(_zero_or(1e-5, 0.010)) if pack_sag else 0.0
    n = draw(st.integers(1, 8))
    return {
        "v_oc": cells * cell_v,
        "ke": 60.0 / (2 * math.pi * kv_rpm),
        "r_m": r_m,
        "i0": i0,
        "kq": cp * RHO * d_m**5 / (8 * math.pi**3),
        "n_motors": n,
        "r_pack": cells * r_cell,
    }


def residual(omega, d, p):
    """d·V − Ke·ω − I·(R_m + N·d²·R_pack), written out (DESIGN.md step 5)."""
    current = p["i0"] + p["kq"] * omega**2 / p["ke"]
    return d * p["v_oc"] - p["ke"] * omega - current * (p["r_m"] + p["n_motors"] * d**2 * p["r_pack"])


def brentq_omega(d, p):
    """ω at throttle d by bracketing in [0, no-load ω] (the residual falls with ω)."""
    from scipy.optimize import brentq

    if residual(0.0, d, p) <= 0.0:
        return 0.0  # the no-load current's drop alone eats the drive voltage: the rotor stands still
    omega_top = d * p["v_oc"] / p["ke"] * (1 + 1e-12)  # just above the no-load speed: residual < 0
    return brentq(lambda w: residual(w, d, p), 0.0, omega_top, xtol=1e-300, rtol=4 * np.finfo(float).eps,
                  maxiter=500)


def brentq_throttle(omega, p):
    """Smallest throttle with the steady speed ω, or inf when no throttle reaches it.

    For fixed ω the residual is concave in d with its top at d* = V/(2·N·R_pack·I);
    the physical root is the one on the rising side, in [0, d*].
    """
    from scipy.optimize import brentq

    current = p["i0"] + p["kq"] * omega**2 / p["ke"]
    sag = p["n_motors"] * p["r_pack"] * current
    e = p["ke"] * omega + current * p["r_m"]
    top = p["v_oc"] / (2 * sag) if sag > 0 else 2 * e / p["v_oc"] + 1.0
    if residual(omega, top, p) < 0:
        return math.inf
    return brentq(lambda d: residual(omega, d, p), 0.0, top, xtol=1e-300, rtol=4 * np.finfo(float).eps,
                  maxiter=500)


@PROPS
@given(drive_params(), st.floats(0.05, 1.0))
def test_forward_matches_brentq(p, d):
    expected = brentq_omega(d, p)
    got = float(rotor_rad_s(d, **p))
    assert got == pytest.approx(expected, rel=1e-9, abs=1e-12)


@PROPS
@given(drive_params(), st.floats(0.05, 1.0))
def test_inverse_matches_brentq(p, d):
    omega = brentq_omega(d, p)
    assume(omega > 0)
    expected = brentq_throttle(omega, p)
    got = float(throttle_at_rad_s(omega, **p))
    assert got == pytest.approx(expected, rel=1e-9)


@PROPS
@given(drive_params(), st.floats(0.0, 1.2))
def test_inverse_of_a_drawn_speed_matches_brentq(p, frac):
    # speeds up to 1.2 × the no-load speed at full throttle: some cannot be reached at all
    omega = frac * p["v_oc"] / p["ke"]
    assume(omega > 0)
    expected = brentq_throttle(omega, p)
    got = float(throttle_at_rad_s(omega, **p))
    if math.isinf(expected):
        assert math.isinf(got)
    else:
        assert got == pytest.approx(expected, rel=1e-9)


@PROPS
@given(drive_params(), st.floats(0.05, 1.0))
def test_round_trip_on_the_physical_branch(p, d):
    # derived: on the rising branch (d below the maximum-power throttle d*) the inverse undoes the forward
    omega = float(rotor_rad_s(d, **p))
    assume(omega > 0)
    current = p["i0"] + p["kq"] * omega**2 / p["ke"]
    assume(2 * p["n_motors"] * d * p["r_pack"] * current < p["v_oc"])
    assert float(throttle_at_rad_s(omega, **p)) == pytest.approx(d, rel=1e-9)


@PROPS
@given(st.floats(300.0, 12000.0), st.floats(1.0, 60.0), st.floats(0.0, 1.0))
def test_no_load_limit(kv_rpm, v_oc, d):
    # DESIGN.md step 5: with R_m = R_pack = I0 = 0 the model is ω = Kv·d·V (Kv in rad/s per volt)
    ke = 60.0 / (2 * math.pi * kv_rpm)
    omega = float(rotor_rad_s(d, v_oc, ke, kq=1e-6))
    assert omega == pytest.approx(kv_rpm * 2 * math.pi / 60 * d * v_oc, rel=1e-12, abs=1e-12)
    if d > 0:
        assert float(throttle_at_rad_s(omega, v_oc, ke, kq=1e-6)) == pytest.approx(d, rel=1e-12)


@PROPS
@given(drive_params(), st.lists(st.floats(0.0, 1.0), min_size=2, max_size=12))
def test_loaded_rate_never_exceeds_no_load(p, throttles):
    d = np.array(throttles)
    loaded = rotor_rad_s(d, **p)
    no_load = d * p["v_oc"] / p["ke"]
    assert np.all(loaded >= 0.0)
    assert np.all(loaded <= no_load * (1 + 1e-12))


@PROPS
@given(drive_params(pack_sag=False))
def test_rate_rises_with_throttle_without_pack_sag(p):
    # derived: without pack sag ∂(residual)/∂d = V > 0, so ω(d) is increasing everywhere
    d = np.linspace(0.0, 1.0, 201)
    omega = rotor_rad_s(d, **p)
    moving = omega > 0
    assert np.all(np.diff(omega) >= 0)
    assert np.all(np.diff(omega[moving]) > 0)


@PROPS
@given(drive_params())
def test_rate_rises_with_throttle(p):
    # derived: ∂ω/∂d > 0 while V > 2·N·d·R_pack·I, i.e. below the pack's maximum-power throttle.
    # A real build runs below that point up to full throttle; extreme part combinations
    # (very high Kv, big props, weak packs) do not, and are left out here.
    omega_top = float(rotor_rad_s(1.0, **p))
    current = p["i0"] + p["kq"] * omega_top**2 / p["ke"]
    assume(2 * p["n_motors"] * p["r_pack"] * current < p["v_oc"])
    d = np.linspace(0.0, 1.0, 201)
    omega = rotor_rad_s(d, **p)
    moving = omega > 0
    assert np.all(np.diff(omega) >= 0)
    assert np.all(np.diff(omega[moving]) > 0)


def test_motor_stands_still_below_the_no_load_drop():
    # derived: when d·V ≤ I0·R the residual is negative at ω = 0: no rotation
    assert float(rotor_rad_s(0.01, 10.0, 0.01, r_m=0.5, i0=1.0)) == 0.0
    assert float(rotor_rad_s(0.0, 10.0, 0.01)) == 0.0


def test_unreachable_speed_is_inf():
    # derived: beyond the pack's maximum power no throttle gives the speed
    ke = 60.0 / (2 * math.pi * 2000)
    assert math.isinf(float(throttle_at_rad_s(1e5, 10.0, ke, r_m=0.05, i0=1.0, kq=1e-7, n_motors=4,
                                              r_pack=0.1)))


def test_vectorised_over_throttle_and_pack_state():
    ke = 60.0 / (2 * math.pi * 1950)
    d = np.linspace(0.1, 1.0, 5)[:, None]
    v = np.array([25.2, 22.2, 21.0])[None, :]
    out = rotor_rad_s(d, v, ke, r_m=0.045, i0=1.1, kq=1e-7, n_motors=4, r_pack=0.018)
    assert out.shape == (5, 3)
    assert np.all(np.diff(out, axis=1) < 0)  # lower pack voltage, lower speed (derived)


# --- Drive bound to parts, and hover ----------------------------------------------


def _drive(r_m=0.045, i0=1.1, cp=0.06, r_cell=0.003, ct=0.12):
    motor = Motor(1950 / 60, 14, 12, r_m, i0)
    prop = Propeller(5.1 * INCH, 3, ct, cp)
    pack = Pack(6, Chemistry("lipo", 4.2, 3.7, 3.5), r_cell)
    return Drive(motor, prop, pack, 4, RHO)


def test_drive_binds_the_parameters():
    drive = _drive()
    p = drive.parameters
    assert p.ke == pytest.approx(60 / (2 * math.pi * 1950))  # REFERENCES.md §4: Ke = 60/(2π·Kv)
    assert p.kq == pytest.approx(0.06 * RHO * (5.1 * INCH) ** 5 / (8 * math.pi**3))  # DESIGN.md step 3
    assert p.r_pack == pytest.approx(6 * 0.003)  # DESIGN.md step 1
    omega = brentq_omega(0.5, {**p.as_kwargs(), "v_oc": 22.2})
    assert float(drive.rotor_hz(0.5, "nominal")) == pytest.approx(omega / (2 * math.pi), rel=1e-9)
    assert float(drive.throttle_at(omega / (2 * math.pi), "nominal")) == pytest.approx(0.5, rel=1e-9)


def test_model_names():
    assert _drive().model == "loaded"
    assert set(_drive().loaded_terms) == {"winding resistance", "no-load current", "propeller torque", "pack sag"}
    bare = _drive(r_m=0.0, i0=0.0, cp=None, r_cell=0.0)
    assert bare.model == "no-load"
    assert "no-load" in bare.model_description()
    assert "pack sag" not in _drive(r_cell=0.0).loaded_terms


def test_hover_rate_from_thrust_balance():
    # DESIGN.md step 6: N·T = m·g with T = C_T ρ n² D⁴ (REFERENCES.md §5)
    mass, ct, d_m = 0.69, 0.12, 5.1 * INCH
    n = float(hover_rotor_hz(mass, 4, ct, RHO, d_m))
    assert n == pytest.approx(math.sqrt(mass * STANDARD_GRAVITY / (4 * ct * RHO * d_m**4)), rel=1e-12)
    assert 4 * ct * RHO * n**2 * d_m**4 == pytest.approx(mass * 9.80665, rel=1e-12)  # ISO 80000-3 g_n


@pytest.mark.parametrize("state", ["full", "nominal", "empty"])
def test_hover_throttle_matches_brentq(state):
    drive = _drive()
    hover = drive.hover(0.69, state)
    assert hover.how == "computed" and hover.can_hover
    p = {**drive.parameters.as_kwargs(), "v_oc": drive.pack.voltage(state)}
    expected = brentq_throttle(2 * math.pi * hover.rotor_hz, p)
    assert hover.throttle == pytest.approx(expected, rel=1e-9)


def test_hover_moves_up_as_the_pack_empties():
    drive = _drive()
    full, nominal, empty = (drive.hover(0.69, s).throttle for s in ("full", "nominal", "empty"))
    assert full < nominal < empty


def test_cannot_hover_is_a_finding_not_a_crash():
    drive = _drive()
    hover = drive.hover(40.0, "empty")  # 40 kg on 5-inch props
    assert not hover.can_hover
    assert hover.throttle > 1.0


def test_stated_hover():
    drive = _drive()
    hover = drive.hover(0.69, "nominal", stated_throttle=0.3)
    assert hover.how == "stated" and hover.throttle == 0.3
    assert hover.rotor_hz == pytest.approx(float(drive.rotor_hz(0.3, "nominal")))


def test_unknown_hover_without_thrust_coefficient():
    drive = _drive(ct=None)
    hover = drive.hover(0.69, "nominal")
    assert hover.how == "unknown" and math.isnan(hover.throttle)


def test_density_is_checked():
    with pytest.raises(InputError):
        Drive(Motor(30.0, 14, 12), Propeller(0.127, 3), Pack(4, Chemistry("lipo", 4.2, 3.7, 3.5)), 4, 5.0)
