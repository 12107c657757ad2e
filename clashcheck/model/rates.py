"""Rotation rates: cycles per second are the unit of record.

60 rpm is 1 Hz.  Angular speeds in rad/s appear only inside the drive
model, named ``*_rad_s``.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

__all__ = ["TWO_PI", "rpm_to_hz", "hz_to_rpm", "rad_s_to_hz", "hz_to_rad_s"]

#: Radians per revolution.
TWO_PI = 2.0 * math.pi


def rpm_to_hz(rpm: Any) -> Any:
    """Revolutions per minute to revolutions per second (Hz).

    Parameters
    ----------
    rpm : float or array_like
        Revolutions per minute.

    Returns
    -------
    float or numpy.ndarray
        Revolutions per second [Hz].

    Examples
    --------
    >>> rpm_to_hz(60.0)
    1.0
    """
    return np.asarray(rpm, dtype=float) / 60.0 if np.ndim(rpm) else float(rpm) / 60.0


def hz_to_rpm(hz: Any) -> Any:
    """Revolutions per second (Hz) to revolutions per minute.

    Parameters
    ----------
    hz : float or array_like
        Revolutions per second [Hz].

    Returns
    -------
    float or numpy.ndarray
        Revolutions per minute.

    Examples
    --------
    >>> hz_to_rpm(1.0)
    60.0
    """
    return np.asarray(hz, dtype=float) * 60.0 if np.ndim(hz) else float(hz) * 60.0


def rad_s_to_hz(omega_rad_s: Any) -> Any:
    """Angular speed in rad/s to revolutions per second (Hz).

    Parameters
    ----------
    omega_rad_s : float or array_like
        Angular speed [rad/s].

    Returns
    -------
    numpy.ndarray
        Revolutions per second [Hz].
    """
    return np.asarray(omega_rad_s, dtype=float) / TWO_PI


def hz_to_rad_s(freq_hz: Any) -> Any:
    """Revolutions per second (Hz) to angular speed in rad/s.

    Parameters
    ----------
    freq_hz : float or array_like
        Revolutions per second [Hz].

    Returns
    -------
    numpy.ndarray
        Angular speed [rad/s].
    """
    return np.asarray(freq_hz, dtype=float) * TWO_PI
