"""Propellers: static thrust and torque from the coefficients.

T = C_T ρ n² D⁴, P = C_P ρ n³ D⁵, Q = C_Q ρ n² D⁵ with C_P = 2π C_Q and n in
rev/s (McCormick ch. 6, recalled; Houghton & Carpenter ch. 9; REFERENCES.md §5).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .rates import TWO_PI

__all__ = ["Propeller"]


@dataclass(frozen=True)
class Propeller:
    """A fixed-pitch propeller."""

    #: Diameter [m].
    diameter_m: float
    #: Blade count.
    blades: int
    #: Static thrust coefficient C_T (dimensionless); ``None`` when not given.
    thrust_coefficient: float | None = None
    #: Static power coefficient C_P (dimensionless); ``None`` when not given.
    power_coefficient: float | None = None
    #: Pitch [m]; ``None`` when not given.
    pitch_m: float | None = None
    #: Propeller mass [kg]; ``None`` when not given.
    mass_kg: float | None = None

    def __post_init__(self) -> None:
        if not (math.isfinite(self.diameter_m) and 0.01 <= self.diameter_m <= 2.0):
            raise InputError("prop.diameter", "a diameter from 10 mm to 2 m", self.diameter_m)
        if not isinstance(self.blades, int) or isinstance(self.blades, bool) or not 1 <= self.blades <= 12:
            raise InputError("prop.blades", "a blade count from 1 to 12", self.blades)
        for name, value in (
            ("thrust_coefficient", self.thrust_coefficient),
            ("power_coefficient", self.power_coefficient),
        ):
            if value is not None and not (math.isfinite(value) and 0 < value < 1):
                raise InputError(f"prop.{name}", "a coefficient between 0 and 1", value)
        if self.pitch_m is not None and not (math.isfinite(self.pitch_m) and self.pitch_m > 0):
            raise InputError("prop.pitch", "a pitch above 0 in", self.pitch_m)
        if self.mass_kg is not None and not (math.isfinite(self.mass_kg) and self.mass_kg > 0):
            raise InputError("prop.mass", "a mass above 0 g", self.mass_kg)

    def thrust_n(self, rotor_hz: np.ndarray | float, density_kg_m3: float) -> np.ndarray:
        """Static thrust T = C_T ρ n² D⁴ [N] at rotor rate ``rotor_hz`` [rev/s].

        Parameters
        ----------
        rotor_hz : float or array_like
            Rotor rate n [rev/s].
        density_kg_m3 : float
            Air density ρ [kg/m³].

        Returns
        -------
        numpy.ndarray
            Thrust [N].
        """
        if self.thrust_coefficient is None:
            raise InputError("prop.thrust_coefficient", "a static C_T for thrust", None)
        n = np.asarray(rotor_hz, dtype=float)
        return self.thrust_coefficient * density_kg_m3 * n**2 * self.diameter_m**4

    def power_w(self, rotor_hz: np.ndarray | float, density_kg_m3: float) -> np.ndarray:
        """Shaft power P = C_P ρ n³ D⁵ [W].

        Parameters
        ----------
        rotor_hz : float or array_like
            Rotor rate n [rev/s].
        density_kg_m3 : float
            Air density ρ [kg/m³].

        Returns
        -------
        numpy.ndarray
            Shaft power [W]; zero without a C_P.
        """
        return self.torque_n_m(rotor_hz, density_kg_m3) * TWO_PI * np.asarray(rotor_hz, dtype=float)

    def torque_n_m(self, rotor_hz: np.ndarray | float, density_kg_m3: float) -> np.ndarray:
        """Load torque Q = (C_P/2π) ρ n² D⁵ [N·m]; zero without a C_P.

        Parameters
        ----------
        rotor_hz : float or array_like
            Rotor rate n [rev/s].
        density_kg_m3 : float
            Air density ρ [kg/m³].

        Returns
        -------
        numpy.ndarray
            Load torque [N·m].
        """
        n = np.asarray(rotor_hz, dtype=float)
        return self.torque_coefficient(density_kg_m3) * (TWO_PI * n) ** 2

    def torque_coefficient(self, density_kg_m3: float) -> float:
        """k in Q = k·ω² [N·m·s²/rad²]: C_P ρ D⁵ / (8π³); 0 without a C_P.

        Parameters
        ----------
        density_kg_m3 : float
            Air density ρ [kg/m³].

        Returns
        -------
        float
            k [N·m·s²/rad²].
        """
        if self.power_coefficient is None:
            return 0.0
        return self.power_coefficient * density_kg_m3 * self.diameter_m**5 / (8.0 * math.pi**3)
