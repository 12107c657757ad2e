"""Spectral peaks above a noise floor estimated from the data.

The floor is a smoothed lower envelope of the spectrum: at each frequency,
the 20th percentile of the log-spectrum over a window of ±40 % in frequency
(a factor 1.4 either side), so a resonance with ζ up to about 0.15 stands out
of its own floor.  Peaks are found with :func:`scipy.signal.find_peaks` on
the log-spectrum and kept when they stand a given height above the floor and
have a given prominence.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["Peak", "noise_floor", "find_modes_peaks", "FLOOR_SPAN", "FLOOR_PERCENTILE"]

#: Half-width of the floor window as a frequency ratio.
FLOOR_SPAN = 1.4
#: Percentile of the log-spectrum taken as the floor.
FLOOR_PERCENTILE = 20


@dataclass(frozen=True)
class Peak:
    """A candidate resonance peak."""

    #: Index of the peak bin.
    index: int
    #: Frequency of the peak bin [Hz].
    freq_hz: float
    #: Height above the noise (measured, else estimated floor) [dB].
    snr_db: float
    #: Prominence [dB] (scipy's definition, on the log-spectrum).
    prominence_db: float


def noise_floor(freq_hz: np.ndarray, power: np.ndarray) -> np.ndarray:
    """Noise floor of a power spectrum, estimated from the spectrum itself.

    Parameters
    ----------
    freq_hz : ndarray
        Evenly spaced frequencies [Hz], all above 0.
    power : ndarray
        Power spectrum (positive).

    Returns
    -------
    ndarray
        Floor on the same grid (same units as ``power``).
    """
    from scipy import ndimage

    f = np.asarray(freq_hz, dtype=float)
    logp = np.log10(np.maximum(power, np.finfo(float).tiny))
    lo, hi = f[0], f[-1]
    if lo <= 0 or hi <= lo:
        return np.full_like(power, float(np.median(power)))
    npts = int(min(1000, max(64, 8 * len(f))))
    lg = np.linspace(math.log(lo), math.log(hi), npts)
    vals = np.interp(lg, np.log(f), logp)
    step = lg[1] - lg[0]
    size = max(3, int(2 * math.log(FLOOR_SPAN) / step) | 1)
    floor = ndimage.percentile_filter(vals, FLOOR_PERCENTILE, size=size, mode="nearest")
    floor = ndimage.uniform_filter1d(floor, max(1, size // 4), mode="nearest")
    return 10.0 ** np.interp(np.log(f), lg, floor)


def find_modes_peaks(
    freq_hz: np.ndarray,
    power: np.ndarray,
    min_snr_db: float = 10.0,
    min_prominence_db: float = 3.0,
    min_spacing_hz: float = 0.0,
    max_peaks: int = 12,
    floor: np.ndarray | None = None,
    noise: np.ndarray | None = None,
    min_above_floor_db: float = 3.0,
) -> list[Peak]:
    """Resonance peaks of a power spectrum, strongest first.

    Parameters
    ----------
    freq_hz : ndarray
        Frequencies [Hz] (the analysed band only).
    power : ndarray
        Power spectrum.
    min_snr_db : float
        Least height above the floor [dB].
    min_prominence_db : float
        Least prominence [dB].
    min_spacing_hz : float
        Least distance between two peaks [Hz].
    max_peaks : int
        Most peaks returned.
    floor : ndarray, optional
        A floor to use instead of :func:`noise_floor`.
    noise : ndarray, optional
        A measured noise spectrum (e.g. from the quiet time before a tap test)
        on the same grid.  When given, ``min_snr_db`` is judged against it and
        a peak need only stand ``min_above_floor_db`` above the estimated floor.
    min_above_floor_db : float
        Least height above the estimated floor when ``noise`` is given [dB].

    Returns
    -------
    list of Peak
    """
    from scipy import signal

    p = np.maximum(np.asarray(power, dtype=float), np.finfo(float).tiny)
    fl = noise_floor(freq_hz, p) if floor is None else floor
    db = 10.0 * np.log10(p)
    df = freq_hz[1] - freq_hz[0]
    dist = max(1, int(min_spacing_hz / df)) if min_spacing_hz > 0 else None
    idx, props = signal.find_peaks(db, prominence=min_prominence_db, distance=dist)
    out = []
    for i, prom in zip(idx, props["prominences"]):
        above = float(db[i] - 10.0 * np.log10(fl[i]))
        if noise is not None:
            snr = float(db[i] - 10.0 * np.log10(max(noise[i], np.finfo(float).tiny)))
            ok = snr >= min_snr_db and above >= min_above_floor_db
        else:
            snr = above
            ok = snr >= min_snr_db
        if ok:
            out.append(Peak(int(i), float(freq_hz[i]), snr, float(prom)))
    out.sort(key=lambda pk: pk.snr_db, reverse=True)
    return out[:max_peaks]
