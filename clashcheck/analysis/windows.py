"""The clash-window rule, written once: scalar and array forms from the same code.

Every function here takes floats or broadcastable NumPy arrays, so the
check (:mod:`clashcheck.analysis.clash`, one mode × order × pack state at a
time), the vectorised search (:mod:`clashcheck.analysis.pick`, candidates ×
pack states × modes × orders at once) and the figures
(:mod:`clashcheck.report.campbell`) run the same arithmetic on the same numbers.

The rule, step by step:

1. **Margin band.** A mode f_m (or a range [f_lo, f_hi]) with required margin
   SM is met by excitation in [f_lo·(1 − SM), f_hi·(1 + SM)]
   (:func:`margin_band`).
2. **Alias images.** With a sensor, the band also meets true frequencies in
   each Nyquist zone whose fold lands in it
   (:func:`clashcheck.model.excitation.alias_images`, one zone at a time
   :func:`clashcheck.model.excitation.zone_image`).
3. **Throttle interval.** A true band divided by the order is a band of rotor
   rate; the closed-form inverse drive model maps it to throttle, clipped to
   [idle, max] (:func:`throttle_window`).
4. **Weight floor.** An aliased order is seen with its weight times the
   anti-alias filter's gain at the true frequency; below the floor it is left
   out (:func:`seen_weight`, :func:`above_floor`).
5. **Interval margin and peak magnification.** The smallest relative margin
   of a frequency interval from a mode's range (:func:`interval_margin`), and
   the largest single-degree-of-freedom magnification M(r) over it
   (:func:`peak_magnification`).
"""

from __future__ import annotations

import numpy as np

from ..model.drive import throttle_at_rad_s
from ..model.modes import magnification
from ..model.rates import TWO_PI

__all__ = [
    "MAX_ALIAS_MULTIPLE",
    "margin_band",
    "throttle_window",
    "seen_weight",
    "above_floor",
    "interval_margin",
    "peak_magnification",
    "overlaps",
]

#: Alias images are sought up to this many sample rates above the true band;
#: beyond it the search would grow without bound for absurd inputs.
MAX_ALIAS_MULTIPLE = 32


def margin_band(f_lo_hz, f_hi_hz, required_margin):
    """Excitation band that sits within the required margin of a mode.

    Parameters
    ----------
    f_lo_hz, f_hi_hz : float or array_like
        Lowest and highest natural frequency of the mode [Hz] (equal for a point mode).
    required_margin : float or array_like
        Required margin SM [fraction].

    Returns
    -------
    (band_lo_hz, band_hi_hz)
        f_lo·(1 − SM) and f_hi·(1 + SM) [Hz].

    Examples
    --------
    >>> margin_band(200.0, 200.0, 0.1)
    (180.0, 220.00000000000003)
    """
    return f_lo_hz * (1.0 - required_margin), f_hi_hz * (1.0 + required_margin)


def throttle_window(band_lo_hz, band_hi_hz, order, v_oc, idle, throttle_max, drive):
    """Throttle interval where ``order`` × rotor rate lies in [band_lo, band_hi].

    The band edges divided by the order are rotor rates; the closed-form
    inverse drive model (:func:`clashcheck.model.drive.throttle_at_rad_s`)
    turns them into throttles, clipped to [idle, max].  The window is empty
    where ``low >= high``.

    Parameters
    ----------
    band_lo_hz, band_hi_hz : float or array_like
        True excitation band [Hz].
    order : float or array_like
        Order number (multiple of rotor rate).
    v_oc : float or array_like
        Open-circuit pack voltage [V].
    idle, throttle_max : float
        Throttle limits [fraction].
    drive : mapping
        The other drive parameters of :func:`~clashcheck.model.drive.rotor_rad_s`
        (``ke``, ``r_m``, ``i0``, ``kq``, ``n_motors``, ``r_pack``), floats or arrays.

    Returns
    -------
    (low, high)
        Window edges [fraction], broadcast over the inputs.
    """
    d_a = throttle_at_rad_s((band_lo_hz / order) * TWO_PI, v_oc, **drive)
    d_b = throttle_at_rad_s((band_hi_hz / order) * TWO_PI, v_oc, **drive)
    return np.maximum(d_a, idle), np.minimum(d_b, throttle_max)


def seen_weight(weight, gain):
    """Weight of an order as the sensor sees it: its weight × the anti-alias gain.

    Parameters
    ----------
    weight : float or array_like
        The order's relative weight.
    gain : float or array_like
        Anti-alias filter gain at the true frequency (1 without a filter).

    Returns
    -------
    float or numpy.ndarray
        The weight after the filter.
    """
    return weight * gain


def above_floor(weight_seen, floor):
    """Whether an aliased order's weight after the filter reaches the build's floor.

    Parameters
    ----------
    weight_seen : float or array_like
        Weight after the anti-alias filter (:func:`seen_weight`).
    floor : float
        The build's ``check.weight_floor``.

    Returns
    -------
    bool or numpy.ndarray
    """
    return weight_seen >= floor


def interval_margin(x_lo_hz, x_hi_hz, f_lo_hz, f_hi_hz):
    """Smallest relative margin of a frequency interval from a mode's range.

    :func:`clashcheck.model.modes.relative_margin` over an interval: 0 when
    they overlap, else the gap relative to the nearer mode edge.

    Parameters
    ----------
    x_lo_hz, x_hi_hz : float or array_like
        Excitation interval [Hz].
    f_lo_hz, f_hi_hz : float or array_like
        Mode range [Hz].

    Returns
    -------
    float or numpy.ndarray
        Margin [fraction].

    Examples
    --------
    >>> float(interval_margin(100.0, 150.0, 200.0, 200.0))
    0.25
    """
    return np.maximum(np.maximum((f_lo_hz - x_hi_hz) / f_lo_hz, (x_lo_hz - f_hi_hz) / f_hi_hz), 0.0)


def peak_magnification(x_lo_hz, x_hi_hz, f_lo_hz, f_hi_hz, zeta):
    """Largest M(f/f_m) for f in [x_lo, x_hi] and f_m in [f_lo, f_hi].

    M(r) rises to its peak at r_p = √(1 − 2ζ²) and falls after it (one
    maximum; Rao, *Mechanical Vibrations* 5th ed. §3.4), so the largest value
    over an interval of r sits at the point of the interval nearest r_p.

    Parameters
    ----------
    x_lo_hz, x_hi_hz : float or array_like
        Excitation interval [Hz].
    f_lo_hz, f_hi_hz : float or array_like
        Mode range [Hz].
    zeta : float or array_like
        Damping ratio.

    Returns
    -------
    float or numpy.ndarray
        Peak magnification (dimensionless).

    Examples
    --------
    >>> round(float(peak_magnification(190.0, 210.0, 200.0, 200.0, 0.05)), 4)
    10.0125
    """
    r_p = np.sqrt(np.maximum(1.0 - 2.0 * zeta**2, 0.0))
    r_star = np.clip(r_p, x_lo_hz / f_hi_hz, x_hi_hz / f_lo_hz)
    return magnification(r_star, zeta)


def overlaps(a_lo, a_hi, b_lo, b_hi):
    """Whether the closed intervals [a_lo, a_hi] and [b_lo, b_hi] meet.

    Parameters
    ----------
    a_lo, a_hi, b_lo, b_hi : float or array_like
        Interval edges (any one unit).

    Returns
    -------
    bool or numpy.ndarray
    """
    return (a_lo <= b_hi) & (b_lo <= a_hi)
