"""The analysis band: one check that a recording and its settings leave work to do.

Every analysis of a recording looks for modes between a lowest and a highest
frequency, at some frequency resolution.  Whether that band is usable depends
on the sample rate, which is known only once the recording is open.  An empty
band (a lowest frequency above what the sample rate can show), a resolution
finer than any spectrum this machine should compute, or an absurd sample rate
would otherwise end deep inside the spectra as an index error, a scipy error
or a huge allocation.  :func:`check_band` turns each of them into one
:class:`~clashcheck.errors.InputError` naming the library field and the usable
range, before anything is allocated.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..errors import InputError

__all__ = [
    "Band",
    "check_band",
    "USABLE_FRACTION",
    "MAX_SAMPLE_RATE_HZ",
    "MIN_SAMPLE_RATE_HZ",
    "MAX_SEGMENT_SAMPLES",
    "MIN_BAND_BINS",
]

#: Highest analysed frequency as a fraction of the sample rate (as
#: :data:`clashcheck.identify.checks.USABLE_BAND`).
USABLE_FRACTION = 0.4
#: Highest sample rate accepted [Hz]; vibration sensors and sound cards stay far below.
MAX_SAMPLE_RATE_HZ = 1.0e6
#: Lowest sample rate accepted [Hz]; below it no frame mode can show.
MIN_SAMPLE_RATE_HZ = 1.0
#: Longest spectrum segment [samples] (a 2 × zero-padded FFT of it is about
#: 32 MB per channel); sets the finest resolution at a given sample rate.
MAX_SEGMENT_SAMPLES = 1 << 20
#: Least number of frequency bins the band must hold.
MIN_BAND_BINS = 4


@dataclass(frozen=True)
class Band:
    """A usable analysis band."""

    #: Lowest frequency looked at [Hz].
    low_hz: float
    #: Highest frequency looked at [Hz].
    high_hz: float
    #: Sample rate [Hz].
    sample_rate_hz: float


def _time_hint(sample_rate_hz: float) -> str:
    if sample_rate_hz < 100.0:  # no frame mode shows below that: likely times in ms or µs
        return ("the times may be in ms or µs: state their unit (time_scale_s, "
                "on the command line --time-unit)")
    return ""


def check_band(sample_rate_hz: float, min_frequency_hz: float,
               max_frequency_hz: float | None = None,
               resolution_hz: float | None = None) -> Band:
    """Check that the analysis band is usable at this sample rate.

    Parameters
    ----------
    sample_rate_hz : float
        Sample rate of the recording [Hz].
    min_frequency_hz : float
        Lowest mode frequency looked for [Hz].
    max_frequency_hz : float or None
        Highest mode frequency looked for [Hz]; ``None`` means
        :data:`USABLE_FRACTION` × the sample rate.
    resolution_hz : float or None
        Frequency resolution asked for [Hz], or ``None`` when it is chosen
        later from the recording.

    Returns
    -------
    Band
        The band, with its top resolved.

    Raises
    ------
    InputError
        Naming ``recording.sample_rate_hz``, ``min_frequency_hz``, ``max_frequency_hz`` or
        ``resolution_hz``, with the usable range at this sample rate.

    Examples
    --------
    >>> check_band(8000.0, 20.0).high_hz
    3200.0
    >>> check_band(100.0, 50.0)
    Traceback (most recent call last):
    ...
    clashcheck.errors.InputError: min_frequency_hz: expected a frequency below 40 Hz (the usable band at 100 Hz sampling), got 50.0
    """
    fs = float(sample_rate_hz)
    if not (math.isfinite(fs) and MIN_SAMPLE_RATE_HZ <= fs <= MAX_SAMPLE_RATE_HZ):
        raise InputError("recording.sample_rate_hz", f"a sample rate from {MIN_SAMPLE_RATE_HZ:g} Hz to "
                         f"{MAX_SAMPLE_RATE_HZ:g} Hz", fs, _time_hint(fs))
    top = USABLE_FRACTION * fs
    lo = float(min_frequency_hz)
    if not (math.isfinite(lo) and 0 < lo < top):
        raise InputError("min_frequency_hz", f"a frequency below {top:g} Hz (the usable band at "
                         f"{fs:g} Hz sampling)", min_frequency_hz, _time_hint(fs))
    hi = top if max_frequency_hz is None else float(max_frequency_hz)
    if not (math.isfinite(hi) and lo < hi <= top):
        raise InputError("max_frequency_hz", f"a frequency from {lo:g} Hz to {top:g} Hz (the usable "
                         f"band at {fs:g} Hz sampling)", max_frequency_hz, _time_hint(fs))
    if resolution_hz is not None:
        res = float(resolution_hz)
        finest = fs / MAX_SEGMENT_SAMPLES
        coarsest = (hi - lo) / MIN_BAND_BINS
        if not (math.isfinite(res) and res > 0):
            raise InputError("resolution_hz", "a resolution above 0 Hz", resolution_hz)
        if res < finest or res > coarsest:
            raise InputError("resolution_hz", f"a resolution from {finest:.3g} Hz to {coarsest:.3g} Hz "
                             f"for the band {lo:g}–{hi:g} Hz at {fs:g} Hz sampling", resolution_hz)
    return Band(lo, hi, fs)
