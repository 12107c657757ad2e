"""Tests of clashcheck.model.motor: constants and orders, and the §4 worked example."""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from clashcheck.errors import InputError
from clashcheck.model.battery import Chemistry, Pack
from clashcheck.model.drive import Drive
from clashcheck.model.excitation import build_orders
from clashcheck.model.motor import Motor
from clashcheck.model.propeller import Propeller

FAST = settings(max_examples=60, deadline=None, derandomize=True)


@pytest.mark.parametrize(
    "slots, poles, lcm",
    [
        # REFERENCES.md §4 LCM check values; Zhu & Howe, IEEE Trans. Energy Conversion 15(4) 2000 (confirmed)
        (12, 14, 84),
        (9, 12, 36),
        (12, 8, 24),
        (24, 22, 264),
    ],
)
def test_cogging_order_is_lcm(slots, poles, lcm):
    assert Motor(30.0, poles, slots).cogging_order == lcm


def test_electrical_and_commutation_orders():
    # REFERENCES.md §4 (Hanselman 2nd ed., recalled): f_e = poles/2 · f_rotor;
    # six-step drive: 6 events per electrical cycle = 3·poles per revolution
    motor = Motor(30.0, 14, 12)
    assert motor.electrical_order == 7.0
    assert motor.commutation_order == 42.0


class TestWorkedExample:
    """REFERENCES.md §4 worked example (derived): Kv 920 at 14.8 V, no load."""

    @pytest.fixture
    def setup(self):
        motor = Motor(920 / 60, poles=14, slots=12)  # 920 rpm/V in rev/s per volt
        prop = Propeller(0.127, blades=2)  # no C_P: no load torque
        pack = Pack(4, Chemistry("lipo", 4.20, 3.70, 3.50))  # 4 × 3.70 V = 14.8 V nominal
        drive = Drive(motor, prop, pack, n_motors=4, density_kg_m3=1.225)
        return drive, build_orders(motor, prop)

    def test_rotor_rate(self, setup):
        drive, _ = setup
        assert drive.model == "no-load"
        # f_rotor = 920/60 × 14.8 = 226.93 Hz (REFERENCES.md §4, derived)
        assert float(drive.rotor_hz(1.0, "nominal")) == pytest.approx(226.93, abs=5e-3)

    @pytest.mark.parametrize(
        "family, expected_hz, tol",
        [
            ("electrical", 1588.53, 5e-3),  # 14 poles: f_e = 7 × f_rotor
            ("commutation", 9531.2, 5e-2),  # 6 × f_e commutation events per second
            ("cogging", 19062.4, 5e-2),  # LCM(12, 14) = 84 × f_rotor
            ("blade", 453.87, 5e-3),  # two-blade blade pass = 2 × f_rotor
        ],
    )
    def test_order_frequencies(self, setup, family, expected_hz, tol):
        drive, orders = setup
        first = next(o for o in orders if family in o.families)  # 2× rotor and blade pass are one order
        assert first.order * float(drive.rotor_hz(1.0, "nominal")) == pytest.approx(expected_hz, abs=tol)


def test_kt_worked_value():
    # REFERENCES.md §4 (derived): Kt [N·m/A] = 60/(2π·Kv[rpm/V]) = 9.5493/Kv
    assert Motor(920 / 60, 14, 12).kt_n_m_per_a == pytest.approx(9.5493 / 920, rel=1e-5)


@FAST
@given(st.floats(min_value=100.0, max_value=50000.0))
def test_kt_equals_ke_and_9_5493_over_kv(kv_rpm_per_v):
    # REFERENCES.md §4 (derived): Kt = Ke = 60/(2π·Kv) in SI
    motor = Motor(kv_rpm_per_v / 60, 14, 12)
    assert motor.kt_n_m_per_a == motor.ke_v_s_per_rad
    assert motor.kt_n_m_per_a == pytest.approx(60 / (2 * math.pi * kv_rpm_per_v), rel=1e-12)
    assert motor.kt_n_m_per_a == pytest.approx(9.5493 / kv_rpm_per_v, rel=1e-5)


@pytest.mark.parametrize(
    "kwargs, field",
    [
        ({"kv_hz_per_v": 0.0}, "motor.kv"),
        ({"kv_hz_per_v": -30.0}, "motor.kv"),
        ({"kv_hz_per_v": math.nan}, "motor.kv"),
        ({"poles": 13}, "motor.poles"),
        ({"poles": 0}, "motor.poles"),
        ({"poles": 14.0}, "motor.poles"),
        ({"slots": 13}, "motor.slots"),
        ({"slots": 0}, "motor.slots"),
        ({"resistance_ohm": -0.01}, "motor.resistance"),
        ({"no_load_current_a": -1.0}, "motor.no_load_current"),
        ({"mass_kg": 0.0}, "motor.mass"),
    ],
)
def test_motor_refusals(kwargs, field):
    args = {"kv_hz_per_v": 30.0, "poles": 14, "slots": 12, **kwargs}
    with pytest.raises(InputError) as info:
        Motor(**args)
    assert info.value.field == field
