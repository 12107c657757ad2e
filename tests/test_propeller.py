"""Tests of clashcheck.model.propeller: thrust, power and torque from C_T and C_P."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from clashcheck.errors import InputError
from clashcheck.model.propeller import Propeller

FAST = settings(max_examples=60, deadline=None, derandomize=True)

# REFERENCES.md §5 worked example (derived): 6026 rpm, C_T 0.1192, C_P 0.0484,
# ρ 1.225 kg/m³, D 0.2286 m (McCormick ch. 6, recalled; Houghton & Carpenter ch. 9, confirmed)
RPM, CT, CP, RHO, D = 6026.0, 0.1192, 0.0484, 1.225, 0.2286


@pytest.fixture
def prop():
    return Propeller(D, blades=2, thrust_coefficient=CT, power_coefficient=CP)


def test_worked_thrust(prop):
    # T = C_T ρ n² D⁴ = 4.0223 N
    assert float(prop.thrust_n(RPM / 60, RHO)) == pytest.approx(4.0223, abs=5e-5)


def test_worked_power(prop):
    # P = C_P ρ n³ D⁵ = 37.497 W
    assert float(prop.power_w(RPM / 60, RHO)) == pytest.approx(37.497, abs=5e-4)


def test_worked_torque(prop):
    # Q = C_Q ρ n² D⁵ with C_Q = C_P/(2π): 0.059421 N·m
    assert float(prop.torque_n_m(RPM / 60, RHO)) == pytest.approx(0.059421, abs=5e-7)


@FAST
@given(
    st.floats(min_value=0.02, max_value=0.12),
    st.floats(min_value=0.05, max_value=0.3),
    st.floats(min_value=1.0, max_value=800.0),
)
def test_power_is_torque_times_omega(cp, d_m, n_hz):
    # REFERENCES.md §5: P = C_P ρ n³ D⁵ and C_P = 2π C_Q, so P = Q·ω (derived)
    p = Propeller(d_m, 3, 0.1, cp)
    power = float(p.power_w(n_hz, RHO))
    assert power == pytest.approx(cp * RHO * n_hz**3 * d_m**5, rel=1e-12)
    assert power == pytest.approx(float(p.torque_n_m(n_hz, RHO)) * 2 * math.pi * n_hz, rel=1e-12)
    # torque coefficient k in Q = k ω²: C_P ρ D⁵ / (8π³) (DESIGN.md physics step 3)
    assert p.torque_coefficient(RHO) * (2 * math.pi * n_hz) ** 2 == pytest.approx(
        cp / (2 * math.pi) * RHO * n_hz**2 * d_m**5, rel=1e-12
    )


def test_vectorised(prop):
    n = np.array([10.0, 20.0, 40.0])
    thrust = prop.thrust_n(n, RHO)
    assert thrust.shape == (3,)
    assert thrust[1] / thrust[0] == pytest.approx(4.0)  # T ∝ n² (derived)


def test_no_power_coefficient_means_no_torque():
    p = Propeller(0.127, 3)
    assert p.torque_coefficient(RHO) == 0.0
    assert float(p.torque_n_m(100.0, RHO)) == 0.0


def test_thrust_needs_a_thrust_coefficient():
    with pytest.raises(InputError, match="prop.thrust_coefficient"):
        Propeller(0.127, 3).thrust_n(100.0, RHO)


@pytest.mark.parametrize(
    "kwargs, field",
    [
        ({"diameter_m": 0.0}, "prop.diameter"),
        ({"diameter_m": 5.0}, "prop.diameter"),
        ({"blades": 0}, "prop.blades"),
        ({"blades": 2.0}, "prop.blades"),
        ({"thrust_coefficient": 0.0}, "prop.thrust_coefficient"),
        ({"power_coefficient": 1.5}, "prop.power_coefficient"),
        ({"pitch_m": -0.1}, "prop.pitch"),
        ({"mass_kg": 0.0}, "prop.mass"),
    ],
)
def test_propeller_refusals(kwargs, field):
    args = {"diameter_m": 0.127, "blades": 3, **kwargs}
    with pytest.raises(InputError) as info:
        Propeller(**args)
    assert info.value.field == field
