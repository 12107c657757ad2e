"""ISA troposphere density at the field altitude.

US Standard Atmosphere 1976 / ISO 2533 troposphere (REFERENCES.md §6):
T = 288.15 − 0.0065·H, p = 101325·(T/288.15)^5.25588, ρ = p/(R·T) with
R = 287.05287 J/(kg·K) and H the geopotential height.  A temperature offset
shifts the temperature at the same pressure (the usual ISA + ΔT convention).
"""

from __future__ import annotations

import math

from ..errors import InputError

__all__ = ["isa_density", "geopotential_height_m", "EARTH_RADIUS_M"]

#: Earth radius used for geopotential height [m] (US Standard Atmosphere 1976).
EARTH_RADIUS_M = 6356766.0
_T0_K = 288.15
_P0_PA = 101325.0
_LAPSE_K_PER_M = 0.0065
_R_J_KG_K = 287.05287
_EXPONENT = 5.25588
_TROPOPAUSE_M = 11000.0


def geopotential_height_m(altitude_m: float) -> float:
    """Geopotential height H = r·z/(r + z) [m] of a geometric altitude z [m].

    Parameters
    ----------
    altitude_m : float
        Geometric altitude z [m].

    Returns
    -------
    float
        Geopotential height H [m].

    Examples
    --------
    >>> round(geopotential_height_m(1000.0), 3)
    999.843
    """
    return EARTH_RADIUS_M * altitude_m / (EARTH_RADIUS_M + altitude_m)


def isa_density(
    altitude_m: float, temperature_offset_k: float = 0.0, *, geometric: bool = True
) -> float:
    """Air density [kg/m³] in the ISA troposphere.

    Parameters
    ----------
    altitude_m : float
        Field altitude [m]; geometric unless ``geometric=False``.
    temperature_offset_k : float
        ISA temperature offset ΔT [K] (hot day positive).
    geometric : bool
        Whether ``altitude_m`` is geometric (converted to geopotential).

    Examples
    --------
    >>> round(isa_density(0.0), 4)
    1.225
    >>> round(isa_density(1000.0, geometric=False), 6)
    1.111643
    """
    if not (math.isfinite(altitude_m) and -500.0 <= altitude_m <= _TROPOPAUSE_M):
        raise InputError("flight.altitude", "an altitude from -500 m to 11000 m", altitude_m)
    if not (math.isfinite(temperature_offset_k) and -80.0 <= temperature_offset_k <= 60.0):
        raise InputError(
            "flight.temperature_offset", "an offset from -80 K to 60 K", temperature_offset_k
        )
    h = geopotential_height_m(altitude_m) if geometric else altitude_m
    t_std = _T0_K - _LAPSE_K_PER_M * h
    pressure = _P0_PA * (t_std / _T0_K) ** _EXPONENT
    return pressure / (_R_J_KG_K * (t_std + temperature_offset_k))
