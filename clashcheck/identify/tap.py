"""Tap tests: impacts → averaged response spectrum → modes with two damping estimates.

1. **Impacts** are sudden rises of the short-time energy (1 ms frames) by more
   than :data:`ONSET_RATIO` over the preceding 10 ms, found with
   :func:`scipy.signal.find_peaks`.  Double hits (a second onset much sooner
   than the usual spacing) are dropped.
2. **Spectrum.** Each impact's segment starts 2 ms before the onset and runs to
   the next impact (all segments share the shortest length, at most
   :data:`MAX_SEGMENT_S`).  The window is flat with a cosine taper over its last
   quarter; the segments' periodograms are averaged over impacts and summed
   over channels.
3. **Peaks** stand :attr:`TapSettings.snr_db` above a floor estimated from the
   spectrum (:mod:`.peaks`).
4. **Damping**, two independent ways:
   half-power bandwidth corrected for this window (:func:`.damping.corrected_half_power`
   with :func:`.damping.transient_model`), and a decay fit of the band-passed
   response of each impact (:func:`.damping.decay_fit`; median over impacts).
"""

from __future__ import annotations

import math
import os
from collections.abc import Callable
from dataclasses import dataclass, replace

import numpy as np

from ..errors import InputError, RecordingError
from ..model.modes import MODE_AXES
from .checks import USABLE_BAND, Conditioner, require_duration, require_sample_rate
from .damping import corrected_half_power, sdof_fit, transient_model
from .peaks import find_modes_peaks, noise_floor
from .readers import Recording
from .result import MeasuredMode, ModesResult
from .views import TapView

__all__ = ["TapSettings", "analyse_tap", "detect_impacts", "MAX_SEGMENT_S", "ONSET_RATIO",
           "MAX_TAP_ROWS", "SIGNIFICANCE"]

#: Longest segment used after an impact [s].
MAX_SEGMENT_S = 8.0
#: Energy rise (ratio) that marks an impact.
ONSET_RATIO = 30.0
#: Longest tap recording read [rows]; tap tests are short.
MAX_TAP_ROWS = 1 << 25
#: A peak's prominence must exceed this many standard deviations of the
#: averaged noise at its bin.
SIGNIFICANCE = 5.0
#: Impacts (the strongest) used for the decay fit.
FIT_IMPACTS = 4
_PRE_S = 0.002

Progress = Callable[[int, int], None]


@dataclass(frozen=True)
class TapSettings:
    """Settings of a tap-test analysis."""

    #: Lowest mode frequency looked for [Hz].
    min_frequency_hz: float = 20.0
    #: Highest mode frequency looked for [Hz]; ``None`` = 0.4 × sample rate.
    max_frequency_hz: float | None = None
    #: Requested frequency resolution [Hz]; ``None`` = what the impact spacing gives.
    resolution_hz: float | None = None
    #: Least peak height above the noise floor [dB].
    snr_db: float = 10.0
    #: Least peak prominence [dB].
    prominence_db: float = 3.0
    #: Most modes reported.
    max_modes: int = 12
    #: Axis written for every mode found.
    axis: str = "any"

    def __post_init__(self) -> None:
        if not self.min_frequency_hz > 0:
            raise InputError("--min-frequency", "a frequency above 0 Hz", self.min_frequency_hz)
        if self.max_frequency_hz is not None and not self.max_frequency_hz > self.min_frequency_hz:
            raise InputError("--max-frequency", "a frequency above --min-frequency",
                             self.max_frequency_hz)
        if self.resolution_hz is not None and not self.resolution_hz > 0:
            raise InputError("--resolution", "a resolution above 0 Hz", self.resolution_hz)
        if self.axis not in MODE_AXES:
            raise InputError("--axis", "one of " + ", ".join(MODE_AXES), self.axis)
        if self.max_modes < 1:
            raise InputError("--max-modes", "at least 1", self.max_modes)


def detect_impacts(energy: np.ndarray, sample_rate_hz: float, min_gap_s: float = 0.05) -> np.ndarray:
    """Sample indices of impact onsets.

    Parameters
    ----------
    energy : ndarray
        Instantaneous energy (squared signal, summed over channels), per sample.
    sample_rate_hz : float
        Sample rate [Hz].
    min_gap_s : float
        Least time between two impacts [s].

    Returns
    -------
    ndarray of int
        Onset samples, ascending.
    """
    from scipy import signal

    frame = max(1, int(round(1e-3 * sample_rate_hz)))
    nfr = len(energy) // frame
    if nfr < 12:
        return np.zeros(0, dtype=int)
    e = energy[: nfr * frame].reshape(nfr, frame).mean(axis=1)
    quiet = float(np.percentile(e, 10)) + np.finfo(float).tiny
    # mean energy over the 10 frames ending 2 frames before each frame
    c = np.r_[0.0, np.cumsum(e)]
    j = np.arange(nfr)
    a = np.clip(j - 12, 0, None)
    b = np.clip(j - 2, 0, None)
    before = np.where(b > a, (c[b] - c[a]) / np.maximum(b - a, 1), quiet)
    rise = e / (before + quiet)
    strong = e >= 1e-3 * e.max()
    score = np.where(strong, rise, 0.0)
    idx, _ = signal.find_peaks(score, height=ONSET_RATIO,
                               distance=max(1, int(min_gap_s * 1000)))
    onsets = []
    for k in idx:
        lo = max(0, (k - 2) * frame)
        hi = min(len(energy), (k + 3) * frame)
        seg = energy[lo:hi]
        first = np.flatnonzero(seg >= 0.05 * seg.max())
        onsets.append(lo + int(first[0]) if first.size else k * frame)
    return np.asarray(onsets, dtype=int)


def _window(n: int) -> np.ndarray:
    w = np.ones(n)
    taper = max(2, n // 4)
    w[n - taper:] = 0.5 * (1 + np.cos(np.pi * np.arange(1, taper + 1) / taper))
    return w


def _noise_spectrum(lead: np.ndarray, segs: np.ndarray, fs: float, seg_len: int,
                    freq_hz: np.ndarray) -> np.ndarray | None:
    """Noise PSD (summed over channels) from the quiet lead-in, smoothed; or ``None``."""
    from scipy import ndimage

    from .spectra import welch_psd

    n = lead.shape[0]
    if n < max(64, int(0.05 * fs)):
        return None
    nper = min(n, seg_len)
    f, p = welch_psd(lead, fs, nper, axis=0)
    p = p.sum(axis=1)
    p = ndimage.median_filter(p, size=max(3, (len(p) // 50) | 1), mode="nearest")
    return np.interp(freq_hz, f, p)


def _confidence(snr_db: float, agreement: float | None, bound: bool) -> float:
    c = min(max((snr_db - 6.0) / 24.0, 0.0), 1.0)
    if agreement is not None:
        c *= max(0.3, agreement)
    if bound:
        c *= 0.7
    return round(float(c), 3)


def analyse_tap(recording: Recording, settings: TapSettings = TapSettings(),
                progress: Progress | None = None) -> ModesResult:
    """Find frame modes in a tap-test recording.

    Parameters
    ----------
    recording : Recording
        An opened recording (props off; the frame tapped several times).
    settings : TapSettings
        Analysis settings.
    progress : callable, optional
        Called as ``progress(rows_done, rows_total)`` while reading.

    Returns
    -------
    ModesResult

    Raises
    ------
    RecordingError
        If no impacts are found, the segments are too short for the requested
        resolution, or the sample rate is too low for ``max_frequency_hz``.
    """
    from scipy import fft as sfft

    cond = Conditioner(recording)
    runs: list[np.ndarray] = []
    run_ids: list[int] = []
    rows = 0
    for block in recording.blocks():
        for run in cond.feed(block):
            runs.append(run.signals)
            run_ids.append(run.run)
            rows += run.signals.shape[0]
            if rows > MAX_TAP_ROWS:
                raise RecordingError(recording.path, "", f"a tap recording of more than "
                                     f"{MAX_TAP_ROWS} rows; trim it to the impacts")
        if progress is not None:
            progress(block.first_row + block.signals.shape[0], recording.rows_estimate)
    findings = cond.finish()
    fs = findings.sample_rate_hz
    warnings = list(findings.warnings)
    fmax = settings.max_frequency_hz
    if fmax is None:
        fmax = USABLE_BAND * fs
    else:
        require_sample_rate(recording.path, fs, fmax)
    # keep the longest run of clean samples (tap tests rarely have gaps)
    by_run: dict[int, list[np.ndarray]] = {}
    for rid, sig in zip(run_ids, runs):
        by_run.setdefault(rid, []).append(sig)
    pieces = [np.concatenate(v) for v in by_run.values()]
    x = max(pieces, key=len)
    if len(pieces) > 1:
        warnings.append(f"the recording has {len(pieces)} stretches between gaps; only the "
                        f"longest ({len(x) / fs:.3g} s) was analysed")
    x = x - np.median(x, axis=0)
    energy = np.sum(x * x, axis=1)
    onsets = detect_impacts(energy, fs)
    if onsets.size == 0:
        raise RecordingError(recording.path, "", "no impacts found: a tap test needs sharp taps "
                             "that stand well above the background")
    pre = int(round(_PRE_S * fs))
    onsets = onsets[onsets >= pre]
    if onsets.size == 0:
        raise RecordingError(recording.path, "", "the only impact is at the very start")
    gaps = np.diff(np.r_[onsets, len(x) + pre])
    typical = float(np.median(gaps)) if gaps.size else float(len(x))
    keep = np.ones(onsets.size, dtype=bool)
    double = np.flatnonzero(gaps[:-1] < 0.3 * typical) if gaps.size > 1 else np.zeros(0, int)
    for k in double:
        keep[k] = keep[k + 1] = False
    if double.size:
        warnings.append(f"{double.size} double hits (two taps within {0.3 * typical / fs:.2g} s) "
                        "were left out")
    rejected = tuple((int(o), "double hit") for o in onsets[~keep])  # for the figure
    onsets, gaps = onsets[keep], gaps[keep]
    if onsets.size == 0:
        raise RecordingError(recording.path, "", "every impact was a double hit")
    seg_len = int(min(gaps.min() - pre, MAX_SEGMENT_S * fs))
    if settings.resolution_hz is not None:
        need = 1.0 / settings.resolution_hz
        if seg_len / fs < need:
            raise RecordingError(
                recording.path, "", f"the taps are {seg_len / fs:.3g} s apart; a resolution of "
                f"{settings.resolution_hz:g} Hz needs at least {need + _PRE_S:.3g} s between taps "
                f"(or ask for {fs / seg_len:.3g} Hz)")
    if seg_len < 64:
        raise RecordingError(recording.path, "", "the taps are too close together to analyse")
    require_duration(recording.path, findings.duration_s, seg_len / fs, "one tap segment")
    resolution = fs / seg_len
    if onsets.size < 3:
        warnings.append(f"only {onsets.size} impacts; 5 or more give steadier spectra")
    w = _window(seg_len)
    nfft = sfft.next_fast_len(4 * seg_len)
    freq = np.fft.rfftfreq(nfft, 1.0 / fs)
    scale = 1.0 / (fs * np.sum(w * w))
    segs = np.stack([x[o - pre:o - pre + seg_len] for o in onsets])  # (impacts, n, ch)
    segs = segs - segs[:, :pre].mean(axis=1, keepdims=True) if pre > 0 else segs
    spec = np.abs(sfft.rfft(segs * w[None, :, None], nfft, axis=1)) ** 2 * scale
    mean_spec = spec.mean(axis=0).sum(axis=1)  # average over impacts, sum over channels
    band = (freq >= settings.min_frequency_hz) & (freq <= fmax)
    if band.sum() < 16:
        raise RecordingError(recording.path, "", "the analysed band holds too few frequency bins")
    fb, pb = freq[band], mean_spec[band]
    floor = noise_floor(fb, pb)
    noise = _noise_spectrum(x[: max(0, onsets[0] - pre)], segs, fs, seg_len, fb)
    if noise is None:
        warnings.append("no quiet stretch before the first tap; the noise floor was "
                        "estimated from the spectrum itself")
    peaks = find_modes_peaks(fb, pb, settings.snr_db, settings.prominence_db,
                             3 * resolution, settings.max_modes, floor, noise)
    offset = int(np.argmax(band))
    model = transient_model(fs, w, nfft, pre)
    chan = int(np.argmax(np.sum(segs**2, axis=(0, 1))))
    # A peak must stand out of what noise alone could raise: averaged over K impacts,
    # a bin holding a steady response T² plus noise N varies with a standard deviation
    # of about sqrt((2 T² N + N²)/K) (derived: |T + n|² with complex Gaussian n).
    ref = noise if noise is not None else floor
    steady = []
    for pk in peaks:
        p, n = float(pb[pk.index]), float(ref[pk.index])
        base = p / 10.0 ** (pk.prominence_db / 10.0)
        std = math.sqrt((2.0 * max(p - n, 0.0) * n + n * n) / onsets.size)
        if p - base >= SIGNIFICANCE * std:
            steady.append(pk)
    peaks = steady
    found = []
    for pk in peaks:
        hp = corrected_half_power(freq, mean_spec, offset + pk.index, model,
                                  rel_error=1.0 / math.sqrt(onsets.size))
        if hp is not None:
            found.append((pk, hp))
    # decay fit: all modes together, per impact; the median over impacts
    guesses_f = [hp.peak_hz for _pk, hp in found]
    guesses_z = [hp.damping if hp.damping is not None else 0.5 * hp.damping_high
                 for _pk, hp in found]
    skip = pre + max(1, int(round(1e-3 * fs)))
    fits = []
    strongest = np.argsort(-np.sum(segs[:, :, chan] ** 2, axis=1))[:FIT_IMPACTS]
    for i in strongest:
        fit = sdof_fit(segs[i, :, chan], fs, guesses_f, guesses_z, skip,
                       max_evaluations=None if not fits else 10 * len(found))
        if fit is not None and fit.r_squared >= 0.8:
            fits.append(fit)
            guesses_f, guesses_z = list(fit.freqs_hz), list(fit.dampings)
    if found and not fits:
        warnings.append("the decay fit found no clean free decay; damping is from the "
                        "half-power bandwidth alone")
    if fits:
        decays = np.median([f.dampings for f in fits], axis=0)
        fit_freqs = np.median([f.freqs_hz for f in fits], axis=0)
    else:
        decays = [None] * len(found)
        fit_freqs = [None] * len(found)
    modes = []
    for (pk, hp), decay, f_fit in zip(found, decays, fit_freqs):
        zeta_hp = hp.damping
        decay = None if decay is None else float(decay)
        ref = zeta_hp if zeta_hp is not None else hp.damping_high
        if decay is not None and (decay > 3.0 * ref or decay < ref / 3.0) and (
                zeta_hp is not None or decay > 3.0 * ref):
            warnings.append(f"peak at {hp.peak_hz:.1f} Hz: the half-power width (ζ≈{ref:.4f}) "
                            f"and the decay fit (ζ≈{decay:.4f}) disagree; not reported as a mode")
            continue
        if decay is not None and (zeta_hp is not None or decay <= hp.damping_high * 1.5):
            # the joint time-domain fit accounts for neighbouring modes, which bias
            # the half-power reading when modes lie within a few bandwidths
            zeta = decay
            low, high = 0.9 * decay, 1.1 * decay
            if zeta_hp is not None:
                low, high = min(low, hp.damping_low), max(high, hp.damping_high)
            else:
                high = max(min(high, hp.damping_high), decay)
        elif zeta_hp is not None:
            zeta = zeta_hp
            low, high = hp.damping_low, hp.damping_high
        else:
            zeta = None
            low, high = 0.0, hp.damping_high
        agreement = None
        if decay is not None:
            if zeta_hp is not None:
                agreement = 1.0 - abs(zeta_hp - decay) / (zeta_hp + decay)
        fn = hp.peak_hz
        if f_fit is not None and abs(f_fit / hp.peak_hz - 1) < 0.05:
            fn = float(f_fit)
        elif zeta is not None:
            fn = hp.peak_hz / math.sqrt(max(1 - 2 * zeta**2, 1e-6))
        parts = []
        if zeta_hp is not None:
            parts.append(f"half-power (window-corrected) ζ={zeta_hp:.4f}")
        else:
            parts.append(f"half-power: peak narrower than the {resolution:.3g} Hz resolution, "
                         f"ζ < {hp.damping_high:.4f}")
        parts.append(f"decay fit ζ={decay:.4f}" if decay is not None else "decay fit: none")
        modes.append(dict(
            frequency_hz=fn, damping=zeta, damping_low=max(0.0, low), damping_high=min(high, 0.99),
            axis=settings.axis, confidence=_confidence(pk.snr_db, agreement, hp.bound_only),
            method="; ".join(parts), damping_half_power=zeta_hp, damping_decay=decay,
            prominence_db=round(pk.snr_db, 2),
        ))
    modes.sort(key=lambda m: m["frequency_hz"])
    out = tuple(MeasuredMode(name=f"mode {i + 1}", **m) for i, m in enumerate(modes))
    if not out:
        warnings.append("no peak stood clear of the noise floor; no modes found")
    result = ModesResult(
        recording=os.path.basename(recording.path), kind="tap",
        method="tap test: averaged impact spectra; half-power (window-corrected) and decay fit",
        sample_rate_hz=fs, duration_s=findings.duration_s, resolution_hz=resolution,
        modes=out, orders=(), warnings=tuple(warnings), averages=int(onsets.size),
    )
    # damping against amplitude per mode (issue 14), kept apart in .decay
    from .decay import with_amplitude_damping

    result = with_amplitude_damping(result, x, onsets, pre)
    return replace(result, view=TapView(fb, pb, floor, noise, fs, x, onsets, rejected, pre))
