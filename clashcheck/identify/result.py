"""Result dataclasses of a recording analysis (no presentation here)."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from ..errors import InputError
from ..model.excitation import ORDER_FAMILIES
from ..model.modes import MODE_AXES

if TYPE_CHECKING:
    from .decay import AmplitudeDamping

__all__ = ["MeasuredMode", "OrderStrength", "ModesResult", "Dwell", "ORDER_FAMILIES", "KINDS",
           "DWELL_QUANTITIES"]

#: Kinds of recording.
KINDS = ("tap", "flight")
#: What a measured dwell is counted over: throttle (fraction 0–1) or rotor rate [Hz].
DWELL_QUANTITIES = ("throttle", "rotor_hz")


@dataclass(frozen=True)
class MeasuredMode:
    """One frame mode found in a recording."""

    #: Name, e.g. ``"mode 2"``; unique within a result.
    name: str
    #: Undamped natural frequency [Hz].
    frequency_hz: float
    #: Best estimate of the damping ratio ζ; ``None`` when only a bound is known.
    damping: float | None
    #: Lower end of the ζ interval.
    damping_low: float
    #: Upper end of the ζ interval (the bound when ``damping`` is ``None``).
    damping_high: float
    #: roll, pitch, yaw or any.
    axis: str
    #: Confidence that this is a real frame mode with these figures, 0–1.
    confidence: float
    #: How the figures were found, in words.
    method: str
    #: ζ from the half-power bandwidth (window-corrected), if found.
    damping_half_power: float | None = None
    #: ζ from the decay fit, if found (tap tests).
    damping_decay: float | None = None
    #: Height of the peak above the spectrum's noise floor [dB].
    prominence_db: float = 0.0
    #: Damping against amplitude (viscous, friction or mixed decay), tap tests only.
    amplitude_damping: "AmplitudeDamping | None" = None

    def __post_init__(self) -> None:
        if not (math.isfinite(self.frequency_hz) and self.frequency_hz > 0):
            raise InputError(f"mode {self.name!r}.frequency_hz", "a frequency above 0", self.frequency_hz)
        if self.damping is not None and not 0 < self.damping < 1:
            raise InputError(f"mode {self.name!r}.damping", "a ratio in (0, 1)", self.damping)
        if not 0 <= self.damping_low <= self.damping_high < 1:
            raise InputError(f"mode {self.name!r}.damping interval", "0 ≤ low ≤ high < 1",
                             (self.damping_low, self.damping_high))
        if self.axis not in MODE_AXES:
            raise InputError(f"mode {self.name!r}.axis", "one of " + ", ".join(MODE_AXES), self.axis)
        if not 0 <= self.confidence <= 1:
            raise InputError(f"mode {self.name!r}.confidence", "a number in [0, 1]", self.confidence)


@dataclass(frozen=True)
class OrderStrength:
    """How strongly one motor order showed in a flight recording."""

    #: Order: multiple of the rotor rate.
    order: float
    #: Family: rotor, blade, electrical, commutation, cogging or custom.
    family: str
    #: RMS amplitude relative to the strongest measured order (strongest = 1.0).
    relative_strength: float
    #: Spectral segments in which the order lay inside the analysed band.
    segments: int = 0

    def __post_init__(self) -> None:
        if self.family not in ORDER_FAMILIES:
            raise InputError("order.family", "one of " + ", ".join(ORDER_FAMILIES), self.family)
        if not (self.order > 0 and 0 <= self.relative_strength <= 1):
            raise InputError("order", "order > 0 and strength in [0, 1]",
                             (self.order, self.relative_strength))


@dataclass(frozen=True)
class Dwell:
    """Where a flight spent its time: the share of time per throttle (or rotor-rate) band."""

    #: ``"throttle"`` (band edges are fractions 0–1) or ``"rotor_hz"`` (edges in Hz).
    quantity: str
    #: Band edges, ascending (one more than ``share``).
    edges: tuple[float, ...]
    #: Share of the recording's time in each band; sums to 1.
    share: tuple[float, ...]

    def __post_init__(self) -> None:
        if self.quantity not in DWELL_QUANTITIES:
            raise InputError("dwell.quantity", "one of " + ", ".join(DWELL_QUANTITIES),
                             self.quantity)
        if len(self.edges) != len(self.share) + 1 or not self.share:
            raise InputError("dwell.edges", "one more edge than shares", len(self.edges))
        if any(b <= a for a, b in zip(self.edges, self.edges[1:])):
            raise InputError("dwell.edges", "ascending band edges", self.edges)
        if any(s < 0 for s in self.share) or not math.isclose(sum(self.share), 1.0, abs_tol=1e-6):
            raise InputError("dwell.share", "shares of time ≥ 0 summing to 1", self.share)


@dataclass(frozen=True)
class ModesResult:
    """Everything an analysis found in one recording."""

    #: The recording's file name.
    recording: str
    #: tap or flight.
    kind: str
    #: Main method, in words.
    method: str
    #: Sample rate [Hz].
    sample_rate_hz: float
    #: Usable duration [s].
    duration_s: float
    #: Frequency resolution of the spectra [Hz].
    resolution_hz: float
    #: Modes, by frequency.
    modes: tuple[MeasuredMode, ...]
    #: Measured order strengths (flight recordings), strongest first.
    orders: tuple[OrderStrength, ...] = ()
    #: One sentence per problem found or assumption made.
    warnings: tuple[str, ...] = ()
    #: Number of impacts averaged (tap) or spectral segments used (flight).
    averages: int = 0
    #: Peaks below the confidence floor: listed, but kept out of the modes by default.
    candidates: tuple[MeasuredMode, ...] = ()
    #: Measured occupancy of a flight recording (throttle or rotor-rate bands), if known.
    dwell: Dwell | None = None
    #: Onset of each impact used (tap tests) [s from the start of the analysed stretch].
    impact_times_s: tuple[float, ...] = ()
    #: What the figures show (:class:`~.views.FlightView` or :class:`~.views.TapView`); not compared.
    view: object | None = field(default=None, compare=False, repr=False)

    def __post_init__(self) -> None:
        if self.kind not in KINDS:
            raise InputError("kind", "tap or flight", self.kind)
