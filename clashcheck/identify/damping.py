"""Damping estimates: half-power bandwidth (window-corrected) and decay fit.

Half-power bandwidth
--------------------
The raw estimate reads the two frequencies f₁, f₂ where the power spectrum
falls to half its peak and takes ζ = (f₂ − f₁)/(2 fₙ), with the undamped
frequency fₙ = f_peak/√(1 − 2ζ²) from the peak of the single-degree-of-freedom
response (Rao, *Mechanical Vibrations* 5th ed. §3.4; REFERENCES.md §2).  On the
exact response with ζ = 0.05 this gives 0.050126, the known bias of the
estimator (Papagiannopoulos & Hatzigeorgiou 2011).

A measured spectrum is also broadened by its spectral window: the expected
Welch periodogram is the true spectrum seen through the window's kernel.  The
correction here is model-based: :func:`corrected_half_power` finds the ζ whose
*modelled observation* (the exact SDOF response, through the same window,
segment length, FFT length and sample rate, read by the same raw estimator)
gives the measured raw estimate.  That removes the window's broadening and
the estimator's own bias at once.  When the measured peak is no wider than the
window allows, only an upper bound on ζ is reported.

Two observation models are provided:

- :func:`stationary_model` – a response to broadband random forcing, averaged
  by Welch's method (flight recordings).  The expected periodogram is the
  Fourier transform of the response autocorrelation times the window's
  autocorrelation.
- :func:`transient_model` – an impulse response starting ``onset`` samples into
  a windowed segment (tap tests).

Decay fit
---------
:func:`sdof_fit` fits a sum of single-degree-of-freedom free decays,
Σ A_k e^{−σ_k t} sin(ω_k t + φ_k), to a free response by nonlinear least
squares (variable projection: the amplitudes and phases are solved linearly
for each trial of σ_k, ω_k).  Fitting all modes together keeps a lightly
damped neighbour from swamping a heavily damped mode's fast decay.

:func:`decay_fit` is the one-mode version for a well-isolated mode: it band-passes a free decay around the mode (zero-phase
Butterworth), takes the Hilbert envelope, and fits a straight line to its
logarithm: the slope is −σ = −ζωₙ, so ζ = σ/√(ω_d² + σ²), which is the
logarithmic decrement relation ζ = δ/√(4π² + δ²) with δ = σ·2π/ω_d
(Rao §2.6).
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

__all__ = [
    "HalfPower",
    "DecayFit",
    "SdofFit",
    "half_power_points",
    "half_power_raw",
    "stationary_model",
    "transient_model",
    "corrected_half_power",
    "decay_fit",
    "sdof_fit",
    "refine_frequency",
    "ZETA_MIN",
    "ZETA_MAX",
    "BOUND_FACTOR",
]

#: Smallest damping ratio the correction searches.
ZETA_MIN = 2e-4
#: Largest damping ratio the correction searches.
ZETA_MAX = 0.4
#: A peak whose raw width is below this multiple of the window-limited width
#: gets only an upper bound on ζ.
BOUND_FACTOR = 1.25


@dataclass(frozen=True)
class HalfPower:
    """A half-power damping estimate."""

    #: Best estimate of ζ, or ``None`` when only a bound is known.
    damping: float | None
    #: Lower end of the uncertainty interval of ζ (0 for a bound).
    damping_low: float
    #: Upper end of the uncertainty interval of ζ (the bound itself for a bound).
    damping_high: float
    #: Raw (uncorrected) estimate (f₂ − f₁)/(2 fₙ).
    raw: float
    #: Frequency of the spectral peak [Hz].
    peak_hz: float
    #: True when the peak is narrower than the resolution allows.
    bound_only: bool


@dataclass(frozen=True)
class DecayFit:
    """A decay-fit damping estimate."""

    #: ζ from the envelope's decay rate.
    damping: float
    #: Decay rate σ [1/s].
    sigma_per_s: float
    #: Length of the fitted stretch [s].
    span_s: float
    #: Coefficient of determination of the log-envelope fit.
    r_squared: float


@dataclass(frozen=True)
class SdofFit:
    """A fit of several SDOF free decays to one response."""

    #: Undamped natural frequencies [Hz], in the order of the starting guesses.
    freqs_hz: tuple[float, ...]
    #: Damping ratios, same order.
    dampings: tuple[float, ...]
    #: Share of the response's energy the fit explains (1 = all).
    r_squared: float
    #: Samples the fit used (for information criteria).
    samples: int = 0
    #: RMS of the fit's residual, in the signal's units.
    residual_rms: float = 0.0


def _peak(freq_hz: np.ndarray, power: np.ndarray, i: int) -> tuple[float, float]:
    """Peak frequency and value.

    A parabola is fitted to the log-power of the contiguous bins near the top
    (at least three bins), so that noise on the single highest bin does not
    bias the peak level and with it the half-power width.
    """
    n = len(power)
    top = power[i]

    def region(frac: float) -> tuple[int, int]:
        a = i
        while a > 0 and frac * top <= power[a - 1] <= top:
            a -= 1
        b = i
        while b < n - 1 and frac * top <= power[b + 1] <= top:
            b += 1
        return a, b

    # a finely sampled peak is fitted within 0.05 dB of its top (where the log of a
    # resonance is quadratic to 1e-5); a coarsely sampled one within 1 dB
    a, b = region(0.9886)
    if b - a < 14:
        a, b = region(0.8)
    if b - a < 2:
        a, b = max(0, i - 1), min(n - 1, i + 1)
    if b - a < 2 or np.any(power[a:b + 1] <= 0):
        return float(freq_hz[i]), float(top)
    f = freq_hz[a:b + 1]
    c2, c1, c0 = np.polyfit(f - freq_hz[i], np.log(power[a:b + 1]), 2)
    if c2 >= 0:
        return float(freq_hz[i]), float(top)
    x0 = -c1 / (2 * c2)
    if not freq_hz[a] - freq_hz[i] <= x0 <= freq_hz[b] - freq_hz[i]:
        return float(freq_hz[i]), float(top)
    return float(freq_hz[i] + x0), float(np.exp(c0 + c1 * x0 + c2 * x0 * x0))


def half_power_points(
    freq_hz: np.ndarray, power: np.ndarray, peak_index: int, level: float = 0.5
) -> tuple[float, float, float, float] | None:
    """The frequencies where the power falls to ``level`` × its peak.

    Parameters
    ----------
    freq_hz : ndarray
        Evenly spaced frequencies [Hz].
    power : ndarray
        Power spectrum (any units of power, i.e. amplitude squared).
    peak_index : int
        Index of the peak bin.
    level : float
        Fraction of the peak power; 0.5 for half power.

    Returns
    -------
    (f1_hz, f2_hz, peak_hz, peak_value) or None
        ``None`` when the spectrum does not fall to the level on both sides
        before rising above the peak.
    """
    peak_hz, top = _peak(freq_hz, power, peak_index)
    target = level * top
    ceiling = 1.1 * max(top, float(power[peak_index]))  # ripples on the top are no new peak
    n = len(power)
    i = peak_index
    while i > 0 and power[i] > target:
        i -= 1
        if power[i] > ceiling:
            return None  # a higher peak before the level is reached
    if power[i] > target:
        return None
    j = peak_index
    while j < n - 1 and power[j] > target:
        j += 1
        if power[j] > ceiling:
            return None
    if power[j] > target:
        return None
    f1 = _fit_crossing(freq_hz, power, peak_index, i, target, top, -1)
    f2 = _fit_crossing(freq_hz, power, peak_index, j, target, top, +1)
    return f1, f2, peak_hz, top


def _fit_crossing(freq_hz, power, ip, ic, target, top, side) -> float:
    """Crossing of ``target`` near bin ``ic`` (first bin past it), on one side of the peak.

    A low-order polynomial is fitted to the bins whose power lies within ±15 %
    of the peak about the target (out to twice the crossing's distance from
    the peak), so one noisy bin does not move the crossing; with few such
    bins, linear interpolation between the two bins that straddle it.
    """
    f_int = float(np.interp(target, [power[ic], power[ic - side]],
                            [freq_hz[ic], freq_hz[ic - side]]))
    dist = abs(ic - ip)
    if dist < 4:
        return f_int
    lo_b, hi_b = ip + side * 1, ip + side * 2 * dist
    a, b = sorted((lo_b, hi_b))
    a, b = max(a, 0), min(b, len(power) - 1)
    idx = np.arange(a, b + 1)
    sel = idx[(power[idx] >= target - 0.15 * top) & (power[idx] <= target + 0.15 * top)]
    if sel.size < 3 or sel.size > 40:  # few bins: interpolate; many: the curve is resolved
        return f_int
    x = freq_hz[sel] - f_int
    deg = 3 if sel.size >= 8 else (2 if sel.size >= 5 else 1)
    coef = np.polyfit(x, power[sel] - target, deg)
    roots = np.roots(coef)
    roots = roots[np.isreal(roots)].real
    if roots.size == 0:
        return f_int
    f = f_int + float(roots[np.argmin(np.abs(roots))])
    # keep the fit only when it lands near the interpolated crossing
    if abs(f - f_int) > 0.25 * abs(freq_hz[ic] - freq_hz[ip]):
        return f_int
    return float(f)


def half_power_raw(
    freq_hz: np.ndarray, power: np.ndarray, peak_index: int, level: float = 0.5
) -> float | None:
    """Raw half-power damping estimate ζ = (f₂ − f₁)/(2 fₙ).

    fₙ = f_peak/√(1 − 2ζ²) is the undamped frequency that puts the SDOF
    response's peak at the measured peak (Rao §3.4); the equation is solved
    by fixed-point iteration.

    Parameters
    ----------
    freq_hz : ndarray
        Evenly spaced frequencies [Hz].
    power : ndarray
        Power spectrum (any units of power, i.e. amplitude squared), one value
        per frequency.
    peak_index : int
        Index of the peak bin.
    level : float
        Fraction of the peak power at which the width is read; 0.5 for half
        power. The width is used as is, with no correction for other levels.

    Returns
    -------
    float or None
        The damping ratio ζ [-] (fraction of critical), raw: no correction for
        the window or the bin width. ``None`` when the half-power points are
        not both found.

    Examples
    --------
    The exact SDOF response with ζ = 0.05 (REFERENCES.md §2, derived):

    >>> r = np.linspace(0.8, 1.2, 40001)
    >>> m2 = 1 / ((1 - r**2) ** 2 + (2 * 0.05 * r) ** 2)
    >>> round(half_power_raw(r, m2, int(np.argmax(m2))), 5)
    0.05013
    """
    pts = half_power_points(freq_hz, power, peak_index, level)
    if pts is None:
        return None
    f1, f2, fp, _top = pts
    width = (f2 - f1) / (2.0 * fp)
    zeta = width
    for _ in range(50):
        new = width * math.sqrt(max(1.0 - 2.0 * zeta * zeta, 1e-6))
        if abs(new - zeta) < 1e-12:
            break
        zeta = new
    return zeta


def _sdof_autocorr(lags_s: np.ndarray, fn_hz: float, zeta: float) -> np.ndarray:
    """Autocorrelation (unnormalised) of an SDOF displacement response to white noise.

    R(τ) ∝ e^{−ζωₙ|τ|}(cos ω_d τ + ζ/√(1 − ζ²) sin ω_d|τ|)  (Thomson ch. 11; derived).
    """
    wn = 2.0 * math.pi * fn_hz
    root = math.sqrt(1.0 - zeta * zeta)
    # e^{(−ζωₙ + iω_d)|τ|}: the decay, cosine and sine from one complex exponential
    e = np.exp(np.abs(lags_s) * complex(-zeta * wn, wn * root))
    return e.real + (zeta / root) * e.imag


def stationary_model(
    sample_rate_hz: float, window: np.ndarray, nfft: int
) -> Callable[[float, float], np.ndarray]:
    """Expected Welch periodogram of an SDOF response to broadband forcing.

    Parameters
    ----------
    sample_rate_hz : float
        Sample rate [Hz].
    window : ndarray
        The spectral window (length nperseg).
    nfft : int
        FFT length [samples].

    Returns
    -------
    callable
        ``model(fn_hz, zeta)`` → expected power on the grid ``rfftfreq(nfft)``,
        in arbitrary scale.
    """
    n = len(window)
    m = max(1, math.ceil((2 * n - 1) / nfft))
    length = nfft * m
    wf = np.fft.rfft(window, length)
    rw = np.fft.irfft(np.abs(wf) ** 2, length)  # circular autocorrelation, no wrap
    k = np.arange(length)
    lag = np.abs(np.where(k < length // 2, k, k - length))  # |lag| [samples]
    keep = lag < n
    # R(τ) is even: evaluate it once per |lag| < n and spread it over ±lag
    rw_kept = np.where(keep, rw, 0.0)
    where = np.where(keep, lag, 0)
    lags_s = np.arange(n) / sample_rate_hz

    # a fit asks for the same (fₙ, ζ) again: the finite-difference Jacobian moves the
    # level, slope and floor at the same shape, and a refinement restarts where the
    # half-power estimate ended; a few recent shapes are kept (read-only, so no caller
    # can change a kept one)
    @functools.lru_cache(maxsize=16)
    def model(fn_hz: float, zeta: float) -> np.ndarray:
        c = _sdof_autocorr(lags_s, fn_hz, zeta)[where] * rw_kept
        out = np.fft.rfft(c).real[::m][: nfft // 2 + 1]
        out.flags.writeable = False
        return out

    return model


def transient_model(
    sample_rate_hz: float, window: np.ndarray, nfft: int, onset: int
) -> Callable[[float, float], np.ndarray]:
    """Periodogram of an SDOF impulse response in a windowed segment.

    Parameters
    ----------
    sample_rate_hz : float
        Sample rate [Hz].
    window : ndarray
        The window applied to the segment (length of the segment).
    nfft : int
        FFT length [samples].
    onset : int
        Sample of the segment at which the impulse arrives.

    Returns
    -------
    callable
        ``model(fn_hz, zeta)`` → power on the grid ``rfftfreq(nfft)``.
    """
    n = len(window)
    t = (np.arange(n) - onset) / sample_rate_hz
    live = t >= 0

    def model(fn_hz: float, zeta: float) -> np.ndarray:
        wn = 2.0 * math.pi * fn_hz
        wd = wn * math.sqrt(1.0 - zeta * zeta)
        h = np.where(live, np.exp(-zeta * wn * t) * np.sin(wd * t), 0.0)
        return np.abs(np.fft.rfft(h * window, nfft)) ** 2

    return model


def corrected_half_power(
    freq_hz: np.ndarray,
    power: np.ndarray,
    peak_index: int,
    model: Callable[[float, float], np.ndarray],
    rel_error: float = 0.0,
) -> HalfPower | None:
    """Half-power damping corrected for the spectral window's broadening.

    Parameters
    ----------
    freq_hz : ndarray
        Frequencies of ``power`` [Hz]; the grid the model returns.
    power : ndarray
        Measured power spectrum.
    peak_index : int
        Index of the peak bin.
    model : callable
        ``model(fn_hz, zeta)`` → modelled observation on the same grid
        (:func:`stationary_model` or :func:`transient_model`).
    rel_error : float
        Relative standard error of the measured power near the peak (e.g.
        1/√K for K averages); widens the interval.

    Returns
    -------
    HalfPower or None
        ``None`` when the measured spectrum has no half-power points.
    """
    from scipy import ndimage
    from scipy.optimize import brentq

    raw = half_power_raw(freq_hz, power, peak_index)
    if raw is None:
        return None
    # A broad peak spans many bins, each as noisy as a narrow peak's: smooth over
    # about a tenth of the half-power width, and smooth the model the same way so
    # the correction accounts for it.
    peak_hz, _top = _peak(freq_hz, power, peak_index)
    df = freq_hz[1] - freq_hz[0]
    size = int(2 * raw * peak_hz / df / 10) | 1
    if size >= 3:
        power = ndimage.uniform_filter1d(np.asarray(power, dtype=float), size, mode="nearest")
        reach = max(size, int(0.5 * raw * peak_hz / df))  # the top of the smoothed peak
        lo_s = max(0, peak_index - reach)
        peak_index = lo_s + int(np.argmax(power[lo_s:peak_index + reach + 1]))
        raw = half_power_raw(freq_hz, power, peak_index)
        if raw is None:
            return None
        peak_hz, _top = _peak(freq_hz, power, peak_index)
        base_model = model

        def model(fn: float, zeta: float) -> np.ndarray:
            return ndimage.uniform_filter1d(base_model(fn, zeta), size, mode="nearest")
    lo_i = max(0, int(np.searchsorted(freq_hz, peak_hz * 0.3)))
    hi_i = min(len(freq_hz), int(np.searchsorted(freq_hz, peak_hz * 1.8)) + 1)
    fgrid = freq_hz[lo_i:hi_i]

    def modelled(zeta: float, level: float = 0.5) -> float:
        fn = peak_hz / math.sqrt(max(1 - 2 * zeta * zeta, 1e-6))
        p = model(fn, zeta)[lo_i:hi_i]
        k = int(np.argmax(p))
        val = half_power_raw(fgrid, p, k, level)
        return float("inf") if val is None else val

    floor = modelled(ZETA_MIN)
    ceiling = modelled(ZETA_MAX)

    def invert(target: float) -> float:
        if target <= floor:
            return ZETA_MIN
        if target >= ceiling:
            return ZETA_MAX
        return float(brentq(lambda z: modelled(z) - target, ZETA_MIN, ZETA_MAX, xtol=1e-7,
                            rtol=1e-6))

    if raw < BOUND_FACTOR * floor:
        bound = invert(BOUND_FACTOR * floor)
        return HalfPower(None, 0.0, bound, raw, peak_hz, True)
    zeta = invert(raw)
    # interval: read the width at the level the peak could have had
    e = min(max(rel_error, 0.0), 0.8)
    lows, highs = [zeta * 0.95], [zeta * 1.05]
    for lev in (0.5 * (1 + e), 0.5 / (1 + e)):
        r = half_power_raw(freq_hz, power, peak_index, lev)
        if r is None:
            continue
        # the same level change applied to the model, so only the data's share counts
        scale = modelled(zeta, lev) / modelled(zeta)
        z = invert(r / scale) if math.isfinite(scale) and scale > 0 else zeta
        lows.append(z)
        highs.append(z)
    return HalfPower(zeta, min(lows), max(highs), raw, peak_hz, False)


def decay_fit(
    x: np.ndarray,
    sample_rate_hz: float,
    freq_hz: float,
    bandwidth_hz: float,
    start: int = 0,
    noise_rms: float = 0.0,
) -> DecayFit | None:
    """Damping from the decay of the band-passed free response.

    Parameters
    ----------
    x : ndarray
        A free decay (samples); the impact or release is at ``start``.
    sample_rate_hz : float
        Sample rate [Hz].
    freq_hz : float
        The mode's (damped) frequency [Hz].
    bandwidth_hz : float
        Width of the band-pass filter [Hz], centred on ``freq_hz``.
    start : int
        Sample where the free decay starts.
    noise_rms : float
        RMS of the band-passed noise (signal units); the fit stops above 3× it.

    Returns
    -------
    DecayFit or None
        ``None`` when no clean stretch of decay is found.

    Examples
    --------
    >>> fs, z, f = 4000.0, 0.02, 200.0
    >>> t = np.arange(8000) / fs
    >>> x = np.exp(-z * 2 * np.pi * f * t) * np.sin(2 * np.pi * f * np.sqrt(1 - z * z) * t)
    >>> round(decay_fit(x, fs, f, 80.0).damping, 3)
    0.02
    """
    from scipy import signal

    nyq = 0.5 * sample_rate_hz
    lo = max(freq_hz - 0.5 * bandwidth_hz, 0.02 * freq_hz)
    hi = min(freq_hz + 0.5 * bandwidth_hz, 0.95 * nyq)
    if not 0 < lo < hi:
        return None
    sos = signal.butter(2, [lo, hi], btype="bandpass", fs=sample_rate_hz, output="sos")
    y = signal.sosfiltfilt(sos, np.asarray(x, dtype=np.float64))
    env = np.abs(signal.hilbert(y))
    n = len(env)
    # filter poles decay at about 2.2 × bandwidth per second (2nd-order prototype);
    # skip six of their time constants after the envelope's maximum
    skip = int(math.ceil(6.0 / (2.2 * (hi - lo)) * sample_rate_hz))
    edge = int(math.ceil(3.0 / (2.2 * (hi - lo)) * sample_rate_hz))
    head = start + int(np.argmax(env[start:max(start + 1, n - edge)]))
    a = head + skip
    b = n - edge
    if b - a < 8:
        return None
    seg = env[a:b]
    level0 = seg[0]
    stop_level = max(3.0 * noise_rms, level0 * math.exp(-5.0), np.finfo(float).tiny)
    below = np.flatnonzero(seg < stop_level)
    end = int(below[0]) if below.size else len(seg)
    if end < 8:
        return None
    seg = seg[:end]
    t = np.arange(end) / sample_rate_hz
    logs = np.log(seg)
    slope, icpt = np.polyfit(t, logs, 1)
    resid = logs - (slope * t + icpt)
    ss = float(np.sum((logs - logs.mean()) ** 2))
    r2 = 1.0 - float(np.sum(resid**2)) / ss if ss > 0 else 0.0
    sigma = -float(slope)
    if sigma <= 0 or sigma * t[-1] < 0.5:  # less than half a neper of decay: no fit
        return None
    wd = 2.0 * math.pi * freq_hz
    zeta = sigma / math.sqrt(wd * wd + sigma * sigma)
    return DecayFit(zeta, sigma, float(t[-1]), r2)


def sdof_fit(
    x: np.ndarray,
    sample_rate_hz: float,
    freqs_hz: list[float],
    dampings: list[float],
    start: int = 0,
    max_evaluations: int | None = None,
) -> SdofFit | None:
    """Fit a sum of SDOF free decays to a free response.

    Parameters
    ----------
    x : ndarray
        Samples of one free response (signal units).
    sample_rate_hz : float
        Sample rate [Hz].
    freqs_hz : list of float
        Starting guesses of the undamped natural frequencies [Hz].
    dampings : list of float
        Starting guesses of the damping ratios.
    start : int
        First sample of the free decay (after the impact).
    max_evaluations : int, optional
        Most residual evaluations (default 30 per mode).

    Returns
    -------
    SdofFit or None
        ``None`` if the fit fails or the decay is too short.

    Examples
    --------
    >>> fs, z, f = 4000.0, 0.03, 150.0
    >>> t = np.arange(4000) / fs
    >>> x = np.exp(-z * 2 * np.pi * f * t) * np.sin(2 * np.pi * f * np.sqrt(1 - z * z) * t)
    >>> fit = sdof_fit(x, fs, [152.0], [0.05])
    >>> round(fit.freqs_hz[0], 2), round(fit.dampings[0], 4)
    (150.0, 0.03)
    """
    from scipy.optimize import least_squares

    m = len(freqs_hz)
    if m == 0:
        return None
    wn0 = 2 * math.pi * np.asarray(freqs_hz, dtype=float)
    z0 = np.clip(np.asarray(dampings, dtype=float), 1e-4, 0.5)
    sig0 = z0 * wn0
    wd0 = wn0 * np.sqrt(1 - z0**2)
    # fit until the slowest mode has decayed to e^-4, at least 4 cycles of the lowest
    span = min(4.0 / sig0.min(), 2.0)
    span = max(span, 4.0 * 2 * math.pi / wd0.min())
    n = min(len(x) - start, int(span * sample_rate_hz))
    if n < 4 * m + 8:
        return None
    stride = max(1, int(sample_rate_hz / (2.5 * wd0.max() / (2 * math.pi))))
    stride = max(stride, n // 1500, 1)
    idx = np.arange(0, n, stride)
    t = idx / sample_rate_hz
    y = np.asarray(x[start:start + n], dtype=float)[idx]
    scale = float(np.max(np.abs(y))) or 1.0
    y = y / scale

    def basis(theta: np.ndarray) -> np.ndarray:
        sig = np.exp(theta[:m])
        wd = theta[m:]
        e = np.exp(-np.outer(t, sig))
        return np.hstack([e * np.sin(np.outer(t, wd)), e * np.cos(np.outer(t, wd))])

    def resid(theta: np.ndarray) -> np.ndarray:
        phi = basis(theta)
        # einsum, not a BLAS product: on a busy machine BLAS threads spin and
        # make each of these small products a hundred times slower
        gram = np.einsum("ij,ik->jk", phi, phi)
        gram[np.diag_indices_from(gram)] *= 1.0 + 1e-10  # keeps near-equal columns solvable
        try:
            c = np.linalg.solve(gram, np.einsum("ij,i->j", phi, y))
        except np.linalg.LinAlgError:
            c, *_ = np.linalg.lstsq(phi, y, rcond=None)
        return np.einsum("ij,j->i", phi, c) - y

    theta0 = np.r_[np.log(sig0), wd0]
    lo = np.r_[np.log(1e-4 * wn0), wd0 * 0.97]
    hi = np.r_[np.log(0.5 * wn0), wd0 * 1.03]
    theta0 = np.clip(theta0, lo + 1e-9, hi - 1e-9)
    try:
        sol = least_squares(resid, theta0, bounds=(lo, hi), x_scale="jac", tr_solver="lsmr",
                            max_nfev=max_evaluations or 30 * m, xtol=1e-7, ftol=1e-7)
    except (ValueError, np.linalg.LinAlgError):
        return None
    sig = np.exp(sol.x[:m])
    wd = sol.x[m:]
    wn = np.sqrt(wd**2 + sig**2)
    ss = float(np.dot(y, y))
    r2 = 1.0 - float(np.dot(sol.fun, sol.fun)) / ss if ss > 0 else 0.0
    return SdofFit(tuple(float(w / (2 * math.pi)) for w in wn),
                   tuple(float(s / w) for s, w in zip(sig, wn)), r2, int(y.size),
                  float(np.sqrt(np.mean(sol.fun**2))) * scale)


def refine_frequency(
    freq_hz: np.ndarray,
    power: np.ndarray,
    peak_hz: float,
    zeta: float,
    model: Callable[[float, float], np.ndarray],
) -> float:
    """Natural frequency from a fit of the modelled peak plus a sloping background.

    A broad peak on the falling skirt of a neighbour is pushed away from the
    neighbour; fitting A·model(fₙ, ζ) + b₀ + b₁f over the half-power region
    (ζ held at its estimate) undoes that.

    Parameters
    ----------
    freq_hz, power : ndarray
        The measured spectrum and its frequencies [Hz] (the model's grid).
    peak_hz : float
        Frequency of the measured peak [Hz].
    zeta : float
        Damping ratio of the peak.
    model : callable
        ``model(fn_hz, zeta)`` on the same grid.

    Returns
    -------
    float
        Undamped natural frequency [Hz].
    """
    from scipy import ndimage
    from scipy.optimize import minimize_scalar

    fn0 = peak_hz / math.sqrt(max(1 - 2 * zeta * zeta, 1e-6))
    df = freq_hz[1] - freq_hz[0]
    size = int(2 * zeta * fn0 / df / 10) | 1  # as in corrected_half_power
    if size >= 3:
        power = ndimage.uniform_filter1d(np.asarray(power, dtype=float), size, mode="nearest")
        base_model = model

        def model(fn: float, z: float) -> np.ndarray:
            return ndimage.uniform_filter1d(base_model(fn, z), size, mode="nearest")

    half = max(1.5 * zeta * fn0, 2.5 * df)
    sel = np.flatnonzero((freq_hz >= peak_hz - half) & (freq_hz <= peak_hz + half))
    if sel.size < 6:
        return fn0
    f = freq_hz[sel]
    y = power[sel]
    fc = (f - peak_hz) / half

    def cost(fn: float) -> float:
        m = model(fn, zeta)[sel]
        a = np.column_stack([m, np.ones_like(f), fc])
        coef, *_ = np.linalg.lstsq(a, y, rcond=None)
        r = a @ coef - y
        if coef[0] <= 0:  # the peak must add, not subtract: a poor fit
            return 10.0 * float(y @ y)
        return float(r @ r)

    span = max(0.03 * fn0, 2 * (freq_hz[1] - freq_hz[0]))
    sol = minimize_scalar(cost, bounds=(fn0 - span, fn0 + span), method="bounded",
                          options={"xatol": 1e-4 * fn0})
    if not sol.success or sol.fun >= 10.0 * float(y @ y):
        return fn0
    return float(sol.x)
