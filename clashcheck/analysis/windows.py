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

from ..model.drive import peak_rotor_rad_s, rotor_rad_s, throttle_at_rad_s, throttle_fall_rad_s
from ..model.excitation import fold_in_zone
from ..model.modes import magnification
from ..model.rates import TWO_PI

__all__ = [
    "MAX_ALIAS_MULTIPLE",
    "SIGNIFICANCE_FLOOR",
    "LEVEL_CODES",
    "margin_band",
    "throttle_window",
    "throttle_windows",
    "windows_from_roots",
    "rotor_peak",
    "rotor_range_hz",
    "seen_interval",
    "window_levels",
    "seen_weight",
    "above_floor",
    "interval_margin",
    "peak_magnification",
    "overlaps",
]

#: Alias images are sought up to this many sample rates above the true band;
#: beyond it the search would grow without bound for absurd inputs.
MAX_ALIAS_MULTIPLE = 32

#: Default significance floor: an order can make a clash only where its
#: weight after the anti-alias filter × the single-degree-of-freedom
#: magnification M(r) reaches 1, the quasi-static response of the reference
#: line (1× rotor, weight 1, far from any mode, M = 1).  Below it the mode
#: lifts the order to less than what the strongest line gives anyway off
#: resonance.  Judgement, on the magnification of Rao §3.4; a build sets its
#: own with ``check.significance_floor``.
SIGNIFICANCE_FLOOR = 1.0

#: Window levels as codes (index into ``clashcheck.analysis.levels.VERDICTS``):
#: 0 counts for nothing (a weak order in passage), 1 ``watch``, 2 ``clash``.
LEVEL_CODES = {"clear": 0, "watch": 1, "clash": 2}


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


def throttle_windows(band_lo_hz, band_hi_hz, order, v_oc, idle, throttle_max, drive):
    """Both throttle windows where ``order`` × rotor rate lies in [band_lo, band_hi].

    With pack sag the rotor rate can peak below full throttle and fall after
    it.  Each rate below the peak is then reached on the rising side (smaller
    root, :func:`~clashcheck.model.drive.throttle_at_rad_s`) and on the
    falling side (larger root, :func:`~clashcheck.model.drive.throttle_fall_rad_s`):

    - band top below the peak: a rising window [d↑(lo), d↑(hi)] and a falling
      window [d↓(hi), d↓(lo)];
    - band holding the peak: one window [d↑(lo), d↓(lo)] over it;
    - band above the peak: no window.

    Without pack resistance there is no falling side.  Windows are clipped to
    [idle, max]; a window is empty where ``low >= high``.

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
        The other drive parameters of :func:`~clashcheck.model.drive.rotor_rad_s`.

    Returns
    -------
    (rise_low, rise_high, fall_low, fall_high)
        Window edges [fraction], broadcast over the inputs.
    """
    w_a = (band_lo_hz / order) * TWO_PI
    w_b = (band_hi_hz / order) * TWO_PI
    up_a = throttle_at_rad_s(w_a, v_oc, **drive)
    up_b = throttle_at_rad_s(w_b, v_oc, **drive)
    down_a = throttle_fall_rad_s(w_a, v_oc, **drive)
    down_b = throttle_fall_rad_s(w_b, v_oc, **drive)
    return windows_from_roots(up_a, up_b, down_a, down_b, idle, throttle_max)


def windows_from_roots(up_a, up_b, down_a, down_b, idle, throttle_max):
    """The rising and falling windows of :func:`throttle_windows` from the throttle roots of the band edges.

    Parameters
    ----------
    up_a, up_b : float or array_like
        Rising-side throttles of the band's low and high edge [fraction; ``inf`` above the peak].
    down_a, down_b : float or array_like
        Falling-side throttles of the same edges [fraction; ``inf`` where there is none].
    idle, throttle_max : float
        Throttle limits [fraction].

    Returns
    -------
    (rise_low, rise_high, fall_low, fall_high)
    """
    below = np.isfinite(up_b)
    rise_hi = np.where(below, up_b, down_a)
    fall_lo = np.where(below, down_b, np.inf)
    fall_hi = np.where(below, down_a, -np.inf)
    return (np.maximum(up_a, idle), np.minimum(rise_hi, throttle_max),
            np.maximum(fall_lo, idle), np.minimum(fall_hi, throttle_max))


def rotor_peak(v_oc, drive, throttle_max: float | None = None):
    """Peak rotor rate [Hz] and the throttle where it sits (``inf`` without one).

    Parameters
    ----------
    v_oc : float or array_like
        Open-circuit pack voltage [V].
    drive : mapping
        The other drive parameters of :func:`~clashcheck.model.drive.rotor_rad_s`.
    throttle_max : float, optional
        When given, a peak at or above this throttle is reported as none
        (``inf``), and it is computed only where it lies below: the rate at
        ``throttle_max`` is on the falling side exactly when ``throttle_max``
        lies beyond the vertex V/(2·N·R_pack·I) of the steady-state parabola
        there (derived).

    Returns
    -------
    (peak_rotor_hz, peak_throttle)
    """
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):  # vanishing R_pack: peak near inf
        if throttle_max is None:
            omega, d = peak_rotor_rad_s(v_oc, **drive)
            return omega / TWO_PI, d
        w_max = rotor_rad_s(throttle_max, v_oc, **drive)
        current = drive.get("i0", 0.0) + drive.get("kq", 0.0) * w_max**2 / drive["ke"]
        vertex = v_oc / (2.0 * drive.get("n_motors", 1) * drive.get("r_pack", 0.0) * current)
        falling = np.asarray(throttle_max > vertex)
        shape = np.broadcast(w_max, vertex).shape
        omega = np.full(shape, np.inf)
        d = np.full(shape, np.inf)
        if np.any(falling):
            where = np.broadcast_to(falling, shape)
            sub = {k: np.broadcast_to(np.asarray(x, dtype=float), shape)[where] for k, x in drive.items()}
            w_sub, d_sub = peak_rotor_rad_s(np.broadcast_to(np.asarray(v_oc, dtype=float), shape)[where], **sub)
            omega[where], d[where] = w_sub, d_sub
        d = np.where(d < throttle_max, d, np.inf)
        omega = np.where(np.isfinite(d), omega, np.inf)
        return omega / TWO_PI, d


def rotor_range_hz(t_lo, t_hi, v_oc, drive, peak):
    """Lowest and highest rotor rate [Hz] over the throttles [t_lo, t_hi].

    The ends, and the peak rate where the peak throttle lies between them.

    Parameters
    ----------
    t_lo, t_hi : float or array_like
        Throttle interval [fraction].
    v_oc : float or array_like
        Open-circuit pack voltage [V].
    drive : mapping
        The other drive parameters of :func:`~clashcheck.model.drive.rotor_rad_s`.
    peak : (peak_rotor_hz, peak_throttle)
        From :func:`rotor_peak`, broadcastable with the throttles.

    Returns
    -------
    (low_hz, high_hz)
    """
    a = rotor_rad_s(t_lo, v_oc, **drive) / TWO_PI
    b = rotor_rad_s(t_hi, v_oc, **drive) / TWO_PI
    inside = (peak[1] >= t_lo) & (peak[1] <= t_hi)
    return np.minimum(a, b), np.where(inside, peak[0], np.maximum(a, b))


def seen_interval(x_lo_hz, x_hi_hz, zone, sample_rate_hz: float):
    """The interval of true frequencies [x_lo, x_hi] as the sensor sees it.

    Zone 0 (below Nyquist) is seen as it is; in a higher zone the fold is
    linear (:func:`~clashcheck.model.excitation.fold_in_zone`).

    Parameters
    ----------
    x_lo_hz, x_hi_hz : float or array_like
        True frequencies [Hz], inside one Nyquist zone.
    zone : int or array_like of int
        That zone (0 when not aliased); broadcast with the frequencies.
    sample_rate_hz : float
        Sensor sample rate [Hz] (ignored for zone 0).

    Returns
    -------
    (low_hz, high_hz)
        Apparent interval [Hz].
    """
    if np.ndim(zone) == 0 and not zone:
        return x_lo_hz, x_hi_hz
    z = np.asarray(zone)
    a = np.where(z > 0, fold_in_zone(x_lo_hz, z, sample_rate_hz), x_lo_hz)
    b = np.where(z > 0, fold_in_zone(x_hi_hz, z, sample_rate_hz), x_hi_hz)
    return np.minimum(a, b), np.maximum(a, b)


def window_levels(low, high, order, v_oc, drive, peak, zone_lo, zone_hi, weight_seen, f_lo_hz, f_hi_hz,
                  zeta, floor, alias_zone=0, sample_rate_hz: float = 0.0):
    """The verdict rule for windows: where each lies (dwell or passage), how strong it is, its level.

    A window lies in **dwell** when it overlaps a dwell zone of its pack
    state, else in **passage**.  Its *significance* is the order's weight
    after the anti-alias filter × the peak single-degree-of-freedom
    magnification over the part that counts: the overlap with the dwell
    zone, or the whole window in passage.  Levels:

    - ``clash`` (2): significant (≥ ``floor``) inside a dwell zone;
    - ``watch`` (1): weak inside a dwell zone, or significant in passage;
    - nothing (0): weak and only in passage.

    Parameters
    ----------
    low, high : float or array_like
        Window edges [fraction]; empty where ``low >= high``.
    order : float or array_like
        Order number.
    v_oc : float or array_like
        Open-circuit pack voltage [V].
    drive : mapping
        The other drive parameters of :func:`~clashcheck.model.drive.rotor_rad_s`.
    peak : (peak_rotor_hz, peak_throttle)
        From :func:`rotor_peak`, broadcastable with ``low``.
    zone_lo, zone_hi : array_like
        Dwell zones [fraction], with a trailing zone axis that broadcasts with
        ``low[..., None]``; an unused slot has ``zone_lo > zone_hi``.
    weight_seen : float or array_like
        Weight after the anti-alias filter.
    f_lo_hz, f_hi_hz : float or array_like
        Mode range [Hz].
    zeta : float or array_like
        Damping ratio.
    floor : float
        Significance floor (:data:`SIGNIFICANCE_FLOOR` by default).
    alias_zone : int or array_like of int
        Nyquist zone of the window's true excitation (0 when not aliased),
        broadcast with ``low``.
    sample_rate_hz : float
        Sensor sample rate [Hz] for aliased windows.

    Returns
    -------
    dict of arrays
        ``in_dwell`` (bool), ``dwell_index`` (the zone with the largest
        significance), ``significance`` (in the dwell zone when it lies in
        one, else over the window), ``margin`` (smallest margin in that part
        [fraction]), ``level`` (0, 1, 2), and ``rotor_low_hz``/``rotor_high_hz``
        (the rotor-rate range over the window).
    """
    low, high = np.asarray(low, dtype=float), np.asarray(high, dtype=float)
    some = low < high

    def expand(x):
        return np.asarray(x, dtype=float)[..., None] if np.ndim(x) else x

    ov_lo = np.maximum(low[..., None], zone_lo)
    ov_hi = np.minimum(high[..., None], zone_hi)
    shape = ov_lo.shape
    n_z = shape[-1]
    # one call of the drive model for every throttle needed: window ends, then overlap ends
    throttles = np.concatenate([np.broadcast_to(low[..., None], shape[:-1] + (1,)),
                                np.broadcast_to(high[..., None], shape[:-1] + (1,)), ov_lo, ov_hi], axis=-1)
    with np.errstate(invalid="ignore"):
        rate = rotor_rad_s(throttles, expand(v_oc), **{k: expand(v) for k, v in drive.items()}) / TWO_PI
    p_hz, p_d = expand(peak[0]), expand(peak[1])

    def span(i_lo, i_hi, t_lo, t_hi):
        a, b = rate[..., i_lo], rate[..., i_hi]
        inside = (p_d >= t_lo) & (p_d <= t_hi)
        return np.minimum(a, b), np.where(inside, p_hz, np.maximum(a, b))

    in_zone = some[..., None] & (ov_lo <= ov_hi)
    n_x, zone_x = expand(order), expand(alias_zone)
    fl, fh, z = expand(f_lo_hz), expand(f_hi_hz), expand(zeta)
    with np.errstate(invalid="ignore"):
        r_lo, r_hi = span(slice(2, 2 + n_z), slice(2 + n_z, 2 + 2 * n_z), ov_lo, ov_hi)
        a, b = seen_interval(n_x * r_lo, n_x * r_hi, zone_x, sample_rate_hz)
        sig_z = np.where(in_zone, expand(weight_seen) * peak_magnification(a, b, fl, fh, z), -np.inf)
        mar_z = np.where(in_zone, interval_margin(a, b, fl, fh), np.inf)
        w_lo, w_hi = span(slice(0, 1), slice(1, 2), low[..., None], high[..., None])
        a, b = seen_interval(n_x * w_lo, n_x * w_hi, zone_x, sample_rate_hz)
        sig_win = (expand(weight_seen) * peak_magnification(a, b, fl, fh, z))[..., 0]
        mar_win = interval_margin(a, b, fl, fh)[..., 0]
    best = np.argmax(sig_z, axis=-1)
    sig_dwell = np.take_along_axis(sig_z, best[..., None], axis=-1)[..., 0]
    mar_dwell = np.take_along_axis(mar_z, best[..., None], axis=-1)[..., 0]
    in_dwell = np.any(in_zone, axis=-1)
    significance = np.where(in_dwell, sig_dwell, sig_win)
    strong = significance >= floor
    level = np.where(some, np.where(in_dwell, np.where(strong, 2, 1), np.where(strong, 1, 0)), 0)
    return {"in_dwell": in_dwell, "dwell_index": best, "significance": significance,
            "margin": np.where(in_dwell, mar_dwell, mar_win), "level": level,
            "rotor_low_hz": w_lo[..., 0], "rotor_high_hz": w_hi[..., 0]}


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
