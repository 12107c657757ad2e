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
from typing import TypeGuard

import numpy as np

from ..errors import InputError, RecordingError
from ..model.modes import MODE_AXES
from .band import check_band
from .checks import USABLE_BAND, Conditioner, require_duration, require_sample_rate
from .damping import SdofFit, corrected_half_power, sdof_fit, transient_model
from .peaks import find_modes_peaks, noise_floor
from .readers import Recording
from .result import MeasuredMode, ModesResult
from .views import TapView

__all__ = ["TapSettings", "analyse_tap", "detect_impacts", "clipped_samples", "stationary_lines",
           "StationaryLine", "bounce_delays", "MAX_SEGMENT_S", "ONSET_RATIO", "MAX_TAP_ROWS",
           "SIGNIFICANCE", "CONFIDENCE_FLOOR"]

#: Longest segment used after an impact [s].
MAX_SEGMENT_S = 8.0
#: Energy rise (ratio) that marks an impact.
ONSET_RATIO = 30.0
#: Longest tap recording read [rows]; tap tests are short.
MAX_TAP_ROWS = 1 << 22
#: A peak's prominence must exceed this many standard deviations of the
#: averaged noise at its bin.
SIGNIFICANCE = 5.0
#: Impacts (the strongest) used for the decay fit.
FIT_IMPACTS = 4
_PRE_S = 0.002
#: Peaks below this confidence are candidates, not modes (unless
#: ``TapSettings.include_candidates``).  At 0.3 a peak needs about 14 dB over
#: the noise with agreeing damping estimates.
CONFIDENCE_FLOOR = 0.3
#: Most steady lines (hum and harmonics, fans) taken from the lead-in.
MAX_LINES = 60

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
    #: Put candidates (confidence below :data:`CONFIDENCE_FLOOR`, or
    #: flagged as harmonics of clipping or unresolved) among the modes.
    include_candidates: bool = False

    def __post_init__(self) -> None:
        if not self.min_frequency_hz > 0:
            raise InputError("min_frequency_hz", "a frequency above 0 Hz", self.min_frequency_hz)
        if self.max_frequency_hz is not None and not self.max_frequency_hz > self.min_frequency_hz:
            raise InputError("max_frequency_hz", "a frequency above the lowest one looked for",
                             self.max_frequency_hz)
        if self.resolution_hz is not None and not self.resolution_hz > 0:
            raise InputError("resolution_hz", "a resolution above 0 Hz", self.resolution_hz)
        if self.snr_db < 0 or self.prominence_db < 0:
            raise InputError("snr_db", "heights of 0 dB or more", (self.snr_db, self.prominence_db))
        if self.axis not in MODE_AXES:
            raise InputError("axis", "one of " + ", ".join(MODE_AXES), self.axis)
        if self.max_modes < 1:
            raise InputError("max_modes", "at least 1", self.max_modes)


def detect_impacts(energy: np.ndarray, sample_rate_hz: float, min_gap_s: float = 0.05,
                   channels: int = 1) -> np.ndarray:
    """Sample indices of impact onsets.

    Two energy detectors on 1 ms frames, either of which marks an impact:

    - a *rise*: a frame's energy exceeds :data:`ONSET_RATIO` × the mean of the
      ten frames ending two frames before it (strong taps over a ringing frame);
    - a *burst out of the noise* (weak taps, down to a peak SNR of about
      15 dB): the mean energy of four frames exceeds the level that Gaussian
      noise reaches with probability 10⁻⁶ (chi-squared with the frames'
      degrees of freedom, and at least 3×) over the background (the median of
      such four-frame means), at least 4× what came before, while the ten
      frames before stay at the background level and the 150 ms before hold
      nothing above 3× it.

    Parameters
    ----------
    energy : ndarray
        Instantaneous energy (squared signal, summed over channels), per sample.
    sample_rate_hz : float
        Sample rate [Hz].
    min_gap_s : float
        Least time between two impacts [s].
    channels : int
        Channels summed in ``energy`` (degrees of freedom per sample).

    Returns
    -------
    ndarray of int
        Onset samples, ascending.
    """
    from scipy import ndimage, signal, stats

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
    # weak taps: four frames ahead against the noise's chi-squared tail
    dof = 4 * frame * max(1, channels)
    ahead = (c[np.minimum(j + 4, nfr)] - c[j]) / np.minimum(4, nfr - j)
    # the background: the median of the four-frame means (steady hum, whose energy
    # swings within each cycle, then counts as background, not as bursts)
    noise = max(float(np.median(ahead)), np.finfo(float).tiny)
    level = max(3.0, float(stats.chi2.isf(1e-6, dof) / dof)) * noise
    # ... and nothing above the background in the 150 ms before (a beat between a
    # decaying mode and hum or a neighbour swells again after each null)
    back = ndimage.maximum_filter1d(ahead, size=147, origin=73, mode="nearest")  # j-146..j
    back = np.r_[np.full(4, back[0]), back[:-4]]  # frames j-150..j-4
    burst = ((ahead >= level) & (ahead >= 4.0 * before) & (before <= 2.0 * noise)
             & (back <= 3.0 * noise) & (j >= 12))
    edges = np.flatnonzero(burst & ~np.r_[False, burst[:-1]])
    cands = np.unique(np.r_[idx, edges])
    gap = max(1, int(min_gap_s * 1000))
    kept: list[int] = []
    for k in cands:
        if not kept or k - kept[-1] >= gap:
            kept.append(int(k))
    # a weak burst less than half the usual spacing after a tap is taken as the
    # tap's own ringing swelling again (a slow beat), not as a new tap
    # (a rise that peaks 10 dB below the usual tap counts as such a swell too)
    strong_set = {int(k) for k in idx}
    if len(kept) >= 3:
        usual = float(np.median(np.diff(kept)))
        peak = {k: float(e[k:k + 20].max()) for k in kept}
        typical_peak = float(np.median(list(peak.values())))
        kept = [k for i, k in enumerate(kept)
                if i == 0 or k - kept[i - 1] >= 0.5 * usual
                or (k in strong_set and peak[k] >= 0.1 * typical_peak)]
    onsets = []
    for k in kept:
        # the first frame at a quarter of the burst's top, then the first sample clear of noise
        top = k + int(np.argmax(e[k:k + 5]))
        first_fr = k + int(np.flatnonzero(e[k:top + 1] >= 0.25 * e[top])[0])
        lo = max(0, (first_fr - 1) * frame)
        hi = min(len(energy), (top + 1) * frame)
        seg = energy[lo:hi]
        need = max(0.05 * float(seg.max()), 9.0 * noise)
        first = np.flatnonzero(seg >= need)
        onsets.append(lo + int(first[0]) if first.size else first_fr * frame)
    return np.asarray(sorted(set(onsets)), dtype=int)


def clipped_samples(x: np.ndarray, full_scale: float | None) -> np.ndarray:
    """Which samples sit at a clipping level on any channel.

    Parameters
    ----------
    x : ndarray
        Samples, shape (n, channels), as read (before any offset is removed).
    full_scale : float or None
        The format's full scale (WAV); ``None`` when unknown: a channel is then
        taken as clipped at its extreme when at least three samples sit exactly
        there and more than three times as many as at the next value (a flat top).

    Returns
    -------
    ndarray of bool
        Shape (n,).
    """
    out = np.zeros(x.shape[0], dtype=bool)
    for k in range(x.shape[1]):
        col = x[:, k]
        if full_scale is not None:
            out |= np.abs(col) >= full_scale * (1.0 - 5e-5)
            continue
        for sgn in (1.0, -1.0):
            v = sgn * col
            top = float(v.max())
            at = v >= top
            c1 = int(np.count_nonzero(at))
            rest = v[~at]
            c2 = int(np.count_nonzero(rest >= rest.max())) if rest.size else 0
            if c1 >= 3 and c1 > 3 * max(c2, 1):
                out |= at
    return out


@dataclass(frozen=True)
class StationaryLine:
    """A steady spectral line in the quiet time before the first tap (hum, fans)."""

    #: Frequency [Hz].
    freq_hz: float
    #: Mean power per channel (amplitude²/2), summed over channels.
    power: float


def stationary_lines(lead: np.ndarray, sample_rate_hz: float, min_frequency_hz: float,
                     max_frequency_hz: float, min_height_db: float = 6.0
                     ) -> list[StationaryLine]:
    """Steady lines (mains hum and its harmonics, fans) in a quiet stretch.

    A Hann-windowed periodogram of the whole stretch (summed over channels);
    lines are peaks standing ``min_height_db`` over a running median of the
    spectrum; each frequency is refined by a parabola through the log-power of
    the top three bins, and its power is the periodogram summed over the main
    lobe (±2 bins) times the bin width (Parseval: a sinusoid of amplitude A
    gives A²/2).

    Parameters
    ----------
    lead : ndarray
        Samples before the first tap, shape (n, channels), offset removed.
    sample_rate_hz : float
        Sample rate [Hz].
    min_frequency_hz, max_frequency_hz : float
        Band searched [Hz].
    min_height_db : float
        Least height of a line above the running median [dB].

    Returns
    -------
    list of StationaryLine
    """
    from scipy import ndimage, signal

    n = lead.shape[0]
    if n < max(256, int(0.1 * sample_rate_hz)):
        return []
    f, p = signal.periodogram(lead, sample_rate_hz, window="hann", axis=0)
    p = p.sum(axis=1)
    df = f[1] - f[0]
    # a wide running median (≥ 31 bins, ≥ 60 Hz), so its own scatter does not let
    # chance bins through
    size = max(31, int(60.0 / df) | 1)
    # the removed offset leaves a hole at 0 Hz (the window's main lobe): filled for the median
    filled = p.copy()
    filled[:3] = np.median(p[3:3 + size])
    med = ndimage.median_filter(filled, size=size, mode="nearest")
    tiny = np.finfo(float).tiny
    db = 10.0 * np.log10(np.maximum(p, tiny))
    inband = (f >= 0.8 * min_frequency_hz) & (f <= 1.1 * max_frequency_hz) & (
        np.arange(len(f)) >= 3)
    # a noise bin of a periodogram exceeds T × its median with probability 2^−T
    # (exponential distribution): T is set so the whole band holds 0.05 chance lines
    chance_db = 10.0 * math.log10(math.log2(max(2, int(inband.sum())) / 0.05))
    height = max(min_height_db, chance_db)
    idx, _ = signal.find_peaks(db, prominence=min_height_db)
    out = []
    for i in idx:
        if not inband[i] or i < 2 or i > len(p) - 3:
            continue
        if db[i] - 10.0 * np.log10(max(med[i], tiny)) < height:
            continue
        y0, y1, y2 = db[i - 1], db[i], db[i + 1]
        den = y0 - 2 * y1 + y2
        shift = 0.5 * (y0 - y2) / den if den < 0 else 0.0
        power = float(np.sum(p[i - 2:i + 3]) * df - 5 * med[i] * df)
        if power > 0:
            out.append(StationaryLine(float(f[i] + max(-0.5, min(0.5, shift)) * df), power))
    out.sort(key=lambda ln: -ln.power)
    return out[:MAX_LINES]


def _line_spectrum(lines: list[StationaryLine], freq_hz: np.ndarray, window: np.ndarray,
                   fs: float, scale: float, tolerance_hz: float) -> np.ndarray:
    """Expected periodogram of the steady lines in one windowed segment (random phase).

    A·cos(2πf₀t + φ) gives A²/4·(|W(f − f₀)|² + |W(f + f₀)|²), W the window's
    transform (derived), read from one finely sampled FFT of the window; the
    largest over f₀ and f₀ ± ``tolerance_hz`` covers the line's uncertainty.
    """
    n = len(window)
    length = 1 << int(math.ceil(math.log2(32 * n)))
    w2 = np.abs(np.fft.rfft(window, length)) ** 2
    grid = np.arange(w2.size) * fs / length

    def w_at(nu: np.ndarray) -> np.ndarray:
        return np.interp(np.abs(nu), grid, w2, right=0.0)

    out = np.zeros_like(freq_hz, dtype=float)
    for ln in lines:
        amp2 = 2.0 * ln.power
        for f0 in (ln.freq_hz - tolerance_hz, ln.freq_hz, ln.freq_hz + tolerance_hz):
            out = np.maximum(out, 0.25 * amp2 * scale * (w_at(freq_hz - f0) + w_at(freq_hz + f0)))
    return out


def bounce_delays(spectra: np.ndarray, freq_hz: np.ndarray, good: np.ndarray, fs: float,
                  seg_len: int, step: int, min_echo: float = 0.15) -> list[tuple[int, float, float]]:
    """Impacts whose spectrum carries the ripple of a second hit (a hammer bounce).

    A second hit of relative force a, τ seconds after the first, multiplies the
    response spectrum by |1 + a·e^{−iωτ}|², whose logarithm is close to
    2a·cos(ωτ): a ripple in frequency with period 1/τ (the echo of cepstral
    analysis; Bogert, Healy & Tukey 1963).  Each impact's log-spectrum minus
    the median log-spectrum of all impacts (which removes the structure's
    response and, when fewer than half the impacts bounce, the bounce) is
    searched for that ripple with a Lomb–Scargle periodogram over the bins
    where the response stands clear of noise, for τ from 1 ms (or three ripples
    over the band) to a quarter of the segment (at most 50 ms).

    Parameters
    ----------
    spectra : ndarray
        Power spectra of each impact, shape (impacts, bins).
    freq_hz : ndarray
        Frequencies of the bins [Hz].
    good : ndarray of bool
        Bins to use (response well above noise).
    fs : float
        Sample rate [Hz].
    seg_len : int
        Segment length [samples].
    step : int
        Take every ``step``-th good bin (the zero-padding factor), so the
        bins used are close to independent.
    min_echo : float
        Least relative force a of the second hit that counts.

    Returns
    -------
    list of (impact, delay_s, relative_force)
    """
    from scipy import signal

    k_imp = spectra.shape[0]
    sel = np.flatnonzero(good)[::max(1, step)]
    if k_imp < 3 or sel.size < 64:
        return []
    f = np.asarray(freq_hz, dtype=float)[sel]
    logs = np.log(np.maximum(spectra[:, sel], np.finfo(float).tiny))
    ref = np.median(logs, axis=0)
    span = float(f[-1] - f[0])
    tau_lo = max(1e-3, 3.0 / span)
    tau_hi = min(0.25 * seg_len / fs, 0.05)
    if tau_hi <= tau_lo:
        return []
    taus = np.arange(tau_lo, tau_hi, 1.0 / (3.0 * span))
    out = []
    for i in range(k_imp):
        d = logs[i] - ref
        d = d - np.polyval(np.polyfit(f - f.mean(), d, 2), f - f.mean())
        pw = signal.lombscargle(2 * np.pi * f, d, taus)
        amp = np.sqrt(4.0 * pw / d.size)  # ripple amplitude of ln-power (≈ 2a)
        best = int(np.argmax(amp))
        sigma = float(np.std(d))
        # the amplitude a pure-noise ripple reaches over this many trial delays: ~ σ√(2 ln M · 2/N)
        chance = sigma * math.sqrt(2.0 * math.log(taus.size) * 2.0 / d.size)
        if amp[best] >= max(2.0 * min_echo, 2.0 * chance):
            out.append((i, float(taus[best]), float(0.5 * amp[best])))
    return out


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
    if recording.rows_estimate * len(recording.signal_names) > MAX_TAP_ROWS:  # before reading
        raise RecordingError(recording.path, "", f"a tap recording of more than {MAX_TAP_ROWS} "
                             "samples (rows × channels); trim it to the impacts")
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
    check_band(fs, settings.min_frequency_hz, fmax, settings.resolution_hz)
    # keep the longest run of clean samples (tap tests rarely have gaps)
    by_run: dict[int, list[np.ndarray]] = {}
    for rid, sig in zip(run_ids, runs):
        by_run.setdefault(rid, []).append(sig)
    pieces = [np.concatenate(v) for v in by_run.values()]
    x = max(pieces, key=len)
    if len(pieces) > 1:
        warnings.append(f"the recording has {len(pieces)} stretches between gaps; only the "
                        f"longest ({len(x) / fs:.3g} s) was analysed")
    clip = clipped_samples(x, recording.full_scale)
    x = x - np.median(x, axis=0)
    energy = np.sum(x * x, axis=1)
    onsets = detect_impacts(energy, fs, channels=x.shape[1])
    if onsets.size == 0:
        raise RecordingError(recording.path, "", "no impacts found: a tap test needs sharp taps "
                             "that stand well above the background")
    pre = int(round(_PRE_S * fs))
    onsets = onsets[onsets >= pre]
    if onsets.size == 0:
        raise RecordingError(recording.path, "", "the only impact is at the very start")
    lead = x[: max(0, int(onsets[0]) - pre)]
    gaps = np.diff(np.r_[onsets, len(x) + pre])
    typical = float(np.median(gaps)) if gaps.size else float(len(x))
    keep = np.ones(onsets.size, dtype=bool)
    double = np.flatnonzero(gaps[:-1] < 0.3 * typical) if gaps.size > 1 else np.zeros(0, int)
    for k in double:
        keep[k] = keep[k + 1] = False
    if double.size:
        warnings.append(f"{double.size} double hits (two taps within {0.3 * typical / fs:.2g} s) "
                        "were left out")
    # clipped impacts: their flat tops put peaks at odd multiples of the modes
    ends = np.r_[onsets[1:], len(x)]
    clipped = np.array([bool(clip[o - pre:e].any()) for o, e in zip(onsets, ends)])
    all_clipped = False
    if np.any(clipped & keep):
        if np.any(keep & ~clipped):
            warnings.append(f"{int(np.count_nonzero(clipped & keep))} impacts drove the recording "
                            "into clipping and were left out (clipping puts peaks at multiples "
                            "of the modes)")
            keep &= ~clipped
        else:
            all_clipped = True
            warnings.append("every impact clipped the recording: peaks at whole multiples of a "
                            "stronger peak are listed as candidates, not modes; tap more lightly "
                            "or lower the gain")
    doubled = {int(i) for i in double} | {int(i) + 1 for i in double}
    rejected = [(int(o), "double hit" if i in doubled else "clipped")  # for the figure
                for i, o in enumerate(onsets) if not keep[i]]
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
    w = _window(seg_len)
    nfft = sfft.next_fast_len(4 * seg_len)
    freq = np.fft.rfftfreq(nfft, 1.0 / fs)
    scale = 1.0 / (fs * np.sum(w * w))
    segs = np.stack([x[o - pre:o - pre + seg_len] for o in onsets])  # (impacts, n, ch)
    segs = segs - segs[:, :pre].mean(axis=1, keepdims=True) if pre > 0 else segs
    spec = (np.abs(sfft.rfft(segs * w[None, :, None], nfft, axis=1)) ** 2 * scale).sum(axis=2)
    band = (freq >= settings.min_frequency_hz) & (freq <= fmax)
    if band.sum() < 16:
        raise RecordingError(recording.path, "", "the analysed band holds too few frequency bins")
    fb = freq[band]
    # the noise reference: the quiet lead-in's smoothed spectrum plus its steady lines
    # (hum, fans) as they would show through this window
    noise = _noise_spectrum(lead, segs, fs, seg_len, fb)
    lines = stationary_lines(lead, fs, settings.min_frequency_hz, fmax) if noise is not None else []
    if noise is None:
        warnings.append("no quiet stretch before the first tap; the noise floor was "
                        "estimated from the spectrum itself, and steady lines (hum, fans) "
                        "cannot be told from modes")
    elif lines:
        tol = 0.1 / (len(lead) / fs)
        noise = noise + _line_spectrum(lines, fb, w, fs, scale, tol)
        shown = ", ".join(f"{ln.freq_hz:.1f}" for ln in sorted(lines, key=lambda ln: -ln.power)[:6])
        warnings.append(f"{len(lines)} steady lines before the first tap (hum or fans; strongest "
                        f"at {shown} Hz) are part of the noise reference, not modes")
    # hammer bounces: a ripple across each impact's spectrum
    if noise is not None and onsets.size >= 3:
        good = np.median(spec[:, band], axis=0) >= 10.0 * noise
        bounced = bounce_delays(spec[:, band], fb, good, fs, seg_len, max(1, nfft // seg_len))
        if bounced and onsets.size - len(bounced) >= 2:
            drop = np.zeros(onsets.size, dtype=bool)
            drop[[i for i, _t, _a in bounced]] = True
            delays = ", ".join(f"{1e3 * t:.1f}" for _i, t, _a in bounced)
            warnings.append(f"{len(bounced)} impacts had a second hit (hammer bounce, {delays} ms "
                            "after the first) and were left out")
            rejected += [(int(o), "hammer bounce") for o in onsets[drop]]  # for the figure
            onsets, segs, spec = onsets[~drop], segs[~drop], spec[~drop]
        elif bounced:
            warnings.append(f"{len(bounced)} of {onsets.size} impacts show a second hit (hammer "
                            "bounce); too many to leave out, so the spectrum carries its ripple")
    if onsets.size < 3:
        warnings.append(f"only {onsets.size} impacts; 5 or more give steadier spectra")
    mean_spec = spec.mean(axis=0)  # average over impacts (summed over channels)
    pb = mean_spec[band]
    floor = noise_floor(fb, pb)
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
    harmonic_modes: list[dict] = []
    if all_clipped:  # flag harmonics of clipping before the decay fit (they need no fit)
        probe = [dict(frequency_hz=hp.peak_hz, prominence_db=pk.snr_db) for pk, hp in found]
        flags = _clipping_harmonics(probe, resolution)
        for i in sorted(flags):
            pk, hp = found[i]
            zeta_h = hp.damping
            harmonic_modes.append(dict(
                frequency_hz=hp.peak_hz, damping=zeta_h,
                damping_low=hp.damping_low if zeta_h is not None else 0.0,
                damping_high=min(hp.damping_high, 0.99), axis=settings.axis,
                confidence=round(min(_confidence(pk.snr_db, None, hp.bound_only),
                                     0.5 * CONFIDENCE_FLOOR), 3),
                method=f"half-power only; possible harmonic of clipping ({flags[i]})",
                damping_half_power=zeta_h, damping_decay=None, prominence_db=round(pk.snr_db, 2)))
        found = [fh for i, fh in enumerate(found) if i not in flags]
    skip = pre + max(1, int(round(1e-3 * fs)))
    noise_rms = float(np.std(lead[:, chan])) if len(lead) >= pre else 0.0
    fitted = _decay_fits(segs[:, :, chan], fs, found, skip, resolution, noise_rms)
    if found and not fitted.fits:
        warnings.append("the decay fit found no clean free decay; damping is from the "
                        "half-power bandwidth alone")
    modes: list[dict] = []
    for k, (pk, hp) in enumerate(found):
        members = fitted.members[k]
        if len(members) == 2 and fitted.fits:
            modes.extend(_pair_modes(pk, hp, members, fitted, settings.axis, warnings))
            continue
        decay = float(fitted.decays[members[0]]) if fitted.fits else None
        f_fit = float(fitted.freqs[members[0]]) if fitted.fits else None
        zeta_hp = hp.damping
        ref_z = zeta_hp if zeta_hp is not None else hp.damping_high
        if decay is not None and (decay > 3.0 * ref_z or decay < ref_z / 3.0) and (
                zeta_hp is not None or decay > 3.0 * ref_z):
            warnings.append(f"peak at {hp.peak_hz:.1f} Hz: the half-power width (ζ≈{ref_z:.4f}) "
                            f"and the decay fit (ζ≈{decay:.4f}) disagree; not reported as a mode")
            continue
        possible_pair = (decay is not None and zeta_hp is not None
                         and max(decay, zeta_hp) > 1.5 * min(decay, zeta_hp))
        if possible_pair:
            assert decay is not None and zeta_hp is not None
            # two modes closer than a bandwidth look like one broad peak; the lower
            # figure is the safer one for a clash check
            zeta = min(decay, zeta_hp)
            low, high = min(decay, zeta_hp, hp.damping_low), max(decay, zeta_hp)
            warnings.append(f"peak at {hp.peak_hz:.1f} Hz may be a close pair of modes (the "
                            f"half-power ζ≈{zeta_hp:.4f} and the decay fit ζ≈{decay:.4f} disagree "
                            "and a two-mode fit did not separate them); the lower damping is "
                            "reported")
        elif decay is not None and (zeta_hp is not None or decay <= hp.damping_high * 1.5):
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
        if decay is not None and zeta_hp is not None:
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
        if possible_pair:
            parts.append("possible close pair")
        modes.append(dict(
            frequency_hz=fn, damping=zeta, damping_low=max(0.0, low), damping_high=min(high, 0.99),
            axis=settings.axis, confidence=_confidence(pk.snr_db, agreement, hp.bound_only),
            method="; ".join(parts), damping_half_power=zeta_hp, damping_decay=decay,
            prominence_db=round(pk.snr_db, 2),
        ))
    modes.extend(harmonic_modes)
    modes.sort(key=lambda m: m["frequency_hz"])
    keep_modes: list[dict] = []
    cands: list[dict] = []
    for m in modes:
        weak = m["confidence"] < CONFIDENCE_FLOOR
        (cands if weak and not settings.include_candidates else keep_modes).append(m)
    if cands:
        warnings.append(f"{len(cands)} candidate peaks below the confidence floor "
                        f"{CONFIDENCE_FLOOR:g} (or flagged) are listed but not written as modes")
    out = tuple(MeasuredMode(name=f"mode {i + 1}", **m) for i, m in enumerate(keep_modes))
    cand = tuple(MeasuredMode(name=f"candidate {i + 1}", **m) for i, m in enumerate(cands))
    if not out:
        warnings.append("no peak stood clear of the noise floor; no modes found")
    result = ModesResult(
        recording=os.path.basename(recording.path), kind="tap",
        method="tap test: averaged impact spectra; half-power (window-corrected) and decay fit",
        sample_rate_hz=fs, duration_s=findings.duration_s, resolution_hz=resolution,
        modes=out, orders=(), warnings=tuple(warnings), averages=int(onsets.size),
        candidates=cand, impact_times_s=tuple(float(o) / fs for o in onsets),
    )
    # damping against amplitude per mode (issue 14), kept apart in .decay
    from .decay import with_amplitude_damping

    result = with_amplitude_damping(result, x, onsets, pre)
    return replace(result, view=TapView(fb, pb, floor, noise, fs, x, onsets, tuple(rejected), pre))


@dataclass
class _Fitted:
    """Decay fits over impacts: each found peak's fitted modes (one, or two for a pair)."""

    members: list[list[int]]
    fits: list
    freqs: np.ndarray
    decays: np.ndarray
    spread: np.ndarray  # (2, modes): lowest and highest ζ over impacts


def _decay_fits(free: np.ndarray, fs: float, found: list, skip: int,
                resolution: float, noise_rms: float = 0.0) -> _Fitted:
    """Joint SDOF decay fits of the strongest impacts; close pairs split where the data say so.

    A peak whose half-power and decay-fit dampings differ by 1.2× or more
    is tried as two modes (f ∓ δ); the split is kept when the Bayesian
    information criterion falls by more than 10 (Schwarz 1978), the two
    fitted modes stay apart from each other and off the search bounds, and
    each one's ζ lies within 0.25–1.5× the lower of the peak's two readings.  A fit
    counts when it explains 80 % of the response's energy, or when what it
    leaves is no more than the sensor noise (RMS ``noise_rms``, from the lead-in).
    """

    def clean(fit: SdofFit | None) -> TypeGuard[SdofFit]:
        return fit is not None and (fit.r_squared >= 0.8 or (
            fit.r_squared >= 0.3 and noise_rms > 0 and fit.residual_rms <= 1.3 * noise_rms))

    members = [[k] for k in range(len(found))]
    guesses_f = [hp.peak_hz for _pk, hp in found]
    guesses_z = [hp.damping if hp.damping is not None else 0.5 * hp.damping_high
                 for _pk, hp in found]
    strongest = np.argsort(-np.sum(free ** 2, axis=1))[:FIT_IMPACTS]
    fits: list = []
    empty = np.zeros(0)
    if not found:
        return _Fitted(members, fits, empty, empty, np.zeros((2, 0)))
    first = sdof_fit(free[strongest[0]], fs, guesses_f, guesses_z, skip)
    if clean(first):
        for k, (_pk, hp) in enumerate(found):
            zd, zh = first.dampings[k], hp.damping
            if zh is None or max(zd, zh) < 1.2 * min(zd, zh):
                continue
            fk = first.freqs_hz[k]
            if _amplitude_dependent(free[strongest], fs, fk, skip):
                continue  # one mode whose damping changes with amplitude (friction), not a pair
            delta = max(zd, 1.5 * resolution / fk)
            gf = list(first.freqs_hz)
            gz = list(first.dampings)
            gf[k:k + 1] = [fk * (1 - delta), fk * (1 + delta)]
            gz[k:k + 1] = [min(zd, zh), min(zd, zh)]
            split = sdof_fit(free[strongest[0]], fs, gf, gz, skip, max_evaluations=60 * len(gf))
            if split is None or first.samples == 0:
                continue
            n = first.samples
            rss1 = max(1.0 - first.r_squared, 1e-12)
            rss2 = max(1.0 - split.r_squared, 1e-12)
            bic = n * math.log(rss2 / rss1) + 4.0 * math.log(n)
            f1, f2 = split.freqs_hz[k], split.freqs_hz[k + 1]
            apart = abs(f2 - f1) > 0.25 * (split.dampings[k] + split.dampings[k + 1]) * fk
            inside = all(abs(f / g - 1) < 0.028 for f, g in zip((f1, f2), gf[k:k + 2]))
            # each mode of a true pair is no more damped than the pair's broadened peak
            # reads, and not far less (a noise-fitting split puts one mode near ζ = 0)
            ref_z = min(zd, zh)
            plausible = all(0.25 * ref_z <= z <= 1.5 * ref_z for z in split.dampings[k:k + 2])
            if bic < -10.0 and apart and inside and plausible:
                members = [[j] if j < k else [j + 1] for j in range(k)] + [[k, k + 1]] + [
                    [j + 1] for j in range(k + 1, len(found))]
                guesses_f, guesses_z = list(split.freqs_hz), list(split.dampings)
                first = split
                break  # one close pair per record
        fits.append(first)
        guesses_f, guesses_z = list(first.freqs_hz), list(first.dampings)
    for i in strongest[1:]:
        fit = sdof_fit(free[i], fs, guesses_f, guesses_z, skip,
                       max_evaluations=None if not fits else 10 * len(guesses_f))
        if clean(fit):
            fits.append(fit)
            guesses_f, guesses_z = list(fit.freqs_hz), list(fit.dampings)
    if not fits:
        return _Fitted(members, fits, empty, empty, np.zeros((2, 0)))
    z = np.array([f.dampings for f in fits])
    return _Fitted(members, fits, np.median([f.freqs_hz for f in fits], axis=0),
                   np.median(z, axis=0), np.array([z.min(axis=0), z.max(axis=0)]))


def _amplitude_dependent(free: np.ndarray, fs: float, freq_hz: float, skip: int) -> bool:
    """Whether one mode's decay at ``freq_hz`` reads as friction or mixed (:mod:`.decay`).

    A decay whose damping changes with amplitude (a joint that slips) also
    makes the half-power and decay-fit dampings disagree; it is one mode, and
    the two-mode split is not tried for it.
    """
    from .decay import analyse_mode_decay, isolation_bands

    try:
        found = analyse_mode_decay(free, fs, freq_hz, isolation_bands([freq_hz], 0.5 * fs)[0], skip)
    except (ValueError, np.linalg.LinAlgError):
        return False
    return found is not None and found.decay in ("friction", "mixed")


def _pair_modes(pk, hp, members: list[int], fitted: _Fitted, axis: str,
                warnings: list[str]) -> list[dict]:
    """The two modes of a close pair separated by the two-mode decay fit."""
    out = []
    for j in members:
        f, z = float(fitted.freqs[j]), float(fitted.decays[j])
        lo = min(0.85 * z, float(fitted.spread[0, j]))
        hi = max(1.15 * z, float(fitted.spread[1, j]))
        out.append(dict(
            frequency_hz=f, damping=z, damping_low=max(0.0, lo), damping_high=min(hi, 0.99),
            axis=axis, confidence=round(0.8 * _confidence(pk.snr_db, None, False), 3),
            method=(f"close pair: two-mode decay fit ζ={z:.4f} (one shared peak, half-power "
                    f"ζ={hp.damping:.4f} of the pair)"),
            damping_half_power=None, damping_decay=z, prominence_db=round(pk.snr_db, 2)))
    fa, fb_ = (float(fitted.freqs[j]) for j in members)
    warnings.append(f"a close pair of modes at {fa:.1f} and {fb_:.1f} Hz shares one peak "
                    f"(closer than their bandwidths); separated by a two-mode decay fit")
    return out


def _clipping_harmonics(modes: list[dict], resolution: float) -> dict[int, str]:  # noqa: D401
    """Modes at a whole multiple (2–10×) of a stronger mode: index → "n × f₀"."""
    out: dict[int, str] = {}
    order = sorted(range(len(modes)), key=lambda i: -modes[i]["prominence_db"])
    for rank, i in enumerate(order):
        f = modes[i]["frequency_hz"]
        for j in order[:rank]:
            if j in out:
                continue
            f0 = modes[j]["frequency_hz"]
            n = round(f / f0)
            # clipping a decaying tone spreads its harmonics: within 3 % of n × f₀
            if 2 <= n <= 10 and abs(f - n * f0) <= max(2.0 * resolution, 0.03 * f):
                out[i] = f"{n} × {f0:.1f} Hz"
                break
    return out
