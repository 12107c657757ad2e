"""The brute-force reference scorer of ``pick``, shared by ``tests/test_pick.py`` and ``bench/bench_pick.py``.

For one candidate build it runs the core engine's full ``check_build`` (the
exact windows and the verdict) and computes the peak weighted response over
the operating band with scalar arithmetic, one order, mode, pack state and
Nyquist zone at a time.  It shares no code with the vectorised scorer beyond
the physics of the model layer (drive, fold, magnification).
"""

from __future__ import annotations

import math

from clashcheck.analysis.clash import check_build
from clashcheck.model.excitation import fold
from clashcheck.model.modes import magnification

__all__ = ["peak_m", "reference_score"]


def peak_m(x_lo, x_hi, mode, zeta):
    """Largest M over f in [x_lo, x_hi], f_m in the mode's range.

    M has one peak at r_p = √(1 − 2ζ²) (Rao §3.4), so the interval ends and
    r_p when it lies inside are checked.

    Parameters
    ----------
    x_lo, x_hi : float
        Excitation interval [Hz].
    mode : Mode
        The mode (its frequency range).
    zeta : float
        Damping ratio.

    Returns
    -------
    float
    """
    r_lo, r_hi = x_lo / mode.frequency_high_hz, x_hi / mode.frequency_low_hz
    r_p = math.sqrt(max(1.0 - 2.0 * zeta * zeta, 0.0))
    points = [r_lo, r_hi] + ([r_p] if r_lo <= r_p <= r_hi else [])
    return max(float(magnification(r, zeta)) for r in points)


def reference_score(cand, hover_range=(0.25, 0.50)):
    """Flags and peak weighted response of one candidate, one scalar at a time.

    Parameters
    ----------
    cand : Build
        The candidate as a build.
    hover_range : (float, float)
        Hover throttle range [fraction].

    Returns
    -------
    dict
        ``flies``, ``band_clear`` (the full check is not ``clash``),
        ``in_range``, ``response`` and ``hover`` (throttle per pack state).
    """
    result = check_build(cand)
    drive = cand.drive()
    sensor = cand.sensor
    floor = cand.check.weight_floor
    response = -math.inf
    for band in result.bands:
        if not band.flies:
            continue
        for mode in cand.modes:
            zeta, _ = cand.check.policy.damping_of(mode)
            for o in result.orders:
                x_lo = o.order * float(drive.rotor_hz(band.throttle_low, band.pack_state))
                x_hi = o.order * float(drive.rotor_hz(band.throttle_high, band.pack_state))
                response = max(response, o.weight * peak_m(x_lo, x_hi, mode, zeta))
                if sensor is None:
                    continue
                nyq = sensor.nyquist_hz
                for zone in range(max(1, int(x_lo // nyq)), int(x_hi // nyq) + 1):
                    t_lo, t_hi = max(x_lo, zone * nyq), min(x_hi, (zone + 1) * nyq)
                    w = o.weight * float(sensor.gain(t_lo))
                    if t_lo > t_hi or w < floor:
                        continue
                    a, b = sorted((fold(t_lo, sensor.sample_rate_hz), fold(t_hi, sensor.sample_rate_hz)))
                    response = max(response, w * peak_m(a, b, mode, zeta))
    hovers = [b.hover.throttle for b in result.bands]
    return {
        "flies": all(b.flies for b in result.bands),
        "band_clear": result.verdict != "clash",
        "in_range": all(hover_range[0] <= h <= hover_range[1] for h in hovers),
        "response": response if math.isfinite(response) else math.inf,
        "hover": hovers,
        "verdict": result.verdict,
    }
