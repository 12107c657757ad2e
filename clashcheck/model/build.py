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

__all__ = [
    "Flight",
    "CheckSettings",
    "Build",
    "MeasuredModes",
    "ThrottleOccupancy",
    "DEFAULT_DWELL_SPREAD",
    "MEASURED_DWELL_COVERAGE",
]

#: Default half-width of a dwell zone [throttle fraction]: ±3 throttle points
#: around hover (and cruise).  Judgement: in steady hover in calm air the
#: attitude and height control move each motor's command a few percent
#: either side of the mean; gusty sites or aggressive flying call for more
#: (``flight.dwell_spread``).  On a small multirotor 3 points of throttle
#: move the rotor rate by roughly 10 %, about the width of a margin band.
DEFAULT_DWELL_SPREAD = 0.03

#: Share of flight time the measured dwell zones hold: the densest throttle
#: bands of a recording's occupancy, taken until they hold 80 % of the time.
#: Judgement: the rest is the craft passing between them.
MEASURED_DWELL_COVERAGE = 0.8


@dataclass(frozen=True)
class ThrottleOccupancy:
    """Where a recorded flight spent its time: the share of time per throttle (or rotor-rate) band.

    Written by ``clashcheck modes --kind flight`` to a modes file as
    ``[dwell]`` with ``throttle = [edges...]`` (fractions 0–1) or, when the log
    has no throttle, ``rotor_hz = [edges...]`` (Hz), and ``share = [fractions...]``.
    """

    #: Band edges, increasing, one more than shares: throttle fractions in [0, 1], or rotor rates [Hz].
    throttle: tuple[float, ...]
    #: Share of flight time in each band [fraction]; they sum to 1.
    share: tuple[float, ...]
    #: Where it came from (a file), for the report.
    source: str = ""
    #: What the edges count: ``"throttle"`` (fractions) or ``"rotor_hz"`` (rotor rate, Hz).
    quantity: str = "throttle"

    def __post_init__(self) -> None:
        edges, shares = self.throttle, self.share
        key = f"dwell.{self.quantity}"
        if self.quantity not in ("throttle", "rotor_hz"):
            raise InputError("dwell", "band edges as throttle or rotor_hz", self.quantity)
        if len(edges) < 2 or len(shares) != len(edges) - 1:
            raise InputError("dwell.share", f"one share per band ({max(len(edges) - 1, 1)})", len(shares))
        top = 1.0 if self.quantity == "throttle" else 1e5
        if any(not (math.isfinite(e) and 0.0 <= e <= top) for e in edges) or any(
            b <= a for a, b in zip(edges[:-1], edges[1:])
        ):
            raise InputError(key, f"increasing band edges from 0 to {top:g}", list(edges))
        if any(not (math.isfinite(x) and x >= 0) for x in shares) or not math.isclose(sum(shares), 1.0,
                                                                                           abs_tol=1e-3):
            raise InputError("dwell.share", "time fractions of 0 or more that sum to 1", list(shares))

    def dwell_zones(self, coverage: float = MEASURED_DWELL_COVERAGE) -> tuple[tuple[float, float], ...]:
        """The throttle bands the craft dwells in: the densest, until they hold ``coverage`` of the time.

        Bands are taken by time share per throttle width, densest first;
        adjacent chosen bands are merged.

        Parameters
        ----------
        coverage : float
            Share of flight time the zones hold [fraction].

        Returns
        -------
        tuple of (low, high)
            Intervals in the unit of the edges (throttle fraction, or rotor rate [Hz]), increasing.

        Examples
        --------
        >>> occ = ThrottleOccupancy((0.0, 0.2, 0.3, 0.4, 1.0), (0.05, 0.6, 0.25, 0.1))
        >>> occ.dwell_zones()
        ((0.2, 0.4),)
        """
        edges = self.throttle
        density = [s / (b - a) for s, a, b in zip(self.share, edges[:-1], edges[1:])]
        chosen: set[int] = set()
        held = 0.0
        for i in sorted(range(len(density)), key=lambda k: (-density[k], k)):
            if held >= coverage - 1e-12:
                break
            chosen.add(i)
            held += self.share[i]
        zones: list[tuple[float, float]] = []
        for i in sorted(chosen):
            if zones and math.isclose(zones[-1][1], edges[i]):
                zones[-1] = (zones[-1][0], edges[i + 1])
            else:
                zones.append((edges[i], edges[i + 1]))
        return tuple(zones)


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
    #: Half-width of the hover (and cruise) dwell zones [throttle fraction].
    dwell_spread: float = DEFAULT_DWELL_SPREAD
    #: Whether the craft dwells at cruise (a cruiser); otherwise it passes through it.
    cruise_dwell: bool = False
    #: Measured throttle occupancy (from a flight recording); replaces the default dwell zones.
    occupancy: ThrottleOccupancy | None = None

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
        if not (math.isfinite(self.dwell_spread) and 0.0 <= self.dwell_spread <= 0.5):
            raise InputError("flight.dwell_spread", "a spread from 0 % to 50 %", self.dwell_spread)


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
    #: Weight after the filter × magnification an order needs to make a clash
    #: (see :data:`clashcheck.analysis.windows.SIGNIFICANCE_FLOOR`).
    significance_floor: float = 1.0

    def __post_init__(self) -> None:
        if not (math.isfinite(self.significance_floor) and self.significance_floor >= 0):
            raise InputError("check.significance_floor", "a floor of 0 or more", self.significance_floor)


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
        """This build with measured modes in the place of the modes they measure.

        Each measured mode replaces the build mode it measures, by name or
        else by frequency and axis (:func:`clashcheck.model.reconcile.reconcile`);
        the others are added, so no physical mode appears twice.  Ambiguous
        matches and estimates that miss the measurement become notes, as do
        modes whose damping depends on amplitude.  Measured order strengths
        replace the default weights.

        Parameters
        ----------
        measured : MeasuredModes
            The content of a modes file.

        Returns
        -------
        Build
        """
        from .reconcile import reconcile

        rec = reconcile(self.modes, measured.modes)
        strengths = measured.order_strengths or self.check.order_strengths
        notes = [f"{len(measured.modes)} measured mode(s) merged from {measured.path}: "
                 f"{len(rec.matches)} replace build modes, {len(rec.added)} added"]
        for m in rec.matches:
            if m.measured != m.replaced:
                via = "by name" if m.how == "name" else (
                    "inside its estimated range" if m.how == "range" else "by frequency and axis")
                notes.append(f"measured '{m.measured}' replaces {m.replaced_origin} mode '{m.replaced}' "
                             f"({via}, {100 * m.difference:+.1f} %)")
        for meas, chosen, other in rec.ambiguous:
            notes.append(f"warning: '{meas}' matched '{chosen}', but '{other}' is almost as close; rename "
                         "the measured mode in the modes file to choose")
        for est, f, lo, hi, meas, fm in rec.missed:
            notes.append(f"warning: the estimate '{est}' ({f:.0f} Hz, range {lo:.0f}–{hi:.0f} Hz) misses "
                         f"the measured '{meas}' ({fm:.0f} Hz) by {100 * (fm / f - 1):+.0f} %, more than its "
                         "own range; trust the measurement")
        notes += _amplitude_notes(rec.modes, self.check.policy)
        flight = self.flight
        if measured.occupancy is not None:
            flight = replace(flight, occupancy=measured.occupancy)
            hz = measured.occupancy.quantity == "rotor_hz"
            zones = ", ".join((f"{a:.0f}–{b:.0f} Hz of rotor rate" if hz else f"{100 * a:.0f}–{100 * b:.0f} %")
                              for a, b in measured.occupancy.dwell_zones())
            notes.append(f"dwell zones measured from the flight's throttle occupancy in {measured.path}: {zones} "
                         f"(the bands holding {100 * MEASURED_DWELL_COVERAGE:.0f} % of the time), in place of "
                         "hover ± spread")
        return replace(
            self,
            modes=rec.modes,
            check=replace(self.check, order_strengths=strengths),
            flight=flight,
            notes=self.notes + tuple(notes),
        )


def _amplitude_notes(modes: tuple[Mode, ...], policy: MarginPolicy) -> list[str]:
    """Notes on modes whose damping depends on amplitude: which ζ check uses and why."""
    out = []
    for m in modes:
        basis = m.details.get("damping_basis")
        dep = m.details.get("amplitude")
        if basis is None or m.damping is None or dep is None or getattr(dep, "decay", "") == "viscous":
            continue
        at = m.details.get("damping_amplitude_rec")
        single = m.details.get("damping_single")
        lo, hi = getattr(dep, "amplitude_low", 0.0), getattr(dep, "amplitude_high", 0.0)
        where = (f"at the stated operating amplitude {at:.3g}" if basis == "operating amplitude"
                 else f"the lowest over the measured amplitude range {lo:.3g}–{hi:.3g} (at {at:.3g})")
        text = (f"'{m.name}': damping depends on amplitude ({getattr(dep, 'decay', '')} decay); check uses "
                f"ζ = {m.damping:.4f}, {where}, in the recording's units")
        if basis == "operating amplitude" and isinstance(at, float) and not lo <= at <= hi:
            text += " (outside the measured range: extrapolated)"
        if isinstance(single, float):
            text += f"; the single figure from the whole decay is {single:.4f}"
            if m.damping < 0.7 * single:
                old_sm, new_sm = policy.margin_for_damping(single), policy.margin_for_damping(m.damping)
                text += (f". The lower damping raises the amplification factor from {1 / (2 * single):.0f} "
                         f"to {1 / (2 * m.damping):.0f}")
                if float(new_sm) > float(old_sm) + 1e-4:
                    text += (f", so the required margin grows from {100 * float(old_sm):.1f} % "
                             f"to {100 * float(new_sm):.1f} %")
                else:
                    text += (f"; the required margin stays at {100 * float(new_sm):.1f} % (the policy's "
                             "largest), but a crossing rings higher")
        if basis != "operating amplitude":
            text += "; set operating_amplitude_rec in the modes file to use the damping at the amplitude seen in flight"
        out.append(text)
    return out


@dataclass(frozen=True)
class MeasuredModes:
    """The content of a modes file (``clashcheck modes --output``)."""

    #: Measured modes.
    modes: tuple[Mode, ...]
    #: Measured order strengths: (order, family, relative strength).
    order_strengths: tuple[tuple[float, str, float], ...]
    #: The file.
    path: str
    #: Measured throttle occupancy (``[dwell]``), when the file has one.
    occupancy: ThrottleOccupancy | None = None
