"""A build: one aircraft configuration, validated, in SI.

These are the plain dataclasses that :mod:`clashcheck.inputs.buildfile`
fills from a build file.  Nothing here reads text or files.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING

from ..errors import InputError
from .atmosphere import isa_density
from .battery import PACK_STATES, Pack
from .drive import Drive
from .excitation import FAMILIES, Order, Sensor, build_orders
from .modes import MarginPolicy, Mode
from .motor import Motor
from .propeller import Propeller

if TYPE_CHECKING:
    from .arm import ArmGeometry

__all__ = ["Flight", "CheckSettings", "Build", "MeasuredModes"]


@dataclass(frozen=True)
class Flight:
    """The flight envelope."""

    #: Idle throttle [fraction].
    idle: float = 0.04
    #: Maximum throttle [fraction].
    max: float = 1.0
    #: Cruise throttle, the top of the operating band [fraction].
    cruise: float = 0.6
    #: Stated hover throttle [fraction]; ``None`` to compute it from C_T.
    hover: float | None = None
    #: Field altitude, geometric [m].
    altitude_m: float = 0.0
    #: ISA temperature offset [K].
    temperature_offset_k: float = 0.0

    def __post_init__(self) -> None:
        for name in ("idle", "max", "cruise"):
            value = getattr(self, name)
            if not (math.isfinite(value) and 0.0 <= value <= 1.0):
                raise InputError(f"flight.{name}", "a throttle from 0 % to 100 %", value)
        if self.hover is not None and not (math.isfinite(self.hover) and 0.0 < self.hover <= 1.0):
            raise InputError("flight.hover", "a throttle above 0 % and up to 100 %", self.hover)
        if self.idle >= self.max:
            raise InputError("flight.idle", f"an idle below max ({100 * self.max:g} %)", f"{100 * self.idle:g} %")
        if self.idle > self.cruise:
            raise InputError(
                "flight.idle", f"an idle at or below cruise ({100 * self.cruise:g} %)", f"{100 * self.idle:g} %"
            )
        if self.cruise > self.max:
            raise InputError(
                "flight.cruise", f"a cruise at or below max ({100 * self.max:g} %)", f"{100 * self.cruise:g} %"
            )


@dataclass(frozen=True)
class CheckSettings:
    """How the check is run."""

    #: Margin policy.
    policy: MarginPolicy = field(default_factory=MarginPolicy)
    #: Pack states to check.
    pack_states: tuple[str, ...] = PACK_STATES
    #: Order families to include.
    families: tuple[str, ...] = FAMILIES
    #: Extra orders: (order, label, weight).
    custom_orders: tuple[tuple[float, str, float], ...] = ()
    #: Measured order strengths: (order, family, relative strength).
    order_strengths: tuple[tuple[float, str, float], ...] = ()
    #: Aliased windows weaker than this (after the anti-alias filter) are left out.
    weight_floor: float = 0.02


@dataclass(frozen=True)
class Build:
    """One aircraft configuration, validated, in SI."""

    #: Free-text name.
    name: str
    #: Motor count.
    motors: int
    #: All-up mass, pack included [kg].
    mass_kg: float
    #: Frame modes, after catalog and measured modes are merged.
    modes: tuple[Mode, ...]
    #: The motor.
    motor: Motor
    #: The propeller.
    prop: Propeller
    #: The pack.
    pack: Pack
    #: The flight envelope.
    flight: Flight = field(default_factory=Flight)
    #: How the check is run.
    check: CheckSettings = field(default_factory=CheckSettings)
    #: The flight sensor, when given.
    sensor: Sensor | None = None
    #: Arm geometry from ``[frame.arm]`` (see :mod:`clashcheck.arm`), when given.
    arm: "ArmGeometry | None" = None
    #: The file it came from, when it came from one.
    path: str | None = None
    #: Facts about where the inputs came from, for the report.
    notes: tuple[str, ...] = ()

    def density_kg_m3(self) -> float:
        """ISA air density at the field altitude [kg/m³]."""
        return isa_density(self.flight.altitude_m, self.flight.temperature_offset_k)

    def drive(self) -> Drive:
        """The build's drive model."""
        return Drive(self.motor, self.prop, self.pack, self.motors, self.density_kg_m3())

    def orders(self) -> tuple[Order, ...]:
        """The excitation orders the check considers."""
        return build_orders(
            self.motor, self.prop, self.check.families, self.check.custom_orders, self.check.order_strengths
        )

    def with_measured(self, measured: "MeasuredModes") -> "Build":
        """This build with measured modes merged in.

        A measured mode replaces a mode of the same name; the others are
        added.  Measured order strengths replace the default weights.
        """
        names = {m.name for m in measured.modes}
        modes = tuple(m for m in self.modes if m.name not in names) + measured.modes
        strengths = measured.order_strengths or self.check.order_strengths
        note = f"{len(measured.modes)} measured mode(s) merged from {measured.path}"
        return replace(
            self,
            modes=modes,
            check=replace(self.check, order_strengths=strengths),
            notes=self.notes + (note,),
        )


@dataclass(frozen=True)
class MeasuredModes:
    """The content of a modes file (``clashcheck modes --output``)."""

    #: Measured modes.
    modes: tuple[Mode, ...]
    #: Measured order strengths: (order, family, relative strength).
    order_strengths: tuple[tuple[float, str, float], ...]
    #: The file.
    path: str
