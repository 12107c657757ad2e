"""Modal drift of one aircraft: its latest recordings against its own baseline.

Pure computation on per-recording mode features (no files, no recordings).

Method
------
1. **Baseline.**  The first :attr:`DriftSettings.baseline_count` recordings
   (K = 8 by default) of the aircraft, counted from its latest event if it has
   one (an event such as "arm 2 replaced" starts a new baseline).  Until K + 1
   recordings exist after the start, the aircraft is still building its
   baseline and no drift is judged.
2. **Tracks.**  The baseline's modes are grouped by axis and frequency
   (single linkage, neighbours within ``cluster_tolerance``); a group seen in at
   least half the baseline recordings becomes a *track* with the median
   frequency as reference.  Every recording's modes are matched to tracks by
   axis (``any`` matches every axis) and nearest log-frequency within
   ``match_tolerance``, one mode per track.
3. **Limits.**  Each feature of each track (frequency, damping ratio, and the
   viscous and friction damping figures where the recordings have them) is
   charted on a log scale, so limits are relative.  The rule is a Shewhart
   individuals chart (Sohn, Czarnecki & Farrar, ASCE J. Struct. Eng. 126(11)
   (2000) 1356–1363; REFERENCES.md §14) with limits from the baseline's own
   scatter, taken as the Student-t prediction interval for one new value,
   ``ȳ ± t(1 − a/2, n − 1) · s · √(1 + 1/n)``, because the mean and the
   standard deviation are estimated from only n ≈ K values (standard result
   for a prediction interval of a normal sample; from memory, e.g.
   Montgomery, *Introduction to Statistical Quality Control*, on phase-II
   limits from a short phase-I sample).  For normal scatter that interval
   holds a new in-control value with probability exactly 1 − a.
4. **False-alarm rate by design.**  ``false_alarm_rate`` (α = 1 % by default)
   is the chance that an aircraft without any change gets a finding at its
   latest recording.  With m feature tests at that recording, each test runs
   at the Šidák level a = 1 − (1 − α)^(1/m), which gives exactly α for
   independent normal features and at most α when they are positively
   correlated.
5. **Findings.**  A feature whose latest value lies outside its limit is a
   finding: the baseline value, the latest value, the relative change, the
   relative half-width of the limit, and since when (the first of the run of
   consecutive recordings outside the limit on the same side).

The verdict comparison (the build's clash verdict under baseline and latest
modes) is made by the fleet pipeline, which has the build.
"""

from __future__ import annotations

import datetime as _dt
import math
from collections.abc import Sequence
from dataclasses import dataclass
from functools import lru_cache
from typing import Any

import numpy as np

from ..errors import InputError

__all__ = [
    "FEATURES",
    "ModeFeatures",
    "Observation",
    "DriftSettings",
    "Limit",
    "TrackResult",
    "Finding",
    "DriftResult",
    "drift",
    "student_limit",
    "label_modes",
    "RULE",
]

#: Features charted per track, in report order.
FEATURES = ("frequency_hz", "damping", "viscous_damping", "friction_drop_per_cycle")
#: The rule's name, for reports.
RULE = "Shewhart individuals chart, Student-t prediction limit (Sohn et al. 2000)"
#: Least baseline values a feature needs to be charted.
MIN_BASELINE_VALUES = 3
#: Floor of the baseline's standard deviation on the log scale (0.01 %): a
#: baseline of identical figures still gets a limit of non-zero width.
MIN_LOG_SD = 1e-4


@dataclass(frozen=True)
class ModeFeatures:
    """The figures of one mode in one recording."""

    #: Natural frequency [Hz].
    frequency_hz: float
    #: Damping ratio ζ, or ``None`` when only a bound is known.
    damping: float | None
    #: roll, pitch, yaw or any.
    axis: str
    #: Viscous part of the damping ratio, when the analysis split it from friction.
    viscous_damping: float | None = None
    #: Amplitude lost per cycle to friction (signal units), when measured.
    friction_drop_per_cycle: float | None = None
    #: The mode's name in its recording's result (e.g. ``"mode 2"``).
    name: str = ""


@dataclass(frozen=True)
class Observation:
    """One analysed recording of an aircraft."""

    #: The recording, as named in the manifest.
    recording: str
    #: When it was recorded.
    date: _dt.datetime
    #: The modes found.
    modes: tuple[ModeFeatures, ...]


@dataclass(frozen=True)
class DriftSettings:
    """How drift is judged."""

    #: K: recordings in a baseline.
    baseline_count: int = 8
    #: α: chance of a finding on an aircraft without change, per check of its latest recording.
    false_alarm_rate: float = 0.01
    #: Baseline modes closer than this (relative) form one track.
    cluster_tolerance: float = 0.05
    #: A mode matches a track within this relative distance of its reference frequency.
    match_tolerance: float = 0.15
    #: Least share of baseline recordings a track must be seen in.
    min_presence: float = 0.5

    def __post_init__(self) -> None:
        if not (isinstance(self.baseline_count, int) and self.baseline_count >= MIN_BASELINE_VALUES):
            raise InputError("baseline_count", f"a whole number of at least {MIN_BASELINE_VALUES}",
                             self.baseline_count)
        if not 0 < self.false_alarm_rate < 0.5:
            raise InputError("false_alarm_rate", "a probability in (0, 0.5)", self.false_alarm_rate)
        for name in ("cluster_tolerance", "match_tolerance"):
            if not 0 < getattr(self, name) < 1:
                raise InputError(name, "a fraction in (0, 1)", getattr(self, name))
        if not 0 < self.min_presence <= 1:
            raise InputError("min_presence", "a fraction in (0, 1]", self.min_presence)


@dataclass(frozen=True)
class Limit:
    """The control limit of one feature of one track."""

    #: The feature (one of :data:`FEATURES`).
    feature: str
    #: Baseline centre: geometric mean of the baseline values (feature units).
    baseline_value: float
    #: Relative half-width of the limit: a value within ×(1 ± this) is in control
    #: (the upper side; the lower side is 1/(1 + this) − 1).
    half_width_fraction: float
    #: Baseline standard deviation on the log scale (≈ relative scatter).
    log_sd: float
    #: Baseline values used.
    n: int
    #: Student-t quantile used.
    t_quantile: float
    #: Two-sided level of this one test.
    test_rate: float


@dataclass(frozen=True)
class TrackResult:
    """One mode followed across an aircraft's recordings."""

    #: Label: the build's mode name when one matches, else the frequency.
    label: str
    #: roll, pitch, yaw or any.
    axis: str
    #: Reference (median baseline) frequency [Hz].
    reference_frequency_hz: float
    #: The limits of the features charted.
    limits: tuple[Limit, ...]
    #: The mode matched in the latest recording, if any.
    latest: ModeFeatures | None
    #: Baseline recordings the track was found in.
    seen_in_baseline: int


@dataclass(frozen=True)
class Finding:
    """A feature of a mode outside its control limit at the latest recording."""

    #: The track's label.
    mode: str
    #: Its axis.
    axis: str
    #: The feature (one of :data:`FEATURES`).
    feature: str
    #: Baseline centre (feature units).
    baseline_value: float
    #: Latest value (feature units).
    latest_value: float
    #: latest / baseline − 1.
    change_fraction: float
    #: The limit's relative half-width on the side of the change.
    limit_fraction: float
    #: First recording of the run outside the limit.
    since_recording: str
    #: Its date.
    since: _dt.datetime
    #: Consecutive recordings outside the limit, up to the latest.
    recordings_outside: int
    #: The rule, in words.
    rule: str = RULE


@dataclass(frozen=True)
class DriftResult:
    """Drift of one aircraft."""

    #: ``"monitoring"`` (findings judged) or ``"baseline"`` (still building its baseline).
    status: str
    #: Recordings forming the baseline.
    baseline_recordings: tuple[str, ...]
    #: Date of the first baseline recording, if any.
    baseline_start: _dt.datetime | None
    #: The event the baseline starts after, as (date, what), if any.
    baseline_event: tuple[_dt.datetime, str] | None
    #: Recordings after the baseline.
    monitored_recordings: tuple[str, ...]
    #: The tracks.
    tracks: tuple[TrackResult, ...]
    #: The findings at the latest recording.
    findings: tuple[Finding, ...]
    #: Feature tests at the latest recording (m).
    tests: int
    #: Level of each test (Šidák share of α).
    test_rate: float
    #: α, the design false-alarm rate per aircraft check.
    false_alarm_rate: float
    #: Baseline size K.
    baseline_count: int


@lru_cache(maxsize=4096)
def _t_quantile(p: float, dof: int) -> float:
    from scipy import stats

    return float(stats.t.ppf(p, dof))


def student_limit(values: Sequence[float] | np.ndarray, test_rate: float) -> tuple[float, float, float]:
    """Centre and half-width of a two-sided Student-t prediction limit for one new value.

    Parameters
    ----------
    values : sequence of float
        Baseline values (any scale; the fleet uses logarithms).
    test_rate : float
        Two-sided level a: the chance a new in-control value falls outside.

    Returns
    -------
    tuple of float
        ``(mean, half_width, t)`` where half_width = t · s · √(1 + 1/n),
        t = t(1 − a/2, n − 1), s the sample standard deviation (floored at
        :data:`MIN_LOG_SD`).
    """
    y = np.asarray(values, dtype=float)
    n = y.size
    if n < 2:
        raise InputError("values", "at least 2 baseline values", n)
    s = max(float(np.std(y, ddof=1)), MIN_LOG_SD)
    t = _t_quantile(1.0 - test_rate / 2.0, n - 1)
    return float(np.mean(y)), t * s * math.sqrt(1.0 + 1.0 / n), t


def _compatible(a: str, b: str) -> bool:
    return a == b or a == "any" or b == "any"


def _tracks(baseline: Sequence[Observation], settings: DriftSettings) -> list[tuple[str, float, int]]:
    """(axis, reference frequency, recordings seen in) of each baseline track."""
    need = math.ceil(settings.min_presence * len(baseline))
    out = []
    for axis in sorted({m.axis for obs in baseline for m in obs.modes}):
        items = sorted((m.frequency_hz, i) for i, obs in enumerate(baseline) for m in obs.modes
                       if m.axis == axis)
        group: list[tuple[float, int]] = []
        groups = []
        for item in items:
            if group and math.log(item[0] / group[-1][0]) > settings.cluster_tolerance:
                groups.append(group)
                group = []
            group.append(item)
        if group:
            groups.append(group)
        for g in groups:
            seen = len({i for _, i in g})
            if seen >= need:
                out.append((axis, float(np.median([fr for fr, _ in g])), seen))
    return sorted(out, key=lambda t: t[1])


def _match(tracks: Sequence[tuple[str, float, int]], modes: Sequence[ModeFeatures],
           tolerance: float) -> list[ModeFeatures | None]:
    """The mode of ``modes`` matched to each track (greedy by log-frequency distance)."""
    pairs = []
    for ti, (axis, ref, _) in enumerate(tracks):
        for mi, m in enumerate(modes):
            d = abs(math.log(m.frequency_hz / ref))
            if d <= tolerance and _compatible(axis, m.axis):
                pairs.append((d, ti, mi))
    out: list[ModeFeatures | None] = [None] * len(tracks)
    used: set[int] = set()
    for _, ti, mi in sorted(pairs):
        if out[ti] is None and mi not in used:
            out[ti] = modes[mi]
            used.add(mi)
    return out


def _labels(tracks: Sequence[tuple[str, float, int]],
            reference_modes: Sequence[tuple[str, float, str]]) -> list[str]:
    """Each track's label: the nearest compatible reference mode within 25 %, else its frequency."""
    pairs = sorted(
        (abs(math.log(f / ref)), ti, ri)
        for ti, (axis, ref, _) in enumerate(tracks)
        for ri, (_, f, rax) in enumerate(reference_modes)
        if f > 0 and _compatible(axis, rax) and abs(math.log(f / ref)) <= 0.25
    )
    labels: list[str | None] = [None] * len(tracks)
    used: set[int] = set()
    for _, ti, ri in pairs:
        if labels[ti] is None and ri not in used:
            labels[ti] = reference_modes[ri][0]
            used.add(ri)
    return [lab if lab is not None else f"{ref:.0f} Hz mode" for lab, (_, ref, _) in zip(labels, tracks)]


def label_modes(modes: Sequence[ModeFeatures],
                reference_modes: Sequence[tuple[str, float, str]]) -> list[str | None]:
    """Name each mode after the nearest reference mode of a compatible axis within 25 %.

    Parameters
    ----------
    modes : sequence of ModeFeatures
        The modes of one recording.
    reference_modes : sequence of (str, float, str)
        (name, frequency [Hz], axis) of the build's modes.

    Returns
    -------
    list of str or None
        One name per mode (``None`` when no reference mode is near); each
        reference name is used once.
    """
    tracks = [(m.axis, m.frequency_hz, 0) for m in modes]
    labels = _labels(tracks, reference_modes)
    names = {r[0] for r in reference_modes}
    return [lab if lab in names else None for lab in labels]


def _value(m: ModeFeatures | None, feature: str) -> float | None:
    if m is None:
        return None
    v = getattr(m, feature)
    return float(v) if v is not None and math.isfinite(v) and v > 0 else None


def drift(
    observations: Sequence[Observation],
    events: Sequence[tuple[_dt.datetime, str]] = (),
    settings: DriftSettings | None = None,
    reference_modes: Sequence[tuple[str, float, str]] = (),
) -> DriftResult:
    """Judge the drift of one aircraft's modes against its baseline.

    Parameters
    ----------
    observations : sequence of Observation
        The aircraft's analysed recordings, oldest first.
    events : sequence of (datetime, str)
        Events (date, what), oldest first; the latest one starts the baseline.
    settings : DriftSettings, optional
        Baseline size, design false-alarm rate, tolerances.
    reference_modes : sequence of (str, float, str)
        (name, frequency [Hz], axis) of the build's modes, to label tracks.

    Returns
    -------
    DriftResult
        Tracks, limits and findings at the latest recording.
    """
    settings = settings or DriftSettings()
    obs = list(observations)
    for a, b in zip(obs, obs[1:]):
        if b.date < a.date:
            raise InputError("observations", "recordings oldest first", b.recording)
    event = max(events, key=lambda e: e[0]) if events else None
    if event is not None:
        obs = [o for o in obs if o.date >= event[0]]
    k = settings.baseline_count
    base, later = obs[:k], obs[k:]
    common: dict[str, Any] = dict(baseline_recordings=tuple(o.recording for o in base),
                  baseline_start=base[0].date if base else None, baseline_event=event,
                  monitored_recordings=tuple(o.recording for o in later),
                  false_alarm_rate=settings.false_alarm_rate, baseline_count=k)
    if len(base) < k or not later:
        return DriftResult(status="baseline", tracks=(), findings=(), tests=0, test_rate=0.0, **common)
    tracks = _tracks(base, settings)
    labels = _labels(tracks, reference_modes)
    base_matched = [_match(tracks, o.modes, settings.match_tolerance) for o in base]
    later_matched = [_match(tracks, o.modes, settings.match_tolerance) for o in later]
    latest = later_matched[-1]
    # the tests at the latest recording: features with enough baseline values and a latest value
    charted: list[tuple[int, str, list[float]]] = []
    for ti in range(len(tracks)):
        for feat in FEATURES:
            vals = [v for row in base_matched if (v := _value(row[ti], feat)) is not None]
            if len(vals) >= MIN_BASELINE_VALUES and _value(latest[ti], feat) is not None:
                charted.append((ti, feat, vals))
    m = len(charted)
    rate = 1.0 - (1.0 - settings.false_alarm_rate) ** (1.0 / m) if m else 0.0
    limits: dict[int, list[Limit]] = {ti: [] for ti in range(len(tracks))}
    findings = []
    for ti, feat, vals in charted:
        centre, half, t = student_limit(np.log(vals), rate)
        sd = max(float(np.std(np.log(vals), ddof=1)), MIN_LOG_SD)
        lim = Limit(feat, math.exp(centre), math.expm1(half), sd, len(vals), t, rate)
        limits[ti].append(lim)
        # walk back from the latest while the value stays outside on the same side
        # (a recording where the mode was not found neither ends nor extends the run)
        run, side, first = 0, 0, len(later) - 1
        for j in range(len(later) - 1, -1, -1):
            v = _value(later_matched[j][ti], feat)
            if v is None:
                continue
            dev = math.log(v) - centre
            s = 1 if dev > half else (-1 if dev < -half else 0)
            if s == 0 or (side and s != side):
                break
            side, run, first = s, run + 1, j
        if run:
            latest_v = _value(latest[ti], feat)
            assert latest_v is not None
            findings.append(Finding(
                mode=labels[ti], axis=tracks[ti][0], feature=feat, baseline_value=math.exp(centre),
                latest_value=latest_v, change_fraction=latest_v / math.exp(centre) - 1.0,
                limit_fraction=math.expm1(half) if side > 0 else math.expm1(-half),
                since_recording=later[first].recording, since=later[first].date, recordings_outside=run))
    track_results = tuple(
        TrackResult(label=labels[ti], axis=tracks[ti][0], reference_frequency_hz=tracks[ti][1],
                    limits=tuple(limits[ti]), latest=latest[ti], seen_in_baseline=tracks[ti][2])
        for ti in range(len(tracks)))
    return DriftResult(status="monitoring", tracks=track_results, findings=tuple(findings), tests=m,
                       test_rate=rate, **common)
