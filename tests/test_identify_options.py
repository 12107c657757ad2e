"""Recording options → column plan and settings (shared by 'modes' and 'fleet')."""

from __future__ import annotations

import pytest

from clashcheck.errors import InputError
from clashcheck.identify import FlightSettings, TapSettings
from clashcheck.identify.options import RECORDING_OPTIONS, recording_plan
from clashcheck.inputs.manifest import RECORDING_OPTION_KEYS


def test_tap_plan():
    plan = recording_plan("tap", signal="0", rate=8000.0, max_frequency=1000.0, resolution=2.0)
    assert isinstance(plan.settings, TapSettings)
    assert plan.columns.signals == ("0",) and plan.columns.sample_rate_hz == 8000.0
    assert (plan.settings.max_frequency_hz, plan.settings.resolution_hz) == (1000.0, 2.0)


def test_flight_plan_takes_counts_and_drive_from_the_build(write_build, base_build):
    from clashcheck.inputs.buildfile import load_build

    build = load_build(write_build(base_build))
    plan = recording_plan("flight", signal="gx, gy ,gz", rpm_columns="r1,r2", time_column="t",
                          time_unit="ms", build=build, axes="roll,pitch,yaw")
    s = plan.settings
    assert isinstance(s, FlightSettings)
    assert (s.blades, s.poles, s.slots) == (3, 14, 12)
    assert s.rotor_of_throttle is not None and s.axes == ("roll", "pitch", "yaw")
    assert plan.columns.signals == ("gx", "gy", "gz") and plan.columns.rpm_columns == ("r1", "r2")
    assert plan.columns.time_scale_s == pytest.approx(1e-3)
    assert plan.columns.rpm_scale_hz == pytest.approx(1 / 60)  # 60 rpm = 1 Hz


def test_erpm_scale_uses_pole_pairs():
    plan = recording_plan("flight", rpm_columns="e", rpm_unit="erpm", poles=14)
    assert plan.columns.rpm_scale_hz == pytest.approx(1 / 60 / 7)  # derived: erpm = rpm × pole pairs


@pytest.mark.parametrize("kw, field", [
    ({"kind": "knock"}, "kind"),
    ({"kind": "flight", "rpm_unit": "erpm"}, "poles"),
    ({"kind": "flight", "rpm_unit": "rps"}, "rpm_unit"),
    ({"kind": "tap", "time_unit": "kg"}, "time_unit"),
])
def test_errors_name_library_fields(kw, field):
    with pytest.raises(InputError, match=field):
        recording_plan(**kw)


def test_manifest_accepts_exactly_the_recording_options():
    assert set(RECORDING_OPTION_KEYS) == set(RECORDING_OPTIONS)
