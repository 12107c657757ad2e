"""Search candidate parts for a build's frame and rank them.

A search keeps the build's frame (its modes, motor count, flight envelope,
sensor and check settings) and varies the parts along up to four axes:

- motors: catalog motors (filtered by stator size or mass), or a Kv sweep on
  the build's own motor;
- pole counts;
- propellers from the catalog (or a list of ids);
- cell counts.

Whatever the user pins stays as the build has it.  Each candidate is the
Cartesian combination of one value per axis.

Scoring is vectorised with NumPy over candidates × pack states × modes ×
orders, reusing the closed forms of the core engine
(:func:`~clashcheck.drive.rotor_rad_s`, :func:`~clashcheck.drive.throttle_at_rad_s`,
:func:`~clashcheck.drive.hover_rotor_hz`, :func:`~clashcheck.modes.magnification`).
The clash windows are found exactly as :func:`clashcheck.clash.find_windows`
finds them (same equations on the same numbers), so a candidate's "band
clear" flag equals a full check of that candidate.  The arm modes move with
each candidate's tip mass (:mod:`clashcheck.shift`).

Ranking (lexicographic, best first):

1. the craft hovers at every pack state checked;
2. no clash at any pack state: no significant order within its margin in a dwell zone
   (the verdict rule of :func:`clashcheck.analysis.windows.window_levels`);
3. hover lies within the hover range (default 25 % to 50 %) at every pack
   state, which keeps headroom and throttle resolution;
4. the *peak weighted response*, lower first: the largest order weight × the
   single-degree-of-freedom magnification M(r) that any order reaches on any
   mode anywhere in the operating band at any pack state.  This is the worst
   margin across the band weighted by magnification: it is large where an
   order comes close to a lightly damped mode.

The yes/no hover preference goes before the continuous response figure:
placed after it, it would never decide anything.

This module is pure: it returns a :class:`PickResult` and formats nothing.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field, replace

import numpy as np

from ..errors import InputError
from ..model.build import Build
from ..model.drive import hover_rotor_hz, rotor_rad_s, throttle_at_rad_s
from ..model.excitation import build_orders, fold_in_zone, orders_for, zone_image
from ..model.motor import Motor
from ..model.propeller import Propeller
from ..model.rates import TWO_PI
from ..model.shift import RAYLEIGH_SHARE, shift_modes, tip_masses
from .clash import ClashResult, check_build
from .windows import (
    MAX_ALIAS_MULTIPLE,
    above_floor,
    interval_margin,
    margin_band,
    peak_magnification,
    rotor_peak,
    rotor_range_hz,
    seen_weight,
    throttle_windows,
    window_levels,
)

__all__ = [
    "PIN_NAMES",
    "DEFAULT_HOVER_RANGE",
    "NOTE_KINDS",
    "SearchNote",
    "MotorOption",
    "PropOption",
    "SearchSpace",
    "Scores",
    "Pick",
    "PickResult",
    "kv_variant",
    "catalog_motors",
    "catalog_props",
    "search_space",
    "candidate_build",
    "score_candidates",
    "rank",
    "pick",
]

#: What a user may pin.
PIN_NAMES = ("motor", "kv", "poles", "prop", "cells")
#: Hover throttle range that keeps headroom [fraction].
DEFAULT_HOVER_RANGE = (0.25, 0.50)
#: Candidates scored per block (bounds memory: block × states × modes × orders).
_BLOCK = 2048
#: Default propeller search: catalog props from this share of the build's diameter up to it.
_PROP_DIAMETER_SHARE = 0.8
#: Default motor search: catalog motors from half to twice the build motor's mass.
_MOTOR_MASS_WINDOW = (0.5, 2.0)
#: Kv of catalog motors matching a pinned Kv, relative [fraction].
_KV_PIN_TOLERANCE = 0.02


#: Kinds of :class:`SearchNote`.
NOTE_KINDS = ("default-search", "motor-mass-window", "catalog-motors", "kv-sweep", "prop-diameters", "pinned",
              "mass-held-with-cells", "arm-shift", "arm-not-shifted", "stated-hover-dropped")


@dataclass(frozen=True)
class SearchNote:
    """One fact about what was searched or assumed (worded by :mod:`clashcheck.report.decide`)."""

    #: One of :data:`NOTE_KINDS`.
    kind: str
    #: Figures, SI, keys with unit suffixes (``min_kg``, ``low_hz_per_v``, ``hover`` as a fraction...).
    figures: dict[str, float] = field(default_factory=dict)
    #: Names it concerns (pins; ``frame.arm`` when the arm mass comes from there).
    names: tuple[str, ...] = ()


@dataclass(frozen=True)
class MotorOption:
    """One value on the motor axis."""

    #: Short label, e.g. ``"2207-1950kv"`` or ``"Kv 1850 rpm/V"``.
    label: str
    #: The motor.
    motor: Motor
    #: ``"build"``, ``"catalog"`` or ``"kv sweep"``.
    source: str


@dataclass(frozen=True)
class PropOption:
    """One value on the propeller axis."""

    #: Short label, e.g. ``"5in-3b-mid"``.
    label: str
    #: The propeller.
    prop: Propeller
    #: ``"build"`` or ``"catalog"``.
    source: str


@dataclass(frozen=True)
class SearchSpace:
    """The axes of a search; candidates are their Cartesian product."""

    #: Motor axis.
    motors: tuple[MotorOption, ...]
    #: Propeller axis.
    props: tuple[PropOption, ...]
    #: Cell-count axis.
    cells: tuple[int, ...]
    #: Pole-count axis; empty keeps each motor's own.
    poles: tuple[int, ...] = ()
    #: Hover throttle range that keeps headroom [fraction].
    hover_range: tuple[float, float] = DEFAULT_HOVER_RANGE
    #: Mass of one cell [kg], to adjust the all-up mass with the cell count; ``None`` holds it.
    cell_mass_kg: float | None = None
    #: What was searched and assumed.
    notes: tuple[SearchNote, ...] = ()

    def __post_init__(self) -> None:
        for name, axis in (("motors", self.motors), ("props", self.props), ("cells", self.cells)):
            if not axis:
                raise InputError(name, "at least one candidate (an empty candidate set)", [])
        for n in self.cells:
            if isinstance(n, bool) or not isinstance(n, int) or not 1 <= n <= 24:
                raise InputError("cells", "cell counts from 1 to 24", n)
        for p in self.poles:
            if isinstance(p, bool) or not isinstance(p, int) or p < 2 or p % 2:
                raise InputError("poles", "even pole counts of 2 or more", p)
        low, high = self.hover_range
        if not (0.0 <= low < high <= 1.0):
            raise InputError("hover_range", "a low hover throttle below the high one, within 0 %–100 %",
                             f"{100 * low:g} %–{100 * high:g} %")
        if self.cell_mass_kg is not None and not (math.isfinite(self.cell_mass_kg) and self.cell_mass_kg > 0):
            raise InputError("cell_mass_kg", "a cell mass above 0 g", self.cell_mass_kg)

    @property
    def shape(self) -> tuple[int, int, int, int]:
        """(motors, pole counts, props, cells); a missing pole axis counts 1."""
        return (len(self.motors), max(len(self.poles), 1), len(self.props), len(self.cells))

    @property
    def size(self) -> int:
        """Number of candidates."""
        return int(np.prod(self.shape))

    def parts(self, index: int) -> tuple[Motor, Propeller, int, str]:
        """Motor (with its pole count), propeller, cell count and label of candidate ``index``."""
        if not 0 <= index < self.size:
            raise InputError("candidate", f"an index from 0 to {self.size - 1}", index)
        mi, pi, ri, ci = (int(x) for x in np.unravel_index(index, self.shape))
        m = self.motors[mi]
        motor = m.motor if not self.poles else replace(m.motor, poles=self.poles[pi])
        label = m.label + (f" · {self.poles[pi]} poles" if self.poles else "")
        label += f" · {self.props[ri].label} · {self.cells[ci]}S"
        return motor, self.props[ri].prop, self.cells[ci], label


def kv_variant(motor: Motor, kv_hz_per_v: float) -> Motor:
    """The same stator wound for another Kv.

    Resistance scales as (Kv₀/Kv)² (same stator and copper fill: turns ∝ 1/Kv,
    wire area ∝ Kv; common practice); no-load current, poles, slots and mass
    are held.

    Examples
    --------
    >>> m = kv_variant(Motor(32.5, 14, 12, 0.064), 30.0)
    >>> round(m.resistance_ohm, 6)
    0.075111
    """
    if not (math.isfinite(kv_hz_per_v) and kv_hz_per_v > 0):
        raise InputError("kv_hz_per_v", "a Kv above 0 rpm/V", kv_hz_per_v)
    scale = (motor.kv_hz_per_v / kv_hz_per_v) ** 2
    return replace(motor, kv_hz_per_v=kv_hz_per_v, resistance_ohm=motor.resistance_ohm * scale)


def catalog_motors(
    stators: Iterable[str] = (),
    max_mass_kg: float | None = None,
    kv_near_hz_per_v: float | None = None,
    poles: int | None = None,
    min_mass_kg: float | None = None,
) -> tuple[MotorOption, ...]:
    """Catalog motors, filtered.

    Parameters
    ----------
    stators : iterable of str, optional
        Keep these stator sizes (e.g. ``"2207"``); all when empty.
    max_mass_kg : float, optional
        Keep motors at most this heavy [kg] (motors without a mass are dropped).
    min_mass_kg : float, optional
        Keep motors at least this heavy [kg].
    kv_near_hz_per_v : float, optional
        Keep motors within 2 % of this Kv [Hz/V] (a pinned Kv).
    poles : int, optional
        Keep motors with this pole count (pinned poles).
    """
    from ..inputs.buildfile import parse_motor
    from ..inputs.catalog import load_catalog

    wanted = {str(s) for s in stators}
    out = []
    for ident, raw in load_catalog("motors").items():
        if wanted and str(raw.get("stator", "")) not in wanted:
            continue
        motor = parse_motor({"catalog": ident})
        if max_mass_kg is not None and (motor.mass_kg is None or motor.mass_kg > max_mass_kg):
            continue
        if min_mass_kg is not None and (motor.mass_kg is None or motor.mass_kg < min_mass_kg):
            continue
        if kv_near_hz_per_v is not None and abs(motor.kv_hz_per_v / kv_near_hz_per_v - 1) > _KV_PIN_TOLERANCE:
            continue
        if poles is not None and motor.poles != poles:
            continue
        out.append(MotorOption(ident, motor, "catalog"))
    return tuple(out)


def catalog_props(
    ids: Sequence[str] | None = None,
    min_diameter_m: float | None = None,
    max_diameter_m: float | None = None,
) -> tuple[PropOption, ...]:
    """Catalog propellers: the ``ids`` given, or all within a diameter range [m]."""
    from ..inputs.buildfile import parse_prop
    from ..inputs.catalog import entry, load_catalog

    if ids:
        for ident in ids:
            entry("props", ident, "props")  # a clear error with a "did you mean" hint
        chosen = list(dict.fromkeys(ids))
    else:
        chosen = list(load_catalog("props"))
    out = []
    for ident in chosen:
        prop = parse_prop({"catalog": ident})
        if min_diameter_m is not None and prop.diameter_m < min_diameter_m * (1 - 1e-9):
            continue
        if max_diameter_m is not None and prop.diameter_m > max_diameter_m * (1 + 1e-9):
            continue
        out.append(PropOption(ident, prop, "catalog"))
    return tuple(out)


def search_space(
    build,
    *,
    motors: str | None = None,
    stators: Sequence[str] = (),
    max_motor_mass_kg: float | None = None,
    kv_range: tuple[float, float, float] | None = None,
    poles: Sequence[int] = (),
    props: str | Sequence[str] | None = None,
    max_prop_diameter_m: float | None = None,
    cells: Sequence[int] = (),
    pins: Iterable[str] = (),
    hover_range: tuple[float, float] = DEFAULT_HOVER_RANGE,
    cell_mass_kg: float | None = None,
) -> SearchSpace:
    """The search axes for ``build``, from the user's options and pins.

    With no search option at all, catalog motors and catalog propellers that
    fit (from 80 % of the build's diameter up to ``max_prop_diameter_m``,
    default the build's own) are searched, minus whatever is pinned.  Catalog
    motors are then kept from half to twice the build motor's mass, unless
    ``stators`` or ``max_motor_mass_kg`` say otherwise.

    Parameters
    ----------
    build : Build
        The build whose frame is searched.
    motors : {"catalog"}, optional
        Search catalog motors.
    stators : sequence of str, optional
        Catalog stator sizes to keep (implies ``motors="catalog"``).
    max_motor_mass_kg : float, optional
        Heaviest catalog motor [kg] (implies ``motors="catalog"``).
    kv_range : (low, high, step), optional
        Kv sweep on the build's motor [Hz/V].
    poles : sequence of int, optional
        Pole counts to try.
    props : "catalog" or sequence of ids, optional
        Propellers to try.
    max_prop_diameter_m : float, optional
        Largest propeller that fits [m]; on its own it implies ``props="catalog"``.
    cells : sequence of int, optional
        Cell counts to try.
    pins : iterable of str, optional
        Parts kept as the build has them: ``motor``, ``kv``, ``poles``,
        ``prop``, ``cells``.
    hover_range : (float, float), optional
        Hover throttle range that keeps headroom [fraction].
    cell_mass_kg : float, optional
        Mass of one cell [kg], so the all-up mass follows the cell count.

    Raises
    ------
    InputError
        For contradictory pins (a pinned part that is also searched), an
        unknown pin, an empty Kv range, or an empty candidate set.
    """
    pins = tuple(dict.fromkeys(pins))
    for p in pins:
        if p not in PIN_NAMES:
            raise InputError("pins", "one of " + ", ".join(PIN_NAMES), p)
    catalog_wanted = motors == "catalog" or bool(stators) or max_motor_mass_kg is not None
    if props is None and max_prop_diameter_m is not None:
        props = "catalog"
    if motors not in (None, "catalog"):
        raise InputError("motors", "'catalog'", motors)
    searched = {
        "motor": catalog_wanted or kv_range is not None or bool(poles),
        "kv": catalog_wanted or kv_range is not None,
        "poles": bool(poles),
        "prop": props is not None or max_prop_diameter_m is not None,
        "cells": bool(cells),
    }
    for p in pins:
        if searched[p]:
            what = {"motor": "motors, stators, max_motor_mass_kg, kv_range or poles",
                    "kv": "motors, stators, max_motor_mass_kg or kv_range",
                    "poles": "poles", "prop": "props or max_prop_diameter_m", "cells": "cells"}[p]
            raise InputError("pins", f"a pin on a part that is not also searched ({what})", p,
                             "contradictory pins: drop the pin or the search option")
    if catalog_wanted and kv_range is not None:
        raise InputError("kv_range", "either catalog motors or a Kv sweep, not both", "both",
                         "contradictory options")
    notes: list[SearchNote] = []
    any_search = any(searched.values())
    if not any_search:
        # the default search: catalog motors and fitting catalog props, minus pins
        if "motor" not in pins:
            catalog_wanted = True
        if "prop" not in pins:
            props = "catalog"
        if not catalog_wanted and props is None:
            raise InputError("pins", "something left to search", "every part pinned",
                             "search motors, a Kv range, poles, props or cells")
        notes.append(SearchNote("default-search"))

    base = MotorOption("build motor", build.motor, "build")
    motor_axis: tuple[MotorOption, ...] = (base,)
    if catalog_wanted:
        min_mass = None
        if not stators and max_motor_mass_kg is None and build.motor.mass_kg is not None:
            min_mass, max_motor_mass_kg = (k * build.motor.mass_kg for k in _MOTOR_MASS_WINDOW)
            notes.append(SearchNote("motor-mass-window", {"min_kg": min_mass, "max_kg": max_motor_mass_kg}))
        motor_axis = catalog_motors(
            stators, max_motor_mass_kg,
            kv_near_hz_per_v=build.motor.kv_hz_per_v if "kv" in pins else None,
            poles=build.motor.poles if "poles" in pins else None,
            min_mass_kg=min_mass,
        )
        if not motor_axis:
            raise InputError("motors", "at least one catalog motor after the filters (an empty candidate set)",
                             "none", "loosen the stator, motor-mass or pin filters")
        notes.append(SearchNote("catalog-motors", {"count": float(len(motor_axis))}))
    elif kv_range is not None:
        low, high, step = kv_range
        if not (math.isfinite(low) and math.isfinite(high) and math.isfinite(step)) or step <= 0 or low <= 0:
            raise InputError("kv_range", "a Kv range above 0 rpm/V with a step above 0", kv_range)
        if high < low:
            raise InputError("kv_range", "a high Kv at or above the low one (an empty candidate set)",
                             f"{60 * high:g} rpm/V < {60 * low:g} rpm/V")
        count = int(math.floor((high - low) / step * (1 + 1e-12))) + 1
        if count > 1_000_000:
            raise InputError("kv_range", "at most 1000000 Kv values", count)
        kvs = low + step * np.arange(count)
        motor_axis = tuple(MotorOption(f"Kv {60 * kv:.0f} rpm/V", kv_variant(build.motor, float(kv)), "kv sweep")
                           for kv in kvs)
        notes.append(SearchNote("kv-sweep", {"low_hz_per_v": float(low), "high_hz_per_v": float(kvs[-1]),
                                             "step_hz_per_v": float(step)}))
    prop_axis: tuple[PropOption, ...] = (PropOption("build prop", build.prop, "build"),)
    if props is not None:
        top = max_prop_diameter_m if max_prop_diameter_m is not None else build.prop.diameter_m
        if props == "catalog":
            prop_axis = catalog_props(None, _PROP_DIAMETER_SHARE * build.prop.diameter_m, top)
            notes.append(SearchNote("prop-diameters", {"min_m": _PROP_DIAMETER_SHARE * build.prop.diameter_m,
                                                       "max_m": float(top)}))
        else:
            prop_axis = catalog_props(list(props), None, max_prop_diameter_m)
        if not prop_axis:
            raise InputError("props", "at least one propeller that fits (an empty candidate set)", "none",
                             "raise the largest diameter or name the props")
    cell_axis = tuple(int(c) for c in dict.fromkeys(cells)) if cells else (build.pack.cells,)
    pole_axis = tuple(int(p) for p in dict.fromkeys(poles))
    if pins:
        notes.append(SearchNote("pinned", names=tuple(pins)))
    if cells and cell_mass_kg is None:
        notes.append(SearchNote("mass-held-with-cells"))
    low_high = (float(hover_range[0]), float(hover_range[1]))
    return SearchSpace(motor_axis, prop_axis, cell_axis, pole_axis, low_high, cell_mass_kg, tuple(notes))


# ---------------------------------------------------------------------------
# One candidate as a Build (for the full check of the top picks and for tests)


def candidate_build(build, space: SearchSpace, index: int):
    """Candidate ``index`` as a :class:`~clashcheck.build.Build`.

    The all-up mass follows the change in motor and propeller mass (× the
    motor count) when all four masses are known, and the cell count when
    ``space.cell_mass_kg`` is given.  Arm modes are shifted for the new tip
    mass (:func:`clashcheck.shift.shift_modes`).  A hover throttle stated in
    the build belongs to its own parts, so it is dropped when the candidate's
    propeller has a C_T (hover is then computed).
    """
    motor, prop, cells, label = space.parts(index)
    mass = build.mass_kg
    parts0 = _parts_mass(build.motor.mass_kg, build.prop.mass_kg)
    parts1 = _parts_mass(motor.mass_kg, prop.mass_kg)
    if parts0 is not None and parts1 is not None:
        mass = mass + build.motors * (parts1 - parts0)
    if space.cell_mass_kg is not None:
        mass = mass + (cells - build.pack.cells) * space.cell_mass_kg
    if not mass > 0:
        raise InputError("frame.mass", f"a positive all-up mass for candidate {label}", mass)
    modes, _shift = shift_modes(build, motor.mass_kg, prop.mass_kg)
    flight = build.flight
    if flight.hover is not None and prop.thrust_coefficient is not None:
        flight = replace(flight, hover=None)
    return replace(
        build,
        name=f"{build.name} with {label}",
        motor=motor,
        prop=prop,
        pack=replace(build.pack, cells=cells),
        mass_kg=mass,
        modes=tuple(modes),
        flight=flight,
    )


def _parts_mass(motor_kg, prop_kg):
    if motor_kg is None or prop_kg is None:
        return None
    return motor_kg + prop_kg


# ---------------------------------------------------------------------------
# Vectorised scoring


@dataclass(frozen=True)
class Scores:
    """Per-candidate figures, arrays over the candidate index."""

    #: Hovers at every pack state (or hover unknown, band from idle).
    flies: np.ndarray
    #: No clash-level window (a significant order in a dwell zone) at any pack state.
    band_clear: np.ndarray
    #: Hover within the hover range at every pack state.
    hover_in_range: np.ndarray
    #: Peak weighted response over the operating band (order weight × M(r)), over the pack
    #: states where it flies; ``inf`` when it flies at none.
    response: np.ndarray
    #: Smallest margin of any order from any mode across the operating band [fraction].
    worst_margin: np.ndarray
    #: Hover throttle per pack state [fraction] (candidates × states; ``nan`` unknown, > 1 unreachable).
    hover_throttle: np.ndarray
    #: Number of clash-level windows (significant, in a dwell zone; direct and aliased).
    clash_count: np.ndarray
    #: All-up mass [kg].
    mass_kg: np.ndarray
    #: Arm-mode frequency ratio (1 when not shifted).
    mode_ratio: np.ndarray
    #: Where the peak response sits: (pack state, mode, order, aliased) indices.
    response_at: np.ndarray
    #: Where the worst margin sits: (pack state, mode, order, aliased) indices.
    margin_at: np.ndarray
    #: Pack states, in column order.
    pack_states: tuple[str, ...]


class _Axes:
    """Per-candidate parameter arrays of a search space."""

    def __init__(self, build, space: SearchSpace) -> None:
        shape = space.shape
        n = space.size
        mi, pi, ri, ci = np.unravel_index(np.arange(n), shape)
        motors = [o.motor for o in space.motors]
        props = [o.prop for o in space.props]
        nan = math.nan
        self.kv = np.array([m.kv_hz_per_v for m in motors])[mi]
        self.r_m = np.array([m.resistance_ohm for m in motors])[mi]
        self.i0 = np.array([m.no_load_current_a for m in motors])[mi]
        self.motor_mass = np.array([nan if m.mass_kg is None else m.mass_kg for m in motors])[mi]
        self.diameter = np.array([p.diameter_m for p in props])[ri]
        self.ct = np.array([nan if p.thrust_coefficient is None else p.thrust_coefficient for p in props])[ri]
        self.cp = np.array([nan if p.power_coefficient is None else p.power_coefficient for p in props])[ri]
        self.prop_mass = np.array([nan if p.mass_kg is None else p.mass_kg for p in props])[ri]
        self.cells = np.array(space.cells)[ci]
        # orders depend on (poles, slots, blades): one row per distinct combination
        pole_of = np.array([m.poles for m in motors])[mi] if not space.poles else np.array(space.poles)[pi]
        slots_of = np.array([m.slots for m in motors])[mi]
        blades_of = np.array([p.blades for p in props])[ri]
        combos, self.combo = np.unique(np.stack([pole_of, slots_of, blades_of], axis=1), axis=0,
                                       return_inverse=True)
        self.combo = self.combo.reshape(-1)
        rows = []
        for poles, slots, blades in combos:
            rows.append(orders_for(int(blades), int(poles), int(slots), build.check.families,
                                   build.check.custom_orders, build.check.order_strengths))
        self.order_rows = rows
        # rows differ in length where two families give one order (2-blade props): pad, with a mask
        width = max(len(r) for r in rows)
        self.order_numbers = np.array([[o.order for o in r] + [1.0] * (width - len(r)) for r in rows])
        self.order_weights = np.array([[o.weight for o in r] + [0.0] * (width - len(r)) for r in rows])
        self.order_present = np.array([[True] * len(r) + [False] * (width - len(r)) for r in rows])


def score_candidates(build, space: SearchSpace, *, block: int = _BLOCK) -> Scores:
    """Score every candidate of ``space`` for ``build``'s frame (vectorised).

    Parameters
    ----------
    build : Build
        The base build: frame, modes, envelope, sensor and check settings.
    space : SearchSpace
        The candidates.
    block : int, optional
        Candidates per block; bounds memory, not the result.

    Returns
    -------
    Scores
    """
    ax = _Axes(build, space)
    n = space.size
    states = tuple(build.check.pack_states)
    policy = build.check.policy
    fl = build.flight
    rho = build.density_kg_m3()
    volts = np.array([build.pack.chemistry.cell_voltage(s) for s in states])
    modes = build.modes
    f_lo0 = np.array([m.frequency_low_hz for m in modes])
    f_hi0 = np.array([m.frequency_high_hz for m in modes])
    zeta_known = np.array([m.damping is not None for m in modes])
    zeta0 = np.array([policy.default_damping if m.damping is None else m.damping for m in modes])
    arm = np.array([m.kind == "arm" for m in modes])

    # masses and the arm-mode shift (same arithmetic as candidate_build / shift_modes)
    parts0 = _parts_mass(build.motor.mass_kg, build.prop.mass_kg)
    parts1 = ax.motor_mass + ax.prop_mass
    known = np.isfinite(parts1) & (parts0 is not None)
    mass = np.full(n, build.mass_kg)
    ratio = np.ones(n)
    if parts0 is not None:
        mass = np.where(known, build.mass_kg + build.motors * (parts1 - parts0), build.mass_kg)
        old_tip, _new, arm_mass, _src = tip_masses(build, build.motor.mass_kg, build.prop.mass_kg)
        new_tip = old_tip + (parts1 - parts0)
        with np.errstate(invalid="ignore"):
            ratio = np.where(known, np.sqrt((old_tip + RAYLEIGH_SHARE * arm_mass)
                                            / (new_tip + RAYLEIGH_SHARE * arm_mass)), 1.0)
    if space.cell_mass_kg is not None:
        mass = mass + (ax.cells - build.pack.cells) * space.cell_mass_kg
    if np.any(~(mass > 0)):
        raise InputError("frame.mass", "a positive all-up mass for every candidate", float(np.min(mass)))
    shifted = known[:, None] & arm[None, :]

    stated = fl.hover
    sensor = build.sensor
    floor = build.check.weight_floor
    sig_floor = build.check.significance_floor
    out = {k: np.empty(n, dtype=dt) for k, dt in (
        ("flies", bool), ("band_clear", bool), ("in_range", bool), ("response", float),
        ("worst_margin", float), ("clash_count", np.int64))}
    hover_all = np.empty((n, len(states)))
    response_at = np.zeros((n, 4), dtype=np.int64)
    margin_at = np.zeros((n, 4), dtype=np.int64)

    for start in range(0, n, block):
        sl = slice(start, min(start + block, n))
        c = sl.stop - sl.start
        # drive parameters, shaped (candidate, state, mode, order) by broadcasting
        v = (ax.cells[sl, None] * volts[None, :])[:, :, None, None]
        ke = (1.0 / (TWO_PI * ax.kv[sl]))[:, None, None, None]
        r_m = ax.r_m[sl][:, None, None, None]
        i0 = ax.i0[sl][:, None, None, None]
        cp = ax.cp[sl]
        kq = np.where(np.isfinite(cp), cp * rho * ax.diameter[sl] ** 5 / (8.0 * math.pi**3), 0.0)
        kq = kq[:, None, None, None]
        r_pack = (ax.cells[sl] * build.pack.cell_resistance_ohm)[:, None, None, None]
        drive = dict(ke=ke, r_m=r_m, i0=i0, kq=kq, n_motors=build.motors, r_pack=r_pack)

        # hover and operating band per (candidate, state)
        ct = ax.ct[sl]
        has_ct = np.isfinite(ct)
        with np.errstate(invalid="ignore"):
            n_hover = hover_rotor_hz(mass[sl], build.motors, ct, rho, ax.diameter[sl])
        d_hover = throttle_at_rad_s((n_hover * TWO_PI)[:, None, None, None], v, **drive)[:, :, 0, 0]
        if stated is not None:
            d_hover = np.where(has_ct[:, None], d_hover, stated)
            known_hover = np.ones((c, 1), dtype=bool)
        else:
            known_hover = has_ct[:, None]
        d_hover = np.where(known_hover, d_hover, math.nan)
        can = np.isfinite(d_hover) & (d_hover <= 1.0)
        band_lo = np.where(~known_hover, fl.idle, np.where(can, d_hover, math.nan))
        band_hi = np.maximum(fl.cruise, band_lo)
        flies_s = ~np.isnan(band_lo)
        hover_all[sl] = d_hover
        low_h, high_h = space.hover_range
        in_range = np.all(known_hover & can & (d_hover >= low_h) & (d_hover <= high_h), axis=1)

        # modes per candidate: shifted frequency and damping, required margin
        rat = np.where(shifted[sl], ratio[sl, None], 1.0)
        f_lo = f_lo0[None, :] * rat
        f_hi = f_hi0[None, :] * rat
        zeta = np.where(zeta_known[None, :], zeta0[None, :] * rat, zeta0[None, :])
        sm = policy.margin_for_damping(zeta)
        band_f_lo, band_f_hi = margin_band(f_lo, f_hi, sm)
        order = ax.order_numbers[ax.combo[sl]]          # (c, K)
        weight = ax.order_weights[ax.combo[sl]]
        present = ax.order_present[ax.combo[sl]]        # (c, K): False where a row is padded
        p4 = present[:, None, None, :]
        o4 = order[:, None, None, :]
        fly4 = flies_s[:, :, None, None]

        # dwell zones per (candidate, state), as clash.operating_bands: (c, S, Z)
        zone_lo, zone_hi = _dwell_zones(fl, d_hover, known_hover, can, band_lo, band_hi, v, drive)
        peak = rotor_peak(v, drive, fl.max)                           # (c, S, 1, 1) each

        # direct windows, as clash.find_windows: band edges → throttle on both sides of any
        # rotor-rate peak, clipped to [idle, max]; a clash is a significant window in a dwell zone
        ok = p4 & fly4 & (band_f_hi > band_f_lo)[:, None, :, None]
        clash_count = np.zeros(c, dtype=np.int64)
        for low, high in _pairs(throttle_windows(band_f_lo[:, None, :, None], band_f_hi[:, None, :, None], o4,
                                                 v, fl.idle, fl.max, drive)):
            clash_count += _clash_count(ok & (low < high), low, high, o4, v, drive, peak,
                                        zone_lo[:, :, None, None, :], zone_hi[:, :, None, None, :],
                                        weight[:, None, None, :], f_lo[:, None, :, None], f_hi[:, None, :, None],
                                        zeta[:, None, :, None], sig_floor, c)

        # excitation over the operating band (true frequency) and its peak response
        rotor_lo = rotor_rad_s(band_lo[:, :, None, None], v, **drive) / TWO_PI
        rotor_hi = rotor_rad_s(band_hi[:, :, None, None], v, **drive) / TWO_PI
        x_lo = (o4 * rotor_lo)[:, :, 0, :]                 # (c, S, K)
        x_hi = (o4 * rotor_hi)[:, :, 0, :]
        fl4, fh4, z4 = f_lo[:, None, :, None], f_hi[:, None, :, None], zeta[:, None, :, None]
        with np.errstate(invalid="ignore"):
            resp = weight[:, None, None, :] * peak_magnification(
                x_lo[:, :, None, :], x_hi[:, :, None, :], fl4, fh4, z4)
            marg = interval_margin(x_lo[:, :, None, :], x_hi[:, :, None, :], fl4, fh4)
        resp = np.where(fly4 & p4, resp, -np.inf)
        marg = np.where(fly4 & p4, marg, np.inf)
        flat_r = resp.reshape(c, -1)
        flat_m = marg.reshape(c, -1)
        best_r = np.argmax(flat_r, axis=1)
        best_m = np.argmin(flat_m, axis=1)
        response = flat_r[np.arange(c), best_r]
        worst = flat_m[np.arange(c), best_m]
        s_m_k = np.array(np.unravel_index(best_r, resp.shape[1:])).T
        r_at = np.concatenate([s_m_k, np.zeros((c, 1), dtype=np.int64)], axis=1)
        s_m_k = np.array(np.unravel_index(best_m, marg.shape[1:])).T
        m_at = np.concatenate([s_m_k, np.zeros((c, 1), dtype=np.int64)], axis=1)

        if sensor is not None:
            top_rotor = rotor_range_hz(fl.idle, fl.max, v, drive, peak)[1][:, :, 0, 0]   # (c, S)
            alias = _aliased(sensor, floor, order, weight, present, top_rotor, x_lo, x_hi, band_lo, band_hi,
                             flies_s, band_f_lo, band_f_hi, f_lo, f_hi, zeta, v, drive, fl,
                             (zone_lo, zone_hi, peak, sig_floor))
            clash_count = clash_count + alias["touch_count"]
            better = alias["response"] > response
            response = np.where(better, alias["response"], response)
            r_at = np.where(better[:, None], alias["response_at"], r_at)
            lower = alias["margin"] < worst
            worst = np.where(lower, alias["margin"], worst)
            m_at = np.where(lower[:, None], alias["margin_at"], m_at)

        flies = np.all(flies_s, axis=1)
        out["flies"][sl] = flies
        out["band_clear"][sl] = clash_count == 0
        out["in_range"][sl] = in_range
        out["response"][sl] = np.where(np.isfinite(response), response, np.inf)
        out["worst_margin"][sl] = worst
        out["clash_count"][sl] = clash_count
        response_at[sl] = r_at
        margin_at[sl] = m_at

    return Scores(
        flies=out["flies"], band_clear=out["band_clear"], hover_in_range=out["in_range"],
        response=out["response"], worst_margin=out["worst_margin"], hover_throttle=hover_all,
        clash_count=out["clash_count"], mass_kg=mass, mode_ratio=ratio,
        response_at=response_at, margin_at=margin_at, pack_states=states,
    )


def _clash_count(mask, low, high, order, v, drive, peak, zone_lo, zone_hi, weight, f_lo, f_hi, zeta, sig_floor,
                 n_candidates):
    """Clash-level windows per candidate, by :func:`~clashcheck.analysis.windows.window_levels` on the
    windows that exist only (``mask``, candidate axis first); the other arguments broadcast with ``low``."""
    idx = np.nonzero(mask)
    if idx[0].size == 0:
        return np.zeros(n_candidates, dtype=np.int64)
    shape = mask.shape

    def pick_out(x):
        return np.broadcast_to(np.asarray(x, dtype=float), shape)[idx] if np.ndim(x) else x

    zshape = shape + (np.shape(zone_lo)[-1],)
    rule = window_levels(pick_out(low), pick_out(high), pick_out(order), pick_out(v),
                         {k: pick_out(x) for k, x in drive.items()}, (pick_out(peak[0]), pick_out(peak[1])),
                         np.broadcast_to(zone_lo, zshape)[idx], np.broadcast_to(zone_hi, zshape)[idx],
                         pick_out(weight), pick_out(f_lo), pick_out(f_hi), pick_out(zeta), sig_floor)
    return np.bincount(idx[0][rule["level"] == 2], minlength=n_candidates).astype(np.int64)


def _pairs(windows):
    """The (low, high) pairs of :func:`~clashcheck.analysis.windows.throttle_windows`: rising, falling."""
    rise_lo, rise_hi, fall_lo, fall_hi = windows
    return ((rise_lo, rise_hi), (fall_lo, fall_hi))


def _dwell_zones(fl, d_hover, known_hover, can, band_lo, band_hi, v, drive):
    """Dwell zones per (candidate, state) as :func:`clashcheck.analysis.clash.operating_bands` sets them.

    Returns (zone_lo, zone_hi), each (c, S, Z); an unused slot has low > high.
    """
    c, n_states = d_hover.shape
    flies = ~np.isnan(band_lo)
    if fl.occupancy is not None and fl.occupancy.quantity == "rotor_hz":
        zones = np.array(fl.occupancy.dwell_zones(), dtype=float)                    # (Z, 2) [Hz]
        v_z = v[:, :, 0, 0][:, :, None]
        d_x = {k: (np.asarray(x)[:, 0, 0, 0][:, None, None] if np.ndim(x) else x) for k, x in drive.items()}
        with np.errstate(invalid="ignore"):
            lo_d = throttle_at_rad_s(zones[:, 0] * TWO_PI, v_z, **d_x)
            hi_d = throttle_at_rad_s(zones[:, 1] * TWO_PI, v_z, **d_x)
        zone_lo = np.maximum(fl.idle, np.minimum(lo_d, fl.max))
        zone_hi = np.minimum(fl.max, hi_d)
    elif fl.occupancy is not None:
        zones = fl.occupancy.dwell_zones()
        lo = np.array([max(fl.idle, a) for a, _b in zones])
        hi = np.array([min(fl.max, b) for _a, b in zones])
        zone_lo = np.broadcast_to(lo, (c, n_states, lo.size)).copy()
        zone_hi = np.broadcast_to(hi, (c, n_states, hi.size)).copy()
    else:
        known = np.broadcast_to(known_hover, (c, n_states))
        with np.errstate(invalid="ignore"):
            hover_lo = np.where(known, np.maximum(fl.idle, d_hover - fl.dwell_spread), band_lo)
            hover_hi = np.where(known, np.minimum(fl.max, d_hover + fl.dwell_spread), band_hi)
        slots_lo, slots_hi = [hover_lo], [hover_hi]
        if fl.cruise_dwell:
            slots_lo.append(np.full((c, n_states), max(fl.idle, fl.cruise - fl.dwell_spread)))
            slots_hi.append(np.full((c, n_states), min(fl.max, fl.cruise + fl.dwell_spread)))
        zone_lo, zone_hi = np.stack(slots_lo, axis=-1), np.stack(slots_hi, axis=-1)
    empty = ~(flies & (~np.broadcast_to(known_hover, (c, n_states)) | can))[:, :, None]
    zone_lo = np.where(empty | np.isnan(zone_lo), 1.0, zone_lo)
    zone_hi = np.where(empty | np.isnan(zone_hi), 0.0, zone_hi)
    return zone_lo, zone_hi


def _aliased(sensor, floor, order, weight, present, top_rotor, x_lo, x_hi, band_lo, band_hi, flies_s,
             band_f_lo, band_f_hi, f_lo, f_hi, zeta, v, drive, fl, dwell):
    """Aliased clash windows touching the band, and the aliased response, for one block.

    Works on the sparse set of (candidate, state, order, Nyquist zone) pieces
    where the operating band reaches the zone and the order's weight after the
    anti-alias filter can reach the floor; for each piece and mode the alias
    image of the mode's band in that zone is mapped to throttle exactly as
    :func:`clashcheck.clash.find_windows` does.
    """
    fs = sensor.sample_rate_hz
    nyq = sensor.nyquist_hz
    zone_lo, zone_hi, peak, sig_floor = dwell
    c, n_states, n_orders = x_lo.shape
    # excitation over the dwell zones (with the peak rate where a zone holds it), for reach
    used = zone_lo <= zone_hi
    z_a = np.min(np.where(used, zone_lo, np.inf), axis=-1)
    z_b = np.max(np.where(used, zone_hi, -np.inf), axis=-1)
    any_zone = np.isfinite(z_a)
    with np.errstate(invalid="ignore"):
        r_a, r_b = rotor_range_hz(np.where(any_zone, z_a, fl.idle)[:, :, None, None],
                                  np.where(any_zone, z_b, fl.idle)[:, :, None, None], v, drive, peak)
    dw_lo = np.where(any_zone[:, :, None], order[:, None, :] * r_a[:, :, 0, :], np.inf)      # (c, S, K)
    dw_hi = np.where(any_zone[:, :, None], order[:, None, :] * r_b[:, :, 0, :], -np.inf)
    x_lo_r = np.fmin(np.where(np.isfinite(x_lo), x_lo, np.inf), dw_lo)
    x_hi_r = np.fmax(np.where(np.isfinite(x_hi), x_hi, -np.inf), dw_hi)
    touch_count = np.zeros(c, dtype=np.int64)
    response = np.full(c, -np.inf)
    response_at = np.zeros((c, 4), dtype=np.int64)
    margin = np.full(c, np.inf)
    margin_at = np.zeros((c, 4), dtype=np.int64)
    finite_hi = np.where(np.isfinite(x_hi_r), x_hi_r, 0.0)
    top_zone = int(np.floor(np.max(finite_hi, initial=0.0) / nyq))
    max_hz = np.minimum(order[:, None, :] * top_rotor[:, :, None], MAX_ALIAS_MULTIPLE * fs)   # (c, S, K)
    lo_app = np.maximum(band_f_lo, 0.0)                                                          # (c, M)
    hi_app = np.minimum(band_f_hi, nyq)
    fly3 = flies_s[:, :, None]
    eps = 1e-9
    for zone in range(1, top_zone + 1):
        edge_lo, edge_hi = zone * nyq, (zone + 1) * nyq
        reach = fly3 & present[:, None, :] & (x_hi_r >= edge_lo * (1 - eps)) & (x_lo_r <= edge_hi * (1 + eps))
        reach &= above_floor(seen_weight(weight[:, None, :], sensor.gain(edge_lo)), floor * (1 - eps))
        ci, si, ki = np.nonzero(reach)
        if ci.size == 0:
            continue
        n_o = order[ci, ki][:, None]                                  # (P, 1)
        img_a, img_b = zone_image(lo_app[ci], hi_app[ci], zone, fs)    # (P, M)
        pd = {k: (val.reshape(-1)[ci][:, None] if np.ndim(val) else val) for k, val in drive.items()}
        vv = v[ci, si, 0, 0][:, None]
        w_img = seen_weight(weight[ci, ki][:, None], sensor.gain(0.5 * (img_a + img_b)))
        valid = (lo_app[ci] <= hi_app[ci]) & (band_f_hi[ci] > band_f_lo[ci])
        valid &= img_a <= max_hz[ci, si, ki][:, None]
        valid &= above_floor(w_img, floor)
        pk = (peak[0][ci, si, 0, 0][:, None], peak[1][ci, si, 0, 0][:, None])
        for low, high in _pairs(throttle_windows(img_a, img_b, n_o, vv, fl.idle, fl.max, pd)):
            rule = window_levels(low, high, n_o, vv, pd, pk, zone_lo[ci, si][:, None, :], zone_hi[ci, si][:, None, :],
                                 w_img, f_lo[ci], f_hi[ci], zeta[ci], sig_floor, zone, fs)
            np.add.at(touch_count, ci, (valid & (rule["level"] == 2)).sum(axis=1))

        # aliased response: the band's piece in this zone, as the sensor sees it
        t_lo = np.maximum(x_lo[ci, si, ki], edge_lo)
        t_hi = np.minimum(x_hi[ci, si, ki], edge_hi)
        inside = t_lo <= t_hi
        w_piece = seen_weight(weight[ci, ki], sensor.gain(t_lo))
        keep = inside & above_floor(w_piece, floor)
        if not np.any(keep):
            continue
        a_lo = np.asarray(fold_in_zone(t_lo, zone, fs))
        a_hi = np.asarray(fold_in_zone(t_hi, zone, fs))
        app_lo, app_hi = np.minimum(a_lo, a_hi)[:, None], np.maximum(a_lo, a_hi)[:, None]
        with np.errstate(invalid="ignore"):
            val = w_piece[:, None] * peak_magnification(app_lo, app_hi, f_lo[ci], f_hi[ci], zeta[ci])
            mar = interval_margin(app_lo, app_hi, f_lo[ci], f_hi[ci])
        val = np.where(keep[:, None], val, -np.inf)
        mar = np.where(keep[:, None], mar, np.inf)
        best_mode = np.argmax(val, axis=1)
        best_val = val[np.arange(ci.size), best_mode]
        low_mode = np.argmin(mar, axis=1)
        low_val = mar[np.arange(ci.size), low_mode]
        _scatter_max(response, response_at, ci, best_val, np.stack([si, best_mode, ki, np.full_like(ci, zone)], 1))
        _scatter_max(margin, margin_at, ci, -low_val, np.stack([si, low_mode, ki, np.full_like(ci, zone)], 1),
                     negate=True)
    return {"touch_count": touch_count, "response": response, "response_at": response_at,
            "margin": margin, "margin_at": margin_at}


def _scatter_max(target, where, index, values, info, negate: bool = False):
    """Per group ``index``: keep the largest of ``values`` if it beats ``target``, with its ``info``.

    With ``negate`` the target holds minima and ``values`` are negated minima.
    Ties go to the first entry, so the result does not depend on write order.
    """
    best = np.full(target.shape, -np.inf)
    np.maximum.at(best, index, values)
    winners = np.nonzero(values == best[index])[0]
    groups, first = np.unique(index[winners], return_index=True)
    best_info = np.zeros_like(where)
    best_info[groups] = info[winners[first]]
    current = -target if negate else target
    better = best > current
    target[better] = -best[better] if negate else best[better]
    where[better] = best_info[better]


def rank(scores: Scores) -> np.ndarray:
    """Candidate indices, best first (the ranking rule in the module notes)."""
    n = scores.flies.size
    return np.lexsort((np.arange(n), scores.response, ~scores.hover_in_range, ~scores.band_clear, ~scores.flies))


# ---------------------------------------------------------------------------
# The result


@dataclass(frozen=True)
class Pick:
    """One ranked candidate, with a full check of it."""

    #: Rank, 1 for the best.
    rank: int
    #: Candidate index in the search space.
    index: int
    #: Short label of its parts.
    label: str
    #: The candidate as a build (modes shifted, mass adjusted).
    build: Build
    #: The full check of that build.
    result: ClashResult
    #: Hovers at every pack state.
    flies: bool
    #: The operating band is clear at every pack state.
    band_clear: bool
    #: Hover within the hover range at every pack state.
    hover_in_range: bool
    #: Peak weighted response over the operating band.
    response: float
    #: Where it sits: mode, order label, pack state, aliased.
    response_mode: str
    response_order: str
    response_state: str
    response_aliased: bool
    #: Smallest margin across the band [fraction], and where.
    worst_margin: float
    margin_mode: str
    margin_order: str
    margin_state: str
    #: Hover throttle per pack state [fraction].
    hover: dict[str, float]
    #: Clash windows touching the band.
    clash_count: int


@dataclass(frozen=True)
class PickResult:
    """The outcome of a search."""

    #: Base build name.
    name: str
    #: Candidates scored.
    searched: int
    #: How many have no clash window at any pack state (and fly): the check's ``clash`` rule.
    clear_count: int
    #: The best candidates, best first.
    top: tuple[Pick, ...]
    #: Hover range used [fraction].
    hover_range: tuple[float, float]
    #: The search axes.
    space: SearchSpace
    #: The scores of every candidate.
    scores: Scores = field(repr=False)
    #: What was searched and assumed.
    notes: tuple[SearchNote, ...] = ()
    #: Labels of top candidates whose full check disagrees with the vectorised "band clear" flag.
    disagreements: tuple[str, ...] = ()

    @property
    def best(self) -> Pick | None:
        """The top-ranked candidate, or ``None`` when nothing was returned."""
        return self.top[0] if self.top else None


def _describe(build, space, scores, index):
    ax_motor, ax_prop, _cells, label = space.parts(index)
    orders = build_orders(ax_motor, ax_prop, build.check.families, build.check.custom_orders,
                          build.check.order_strengths)
    s, m, k, z = (int(x) for x in scores.response_at[index])
    s2, m2, k2, _z2 = (int(x) for x in scores.margin_at[index])
    return label, (build.modes[m].name, orders[k].label, scores.pack_states[s], z > 0), (
        build.modes[m2].name, orders[k2].label, scores.pack_states[s2])


def pick(build, space: SearchSpace, *, top: int = 5) -> PickResult:
    """Search ``space`` for ``build``'s frame and return the best ``top`` candidates.

    Parameters
    ----------
    build : Build
        The base build.
    space : SearchSpace
        The candidates (see :func:`search_space`).
    top : int, optional
        How many to return (1 to 100).

    Returns
    -------
    PickResult
        The top candidates, each with a full :func:`~clashcheck.analysis.clash.check_build`
        of it; ``disagreements`` names any whose full check disagrees with the
        vectorised "band clear" flag.
    """
    if isinstance(top, bool) or not isinstance(top, int) or not 1 <= top <= 100:
        raise InputError("top", "a whole number from 1 to 100", top)
    scores = score_candidates(build, space)
    order = rank(scores)
    picks = []
    disagree: list[str] = []
    notes: list[SearchNote] = list(space.notes)
    for place, index in enumerate(order[:top], start=1):
        index = int(index)
        cand = candidate_build(build, space, index)
        result = check_build(cand)
        label, r_info, m_info = _describe(build, space, scores, index)
        hover = {s: float(scores.hover_throttle[index, j]) for j, s in enumerate(scores.pack_states)}
        fields = {
            "flies": bool(scores.flies[index]),
            "band_clear": bool(scores.band_clear[index] and scores.flies[index]),
            "hover_in_range": bool(scores.hover_in_range[index]),
            "response": float(scores.response[index]),
            "response_mode": r_info[0], "response_order": r_info[1], "response_state": r_info[2],
            "response_aliased": r_info[3],
            "worst_margin": float(scores.worst_margin[index]),
            "margin_mode": m_info[0], "margin_order": m_info[1], "margin_state": m_info[2],
            "hover": hover,
            "clash_count": int(scores.clash_count[index]),
        }
        if (result.verdict == "clash") == fields["band_clear"]:
            disagree.append(label)
        picks.append(Pick(rank=place, index=index, label=label, build=cand, result=result, **fields))
    if any(m.kind == "arm" for m in build.modes):
        ratio = scores.mode_ratio
        if np.any(ratio != 1.0):
            notes.append(SearchNote("arm-shift", {"min_ratio": float(np.min(ratio)), "max_ratio": float(np.max(ratio))},
                                    ("frame.arm",) if build.arm is not None else ()))
        elif build.motor.mass_kg is None or build.prop.mass_kg is None:
            notes.append(SearchNote("arm-not-shifted"))
    if build.flight.hover is not None:
        notes.append(SearchNote("stated-hover-dropped", {"hover": build.flight.hover}))
    clear = int(np.sum(scores.band_clear & scores.flies))
    return PickResult(build.name, space.size, clear, tuple(picks), space.hover_range, space, scores,
                      tuple(notes), tuple(disagree))
