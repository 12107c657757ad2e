"""Brushless motors: constants and the motor's excitation orders.

Electrical frequency is poles/2 × rotor rate; six-step drive makes six
commutation events per electrical cycle, i.e. 3 × poles per revolution; the
cogging torque repeats LCM(slots, poles) times per revolution (Hanselman,
*Brushless Permanent Magnet Motor Design* 2nd ed., recalled; Zhu & Howe, IEEE
Trans. Energy Conversion 15(4) 2000; REFERENCES.md §4).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..errors import InputError
from .rates import TWO_PI

__all__ = ["Motor", "electrical_order", "commutation_order", "cogging_order"]


def electrical_order(poles: int) -> float:
    """Electrical frequency as a multiple of rotor rate: poles/2.

    Parameters
    ----------
    poles : int
        Magnet poles (even count).

    Returns
    -------
    float
        The order (dimensionless).
    """
    return poles / 2


def commutation_order(poles: int) -> float:
    """Commutation events per revolution of six-step drive: 3 × poles.

    Parameters
    ----------
    poles : int
        Magnet poles (even count).

    Returns
    -------
    float
        The order (dimensionless).
    """
    return 3.0 * poles


def cogging_order(slots: int, poles: int) -> float:
    """Cogging periods per revolution: LCM(slots, poles) (Zhu & Howe 2000).

    Parameters
    ----------
    slots : int
        Stator slots.
    poles : int
        Magnet poles.

    Returns
    -------
    float
        The order (dimensionless).

    Examples
    --------
    >>> cogging_order(12, 14)
    84.0
    """
    return float(math.lcm(int(slots), int(poles)))


@dataclass(frozen=True)
class Motor:
    """A brushless permanent-magnet motor."""

    #: Speed constant [Hz/V] (revolutions per second per volt; 1750 rpm/V = 29.17 Hz/V).
    kv_hz_per_v: float
    #: Magnet poles (even count).
    poles: int
    #: Stator slots (a multiple of 3).
    slots: int
    #: Line-to-line winding resistance [ohm]; 0 when not given.
    resistance_ohm: float = 0.0
    #: No-load current [A]; 0 when not given.
    no_load_current_a: float = 0.0
    #: Motor mass [kg]; ``None`` when not given.
    mass_kg: float | None = None

    def __post_init__(self) -> None:
        if not (math.isfinite(self.kv_hz_per_v) and self.kv_hz_per_v > 0):
            raise InputError("motor.kv", "a speed constant above 0 rpm/V", self.kv_hz_per_v)
        if not _is_count(self.poles) or self.poles <= 0 or self.poles % 2:
            raise InputError("motor.poles", "an even pole count of 2 or more", self.poles)
        if not _is_count(self.slots) or self.slots <= 0 or self.slots % 3:
            raise InputError("motor.slots", "a slot count that is a multiple of 3", self.slots)
        if not (math.isfinite(self.resistance_ohm) and self.resistance_ohm >= 0):
            raise InputError("motor.resistance", "a resistance of 0 ohm or more", self.resistance_ohm)
        if not (math.isfinite(self.no_load_current_a) and self.no_load_current_a >= 0):
            raise InputError(
                "motor.no_load_current", "a current of 0 A or more", self.no_load_current_a
            )
        if self.mass_kg is not None and not (math.isfinite(self.mass_kg) and self.mass_kg > 0):
            raise InputError("motor.mass", "a mass above 0 g", self.mass_kg)

    @property
    def ke_v_s_per_rad(self) -> float:
        """Back-EMF constant Ke = 60/(2π·Kv[rpm/V]) = 1/(2π·Kv[Hz/V]) [V·s/rad].

        Examples
        --------
        >>> round(Motor(920 / 60, 14, 12).ke_v_s_per_rad, 6)
        0.01038
        """
        return 1.0 / (TWO_PI * self.kv_hz_per_v)

    @property
    def kt_n_m_per_a(self) -> float:
        """Torque constant Kt [N·m/A]; equal to Ke in SI."""
        return self.ke_v_s_per_rad

    @property
    def electrical_order(self) -> float:
        """Electrical frequency as a multiple of rotor rate: poles/2."""
        return electrical_order(self.poles)

    @property
    def commutation_order(self) -> float:
        """Commutation events per revolution of six-step drive: 3 × poles."""
        return commutation_order(self.poles)

    @property
    def cogging_order(self) -> float:
        """Cogging periods per revolution: LCM(slots, poles).

        Examples
        --------
        >>> Motor(30.0, 14, 12).cogging_order
        84.0
        """
        return cogging_order(self.slots, self.poles)


def _is_count(value: object) -> bool:
    return isinstance(value, int) and not isinstance(value, bool)
