"""Tests of clashcheck.model.modes: API separation margins, SDOF response, policies, Mode."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from clashcheck.errors import InputError
from clashcheck.model.modes import (
    MarginPolicy,
    Mode,
    amplification_factor,
    api_margin_above,
    api_margin_below,
    magnification,
    relative_margin,
    transmissibility,
)

FAST = settings(max_examples=60, deadline=None, derandomize=True)
ZETAS = st.floats(min_value=1e-3, max_value=0.6)


# --- §1 separation margin vs amplification factor -----------------------------


@pytest.mark.parametrize(
    "af, below, above",
    [
        # REFERENCES.md §1 check values (derived) from API 684 / API 617 ch. 1 (formulas confirmed)
        (3.0, 0.05667, 0.15667),
        (5.0, 0.12143, 0.22143),
        (10.0, 0.15000, 0.25000),
        (18.5, 0.16, 0.26),  # caps
        (25.0, 0.16, 0.26),
        (1000.0, 0.16, 0.26),
    ],
)
def test_api_margin_table(af, below, above):
    assert api_margin_below(af) == pytest.approx(below, abs=5e-6)
    assert api_margin_above(af) == pytest.approx(above, abs=5e-6)


@pytest.mark.parametrize("af", [0.5, 1.0, 2.0, 2.4999])
def test_api_no_margin_below_af_2_5(af):
    # REFERENCES.md §1 (API 684): AF < 2.5 needs no margin
    assert api_margin_below(af) == 0.0
    assert api_margin_above(af) == 0.0


@FAST
@given(st.floats(min_value=2.5, max_value=1e6), st.floats(min_value=0.0, max_value=100.0))
def test_api_margin_monotone_and_capped(af, step):
    # REFERENCES.md §1: SM grows with AF up to the 16 % / 26 % caps (derived from the formula)
    lo, hi = api_margin_below(af), api_margin_below(af + step)
    assert 0.0 <= lo <= hi + 1e-15 <= 0.16 + 1e-15
    assert api_margin_above(af) == pytest.approx(min(0.26, lo + 0.10) if lo < 0.16 else 0.26, abs=1e-12)


def test_amplification_factor():
    # DESIGN.md vocabulary / REFERENCES.md §1: AF ≈ Q = 1/(2ζ)
    assert amplification_factor(0.05) == pytest.approx(10.0)
    assert amplification_factor(0.2) == pytest.approx(2.5)


# --- §2 single-degree-of-freedom response -------------------------------------

ZETA = 0.05


def test_sdof_peak_found_numerically():
    # REFERENCES.md §2 (Rao 5th ed. §3.4, recalled): peak at r = √(1 − 2ζ²) = 0.997497,
    # M_max = 1/(2ζ√(1 − ζ²)) = 10.012523 at ζ = 0.05 (derived); found here with scipy
    from scipy.optimize import minimize_scalar

    res = minimize_scalar(lambda r: -magnification(r, ZETA), bounds=(0.5, 1.5), method="bounded",
                          options={"xatol": 1e-10})
    assert res.x == pytest.approx(0.997497, abs=2e-6)
    assert -res.fun == pytest.approx(10.012523, abs=2e-6)
    assert res.x == pytest.approx(math.sqrt(1 - 2 * ZETA**2), abs=1e-6)


def test_half_power_points():
    # REFERENCES.md §2 check values (derived): half-power points about the true peak
    # r1 / r2 = 0.946111 / 1.046363, and ζ ≈ (r2 − r1)/2 = 0.050126; roots by scipy brentq
    from scipy.optimize import brentq

    m_half = 10.012523 / math.sqrt(2.0)
    r_peak = math.sqrt(1 - 2 * ZETA**2)
    r1 = brentq(lambda r: magnification(r, ZETA) - m_half, 0.8, r_peak, xtol=1e-12)
    r2 = brentq(lambda r: magnification(r, ZETA) - m_half, r_peak, 1.2, xtol=1e-12)
    assert r1 == pytest.approx(0.946111, abs=2e-6)
    assert r2 == pytest.approx(1.046363, abs=2e-6)
    assert (r2 - r1) / 2 == pytest.approx(0.050126, abs=2e-6)


@FAST
@given(ZETAS)
def test_magnification_at_resonance(zeta):
    # REFERENCES.md §2 (Rao §3.4): M(1) = 1/(2ζ)
    assert magnification(1.0, zeta) == pytest.approx(1.0 / (2.0 * zeta), rel=1e-12)


def test_magnification_vectorised_and_static():
    # derived: M(0) = 1 (static deflection); M → 0 as r → ∞
    out = magnification(np.array([0.0, 1.0, 100.0]), ZETA)
    assert out.shape == (3,)
    assert out[0] == pytest.approx(1.0)
    assert out[2] < 1e-3


def test_transmissibility_check_values():
    # REFERENCES.md §2 check values at ζ = 0.05 (derived; Rao §3.6 formula)
    assert transmissibility(1.0, ZETA) == pytest.approx(10.0499, abs=5e-5)
    assert transmissibility(2.0, ZETA) == pytest.approx(0.33918, abs=5e-6)


@FAST
@given(ZETAS)
def test_transmissibility_is_one_at_root_two(zeta):
    # REFERENCES.md §2 (Rao §3.6): TR(√2) = 1 for every ζ
    assert transmissibility(math.sqrt(2.0), zeta) == pytest.approx(1.0, rel=1e-12)


def test_log_decrement_from_a_simulated_free_decay():
    # REFERENCES.md §2 (Rao §2.6, recalled): δ = 2πζ/√(1 − ζ²) = 0.314553 at ζ = 0.05 (derived).
    # The library has no δ function; the table value is checked against a free decay
    # integrated by scipy (an independent route), and the inverse ζ = δ/√(4π² + δ²).
    from scipy.integrate import solve_ivp

    wn = 2 * math.pi  # 1 Hz natural frequency

    def velocity_zero(t, y):  # maxima of x: velocity crosses zero going down
        return y[1]

    velocity_zero.direction = -1
    sol = solve_ivp(lambda t, y: [y[1], -2 * ZETA * wn * y[1] - wn**2 * y[0]], (0.0, 6.0), [1.0, 1e-12],
                    method="DOP853", rtol=1e-11, atol=1e-13, events=velocity_zero)
    x_peaks = sol.y_events[0][:, 0]
    assert len(x_peaks) >= 5
    ratios = np.log(x_peaks[:-1] / x_peaks[1:])
    delta_formula = 2 * math.pi * ZETA / math.sqrt(1 - ZETA**2)
    assert delta_formula == pytest.approx(0.314553, abs=5e-7)
    assert np.allclose(ratios, 0.314553, atol=1e-5)
    assert 0.314553 / math.sqrt(4 * math.pi**2 + 0.314553**2) == pytest.approx(ZETA, abs=1e-7)


# --- policies -----------------------------------------------------------------


def test_damping_policy_uses_api_rule_on_af():
    # DESIGN.md §9: required margin = min(16 %, 17 %(1 − 1/(AF − 1.5))), AF = 1/(2ζ)
    # ζ = 0.05 → AF 10 → 15.000 % (REFERENCES.md §1 table)
    policy = MarginPolicy()
    assert policy.required_margin(Mode("m", 200.0, damping=0.05)) == pytest.approx(0.15, abs=1e-12)
    # ζ = 0.1 → AF 5 → 12.143 %; ζ = 0.25 → AF 2 < 2.5 → 0
    assert policy.required_margin(Mode("m", 200.0, damping=0.1)) == pytest.approx(0.12143, abs=5e-6)
    assert policy.required_margin(Mode("m", 200.0, damping=0.25)) == 0.0


def test_fixed_and_half_power_policies():
    # DESIGN.md §9: fixed = the user's percentage; half-power = ±ζ
    mode = Mode("m", 200.0, damping=0.04)
    assert MarginPolicy("fixed", fixed_margin=0.1).required_margin(mode) == 0.1
    assert MarginPolicy("half-power").required_margin(mode) == pytest.approx(0.04)


def test_default_damping_is_marked_assumed():
    policy = MarginPolicy(default_damping=0.05)
    zeta, assumed = policy.damping_of(Mode("m", 200.0))
    assert (zeta, assumed) == (0.05, True)
    assert policy.damping_of(Mode("m", 200.0, damping=0.02)) == (0.02, False)
    assert policy.required_margin(Mode("m", 200.0)) == pytest.approx(0.15, abs=1e-12)


@pytest.mark.parametrize(
    "kwargs, field",
    [
        ({"name": "nope"}, "check.policy"),
        ({"name": "fixed"}, "check.margin"),
        ({"name": "fixed", "fixed_margin": 1.5}, "check.margin"),
        ({"default_damping": 0.0}, "check.default_damping"),
        ({"default_damping": 1.0}, "check.default_damping"),
    ],
)
def test_policy_refusals(kwargs, field):
    with pytest.raises(InputError) as info:
        MarginPolicy(**kwargs)
    assert info.value.field == field


# --- relative margin and the Mode dataclass ------------------------------------


@FAST
@given(st.floats(min_value=1.0, max_value=5000.0), st.floats(min_value=0.0, max_value=20000.0))
def test_relative_margin_of_a_point_mode(f_m, f):
    # DESIGN.md §9: margin = |f − f_m| / f_m
    assert relative_margin(f, Mode("m", f_m)) == pytest.approx(abs(f - f_m) / f_m, rel=1e-12, abs=1e-15)


def test_relative_margin_of_a_range_mode():
    # modes.relative_margin docstring: 0 inside the range, relative to the nearer edge outside
    mode = Mode("m", 200.0, frequency_low_hz=180.0, frequency_high_hz=230.0)
    assert mode.is_range
    out = relative_margin(np.array([150.0, 190.0, 230.0, 253.0]), mode)
    assert out == pytest.approx([30 / 180, 0.0, 0.0, 23 / 230])


@pytest.mark.parametrize(
    "kwargs, suffix",
    [
        ({"frequency_hz": 0.0}, "frequency"),
        ({"frequency_hz": math.inf}, "frequency"),
        ({"frequency_hz": 100.0, "damping": 0.0}, "damping"),
        ({"frequency_hz": 100.0, "damping": 1.0}, "damping"),
        ({"frequency_hz": 100.0, "axis": "up"}, "axis"),
        ({"frequency_hz": 100.0, "kind": "wing"}, "kind"),
        ({"frequency_hz": 100.0, "origin": "guess"}, "origin"),
        ({"frequency_hz": 100.0, "frequency_low_hz": 120.0}, "frequency range"),
    ],
)
def test_mode_refusals(kwargs, suffix):
    with pytest.raises(InputError) as info:
        Mode("m", **kwargs)
    assert info.value.field == f"mode 'm'.{suffix}"


def test_upper_bound_damping_is_used_when_below_the_default():
    # derived: ζ ≤ bound means AF ≥ 1/(2·bound); using the smaller of the
    # default and the bound can only raise the required margin.
    from clashcheck.model.modes import MarginPolicy, Mode

    policy = MarginPolicy("damping", None, 0.03)
    bounded = Mode("narrow", 200.0, None, details={"damping_high": 0.008})
    loose = Mode("loose", 200.0, None, details={"damping_high": 0.09})
    assert policy.damping_of(bounded) == (0.008, True)
    assert policy.damping_of(loose) == (0.03, True)
    assert policy.required_margin(bounded) >= policy.required_margin(Mode("plain", 200.0))
