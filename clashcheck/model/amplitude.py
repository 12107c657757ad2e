"""Damping that depends on amplitude: the figure ``check`` uses for such a mode.

A tap test can show that a mode's damping ratio changes with its amplitude
(:mod:`clashcheck.identify.decay`): friction in a joint gives
ζ(A) = ζ_v + D/(2πA) (REFERENCES.md §13, derived), a microslip joint a power
law ζ ∝ A^p.  ``check`` needs one ζ per mode: the one at the amplitude the
frame sees in flight when the user states it, else the most conservative
(lowest) ζ over the measured range, since less damping asks for more margin.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

__all__ = ["AmplitudeDependence", "damping_at_amplitude", "BASES"]

#: How the damping figure was chosen.
BASES = ("operating amplitude", "lowest over the measured range")


@dataclass(frozen=True)
class AmplitudeDependence:
    """A mode's measured damping against amplitude (amplitudes in the recording's units)."""

    #: ``viscous``, ``friction`` or ``mixed``.
    decay: str
    #: ``viscous``, ``friction-viscous`` or ``power-law``.
    model: str
    #: Viscous damping ratio ζ_v.
    viscous_damping: float
    #: Friction drop per cycle D [recording units].
    friction_drop_per_cycle: float
    #: Bottom and top of the measured amplitude range [recording units].
    amplitude_low: float
    amplitude_high: float
    #: ζ at the bottom and the top of that range.
    damping_at_amplitude_low: float
    damping_at_amplitude_high: float

    def damping(self, amplitude: float) -> float:
        """ζ at ``amplitude`` [recording units] under the measured model.

        Parameters
        ----------
        amplitude : float
            Amplitude, above 0 [recording units].

        Returns
        -------
        float
            Damping ratio.

        Examples
        --------
        >>> a = AmplitudeDependence("mixed", "friction-viscous", 0.01, 0.02 * math.pi, 0.1, 1.0, 0.11, 0.02)
        >>> round(a.damping(1.0), 6)
        0.02
        """
        if self.model == "power-law":
            p = math.log(self.damping_at_amplitude_high / self.damping_at_amplitude_low) / math.log(
                self.amplitude_high / self.amplitude_low)
            return self.damping_at_amplitude_low * (amplitude / self.amplitude_low) ** p
        return damping_at_amplitude(self.viscous_damping, self.friction_drop_per_cycle, amplitude)

    def lowest(self) -> tuple[float, float]:
        """(ζ, amplitude) of the lowest damping over the measured range (ζ(A) is monotonic)."""
        if self.damping_at_amplitude_low <= self.damping_at_amplitude_high:
            return self.damping_at_amplitude_low, self.amplitude_low
        return self.damping_at_amplitude_high, self.amplitude_high


def damping_at_amplitude(viscous_damping: float, friction_drop_per_cycle: float, amplitude: float) -> float:
    """ζ(A) = ζ_v + D/(2πA) of a mode with viscous and friction damping.

    Parameters
    ----------
    viscous_damping : float
        ζ_v.
    friction_drop_per_cycle : float
        D, the amplitude lost per cycle to friction [recording units].
    amplitude : float
        A, above 0 [the same units as D].

    Returns
    -------
    float
        The equivalent damping ratio at A (REFERENCES.md §13: 2F/(πkA) with D = 4F/k).

    Examples
    --------
    >>> round(damping_at_amplitude(0.01, 0.2 * math.pi, 10.0), 6)
    0.02
    """
    return float(viscous_damping + friction_drop_per_cycle / (2.0 * math.pi * amplitude))
