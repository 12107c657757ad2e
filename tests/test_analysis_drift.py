"""Drift statistics on generated feature series (no recordings: fast).

The generator below is the test's own: it states every parameter.  A healthy
aircraft's modes scatter from recording to recording by a common factor
(temperature, pack state: every frequency moves together) plus each mode's
own repeatability; damping ratios scatter log-normally.  Values are rounded to
0.1 Hz and 0.0001 as a modes file would hold them, and a small share of
recordings miss a mode (a weak peak not found).
"""

from __future__ import annotations

import datetime as dt
import math

import numpy as np
import pytest

from clashcheck.analysis.drift import (
    DriftSettings,
    ModeFeatures,
    Observation,
    drift,
    student_limit,
)
from clashcheck.errors import InputError

#: (frequency Hz, damping, axis) of the generated aircraft's modes (stated for the test).
MODES = ((172.0, 0.025, "roll"), (265.0, 0.030, "pitch"), (410.0, 0.035, "any"))
#: Relative scatter shared by all modes (temperature, payload) and per mode (repeatability).
COMMON_SD, OWN_SD = 0.002, 0.003
#: Log-normal scatter of damping ratios.
DAMPING_SD = 0.10
#: Chance that a recording misses a mode.
MISS = 0.03
K = 8
DAY0 = dt.datetime(2026, 9, 1)


def fleet_series(rng: np.random.Generator, n: int, change_at: int | None = None, drop: float = 0.0,
                 mode: int = 0, damping_factor: float = 1.0, friction: bool = False) -> list[Observation]:
    """``n`` recordings of one aircraft; from ``change_at`` on, mode ``mode`` is ``drop`` lower."""
    out = []
    for i in range(n):
        common = COMMON_SD * rng.standard_normal()
        modes = []
        for j, (f, z, axis) in enumerate(MODES):
            if rng.random() < MISS:
                continue
            changed = change_at is not None and i >= change_at and j == mode
            fi = f * (1 + common + OWN_SD * rng.standard_normal()) * ((1 - drop) if changed else 1.0)
            zi = z * math.exp(DAMPING_SD * rng.standard_normal()) * (damping_factor if changed else 1.0)
            fr = 0.01 * math.exp(0.1 * rng.standard_normal()) * (3.0 if changed else 1.0) if friction else None
            modes.append(ModeFeatures(round(fi, 1), round(zi, 4), axis, friction_drop_per_cycle=fr,
                                      name=f"mode {j + 1}"))
        out.append(Observation(f"rec{i:03d}.wav", DAY0 + dt.timedelta(days=7 * i), tuple(modes)))
    return out


REFS = (("arm flap", 172.0, "roll"), ("arm torsion", 265.0, "pitch"), ("top plate", 410.0, "any"))


def test_student_limit_matches_the_t_table():
    # t(0.975, 7) = 2.365 (Student's t table, any statistics text)
    values = [0.0, 1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0]
    centre, half, t = student_limit(values, 0.05)
    assert t == pytest.approx(2.365, abs=1e-3)
    s = math.sqrt(sum((v - 3.5) ** 2 for v in values) / 7)  # derived: sample standard deviation
    assert centre == pytest.approx(3.5)
    assert half == pytest.approx(2.365 * s * math.sqrt(1 + 1 / 8), rel=1e-3)


def test_student_limit_needs_two_values():
    with pytest.raises(InputError, match="values"):
        student_limit([1.0], 0.05)


def test_a_four_percent_drop_is_detected_in_at_least_95_percent_of_cases():
    rng = np.random.default_rng(20261202)
    cases, hits = 600, 0
    for _ in range(cases):
        obs = fleet_series(rng, K + 1, change_at=K, drop=0.04, mode=int(rng.integers(0, 3)))
        res = drift(obs, settings=DriftSettings(baseline_count=K), reference_modes=REFS)
        hits += any(f.feature == "frequency_hz" and f.change_fraction < -0.03 for f in res.findings)
    rate = hits / cases
    print(f"4 % drop detected in {rate:.1%} of {cases} cases")
    assert rate >= 0.95


def test_false_alarm_rate_on_healthy_fleets_is_at_the_design_rate():
    """No change: the share of aircraft with a finding stays at or below α (1 %).

    The Šidák split makes the rate exactly α for independent normal features; the
    shared temperature factor makes the frequency tests positively correlated, so
    the rate is below α.  The assertion allows the binomial sampling error of the
    simulation (2.6 standard errors, one-sided 99.5 %).
    """
    rng = np.random.default_rng(7)
    settings = DriftSettings(baseline_count=K, false_alarm_rate=0.01)
    cases = 4000
    alarms = sum(bool(drift(fleet_series(rng, K + 1), settings=settings).findings) for _ in range(cases))
    rate = alarms / cases
    se = math.sqrt(0.01 * 0.99 / cases)
    print(f"false alarms on healthy aircraft: {rate:.2%} of {cases} (design 1 %, se {se:.2%})")
    assert rate <= 0.01 + 2.6 * se


def test_finding_says_what_how_much_since_when_and_the_limit():
    rng = np.random.default_rng(3)
    obs = fleet_series(rng, K + 4, change_at=K + 1, drop=0.07, mode=0)
    res = drift(obs, reference_modes=REFS)
    assert res.status == "monitoring"
    (fd,) = [f for f in res.findings if f.feature == "frequency_hz"]
    assert fd.mode == "arm flap" and fd.axis == "roll"
    assert fd.change_fraction == pytest.approx(-0.07, abs=0.015)
    assert fd.since == DAY0 + dt.timedelta(days=7 * (K + 1))
    found_after = sum(any(m.frequency_hz < 165 for m in o.modes) for o in obs[K + 1:])
    assert fd.recordings_outside == found_after  # a recording that missed the mode does not count
    assert -0.07 < fd.limit_fraction < 0  # the lower limit, inside the change
    assert res.baseline_recordings == tuple(o.recording for o in obs[:K])


def test_a_slipping_joint_shows_in_damping_and_friction():
    rng = np.random.default_rng(5)
    obs = fleet_series(rng, K + 2, change_at=K, damping_factor=2.0, mode=1, friction=True)
    res = drift(obs, reference_modes=REFS)
    feats = {(f.mode, f.feature) for f in res.findings}
    assert ("arm torsion", "damping") in feats
    assert ("arm torsion", "friction_drop_per_cycle") in feats
    assert res.tests == 9  # three modes × (frequency, damping, friction)


def test_friction_figures_absent_are_not_charted():
    rng = np.random.default_rng(6)
    res = drift(fleet_series(rng, K + 1), reference_modes=REFS)
    assert all(lim.feature in ("frequency_hz", "damping") for tr in res.tracks for lim in tr.limits)


def test_still_building_the_baseline_judges_nothing():
    rng = np.random.default_rng(8)
    res = drift(fleet_series(rng, K, change_at=K - 1, drop=0.2))
    assert res.status == "baseline" and res.findings == () and res.tests == 0


def test_an_event_starts_a_new_baseline():
    rng = np.random.default_rng(9)
    obs = fleet_series(rng, 2 * K + 2, change_at=K, drop=0.06)
    event = (obs[K].date - dt.timedelta(days=1), "arm 1 replaced")
    res = drift(obs, events=[event])
    assert res.baseline_event == event
    assert res.baseline_recordings == tuple(o.recording for o in obs[K:2 * K])
    assert not any(f.feature == "frequency_hz" and f.change_fraction < -0.04 for f in res.findings)
    # without the event the same drop is a finding
    assert any(f.feature == "frequency_hz" for f in drift(obs).findings)


def test_modes_match_by_axis_not_only_frequency():
    """A pitch mode next to a roll mode is not taken for it."""
    base = tuple(ModeFeatures(f, 0.03, "roll") for f in (200.0,))
    obs = [Observation(f"r{i}", DAY0 + dt.timedelta(days=i),
                       (ModeFeatures(200.0 * (1 + 0.002 * ((-1) ** i)), 0.03, "roll"),)) for i in range(K)]
    obs.append(Observation("late", DAY0 + dt.timedelta(days=K), (ModeFeatures(201.0, 0.03, "pitch"),)))
    res = drift(obs)
    assert base and res.tracks[0].latest is None and res.tests == 0


def test_recordings_out_of_order_are_refused():
    rng = np.random.default_rng(1)
    obs = fleet_series(rng, 3)
    with pytest.raises(InputError, match="oldest first"):
        drift([obs[1], obs[0]])


@pytest.mark.parametrize("kw, field", [({"baseline_count": 2}, "baseline_count"),
                                       ({"false_alarm_rate": 0.0}, "false_alarm_rate"),
                                       ({"match_tolerance": 1.5}, "match_tolerance")])
def test_settings_are_checked(kw, field):
    with pytest.raises(InputError, match=field):
        DriftSettings(**kw)


def test_label_modes_names_each_build_mode_once():
    from clashcheck.analysis.drift import label_modes

    modes = [ModeFeatures(175.0, 0.03, "any"), ModeFeatures(178.0, 0.03, "roll"), ModeFeatures(900.0, 0.03, "any")]
    assert label_modes(modes, REFS) == ["arm flap", None, None]
