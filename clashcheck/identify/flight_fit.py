"""Flight damping: the single-degree-of-freedom response fitted over a band.

The half-power points of a flight spectrum are read from a few bins at the top
of the peak, so a line on the peak, a dip from a masked line or a filtered
slope moves them a long way.  Here the whole band around the peak is used:
the expected Welch periodogram of an SDOF response to broadband forcing
(:func:`~.damping.stationary_model`, the exact response seen through the same
window and FFT length) is fitted, times a level and a gentle slope, plus a
flat floor::

    P(f) = A · M(f; fₙ, ζ) · exp(s · (f − fₙ)/fₙ) + B

by nonlinear least squares on the logarithm of the power
(:func:`scipy.optimize.least_squares`).  The slope term takes up a smooth
roll-off over the band, such as an onboard low-pass filter or a
neighbouring mode's skirt (Ewins, *Modal Testing* 2nd ed. §4.3: "residual"
terms in single-mode curve fitting).

Interval
--------
The covariance of the fitted parameters is (JᵀJ)⁻¹ s² with s² the residual
variance (the Gauss–Newton estimate; Seber & Wild, *Nonlinear Regression*
§2.1).  Neighbouring bins of a zero-padded, Hann-windowed spectrum are not
independent, so the covariance is multiplied by the number of bins that share
one independent value, :data:`CORRELATED_BINS` × nfft/nperseg (Hann's
equivalent noise bandwidth is 1.5 bins; Harris 1978, Table 1).  A model
error of :data:`MODEL_ERROR` (relative, judgement: the SDOF shape is exact
only for an isolated mode) is added in quadrature.  The interval is
ζ · exp(±q·σ) on the log scale, q the normal quantile of :data:`LEVEL`.
Its coverage on generated recordings is measured by the tests
(``tests/test_identify_flight_fit.py``) and reported in the project notes.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

__all__ = ["BandFit", "fit_band", "LEVEL", "CORRELATED_BINS", "MODEL_ERROR"]

#: Nominal coverage of the damping interval.
LEVEL = 0.9
#: Bins of a Hann-windowed, unpadded spectrum that share one independent value
#: (the window's equivalent noise bandwidth; Harris 1978).
CORRELATED_BINS = 1.5
#: Relative model error of ζ added in quadrature (judgement).
MODEL_ERROR = 0.08


@dataclass(frozen=True)
class BandFit:
    """An SDOF fit over a band of a flight spectrum."""

    #: Undamped natural frequency [Hz].
    frequency_hz: float
    #: Damping ratio ζ.
    damping: float
    #: Ends of the ζ interval at :data:`LEVEL`.
    damping_low: float
    damping_high: float
    #: Standard error of ln ζ (the interval's half width / q).
    log_se: float
    #: RMS of the log residual over the band (natural log units).
    residual: float
    #: Bins fitted.
    bins: int


def fit_band(
    freq_hz: np.ndarray,
    power: np.ndarray,
    peak_hz: float,
    zeta_guess: float,
    model: Callable[[float, float], np.ndarray],
    oversample: float = 2.0,
    level: float = LEVEL,
    floor: float | None = None,
) -> BandFit | None:
    """Fit the SDOF response over the band around one peak.

    Parameters
    ----------
    freq_hz : ndarray
        Frequencies of ``power`` [Hz] (uniform grid).
    power : ndarray
        Stationary power spectrum (arbitrary scale).
    peak_hz : float
        Frequency of the peak [Hz].
    zeta_guess : float
        Starting damping ratio (e.g. the half-power estimate).
    model : callable
        ``model(fn_hz, zeta)`` → expected periodogram on ``freq_hz``
        (:func:`~.damping.stationary_model`).
    oversample : float
        FFT length / segment length (zero padding); scales the bin correlation.
    level : float
        Nominal coverage of the interval (0–1).
    floor : float, optional
        The spectrum's noise floor at the peak, same scale as ``power``; when
        given, the flat term B is held there instead of fitted (on a band a few
        half-power widths wide a fitted floor trades against the skirts).

    Returns
    -------
    BandFit or None
        ``None`` when the band holds too few bins or the fit fails.
    """
    from scipy.optimize import least_squares
    from scipy.stats import norm

    df = float(freq_hz[1] - freq_hz[0])
    z0 = float(min(max(zeta_guess, 1e-3), 0.3))
    # half a band of four half-power widths, at least 12 bins, at most 25 %
    half = min(max(4.0 * z0 * peak_hz, 12 * df), 0.25 * peak_hz)
    sel = (freq_hz >= peak_hz - half) & (freq_hz <= peak_hz + half) & (power > 0)
    f = freq_hz[sel]
    y = np.log(power[sel])
    if f.size < 10:
        return None
    i0 = int(np.searchsorted(freq_hz, f[0]))
    i1 = i0 + int(np.count_nonzero(sel[i0:]))
    if i1 - i0 != f.size:  # a gap in the band (non-positive power): fit the part that is whole
        return None
    top = float(np.max(power[sel]))
    low_floor = float(np.min(power[sel]))

    def shape(fn: float, z: float) -> np.ndarray:
        m = model(fn, z)[i0:i1]
        peak = float(np.max(m))
        return m / peak if peak > 0 else m

    def pred(theta: np.ndarray) -> np.ndarray:
        fn, z = math.exp(theta[0]), math.exp(theta[1])
        return (math.exp(theta[2]) * shape(fn, z) * np.exp(theta[3] * (f - fn) / fn)
                + math.exp(theta[4]))

    def resid(theta: np.ndarray) -> np.ndarray:
        return np.log(pred(theta)) - y

    theta0 = np.array([math.log(peak_hz), math.log(z0), math.log(top),
                       0.0, math.log(max(low_floor, top * 1e-4))])
    lo = np.array([math.log(peak_hz - half / 2), math.log(1e-4), math.log(top) - 5, -30.0,
                   math.log(top) - 20])
    hi = np.array([math.log(peak_hz + half / 2), math.log(0.5), math.log(top) + 5, 30.0,
                   math.log(top)])
    if floor is not None and floor > 0:
        fixed = math.log(min(floor, top * 0.5))
        theta0[4], lo[4], hi[4] = fixed, fixed - 1e-6, fixed + 1e-6
    theta0 = np.clip(theta0, lo + 1e-9, hi - 1e-9)
    try:
        res = least_squares(resid, theta0, bounds=(lo, hi), x_scale="jac", xtol=1e-10,
                            ftol=1e-10, max_nfev=400)
    except (ValueError, np.linalg.LinAlgError):
        return None
    if not res.success and res.status <= 0:
        return None
    r = res.fun
    p = theta0.size - (1 if floor is not None and floor > 0 else 0)
    n = r.size
    if n <= p + 2:
        return None
    s2 = float(r @ r) / (n - p)
    jac = res.jac
    try:
        cov = np.linalg.pinv(jac.T @ jac) * s2
    except np.linalg.LinAlgError:
        return None
    corr = CORRELATED_BINS * max(oversample, 1.0)
    var_lnz = max(float(cov[1, 1]), 0.0) * corr
    se = min(math.sqrt(var_lnz + MODEL_ERROR**2), 10.0)  # beyond ±e^10 nothing is known
    q = float(norm.ppf(0.5 + level / 2))
    z = math.exp(res.x[1])
    return BandFit(frequency_hz=math.exp(res.x[0]), damping=z,
                   damping_low=z * math.exp(-q * se), damping_high=min(z * math.exp(q * se), 0.99),
                   log_se=se, residual=math.sqrt(float(np.mean(r * r))), bins=int(n))
