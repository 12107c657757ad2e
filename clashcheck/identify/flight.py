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
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from ..model.modes import MODE_AXES
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
from .peaks import find_modes_peaks, noise_floor
from .readers import Recording
from .result import MeasuredMode, ModesResult, OrderStrength
from .band import check_band
from .spectra import SegmentStream, hann_periodic, segment_length

__all__ = ["FlightSettings", "analyse_flight", "stream_flight", "StreamedFlight", "order_families",
           "MIN_SEGMENTS", "MIN_BINS"]

#: Fewest Welch segments a flight analysis accepts.
MIN_SEGMENTS = 16
#: Fewest populated rotor-rate bins for a clean separation of modes from orders.
MIN_BINS = 5
#: A peak's prominence must exceed this many standard errors of the median spectrum.
SIGNIFICANCE = 5.0

Progress = Callable[[int, int], None]


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

    def __post_init__(self) -> None:
        if not self.min_frequency_hz > 0:
            raise InputError("--min-frequency", "a frequency above 0 Hz", self.min_frequency_hz)
        if self.max_frequency_hz is not None and not self.max_frequency_hz > self.min_frequency_hz:
            raise InputError("--max-frequency", "a frequency above --min-frequency",
                             self.max_frequency_hz)
        if not self.resolution_hz > 0:
            raise InputError("--resolution", "a resolution above 0 Hz", self.resolution_hz)
        if self.axes is not None:
            for a in self.axes:
                if a not in MODE_AXES:
                    raise InputError("--axes", "names from " + ", ".join(MODE_AXES), a)
        for name, val, least in (("--blades", self.blades, 1), ("--poles", self.poles, 2),
                                 ("--slots", self.slots, 3)):
            if val is not None and (int(val) != val or val < least):
                raise InputError(name, f"a whole number of at least {least}", val)
        if self.poles is not None and self.poles % 2:
            raise InputError("--poles", "an even number of magnet poles", self.poles)
        if not 0.005 <= self.bin_width <= 0.2:
            raise InputError("bin_width", "a relative width from 0.005 to 0.2", self.bin_width)


def order_families(blades: int | None, poles: int | None,
                   slots: int | None) -> tuple[dict[float, str], list[str]]:
    """The orders to measure and the family of each.

    Families follow the design vocabulary: rotor 1, 2; blade B, 2B; electrical
    poles/2; commutation 3 × poles; cogging LCM(slots, poles)
    (REFERENCES.md §4).  Without blades or poles the orders 1–8 are measured,
    order 1 as ``rotor`` and the others as ``custom``.

    Returns
    -------
    orders : dict
        Order → family.
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


class _Bins:
    """Per-bin sums of band-limited periodograms."""

    def __init__(self, width: float) -> None:
        self.step = math.log1p(width)
        self.sums: dict[int, np.ndarray] = {}
        self.counts: dict[int, int] = {}
        self.values: dict[int, float] = {}

    def add(self, key_values: np.ndarray, psd: np.ndarray) -> None:
        keys = np.floor(np.log(key_values) / self.step).astype(int)
        # segments come in time order and the rotor rate changes slowly: sum runs of
        # equal keys as slices (views), not boolean copies
        edges = np.r_[0, np.flatnonzero(np.diff(keys)) + 1, keys.size]
        for a, b in zip(edges[:-1], edges[1:]):
            k = int(keys[a])
            part = psd[a:b].sum(axis=0)
            if k in self.sums:
                self.sums[k] += part
            else:
                self.sums[k] = part
            self.counts[k] = self.counts.get(k, 0) + int(b - a)
            self.values[k] = self.values.get(k, 0.0) + float(key_values[a:b].sum())


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
    child = worker.start("flight", recording, settings) if worker.wanted(recording, settings) else None
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
        raise InputError("--rpm-columns", "rotor-rate columns (--rpm-columns) or a throttle "
                         "column (--throttle-column)", None,
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
        raise InputError("--axes", f"{nch} axis names (roll, pitch, yaw or any), one per signal",
                         settings.axes)
    return _Plan(rotor_known, families, sorted(families), tuple(axes), tuple(warnings))


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
    #: Per order (in :func:`order_families` order): line power of each steady segment.
    order_samples: list[np.ndarray]
    #: The recording checks' findings.
    findings: Findings
    #: Warnings of the pass (without the findings' own).
    warnings: list[str]


def stream_flight(recording: Recording, settings: FlightSettings = FlightSettings(),
                  progress: Progress | None = None) -> StreamedFlight:
    """The streaming pass of :func:`analyse_flight`: checks, spectra, bins, order lines.

    Uses numpy only; nothing of length proportional to the recording is kept.

    Raises
    ------
    InputError, RecordingError
        As :func:`analyse_flight`.
    """
    plan = _plan(recording, settings)
    warnings = list(plan.warnings)
    order_arr = np.array(plan.order_list)
    # per-segment line powers; small (orders × segments), kept for a median
    order_samples: list[list[np.ndarray]] = [[] for _ in plan.order_list]

    cond = Conditioner(recording)
    state: dict[str, object] = {}
    bins = _Bins(settings.bin_width)
    throttle_scale = [None]

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
                     cum_df=stream.freq_hz[1])

    def key_of(aux_mean: np.ndarray) -> tuple[np.ndarray, np.ndarray, bool]:
        """Segment bin values (rotor Hz, or throttle), their spread, and rotor-ness."""
        mean, sq = aux_mean[0], aux_mean[1]
        spread = np.sqrt(np.maximum(sq - mean * mean, 0.0))
        if recording.has_rotor:
            return mean, spread, True
        if settings.rotor_of_throttle is not None:
            lo = np.asarray(settings.rotor_of_throttle(np.clip(mean - spread, 0, 1)), float)
            mid = np.asarray(settings.rotor_of_throttle(np.clip(mean, 0, 1)), float)
            hi = np.asarray(settings.rotor_of_throttle(np.clip(mean + spread, 0, 1)), float)
            return mid, 0.5 * np.abs(hi - lo), True
        return mean, spread, False

    def measure_orders(psd: np.ndarray, rotor: np.ndarray, spread: np.ndarray) -> None:
        fs = state["fs"]
        stream: SegmentStream = state["stream"]  # type: ignore[assignment]
        df = stream.freq_hz[1]
        # sum over axes, (seg, freq), up to the highest bin an order line is read at
        top = min(psd.shape[2], int(USABLE_BAND * fs / df) + 2)
        total = psd[:, :, :top].sum(axis=1)
        nf = total.shape[1]
        line_hw = 2.0 * fs / state["nper"]
        for j, k in enumerate(order_arr):
            # only segments where the rotor rate held steady: the line then fits in the
            # window's main lobe (2 bins) and the background beside it is clean
            smear = k * math.sqrt(3.0) * spread
            hw = line_hw + smear + df
            fk = k * rotor
            ok = ((fk - 3 * hw > settings.min_frequency_hz * 0.5)
                  & (fk + 3 * hw < USABLE_BAND * fs)
                  & (smear <= np.maximum(line_hw, 0.01 * fk)))
            rows = np.flatnonzero(ok)
            if not rows.size:
                continue
            fk, hw = fk[rows], hw[rows]
            lo = np.clip(np.round((fk - hw) / df).astype(int), 0, nf - 1)
            hi = np.clip(np.round((fk + hw) / df).astype(int) + 1, 1, nf)
            blo = np.clip(np.round((fk - 3 * hw) / df).astype(int), 0, nf - 1)
            bhi = np.clip(np.round((fk + 3 * hw) / df).astype(int) + 1, 1, nf)
            line, band = _window_sums(total, rows, blo, lo, hi, bhi)
            nside = np.maximum((bhi - blo) - (hi - lo), 1)
            power = np.maximum(line - (band - line) / nside * (hi - lo), 0.0) * df
            order_samples[j].append(power)

    for block in recording.blocks():
        for run in cond.feed(block):
            if "fs" not in state:
                setup(cond.sample_rate_hz)  # type: ignore[arg-type]
            if recording.has_rotor:
                aux_v = run.rotor_hz
            else:
                aux_v = run.throttle
                if throttle_scale[0] is None:
                    if np.nanmax(aux_v) > 1.5:
                        throttle_scale[0] = 0.01
                        warnings.append("the throttle column reads above 1.5; taken as percent")
                    else:
                        throttle_scale[0] = 1.0
                aux_v = aux_v * throttle_scale[0]
            aux = np.column_stack([aux_v, aux_v * aux_v])
            stream: SegmentStream = state["stream"]  # type: ignore[assignment]
            for segs in stream.feed(run.run, run.signals, aux):
                value, spread, is_rotor = key_of(segs.aux_mean)
                live = value > (1.0 if is_rotor else 0.02)
                if not live.any():
                    continue
                psd = segs.psd if live.all() else segs.psd[live]
                bins.add(value[live], psd[:, :, state["band"]])
                if is_rotor:
                    measure_orders(psd, value[live], spread[live])
        if progress is not None:
            progress(block.first_row + block.signals.shape[0], recording.rows_estimate)
    findings = cond.finish()
    if "fs" not in state:
        require_duration(recording.path, findings.duration_s, 1.0, "a flight analysis")
    stream: SegmentStream = state["stream"]  # type: ignore[assignment]
    samples = [np.concatenate(parts) if parts else np.zeros(0) for parts in order_samples]
    return StreamedFlight(float(state["fs"]), int(state["nper"]), stream.nfft,
                          state["band"], bins.sums, bins.counts, bins.values,  # type: ignore[arg-type]
                          samples, findings, warnings)


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


def _finish(recording: Recording, settings: FlightSettings, plan: _Plan,
            streamed: StreamedFlight) -> ModesResult:
    """The peak analysis of :func:`analyse_flight` on the streamed totals (uses scipy)."""
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
    keys = sorted(streamed.counts)
    # bins with a handful of segments (passing through on a throttle change) are too
    # noisy to vote in the median
    typical = float(np.median([streamed.counts[k] for k in keys]))
    least = max(2.0, 0.25 * typical)
    populated = [k for k in keys if streamed.counts[k] >= least] or keys
    values = np.array([streamed.values[k] / streamed.counts[k] for k in populated])
    counts = np.array([streamed.counts[k] for k in populated])
    unit = "Hz rotor rate" if rotor_known else "throttle"
    if len(populated) < MIN_BINS:
        warnings.append(
            f"the {unit} varied over only {len(populated)} bins ({values.min():.3g}–"
            f"{values.max():.3g}); modes and order lines cannot be fully told apart; fly a wider "
            "range of throttle")
    band_sl = streamed.band
    freq = np.fft.rfftfreq(streamed.nfft, 1.0 / fs)[band_sl]
    per_bin = np.stack([streamed.sums[k] / streamed.counts[k] for k in populated])  # (bins, ch, f)
    # one level per bin, common to the axes, so the axes keep their relative levels
    level = np.median(per_bin.sum(axis=1, keepdims=True), axis=2, keepdims=True)
    level[level <= 0] = 1.0
    normed = per_bin / level
    stationary = np.median(normed, axis=0)  # (ch, f)
    k_eff = max(1.0, 0.64 * float(np.sum(counts)))
    window = hann_periodic(nper)
    full_model = stationary_model(fs, window, streamed.nfft)

    def model(fn: float, z: float) -> np.ndarray:
        return full_model(fn, z)[band_sl]

    df = freq[1] - freq[0]
    # relative standard error of the median spectrum: each bin's mean of n Welch
    # periodograms varies by about 1/sqrt(n); the median of N such bins by
    # 1.2533/sqrt(N) times that (asymptotic efficiency of the median; derived)
    rel_err = 1.2533 * float(np.median(1.0 / np.sqrt(counts))) / math.sqrt(len(counts))
    cands = []
    for ch in range(nch):
        spec = stationary[ch]
        floor = noise_floor(freq, spec)
        for pk in find_modes_peaks(freq, spec, settings.snr_db, settings.prominence_db,
                                   4 * df, settings.max_modes * 2, floor):
            rise = 1.0 - 10.0 ** (-pk.prominence_db / 10.0)  # (peak − base)/peak
            if rise < SIGNIFICANCE * rel_err:
                continue  # a ripple that the spread of the median spectrum can make
            reason = _order_like(pk.freq_hz, values, counts, normed[:, ch, :], freq, df,
                                 floor[pk.index], rotor_known)
            if reason:
                warnings.append(f"peak at {pk.freq_hz:.1f} Hz on {axes[ch]} {reason}; "
                                "treated as an order line, not a mode")
                continue
            raw = half_power_raw(freq, spec, pk.index)
            if raw is None:
                continue
            cands.append((ch, pk, raw, float(spec[pk.index])))

    def corrected(ch: int, pk) -> tuple | None:
        """Window-corrected damping and refined frequency, on one axis's spectrum."""
        spec = stationary[ch]
        hp = corrected_half_power(freq, spec, pk.index, model, rel_error=1 / math.sqrt(k_eff))
        if hp is None:
            return None
        fn = hp.peak_hz
        if hp.damping is not None:
            fn = refine_frequency(freq, spec, hp.peak_hz, hp.damping, model)
        return hp, fn

    modes = _merge_axes(cands, axes, fs / nper, settings.max_modes, corrected)
    orders = _orders(order_list, streamed.order_samples, families, rotor_known, warnings)
    return ModesResult(
        recording=os.path.basename(recording.path), kind="flight",
        method="flight: Welch spectra binned by " + ("rotor rate" if rotor_known else "throttle")
        + "; median across bins; half-power (window-corrected)",
        sample_rate_hz=fs, duration_s=findings.duration_s, resolution_hz=fs / nper,
        modes=modes, orders=orders, warnings=tuple(dict.fromkeys(warnings)), averages=int(total),
    )


def _order_like(f0: float, values: np.ndarray, counts: np.ndarray, normed: np.ndarray,
                freq: np.ndarray, df: float, floor: float, rotor_known: bool) -> str:
    """Why a peak looks like an order line rather than a mode ('' if it does not)."""
    if rotor_known:
        ratio = f0 / values
        k = np.maximum(np.round(ratio), 1.0)
        tol = np.maximum(3 * df, 0.015 * f0)
        on_line = np.abs(f0 - k * values) <= tol
        share = float(np.sum(counts[on_line]) / np.sum(counts))
        if share > 0.5 and len(values) >= 1:
            common = int(np.bincount(k[on_line].astype(int)).argmax())
            return f"sits on order {common} of the rotor rate in {100 * share:.0f} % of the time"
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


def _merge_axes(cands, axes, resolution_hz: float, max_modes: int,
                corrected) -> tuple[MeasuredMode, ...]:
    """One mode per frequency: the axis where it stands highest; 'any' if level on all.

    Peaks are grouped across axes first (by their raw half-power width), so the
    window-corrected estimate runs once per mode, on the axis with the highest peak.
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
    out = []
    for g in groups:
        if len(out) >= max_modes:
            break
        # estimate on the axis where the peak stands clearest of its floor ...
        for ch, pk, _raw, _top in sorted(g, key=lambda c: -c[1].snr_db):
            got = corrected(ch, pk)
            if got is not None:
                break
        else:
            continue
        hp, fn = got
        # ... and name the axis where it is strongest ('any' when all are within 3 dB)
        best = max(g, key=lambda c: c[3])
        axis = axes[best[0]]
        if len({c[0] for c in g}) == len(axes) and len(axes) > 1 and all(
                best[3] <= 2.0 * c[3] for c in g):
            axis = "any"
        zeta = hp.damping
        conf = min(max((pk.snr_db - 4.0) / 20.0, 0.0), 1.0) * (0.7 if hp.bound_only else 1.0)
        if zeta is not None:
            method = (f"half-power (window-corrected) on the {axes[ch]} spectrum, median over "
                      "rotor-rate bins")
        else:
            method = (f"half-power: peak narrower than the {resolution_hz:.3g} Hz resolution, "
                      f"ζ < {hp.damping_high:.4f}")
        out.append(dict(frequency_hz=fn, damping=zeta, damping_low=hp.damping_low,
                        damping_high=min(hp.damping_high, 0.99), axis=axis,
                        confidence=round(conf, 3), method=method, damping_half_power=zeta,
                        damping_decay=None, prominence_db=round(pk.snr_db, 2)))
    out.sort(key=lambda m: m["frequency_hz"])
    return tuple(MeasuredMode(name=f"mode {i + 1}", **m) for i, m in enumerate(out))


def _orders(order_list, samples, families, rotor_known, warnings) -> tuple[OrderStrength, ...]:
    """Relative order strengths: RMS line amplitude, median over segments.

    The median keeps the segments where a line crosses a frame mode (and is
    amplified by it) from deciding the order's weight.
    """
    if not rotor_known:
        return ()
    amps, counts = {}, {}
    for k, vals in zip(order_list, samples):
        if vals.size == 0:
            warnings.append(f"order {k:g} ({families[k]}) was never inside the analysed band "
                            "while the rotor rate held steady; not measured")
            continue
        amps[k] = math.sqrt(float(np.median(vals)))
        counts[k] = int(vals.size)
    if not amps:
        return ()
    top = max(amps.values())
    if top <= 0:
        warnings.append("no order line stood above the background")
        return ()
    out = [OrderStrength(float(k), families[k], round(a / top, 4), counts[k])
           for k, a in amps.items()]
    out.sort(key=lambda o: -o.relative_strength)
    return tuple(out)
