"""Flight recordings: stationary frame modes apart from the motor orders.

The recording streams through :class:`~.checks.Conditioner` and
:class:`~.spectra.SegmentStream`; nothing of length proportional to the
recording is kept.  For every Welch segment (Hann window, half overlap):

- its periodogram, per axis, is added to a **rotor-rate bin** (bins
  :attr:`FlightSettings.bin_width` wide in relative terms, by the segment's
  mean rotor rate; by throttle when no rotor rate is known);
- when the rotor rate is known, the power of each motor **order** k is read
  at k × rotor rate (the line's width follows the rotor rate's spread within
  the segment) above the local background: order tracking, i.e. the spectrum
  normalised to order.

Afterwards each bin's mean spectrum is normalised by its own median level and
the **median across bins** is taken.  A frame mode sits at the same frequency
in every bin and survives the median; an order line moves with the rotor rate,
so at any one frequency it is present in only a few bins and the median drops
it.  Each surviving peak is checked once more: if, in most bins, it sits on an
integer multiple of that bin's rotor rate (or, with throttle only, its peak
moves with throttle), it is an order line and is not reported as a mode.

Damping is the half-power bandwidth of the median spectrum, corrected for the
Hann window with :func:`~.damping.stationary_model`.

The work is two passes: :func:`stream_flight` (numpy only) reads the recording
and returns the small per-bin totals, :class:`StreamedFlight`; the peak and
damping analysis then runs on those (scipy).  For a long recording the first
pass runs in a second process (:mod:`.worker`).
"""

from __future__ import annotations

import math
import os
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np

from ..errors import InputError
from ..model.modes import MODE_AXES
from .band import check_band
from .checks import (
    USABLE_BAND,
    Conditioner,
    Findings,
    require_duration,
    require_sample_rate,
)
from .damping import (
    corrected_half_power,
    half_power_raw,
    refine_frequency,
    stationary_model,
)
from .flight_fit import LEVEL, fit_band
from .peaks import find_modes_peaks, noise_floor
from .readers import Recording
from .result import Dwell, MeasuredMode, ModesResult, OrderStrength
from .spectra import SegmentStream, hann_periodic, segment_length
from .views import Timeline, flight_view

__all__ = ["FlightSettings", "analyse_flight", "stream_flight", "StreamedFlight", "order_families",
           "MIN_SEGMENTS", "MIN_BINS", "CONFIDENCE_FLOOR", "DRIVE_TOLERANCE", "MOTOR_SPREAD",
           "ESTIMATE_MARGIN",
           "DWELL_BANDS"]

#: Fewest Welch segments a flight analysis accepts.
MIN_SEGMENTS = 16
#: Fewest populated rotor-rate bins for a clean separation of modes from orders.
MIN_BINS = 5
#: A peak's prominence must exceed this many standard errors of the median spectrum.
SIGNIFICANCE = 5.0
#: Modes below this confidence are listed as candidates and kept out of the modes
#: (and the modes file) unless asked for.  Confidence rises from 0 at 4 dB above
#: the floor to 1 at 16 dB, times 0.75 for a loose fit (90 % interval wider than
#: ±50 %) and 0.4 for a very loose one (see ``_merge_axes``).  Judgement: a peak
#: 7 dB above its floor with a clean fit passes; a peak narrower than the
#: resolution never does (:data:`BOUND_CONFIDENCE`).
CONFIDENCE_FLOOR = 0.25
#: Highest confidence of a peak narrower than the resolution (a steady tone, a
#: fan or supply line, more often than a frame mode): below the floor.
BOUND_CONFIDENCE = 0.2
#: Relative disagreement between the drive model's rotor rate and the one the
#: log's own order lines show, beyond which the log's estimate is used.
#: Judgement: a drive model within 5 % is as good as the line windows need.
DRIVE_TOLERANCE = 0.05
#: Motor-to-motor spread of rotor rate assumed (±, relative) when the log does not
#: give each motor's rate: attitude control keeps motors apart by about this much
#: (judgement); the order-line windows and masks cover it.
MOTOR_SPREAD = 0.01
#: Whole orders masked out of the stationary spectrum (beside the family orders).
MASK_ORDERS = 8
#: Range, relative to the drive model's rotor rate, searched for the log's own rate.
ESTIMATE_RANGE = (0.65, 1.5)
#: How much more a rate away from the drive model's must score in the harmonic
#: sum than the best rate within :data:`DRIVE_TOLERANCE` of it, to be taken: the
#: score of two lines standing 6 dB out of their surroundings (2·ln 4).  Frame
#: modes are peaks too, and a wrong rate whose harmonics land on two or three of
#: them can outscore the right one by a little; a wrong drive model loses by a lot.
#: Judgement, set on generated logs (tests/test_identify_flight_real.py).
ESTIMATE_MARGIN = 2.0 * math.log(4.0)
#: Share of a bin's segments that must keep a frequency (clear of order lines) for
#: the bin to vote on it in the stationary spectrum.
MIN_KEPT = 0.5
#: Least share of the recording in which a mode's band is clear of order lines for
#: its figures to keep their confidence; below it the confidence falls in
#: proportion, halved (judgement: a mode hidden under a line most of the flight
#: is measured from the passages only).
MIN_CLEAR = 0.5
#: Fewest segments in which an order and the reference order are read together.
MIN_ORDER_SEGMENTS = 8
#: Throttle bands of the measured dwell (equal bands over 0–1).
DWELL_BANDS = 10

Progress = Callable[[int, int], None]

#: The streaming pass, as the second process finds it (``module:function``).
STREAM_PASS = "clashcheck.identify.flight:stream_flight"


@dataclass(frozen=True)
class FlightSettings:
    """Settings of a flight-recording analysis."""

    #: Lowest mode frequency looked for [Hz].
    min_frequency_hz: float = 20.0
    #: Highest mode frequency looked for [Hz]; ``None`` = 0.4 × sample rate.
    max_frequency_hz: float | None = None
    #: Frequency resolution of the spectra [Hz].
    resolution_hz: float = 1.0
    #: True when the user asked for this resolution (then a short recording is
    #: refused instead of analysed at a coarser resolution).
    resolution_given: bool = False
    #: Least peak height above the estimated floor [dB].
    snr_db: float = 6.0
    #: Least peak prominence [dB].
    prominence_db: float = 3.0
    #: Most modes reported.
    max_modes: int = 12
    #: Axis of each signal (roll, pitch, yaw, any); ``None`` = roll, pitch, yaw in order.
    axes: tuple[str, ...] | None = None
    #: Propeller blades, for naming the blade-pass orders.
    blades: int | None = None
    #: Motor magnet poles, for the electrical and commutation orders.
    poles: int | None = None
    #: Motor stator slots, for the cogging order.
    slots: int | None = None
    #: Rotor rate [Hz] as a function of throttle fraction (the drive model), if any.
    rotor_of_throttle: Callable[[np.ndarray], np.ndarray] | None = field(default=None,
                                                                        compare=False)
    #: Width of a rotor-rate bin, relative (0.03 = 3 %).
    bin_width: float = 0.03
    #: Keep the spectrogram against time that the time figure draws
    #: (:class:`~.views.Timeline`); without it the view's timeline is empty and
    #: the pass spends neither its time nor its memory (no number changes).
    keep_timeline: bool = True

    def __post_init__(self) -> None:
        if not self.min_frequency_hz > 0:
            raise InputError("min_frequency_hz", "a frequency above 0 Hz", self.min_frequency_hz)
        if self.max_frequency_hz is not None and not self.max_frequency_hz > self.min_frequency_hz:
            raise InputError("max_frequency_hz", "a frequency above the lowest one looked for",
                             self.max_frequency_hz)
        if not self.resolution_hz > 0:
            raise InputError("resolution_hz", "a resolution above 0 Hz", self.resolution_hz)
        if self.axes is not None:
            for a in self.axes:
                if a not in MODE_AXES:
                    raise InputError("axes", "names from " + ", ".join(MODE_AXES), a)
        for name, val, least in (("blades", self.blades, 1), ("poles", self.poles, 2),
                                 ("slots", self.slots, 3)):
            if val is not None and (int(val) != val or val < least):
                raise InputError(name, f"a whole number of at least {least}", val)
        if self.poles is not None and self.poles % 2:
            raise InputError("poles", "an even number of magnet poles", self.poles)
        if not 0.005 <= self.bin_width <= 0.2:
            raise InputError("bin_width", "a relative width from 0.005 to 0.2", self.bin_width)


def order_families(blades: int | None, poles: int | None,
                   slots: int | None) -> tuple[dict[float, str], list[str]]:
    """The orders to measure and the family of each.

    Families follow the design vocabulary: rotor 1, 2; blade B, 2B; electrical
    poles/2; commutation 3 × poles; cogging LCM(slots, poles)
    (REFERENCES.md §4).  Without blades or poles the orders 1–8 are measured,
    order 1 as ``rotor`` and the others as ``custom``.

    Parameters
    ----------
    blades : int or None
        Blades per propeller, or ``None`` when unknown.
    poles : int or None
        Magnet poles of the motor, or ``None`` when unknown.
    slots : int or None
        Stator slots of the motor, or ``None`` when unknown; used only with
        ``poles`` (for the cogging order).

    Returns
    -------
    orders : dict
        Order (multiple of the rotor rate [-]) → family, sorted by order. When
        two families share an order, the later in the list above is kept.
        Orders 1–8 only when both ``blades`` and ``poles`` are ``None``.
    notes : list of str
        Sentences about shared or unknown families.

    Examples
    --------
    >>> order_families(3, 14, 12)[0]
    {1.0: 'rotor', 2.0: 'rotor', 3.0: 'blade', 6.0: 'blade', 7.0: 'electrical', 42.0: 'commutation', 84.0: 'cogging'}
    """
    notes: list[str] = []
    out: dict[float, str] = {}
    if blades is None and poles is None:
        out = {1.0: "rotor", **{float(k): "custom" for k in range(2, 9)}}
        notes.append("without --blades and --poles (or --build) the orders 2–8 are reported "
                     "by number with family 'custom'")
        return out, notes
    plan: list[tuple[float, str]] = [(1.0, "rotor"), (2.0, "rotor")]
    if blades is not None:
        plan += [(float(blades), "blade"), (float(2 * blades), "blade")]
    if poles is not None:
        plan += [(poles / 2.0, "electrical"), (3.0 * poles, "commutation")]
        if slots is not None:
            plan.append((float(math.lcm(int(slots), int(poles))), "cogging"))
    for order, fam in plan:
        if order in out and out[order] != fam:
            notes.append(f"order {order:g} is both {out[order]} and {fam}; it is reported as {fam}")
        out[order] = fam
    return dict(sorted(out.items())), notes


def _import_scipy() -> None:
    """Import the scipy parts that the peak analysis needs."""
    try:
        import scipy.ndimage  # noqa: F401
        import scipy.optimize  # noqa: F401
        import scipy.signal  # noqa: F401
    except ImportError:  # reported where the modules are used
        pass


def _preload_scipy() -> None:
    """Import the scipy parts needed at the end in a background thread.

    Reading and the FFTs mostly run outside the GIL, so a long recording hides
    part of scipy's import time; a short one just waits for it at the end.
    """
    import threading

    threading.Thread(target=_import_scipy, name="clashcheck-preload", daemon=True).start()


def analyse_flight(recording: Recording, settings: FlightSettings = FlightSettings(),
                   progress: Progress | None = None) -> ModesResult:
    """Find stationary frame modes and measured order strengths in a flight recording.

    A long recording streams in a second process (see :mod:`.worker`) while this
    one loads scipy for the peak analysis; the result is the same either way.

    Parameters
    ----------
    recording : Recording
        An opened recording with signals and rotor-rate columns or a throttle column.
    settings : FlightSettings
        Analysis settings.
    progress : callable, optional
        Called as ``progress(rows_done, rows_total)`` while reading.

    Returns
    -------
    ModesResult

    Raises
    ------
    InputError
        If the recording has neither rotor-rate columns nor a throttle column.
    RecordingError
        If the recording is too short or its sample rate too low.
    """
    from . import worker

    plan = _plan(recording, settings)
    streamed = None
    child = (worker.start(STREAM_PASS, recording, settings)
             if worker.wanted(recording, settings) else None)
    if child is not None:
        with child:
            _import_scipy()  # here, while the child streams the recording
            streamed = child.result(progress)
    if streamed is None:  # a short recording, or no second process
        _preload_scipy()  # scipy loads in the background while the recording streams
        streamed = stream_flight(recording, settings, progress)
    return _finish(recording, settings, plan, streamed)


@dataclass(frozen=True)
class _Plan:
    """What the settings and the recording's columns decide before any sample is read."""

    rotor_known: bool
    families: dict[float, str]
    order_list: list[float]
    axes: tuple[str, ...]
    warnings: tuple[str, ...]


def _plan(recording: Recording, settings: FlightSettings) -> _Plan:
    if not (recording.has_rotor or recording.has_throttle):
        raise InputError("rpm_columns", "rotor-rate columns or a throttle column", None,
                         "a flight analysis bins its spectra by rotor rate")
    warnings: list[str] = []
    rotor_known = recording.has_rotor or settings.rotor_of_throttle is not None
    families, notes = order_families(settings.blades, settings.poles, settings.slots)
    if rotor_known:
        warnings.extend(notes)
    else:
        warnings.append("no rotor rate (give --rpm-columns, or --build with the throttle "
                        "column): spectra were binned by throttle and order strengths were "
                        "not measured")
    nch = len(recording.signal_names)
    axes = settings.axes or (("roll", "pitch", "yaw")[:nch] if nch <= 3 else None)
    if axes is None or len(axes) != nch:
        raise InputError("axes", f"{nch} axis names (roll, pitch, yaw or any), one per signal",
                         settings.axes)
    return _Plan(rotor_known, families, sorted(families), tuple(axes), tuple(warnings))


class _Bins:
    """Per-bin sums of band-limited periodograms, whole and with the order lines masked."""

    def __init__(self, width: float) -> None:
        self.step = math.log1p(width)
        self.sums: dict[int, np.ndarray] = {}
        self.masked: dict[int, np.ndarray] = {}
        self.kept: dict[int, np.ndarray] = {}
        self.counts: dict[int, int] = {}
        self.values: dict[int, float] = {}
        self.estimates: dict[int, float] = {}
        self.estimated: dict[int, int] = {}

    def add(self, key_values: np.ndarray, psd: np.ndarray, keep: np.ndarray,
            estimate: np.ndarray) -> None:
        keys = np.floor(np.log(key_values) / self.step).astype(int)
        # segments come in time order and the rotor rate changes slowly: sum runs of
        # equal keys as slices (views), not boolean copies
        edges = np.r_[0, np.flatnonzero(np.diff(keys)) + 1, keys.size]
        for a, b in zip(edges[:-1], edges[1:]):
            k = int(keys[a])
            part = psd[a:b].sum(axis=0)
            kp = keep[a:b]
            masked = np.einsum("scf,sf->cf", psd[a:b], kp)
            kept = kp.sum(axis=0)
            if k in self.sums:
                self.sums[k] += part
                self.masked[k] += masked
                self.kept[k] += kept
            else:
                self.sums[k], self.masked[k], self.kept[k] = part, masked, kept
            self.counts[k] = self.counts.get(k, 0) + int(b - a)
            self.values[k] = self.values.get(k, 0.0) + float(key_values[a:b].sum())
            est = estimate[a:b]
            good = np.isfinite(est)
            self.estimates[k] = self.estimates.get(k, 0.0) + float(est[good].sum())
            self.estimated[k] = self.estimated.get(k, 0) + int(good.sum())


class _Occupancy:
    """Time spent per throttle band (or rotor-rate band), counted per sample."""

    def __init__(self, quantity: str) -> None:
        self.quantity = quantity
        # throttle: 1 % bands over 0–1; rotor rate: 1 Hz bands
        self.step = 0.01 if quantity == "throttle" else 1.0
        self.counts = np.zeros(0, dtype=np.int64)

    def add(self, values: np.ndarray) -> None:
        v = values[np.isfinite(values)]
        if self.quantity == "throttle":
            v = np.clip(v, 0.0, 1.0 - 1e-12)
        idx = np.floor(np.maximum(v, 0.0) / self.step).astype(np.int64)
        if not idx.size:
            return
        add = np.bincount(idx)
        if add.size > self.counts.size:
            self.counts = np.pad(self.counts, (0, add.size - self.counts.size))
        self.counts[: add.size] += add

    def result(self) -> Dwell | None:
        total = int(self.counts.sum())
        if total == 0:
            return None
        if self.quantity == "throttle":
            edges = np.round(np.linspace(0.0, 1.0, DWELL_BANDS + 1), 6)
            fine = np.pad(self.counts, (0, max(0, 100 - self.counts.size)))[:100]
            share = fine.reshape(DWELL_BANDS, -1).sum(axis=1) / total
        else:
            used = np.flatnonzero(self.counts)
            lo = float(used[0]) * self.step
            hi = float(used[-1] + 1) * self.step
            width = max(math.ceil((hi - lo) / DWELL_BANDS / 5.0) * 5.0, 5.0)
            lo = math.floor(lo / 5.0) * 5.0
            nb = max(1, math.ceil((hi - lo) / width))
            edges = lo + width * np.arange(nb + 1, dtype=float)
            centres = (np.arange(self.counts.size) + 0.5) * self.step
            which = np.clip(((centres - lo) // width).astype(int), 0, nb - 1)
            share = np.bincount(which, weights=self.counts, minlength=nb) / total
        share = np.round(share, 6)
        share[int(np.argmax(share))] += 1.0 - float(share.sum())  # exact sum after rounding
        return Dwell(self.quantity, tuple(float(e) for e in edges),
                     tuple(max(float(x), 0.0) for x in share))


@dataclass
class StreamedFlight:
    """The totals of a flight recording's streaming pass: small, and all the peak
    analysis needs (it crosses from the worker process by pickle)."""

    #: Sample rate [Hz].
    sample_rate_hz: float
    #: Welch segment length and FFT length [samples].
    nperseg: int
    nfft: int
    #: The analysed band, as a slice of the FFT bins.
    band: slice
    #: Per rotor-rate bin: summed band periodograms (channels, freqs), segment
    #: counts and summed bin values (rotor rate [Hz] or throttle).
    sums: dict[int, np.ndarray]
    counts: dict[int, int]
    values: dict[int, float]
    #: Per bin: summed periodograms with the order lines masked, and how many
    #: segments each frequency kept.
    masked: dict[int, np.ndarray]
    kept: dict[int, np.ndarray]
    #: Per bin: summed rotor-rate estimates from the log [Hz] and their number.
    estimates: dict[int, float]
    estimated: dict[int, int]
    #: Line power of every order (columns, in :func:`order_families` order) in
    #: every segment (rows); NaN where the line could not be read.  From the
    #: known or predicted rotor rate, and from the rate estimated from the log.
    order_power: np.ndarray
    order_power_est: np.ndarray
    #: Per segment: rotor rate used [Hz] (known or predicted), estimated from the
    #: log [Hz] (NaN when not estimated) and the number of lines the estimate hit.
    rotor_hz: np.ndarray
    rotor_est_hz: np.ndarray
    est_hits: np.ndarray
    #: Measured occupancy (throttle or rotor-rate bands).
    dwell: Dwell | None
    #: The recording checks' findings.
    findings: Findings
    #: Warnings of the pass (without the findings' own).
    warnings: list[str]
    #: Spectrogram against time for the figures (bounded size).
    timeline: Timeline | None = None


def _line_bounds(k: float | np.ndarray, lo: np.ndarray, hi: np.ndarray, spread: np.ndarray,
                 line_hw: float, df: float) -> tuple[np.ndarray, np.ndarray]:
    """Frequency range [Hz] of order ``k``'s line in each segment (orders as a column
    give one row per order).

    The range covers every motor's line (``lo``..``hi`` are the slowest and
    fastest motor's mean rate), the window's main lobe (``line_hw``) and the
    rate's change within the segment (``spread``, its standard deviation; a
    uniform sweep of width w has standard deviation w/√12, so √3·σ is half its
    width; derived).
    """
    hw = line_hw + k * math.sqrt(3.0) * spread + df
    return k * lo - hw, k * hi + hw


def _log_background(total: np.ndarray, df: float) -> tuple[np.ndarray, np.ndarray]:
    """The log spectrum of each segment and its running mean over ±20 Hz (cumulative sums).

    The running mean of the log power is the log of a local geometric mean: a
    line a few bins wide lifts it little, so ``logp − mean`` tells how far a
    line stands out of its surroundings.
    """
    nseg, nf = total.shape
    logp = np.log(np.maximum(total, 1e-300))
    w = max(5, int(round(20.0 / df)))
    c = np.zeros((nseg, nf + 1))
    np.cumsum(logp, axis=1, out=c[:, 1:])
    i = np.arange(nf)
    lo, hi = np.maximum(i - w, 0), np.minimum(i + w + 1, nf)
    if nf <= 2 * w + 1:
        return logp, (c[:, hi] - c[:, lo]) / (hi - lo)
    # the same differences, as slices where the window is whole (no gather)
    mean = np.empty((nseg, nf))
    np.subtract(c[:, 2 * w + 1:], c[:, : nf - 2 * w], out=mean[:, w:nf - w])
    mean[:, w:nf - w] /= float(2 * w + 1)
    ends = np.r_[0:w, nf - w:nf]  # where the window is cut
    mean[:, ends] = (c[:, hi[ends]] - c[:, lo[ends]]) / (hi[ends] - lo[ends])
    return logp, mean


def _harmonic_rate(white: np.ndarray, df: float, pred: np.ndarray, orders: np.ndarray,
                   fmin: float, ftop: float, fs: float) -> tuple[np.ndarray, np.ndarray]:
    """Rotor rate of each segment from its own spectrum, by harmonic summation.

    For each candidate rate f in :data:`ESTIMATE_RANGE` × the predicted rate,
    the whitened log spectrum (log power less its 20 Hz running mean,
    :func:`_log_background`) is read at every order k·f and the readings,
    clipped to 0–5 (up to 22 dB), are summed (subharmonic summation, Hermes,
    *J. Acoust. Soc. Am.* 83 (1988) 257–264; the harmonic sum of Noll 1969).
    An order above the Nyquist frequency is read where sampling folds it,
    |k·f − fs·round(k·f/fs)| (a log with no anti-alias filter shows it there;
    a filtered one shows nothing there, for every candidate alike).  The best
    candidate within :data:`DRIVE_TOLERANCE` of the prediction is kept unless
    one farther away scores :data:`ESTIMATE_MARGIN` more.  A coarse grid on a
    ±3-bin maximum of the spectrum is refined on the spectrum itself.

    Parameters
    ----------
    white : ndarray
        Whitened log spectra, (segments, frequencies) on a grid of ``df``.
    df : float
        Frequency step [Hz].
    pred : ndarray
        Predicted rotor rate per segment [Hz].
    orders : ndarray
        Orders summed.
    fmin, ftop : float
        Band in which lines are read [Hz].
    fs : float
        Sample rate [Hz], for the folded images of orders above fs/2.

    Returns
    -------
    rate_hz : ndarray
        Estimated rotor rate per segment [Hz].
    hits : ndarray
        Number of orders standing more than 6 dB above their surroundings at
        the estimate.
    """
    nseg, nf = white.shape
    # the maximum over ±3 bins, by doubling: over 2, 4 (2 + 2) and 7 (4 + 4 − 1) bins
    pad = np.full((nseg, nf + 6), -np.inf)
    pad[:, 3:-3] = white
    two = np.maximum(pad[:, :-1], pad[:, 1:])
    four = np.maximum(two[:, :-2], two[:, 2:])
    wide = np.maximum(four[:, :-3], four[:, 3:])
    kmax = float(orders.max())
    # clipped once, with a zero column where out-of-band readings point
    wide_c = np.zeros((nseg, nf + 1))
    np.clip(wide, 0.0, 5.0, out=wide_c[:, :nf])
    white_c = np.zeros((nseg, nf + 1))
    np.clip(white, 0.0, 5.0, out=white_c[:, :nf])
    rows = (np.arange(nseg) * (nf + 1))[:, None]

    def seen(fk: np.ndarray) -> np.ndarray:
        return np.abs(fk - fs * np.rint(fk / fs))  # where sampling at fs puts k·f

    def score(cand: np.ndarray, spec: np.ndarray) -> np.ndarray:
        flat = spec.ravel()
        out = np.zeros(cand.shape)
        below = float(cand.max()) < 0.5 * fs  # k·f under fs/2 is seen where it is
        for k in orders:
            fk = k * cand
            if not (below and k * float(cand.max()) < 0.5 * fs):
                fk = seen(fk)
            idx = np.rint(fk * (1.0 / df)).astype(np.intp)
            idx[(fk <= fmin) | (fk >= ftop) | (idx >= nf)] = nf
            out += flat[rows + idx]
        return out

    lo, hi = ESTIMATE_RANGE
    # the coarse grid moves the top order by up to 5 bins, inside the ±3-bin maximum
    step = 5.0 * df / (kmax * max(float(pred.max()), 1e-9))
    rel = np.exp(np.arange(math.log(lo), math.log(hi), step))
    cand = pred[:, None] * rel[None, :]
    coarse = score(cand, wide_c)
    near = np.abs(np.log(rel)) <= math.log1p(DRIVE_TOLERANCE)
    at = np.where(near, coarse, -np.inf).argmax(axis=1)
    far = coarse.argmax(axis=1)
    seg = np.arange(nseg)
    pick = np.where(coarse[seg, far] - coarse[seg, at] > ESTIMATE_MARGIN, far, at)
    best = cand[seg, pick]
    fine = best[:, None] * np.exp(np.linspace(-step, step, 21))[None, :]
    est = fine[seg, np.argmax(score(fine, white_c), axis=1)]
    hits = np.zeros(nseg, dtype=int)
    for k in orders:
        fk = seen(k * est)
        idx = np.clip(np.round(fk / df).astype(int), 0, nf - 1)
        hits += ((fk > fmin) & (fk < ftop) & (wide[seg, idx] > math.log(4.0)))
    return est, hits


def stream_flight(recording: Recording, settings: FlightSettings = FlightSettings(),
                  progress: Progress | None = None) -> StreamedFlight:
    """The streaming pass of :func:`analyse_flight`: checks, spectra, bins, order lines.

    Uses numpy only; what it keeps grows with the recording only by a few
    numbers per spectral segment.

    Parameters
    ----------
    recording : Recording
        An opened recording.
    settings : FlightSettings
        Analysis settings.
    progress : callable, optional
        Called as ``progress(rows_done, rows_total)``.

    Returns
    -------
    StreamedFlight

    Raises
    ------
    InputError, RecordingError
        As :func:`analyse_flight`.
    """
    plan = _plan(recording, settings)
    warnings = list(plan.warnings)
    order_arr = np.array(plan.order_list)
    # the lines masked out of the stationary spectrum: every family order and the
    # whole orders 1–8 (harmonics a log shows whatever the build)
    mask_orders = np.array(sorted(set(plan.order_list) | set(range(1, MASK_ORDERS + 1))))
    est_orders = np.array(sorted(set(range(1, MASK_ORDERS + 1)) | {k for k in plan.order_list
                                                                    if k <= 16}))
    powers: list[np.ndarray] = []
    powers_est: list[np.ndarray] = []
    rotor_seg: list[np.ndarray] = []
    est_seg: list[np.ndarray] = []
    hits_seg: list[np.ndarray] = []

    cond = Conditioner(recording)
    state: dict[str, Any] = {}
    bins = _Bins(settings.bin_width)
    timeline: Timeline | None = None  # for the figures
    occupancy = _Occupancy("throttle" if recording.has_throttle else "rotor_hz")
    throttle_scale: list[float | None] = [None]
    predicted = not recording.has_rotor and settings.rotor_of_throttle is not None

    def setup(fs: float) -> None:
        fmax = settings.max_frequency_hz
        if fmax is None:
            fmax = USABLE_BAND * fs
        else:
            require_sample_rate(recording.path, fs, fmax)
        res = settings.resolution_hz
        est_s = recording.rows_estimate / fs
        need_s = lambda r: (MIN_SEGMENTS + 1) / 2 * segment_length(fs, r) / fs  # noqa: E731
        if not settings.resolution_given and est_s < need_s(res):
            res = (MIN_SEGMENTS + 1) / 2 / max(est_s, 1e-9) * 1.05
            warnings.append(f"the recording is short for {settings.resolution_hz:g} Hz "
                            f"resolution; analysed at {res:.3g} Hz")
        check_band(fs, settings.min_frequency_hz, fmax, res)
        nper = segment_length(fs, res)
        stream = SegmentStream(fs, nper, nper // 2, nfft=2 * nper)
        mask = (stream.freq_hz >= settings.min_frequency_hz) & (stream.freq_hz <= fmax)
        idx = np.flatnonzero(mask)
        band = slice(int(idx[0]), int(idx[-1]) + 1)  # a slice: band views, not copies
        state.update(fs=fs, fmax=fmax, stream=stream, band=band, nper=nper,
                     df=float(stream.freq_hz[1]), line_hw=2.0 * fs / nper,
                     fband=stream.freq_hz[band])

    def key_of(aux_mean: np.ndarray):
        """Segment bin values (rotor Hz, or throttle), their spread in time, the
        slowest and fastest motor's rate, and rotor-ness."""
        mean, sq = aux_mean[0], aux_mean[1]
        spread = np.sqrt(np.maximum(sq - mean * mean, 0.0))
        if recording.has_rotor:
            if aux_mean.shape[0] > 2:  # each motor's own rate
                each = aux_mean[2:]
                return mean, spread, each.min(axis=0), each.max(axis=0), True
            return mean, spread, mean * (1 - MOTOR_SPREAD), mean * (1 + MOTOR_SPREAD), True
        if settings.rotor_of_throttle is not None:
            lo = np.asarray(settings.rotor_of_throttle(np.clip(mean - spread, 0, 1)), float)
            mid = np.asarray(settings.rotor_of_throttle(np.clip(mean, 0, 1)), float)
            hi = np.asarray(settings.rotor_of_throttle(np.clip(mean + spread, 0, 1)), float)
            sp = 0.5 * np.abs(hi - lo)
            return mid, sp, mid * (1 - MOTOR_SPREAD), mid * (1 + MOTOR_SPREAD), True
        return mean, spread, mean, mean, False

    def line_power(total: np.ndarray, lo: np.ndarray, hi: np.ndarray,
                   spread: np.ndarray) -> np.ndarray:
        """Power of each order's lines above the background beside them, (segs, orders)."""
        fs, df, line_hw = state["fs"], state["df"], state["line_hw"]
        nf = total.shape[1]
        out = np.full((total.shape[0], order_arr.size), np.nan)
        for j, k in enumerate(order_arr):
            # only segments where the rotor rate held steady: the line then fits in the
            # window's main lobe and the background beside it is clean
            smear = k * math.sqrt(3.0) * spread
            flo, fhi = _line_bounds(k, lo, hi, spread, line_hw, df)
            side = 2.0 * (line_hw + df)
            ok = ((flo - side > settings.min_frequency_hz * 0.5)
                  & (fhi + side < USABLE_BAND * fs)
                  & (smear <= np.maximum(line_hw, 0.01 * k * lo))
                  & np.isfinite(flo))
            rows = np.flatnonzero(ok)
            if not rows.size:
                continue
            a = np.clip(np.round(flo[rows] / df).astype(int), 0, nf - 1)
            b = np.clip(np.round(fhi[rows] / df).astype(int) + 1, 1, nf)
            blo = np.clip(np.round((flo[rows] - side) / df).astype(int), 0, nf - 1)
            bhi = np.clip(np.round((fhi[rows] + side) / df).astype(int) + 1, 1, nf)
            line, band = _window_sums(total, rows, blo, a, b, bhi)
            nside = np.maximum((bhi - blo) - (b - a), 1)
            out[rows, j] = np.maximum(line - (band - line) / nside * (b - a), 0.0) * df
        return out

    def line_mask(logp: np.ndarray, logbg: np.ndarray, lo: np.ndarray, hi: np.ndarray,
                  spread: np.ndarray, rows_in: np.ndarray | None = None) -> np.ndarray:
        """1.0 where a frequency of the band is clear of every order line, else 0.0.

        Each line is masked over its main lobe and as far out as its Hann side
        lobes stand above the spectrum around it: the side lobes fall from
        −31.5 dB at 2.5 bins by about 18 dB per octave (Harris, Proc. IEEE 66
        (1978) 51–83, Table 1), so a line r dB above its surroundings (its top
        against the local geometric mean, plus 3 dB for the line's own share of
        that mean) is masked to 2.5 · 2^((r − 31.5)/18) resolution bins (2 to
        12) on each side.  Only the segments ``rows_in`` are masked (all by
        default).
        """
        df, line_hw = state["df"], state["line_hw"]
        res = line_hw / 2.0
        nseg, nf = logp.shape
        f = state["fband"]
        keep = np.ones((nseg, f.size))
        sel = np.ones(nseg, bool) if rows_in is None else rows_in
        # every order at once: (orders, segments) arrays
        flo, fhi = _line_bounds(mask_orders[:, None], lo, hi, spread, line_hw, df)
        live = sel & np.isfinite(flo) & (flo < f[-1]) & (fhi > f[0])
        if not live.any():
            return keep
        # the line's top against the local background, per order and segment (rows
        # without a rate, NaN, are left unmasked): the maximum of each row's bins
        # a_i..b_i, one reduceat over the flattened rows; reduceat takes no bound at
        # the array's end, so a stretch that runs there stops one short and takes
        # the last bin in afterwards
        a_i = np.clip(np.rint(np.nan_to_num(flo / df)).astype(int), 0, nf - 1)
        b_i = np.clip(np.rint(np.nan_to_num(fhi / df)).astype(int), 0, nf - 1)
        flat = logp.reshape(-1)
        seg = np.arange(nseg)
        start = seg * nf + a_i
        end = seg * nf + b_i + 1
        bounds = np.empty(2 * start.size, dtype=np.intp)
        bounds[0::2] = start.ravel()
        bounds[1::2] = np.minimum(end, flat.size - 1).ravel()
        top = np.maximum.reduceat(flat, bounds)[0::2].reshape(start.shape)
        at_end = end == flat.size
        top[at_end] = np.maximum(top[at_end], flat[-1])
        mid = (a_i + b_i) // 2
        r_db = (top - logbg[seg, mid]) * (10.0 / math.log(10.0)) + 3.0
        d_res = np.clip(2.5 * 2.0 ** ((r_db - 31.5) / 18.0), 2.0, 12.0)
        extra = (d_res - 2.0) * res
        a = np.searchsorted(f, flo - extra)
        b = np.searchsorted(f, fhi + extra, side="right")
        masked = live & (b > a)
        _, rows = np.nonzero(masked)
        for r, x, y in zip(rows.tolist(), a[masked].tolist(), b[masked].tolist()):
            keep[r, x:y] = 0.0
        return keep

    for block in recording.blocks():
        for run in cond.feed(block):
            if "fs" not in state:
                setup(cond.sample_rate_hz)  # type: ignore[arg-type]
            thr = None
            if run.throttle is not None:
                thr = run.throttle
                if throttle_scale[0] is None:
                    if np.nanmax(thr) > 1.5:
                        throttle_scale[0] = 0.01
                        warnings.append("the throttle column reads above 1.5; taken as percent")
                    else:
                        throttle_scale[0] = 1.0
                thr = thr * throttle_scale[0]
                occupancy.add(thr)
            aux_v = run.rotor_hz if recording.has_rotor else thr
            if aux_v is None:  # the plan made sure one of the two is there
                continue
            if recording.has_rotor and not recording.has_throttle:
                occupancy.add(aux_v)
            cols = [aux_v, aux_v * aux_v]
            if recording.has_rotor and run.rotor_each_hz is not None:
                cols += list(run.rotor_each_hz.T)
            aux = np.column_stack(cols)
            stream: SegmentStream = state["stream"]
            for segs in stream.feed(run.run, run.signals, aux):
                value, spread, lo, hi, is_rotor = key_of(segs.aux_mean)
                if settings.keep_timeline:
                    timeline = timeline or Timeline(state["nper"] // 2 / state["fs"])
                    timeline.add(segs.psd[:, :, state["band"]].sum(axis=1), value)
                live = value > (1.0 if is_rotor else 0.02)
                if not live.any():
                    continue
                if not live.all():
                    psd = segs.psd[live]
                    value, spread, lo, hi = value[live], spread[live], lo[live], hi[live]
                else:
                    psd = segs.psd
                band_psd = psd[:, :, state["band"]]
                nseg = psd.shape[0]
                est = np.full(nseg, np.nan)
                if is_rotor:
                    df = state["df"]
                    top = min(psd.shape[2], int(USABLE_BAND * state["fs"] / df) + 2)
                    total = psd[:, :, :top].sum(axis=1)
                    logp, logbg = _log_background(total, df)
                    keep = line_mask(logp, logbg, lo, hi, spread)
                    pw = line_power(total, lo, hi, spread)
                    powers.append(pw)
                    rotor_seg.append(value)
                    if predicted:
                        e, h = _harmonic_rate(logp - logbg, df, value, est_orders,
                                              settings.min_frequency_hz, USABLE_BAND * state["fs"],
                                              state["fs"])
                        good = h >= 2
                        est = np.where(good, e, np.nan)
                        ratio = np.where(good, e / value, 1.0)
                        # where the estimate moves the lines by more than half a
                        # line window, read and mask them there too
                        reach_hz = np.minimum(value * mask_orders.max(),
                                              USABLE_BAND * state["fs"])
                        moved = good & (np.abs(ratio - 1.0) * reach_hz > 0.5 * state["line_hw"])
                        pe = pw.copy()
                        pe[~good] = np.nan
                        if moved.any():
                            elo, ehi = lo * ratio, hi * ratio
                            pm = line_power(total[moved], elo[moved], ehi[moved],
                                            (spread * ratio)[moved])
                            pe[moved] = pm
                            keep *= line_mask(logp, logbg, elo, ehi, spread * ratio, moved)
                        powers_est.append(pe)
                        hits_seg.append(h)
                    est_seg.append(est)
                else:
                    keep = np.ones((nseg, band_psd.shape[2]))
                bins.add(value, band_psd, keep, est)
        if progress is not None:
            progress(block.first_row + block.signals.shape[0], recording.rows_estimate)
    findings = cond.finish()
    if "fs" not in state:
        require_duration(recording.path, findings.duration_s, 1.0, "a flight analysis")
    stream = state["stream"]
    n_ord = order_arr.size

    def cat(parts: list[np.ndarray], shape: tuple[int, ...]) -> np.ndarray:
        return np.concatenate(parts) if parts else np.zeros(shape)

    return StreamedFlight(
        float(state["fs"]), int(state["nper"]), stream.nfft, state["band"], bins.sums,
        bins.counts, bins.values, bins.masked, bins.kept, bins.estimates, bins.estimated,
        cat(powers, (0, n_ord)), cat(powers_est, (0, n_ord)), cat(rotor_seg, (0,)),
        cat(est_seg, (0,)), cat(hits_seg, (0,)).astype(int), occupancy.result(), findings,
        warnings, timeline)


def _window_sums(total: np.ndarray, rows: np.ndarray, blo: np.ndarray, lo: np.ndarray,
                 hi: np.ndarray, bhi: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Sums of ``total[row, lo:hi]`` and ``total[row, blo:bhi]`` for each selected row.

    The windows are a few dozen bins wide, so only they are gathered: a running
    sum over the whole spectrum would cost far more (and holds the GIL, which the
    CSV reader thread needs).
    """
    width = bhi - blo
    offs = np.arange(int(width.max()))
    idx = blo[:, None] + offs
    inside = offs < width[:, None]
    vals = total[rows[:, None], np.minimum(idx, total.shape[1] - 1)]
    vals[~inside] = 0.0
    band = vals.sum(axis=1)
    vals[(idx < lo[:, None]) | (idx >= hi[:, None])] = 0.0
    return vals.sum(axis=1), band


def _rotor_check(streamed: StreamedFlight, warnings: list[str]) -> bool:
    """Do the measured lines disagree with the drive model's rotor rate?

    Compares, over the segments where the harmonic sum found at least two
    lines, the estimated rotor rate with the predicted one.  Returns True (and
    says so) when the median relative difference exceeds :data:`DRIVE_TOLERANCE`.
    """
    good = np.isfinite(streamed.rotor_est_hz)
    if streamed.rotor_est_hz.size == 0 or good.sum() < max(4, 0.3 * good.size):
        if streamed.rotor_est_hz.size:
            warnings.append("the drive model's rotor rate could not be checked against the "
                            "log: too few order lines stood out of the spectrum")
        return False
    ratio = streamed.rotor_est_hz[good] / streamed.rotor_hz[good]
    off = float(np.median(ratio)) - 1.0
    far = float(np.mean(np.abs(ratio - 1.0) > DRIVE_TOLERANCE))
    if abs(off) <= DRIVE_TOLERANCE and far < 0.5:
        return False
    warnings.append(
        f"the order lines sit {100 * off:+.0f} % (median) from where the drive model puts "
        f"them ({100 * far:.0f} % of the time beyond the {100 * DRIVE_TOLERANCE:.0f} % "
        "tolerance); the rotor rate was estimated from the log itself (harmonic summation "
        "of its order lines, segment by segment) and used instead")
    return True


def _finish(recording: Recording, settings: FlightSettings, plan: _Plan,
            streamed: StreamedFlight) -> ModesResult:
    """The peak analysis of :func:`analyse_flight` on the streamed totals (uses scipy)."""
    import warnings as _pywarnings

    findings = streamed.findings
    warnings = list(findings.warnings) + list(streamed.warnings)
    fs, nper = streamed.sample_rate_hz, streamed.nperseg
    rotor_known, families, order_list, axes = (plan.rotor_known, plan.families, plan.order_list,
                                               plan.axes)
    nch = len(axes)
    total = sum(streamed.counts.values())
    need = (MIN_SEGMENTS + 1) / 2 * nper / fs
    if total < MIN_SEGMENTS:
        require_duration(
            recording.path, total * nper / 2 / fs, need,
            f"a resolution of {fs / nper:.3g} Hz with {MIN_SEGMENTS} half-overlapping averages "
            "(with rotor turning)")
    use_estimate = False
    if rotor_known and not recording.has_rotor:
        use_estimate = _rotor_check(streamed, warnings)
    keys = sorted(streamed.counts)
    # bins with a handful of segments (passing through on a throttle change) are too
    # noisy to vote in the median
    typical = float(np.median([streamed.counts[k] for k in keys]))
    least = max(2.0, 0.25 * typical)
    populated = [k for k in keys if streamed.counts[k] >= least] or keys
    values = np.array([streamed.values[k] / streamed.counts[k] for k in populated])
    if use_estimate:
        ratio = np.nanmedian(streamed.rotor_est_hz / np.where(streamed.rotor_hz > 0,
                                                              streamed.rotor_hz, np.nan))
        values = np.array([streamed.estimates[k] / streamed.estimated[k]
                           if streamed.estimated.get(k) else v * ratio
                           for k, v in zip(populated, values)])
    counts = np.array([streamed.counts[k] for k in populated])
    unit = "Hz rotor rate" if rotor_known else "throttle"
    if len(populated) < MIN_BINS:
        warnings.append(
            f"the {unit} varied over only {len(populated)} bins ({values.min():.3g}–"
            f"{values.max():.3g}); modes and order lines cannot be fully told apart; fly a wider "
            "range of throttle")
    band_sl = streamed.band
    freq = np.fft.rfftfreq(streamed.nfft, 1.0 / fs)[band_sl]
    whole = np.stack([streamed.sums[k] / streamed.counts[k] for k in populated])  # (bins, ch, f)
    kept = np.stack([streamed.kept[k] for k in populated])  # (bins, f)
    counts_all = np.array([streamed.counts[k] for k in populated], dtype=float)
    per_bin = np.stack([streamed.masked[k] for k in populated])  # masked sums, then means
    # a frequency counts in a bin only where most of the bin's segments kept it (a
    # mean of a few periodograms would put noise spikes into the median)
    enough = kept >= np.maximum(2.0, MIN_KEPT * counts_all[:, None])
    with np.errstate(invalid="ignore", divide="ignore"):
        per_bin /= kept[:, None, :]
    per_bin[~np.broadcast_to(enough[:, None, :], per_bin.shape)] = np.nan
    # one level per bin, common to the axes, so the axes keep their relative levels;
    # read where the order lines are masked (their leakage and sweeps would set it)
    level = np.median(whole.sum(axis=1, keepdims=True), axis=2, keepdims=True)
    summed = per_bin.sum(axis=1)
    for i in range(summed.shape[0]):
        clear = summed[i][np.isfinite(summed[i])]
        if clear.size >= 0.2 * summed.shape[1]:
            level[i, 0, 0] = np.median(clear)
    level[~(level > 0)] = 1.0
    with _pywarnings.catch_warnings():  # a frequency masked in every bin: filled below
        _pywarnings.simplefilter("ignore", RuntimeWarning)
        # the bins vote on different frequencies (each masks its own lines), so their
        # levels must agree: each bin's level is refined to its median ratio to the
        # consensus (twice; a robust alignment of the bins' gains)
        for _ in range(2):
            consensus = _nanmedian_bins(per_bin / level).sum(axis=0)  # (f,)
            for i in range(summed.shape[0]):
                ratio = summed[i] / consensus
                ratio = ratio[np.isfinite(ratio) & (ratio > 0)]
                if ratio.size >= 0.2 * summed.shape[1]:
                    level[i, 0, 0] = np.median(ratio)
        per_bin /= level
        normed = per_bin
        stationary = _nanmedian_bins(normed)  # (ch, f)
    whole /= level
    normed_whole = whole
    gap = ~np.isfinite(stationary)
    if gap.any():
        stationary[gap] = np.median(normed_whole, axis=0)[gap]
    normed_any = np.where(np.isfinite(normed), normed, normed_whole)
    del whole, normed_whole
    window = hann_periodic(nper)
    full_model = stationary_model(fs, window, streamed.nfft)

    def model(fn: float, z: float) -> np.ndarray:
        return full_model(fn, z)[band_sl]

    df = freq[1] - freq[0]
    # relative standard error of the stationary spectrum, measured on it: the
    # spread of its ratio to a running median over 31 bins (a peak or two move
    # the median absolute deviation little; 1.4826 × MAD estimates σ for normal
    # errors)
    from scipy.ndimage import median_filter

    smooth = median_filter(stationary, size=(1, 31), mode="nearest")
    with np.errstate(invalid="ignore", divide="ignore"):
        dev = stationary / np.where(smooth > 0, smooth, np.nan) - 1.0
    dev = dev[np.isfinite(dev)]
    rel_err = 1.4826 * float(np.median(np.abs(dev - np.median(dev)))) if dev.size else 1.0
    cands = []
    for ch in range(nch):
        spec = stationary[ch]
        floor = noise_floor(freq, spec)
        for pk in find_modes_peaks(freq, spec, settings.snr_db, settings.prominence_db,
                                   4 * df, settings.max_modes * 2, floor):
            # a ripple that the spread of the stationary spectrum can make: the
            # prominence against the spectrum's own scatter, in dB
            if pk.prominence_db < SIGNIFICANCE * 10.0 * math.log10(1.0 + rel_err):
                continue
            reason = _order_like(pk.freq_hz, values, counts, normed_any[:, ch, :], freq, df,
                                 floor[pk.index], rotor_known)
            if reason:
                warnings.append(f"peak at {pk.freq_hz:.1f} Hz on {axes[ch]} {reason}; "
                                "treated as an order line, not a mode")
                continue
            raw = half_power_raw(freq, spec, pk.index)
            if raw is None:
                continue
            cands.append((ch, pk, raw, float(spec[pk.index])))

    oversample = streamed.nfft / nper

    def estimate(ch: int, pk: Any) -> tuple[Any, Any, float, float] | None:
        """Window-corrected half-power figure, band fit, frequency and clear share, on one axis.

        The fit runs on the median of only those rotor-rate bins that kept the
        peak's core (its half-power band) at least three-quarters clear of order
        lines, so the peak's shape is not pieced together from different bins.
        The clear share is the part of the recording's segments in those bins.
        """
        spec = stationary[ch]
        # the peak's core: its raw half-power band, at least two resolution bins each side
        raw = half_power_raw(freq, spec, pk.index)
        fn = pk.freq_hz
        half = max((raw or 0.0) * fn, 4 * df)
        near = (freq >= fn - half) & (freq <= fn + half)
        whole = enough[:, near].mean(axis=1) >= 0.75 if near.any() else np.ones(len(counts_all), bool)
        share = float(counts_all[whole].sum() / counts_all.sum())
        if whole.sum() >= 3 and not whole.all():
            local = _nanmedian_bins(normed[whole, ch, :])  # NaN where all are masked, no warning
            spec = np.where(np.isfinite(local), local, spec)
        hp = corrected_half_power(freq, spec, pk.index, model, rel_error=rel_err)
        if hp is None and spec is not stationary[ch]:
            spec = stationary[ch]
            hp = corrected_half_power(freq, spec, pk.index, model, rel_error=rel_err)
        if hp is None:
            return None
        fn = hp.peak_hz
        fit = None
        if hp.damping is not None:
            fit = fit_band(freq, spec, hp.peak_hz, hp.damping, model, oversample, LEVEL)
            # the frequency from the model's peak shape (the band fit's slope term can
            # trade against fₙ on a broad peak)
            fn = refine_frequency(freq, spec, hp.peak_hz,
                                  fit.damping if fit is not None else hp.damping, model)
        return hp, fit, fn, share

    modes = _merge_axes(cands, axes, fs / nper, settings.max_modes, estimate, stationary, freq)
    kept_modes = tuple(m for m in modes if m.confidence >= CONFIDENCE_FLOOR)
    weak = tuple(m for m in modes if m.confidence < CONFIDENCE_FLOOR)
    kept_modes = tuple(replace(m, name=f"mode {i + 1}") for i, m in enumerate(kept_modes))
    weak = tuple(replace(m, name=f"candidate {i + 1}") for i, m in enumerate(weak))
    if weak:
        warnings.append(
            f"{len(weak)} peak(s) below the confidence floor {CONFIDENCE_FLOOR:g} are listed as "
            "candidates and kept out of the modes: "
            + ", ".join(f"{m.frequency_hz:.1f} Hz ({m.confidence:.2f})" for m in weak))
    power = streamed.order_power_est if use_estimate else streamed.order_power
    orders = _orders(order_list, power, families, rotor_known, warnings)
    rotor_words = ("rotor rate estimated from the log" if use_estimate else
                   "rotor rate" if rotor_known else "throttle")
    return ModesResult(
        recording=os.path.basename(recording.path), kind="flight",
        method="flight: Welch spectra binned by " + rotor_words
        + ("; order lines masked" if rotor_known else "")
        + "; median across bins; SDOF fit over the peak's band",
        sample_rate_hz=fs, duration_s=findings.duration_s, resolution_hz=fs / nper,
        modes=kept_modes, orders=orders, warnings=tuple(dict.fromkeys(warnings)),
        averages=int(total), candidates=weak, dwell=streamed.dwell,
        view=flight_view(freq, values, counts, rotor_known, normed_any, stationary, axes, families,
                         streamed.timeline, rotor_words,
                         "logged" if recording.has_rotor else "drive model" if rotor_known else "throttle"),
    )


def _nanmedian_bins(a: np.ndarray) -> np.ndarray:
    """The median over the first axis (the bins) ignoring NaN; NaN where all are NaN.

    The same numbers as ``np.nanmedian(a, axis=0)`` (the mean of the two middle
    values of an even count), by one sort instead of numpy's masked-array path,
    which took a fifth of the flight analysis's final step.

    Parameters
    ----------
    a : ndarray
        Values, bins along the first axis.

    Returns
    -------
    ndarray
        Shape ``a.shape[1:]``.

    Examples
    --------
    >>> _nanmedian_bins(np.array([[1.0, np.nan], [3.0, np.nan], [np.nan, np.nan]])).tolist()
    [2.0, nan]
    """
    ordered = np.sort(a, axis=0)  # NaN sort last
    n = np.count_nonzero(~np.isnan(a), axis=0)
    high = n // 2
    low = np.where(n % 2 == 1, high, high - 1)
    pick = lambda i: np.take_along_axis(ordered, i[None], axis=0)[0]  # noqa: E731
    out = np.asarray((pick(low) + pick(high)) / 2.0)
    out[n == 0] = np.nan
    return out


def _order_like(f0: float, values: np.ndarray, counts: np.ndarray, normed: np.ndarray,
                freq: np.ndarray, df: float, floor: float, rotor_known: bool) -> str:
    """Why a peak looks like an order line rather than a mode ('' if it does not)."""
    if rotor_known:
        ratio = f0 / values
        k = np.maximum(np.round(ratio), 1.0)
        tol = np.maximum(3 * df, 0.015 * f0)
        on_line = np.abs(f0 - k * values) <= tol
        # one vote per rotor-rate bin, not per second: a line that dwells on a mode at
        # hover is masked there, and the other bins show the mode on its own
        share = float(np.mean(on_line))
        if share > 0.5 and len(values) >= 1:
            common = int(np.bincount(k[on_line].astype(int)).argmax())
            return (f"sits on order {common} of the rotor rate in {100 * share:.0f} % of the "
                    "rotor-rate bins")
    # a mode stands out of its surroundings in most bins; an order line at one
    # frequency does so in few
    i = int(np.argmin(np.abs(freq - f0)))
    lo, hi = max(0, i - 2), min(len(freq), i + 3)
    wlo = int(np.searchsorted(freq, 0.75 * f0))
    whi = max(int(np.searchsorted(freq, 1.25 * f0)), hi)
    around = np.median(normed[:, wlo:whi], axis=1)
    present = np.median(normed[:, lo:hi], axis=1) > 1.5 * around
    share = float(np.sum(counts[present]) / np.sum(counts))
    if share < 0.6:
        return f"shows in only {100 * share:.0f} % of the time"
    if not rotor_known and len(values) >= 3:
        # does the local peak move with throttle?
        w = max(2, int(0.04 * f0 / df))
        lo, hi = max(0, i - w), min(len(freq), i + w + 1)
        peak_f = freq[lo:hi][np.argmax(normed[:, lo:hi], axis=1)]
        spread = (peak_f.max() - peak_f.min()) / f0
        if spread > 0.03:
            r = np.corrcoef(np.log(values), np.log(peak_f))[0, 1]
            if np.isfinite(r) and r > 0.8:
                return "moves with throttle"
    return ""


def _merge_axes(cands: list, axes: tuple[str, ...], resolution_hz: float, max_modes: int,
                estimate: Callable, stationary: np.ndarray,
                freq: np.ndarray) -> tuple[MeasuredMode, ...]:
    """One mode per frequency: the axis where it stands highest; 'any' if level on all.

    Peaks are grouped across axes first (by their raw half-power width), so the
    damping estimate runs once per mode, on the axis with the clearest peak.
    The axis is named from the peak's height above each axis's own floor
    beside it, not from the raw level, so a filter's slope across the band
    (which scales all axes alike) cannot move it.
    """
    cands = sorted(cands, key=lambda c: -c[1].snr_db)
    groups: list[list] = []
    for c in cands:
        f = c[1].freq_hz
        for g in groups:
            # within the stronger peak's half-power band two peaks cannot be told apart
            f0, z = g[0][1].freq_hz, g[0][2]
            if abs(f0 - f) <= max(0.015 * f, 2 * resolution_hz, 2 * z * f0):
                g.append(c)
                break
        else:
            groups.append([c])
    out: list[dict[str, Any]] = []
    for g in groups:
        if len(out) >= max_modes:
            break
        # estimate on the axis where the peak stands clearest of its floor ...
        for ch, pk, _raw, _top in sorted(g, key=lambda c: -c[1].snr_db):
            got = estimate(ch, pk)
            if got is not None:
                break
        else:
            continue
        hp, fit, fn, clear = got
        # ... and name the axis where the mode's own response is strongest: the
        # peak's rise above each axis's spectrum beside it ('any' when all are
        # within a factor 2)
        rise = _rises(stationary, freq, fn, hp.raw)
        best = int(np.argmax(rise))
        axis = axes[best]
        if len(axes) > 1 and np.all(rise[best] <= 2.0 * rise) and np.all(rise > 0):
            axis = "any"
        base_conf = min(max((pk.snr_db - 4.0) / 12.0, 0.0), 1.0)
        if hp.bound_only:
            # narrower than the resolution: a frame mode under broadband forcing is
            # rarely that lightly damped; a steady tone (fan, supply line) is
            zeta, low, high = None, 0.0, min(hp.damping_high, 0.99)
            conf = min(base_conf * 0.7, BOUND_CONFIDENCE)
            method = (f"peak narrower than the {resolution_hz:.3g} Hz resolution, "
                      f"ζ < {high:.4f}: a steady tone or a very lightly damped mode")
            zhp = None
        elif fit is not None:
            zeta, low, high = fit.damping, fit.damping_low, fit.damping_high
            conf = base_conf * (1.0 if fit.log_se < 0.25 else 0.75 if fit.log_se < 0.5 else 0.4)
            method = (f"SDOF fit over {fit.bins} bins of the {axes[ch]} spectrum (order lines "
                      f"masked, median over rotor-rate bins); interval {100 * LEVEL:.0f} %")
            zhp = hp.damping
            # a fit that its own half-power reading contradicts by a factor 2 is not trusted
            if hp.damping and not 0.5 <= fit.damping / hp.damping <= 2.0:
                conf *= 0.5
                low, high = min(low, hp.damping), max(high, hp.damping)
        else:
            zeta, low, high = hp.damping, hp.damping_low, hp.damping_high
            conf = base_conf * 0.6
            method = f"half-power (window-corrected) on the {axes[ch]} spectrum; band fit failed"
            zhp = hp.damping
        if clear < MIN_CLEAR:
            # order lines covered the mode for most of the recording: what is left is
            # too little to stand on
            conf *= clear / MIN_CLEAR * 0.5
            method += (f"; order lines covered this mode {100 * (1 - clear):.0f} % of the time")
        out.append(dict(frequency_hz=fn, damping=zeta, damping_low=low,
                        damping_high=min(high, 0.99), axis=axis,
                        confidence=round(conf, 3), method=method, damping_half_power=zhp,
                        damping_decay=None, prominence_db=round(pk.snr_db, 2)))
    out.sort(key=lambda m: m["frequency_hz"])
    return tuple(MeasuredMode(name=f"mode {i + 1}", **m) for i, m in enumerate(out))


def _rises(stationary: np.ndarray, freq: np.ndarray, fn: float, raw_zeta: float) -> np.ndarray:
    """Each axis's peak height at ``fn`` above its own level beside the peak."""
    df = freq[1] - freq[0]
    i = int(np.argmin(np.abs(freq - fn)))
    w = max(2, int(round(fn * max(raw_zeta, 0.002) / df)))
    top = stationary[:, max(0, i - w // 2):i + w // 2 + 1].max(axis=1)
    ring = max(4 * w, 6)
    left = stationary[:, max(0, i - 2 * ring):max(1, i - ring)]
    right = stationary[:, i + ring:i + 2 * ring]
    sides = [np.median(p, axis=1) for p in (left, right) if p.shape[1]]
    base = np.min(np.stack(sides), axis=0) if sides else np.zeros(stationary.shape[0])
    return np.maximum(top - base, 0.0)


def _orders(order_list: list[float], power: np.ndarray, families: dict[float, str],
            rotor_known: bool, warnings: list[str]) -> tuple[OrderStrength, ...]:
    """Relative order strengths, each order compared with a reference at the same moments.

    The reference is the order readable in the most segments (the strongest
    of those, on a tie).  Every other order is compared with it over the
    segments where both are readable: its strength is the square root of the
    ratio of the two median line powers over those segments.  So a high order
    that leaves the band at high throttle is compared with the reference at low
    throttle only, and the reference is not judged at other moments.  The
    median keeps the segments where a line crosses a frame mode (and is
    amplified by it, or sits on its peak) from deciding the order's weight.
    Strengths are then scaled so the strongest is 1.
    """
    if not rotor_known:
        return ()
    ok = np.isfinite(power)
    cover = ok.sum(axis=0) if power.size else np.zeros(len(order_list), dtype=int)
    if not cover.size or cover.max() == 0:
        warnings.append("no order line was inside the analysed band while the rotor rate held "
                        "steady; order strengths not measured")
        return ()
    best = np.flatnonzero(cover == cover.max())
    ref = int(max(best, key=lambda j: float(np.median(power[ok[:, j], j]))))
    amps: dict[float, float] = {}
    used: dict[float, int] = {}
    for j, k in enumerate(order_list):
        both = ok[:, j] & ok[:, ref]
        if both.sum() < MIN_ORDER_SEGMENTS:
            if cover[j] == 0:
                warnings.append(f"order {k:g} ({families[k]}) was never inside the analysed band "
                                "while the rotor rate held steady; not measured")
            else:
                warnings.append(f"order {k:g} ({families[k]}) was readable together with order "
                                f"{order_list[ref]:g} in only {int(both.sum())} segments; not "
                                "measured")
            continue
        p_ref = float(np.median(power[both, ref]))
        p_j = float(np.median(power[both, j]))
        amps[k] = math.sqrt(max(p_j, 0.0) / p_ref) if p_ref > 0 else 0.0
        used[k] = int(both.sum())
    if not amps or max(amps.values()) <= 0:
        warnings.append("no order line stood above the background")
        return ()
    top = max(amps.values())
    out = [OrderStrength(float(k), families[k], round(a / top, 4), used[k])
           for k, a in amps.items()]
    out.sort(key=lambda o: -o.relative_strength)
    return tuple(out)
