"""Clash windows, danger ranges and the verdict.

For each pack state, mode and order the mode's band f_m·(1 ± SM) is mapped
through the closed-form inverse drive model to an exact throttle interval
(no grid search).  With a sensor, the same band is also mapped from each
Nyquist zone, so an excitation whose *fold* lands on the mode gives an
aliased window.  Windows are clipped to [idle, max] and merged per mode into
danger ranges.

Verdict (DESIGN.md vocabulary):

- ``clear``: no window in [idle, max];
- ``watch``: windows exist, none touching the operating band;
- ``clash``: a window touches the operating band (hover up to cruise) of its
  pack state, which includes hover sitting inside a margin.

This module is pure: it returns result dataclasses and formats nothing.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from ..model.drive import Drive, Hover, throttle_at_rad_s
from ..model.excitation import Order, Sensor, alias_images, fold
from ..model.modes import (
    MarginPolicy,
    Mode,
    amplification_factor,
    magnification,
    relative_margin,
)
from ..model.rates import TWO_PI
from .levels import FAIL_LEVELS, VERDICTS, worse_verdict
from .windows import MAX_ALIAS_MULTIPLE, above_floor, interval_margin, margin_band, seen_weight, throttle_window

__all__ = [
    "VERDICTS",
    "FAIL_LEVELS",
    "Window",
    "DangerRange",
    "MarginAt",
    "ModeResult",
    "OperatingBand",
    "ClashResult",
    "find_windows",
    "merge_windows",
    "operating_bands",
    "analyse",
    "worse_verdict",
    "check_build",
]

@dataclass(frozen=True)
class OperatingBand:
    """The throttle range the craft lives in at one pack state."""

    #: Pack state.
    pack_state: str
    #: Hover at this pack state.
    hover: Hover
    #: Bottom of the band [fraction]: the hover throttle; ``nan`` when the craft cannot hover.
    throttle_low: float
    #: Top of the band [fraction]: cruise (or hover, if hover sits above cruise).
    throttle_high: float

    @property
    def flies(self) -> bool:
        """Whether the craft can fly at this pack state."""
        return not math.isnan(self.throttle_low)


@dataclass(frozen=True)
class Window:
    """A throttle interval where one order sits within a mode's required margin."""

    #: Mode name.
    mode: str
    #: Order family.
    family: str
    #: Order number (multiple of rotor rate).
    order: float
    #: Order label, e.g. ``"3× blade pass"``.
    label: str
    #: Pack state.
    pack_state: str
    #: Lower throttle edge [fraction], clipped to idle.
    throttle_low: float
    #: Upper throttle edge [fraction], clipped to max.
    throttle_high: float
    #: Throttle where the order (or its fold) meets the mode's nominal frequency; ``None`` outside [idle, max].
    crossing_throttle: float | None
    #: Required margin [fraction].
    required_margin: float
    #: Margin of this order at hover [fraction]; ``None`` when hover is unknown or unreachable.
    margin_at_hover: float | None
    #: Smallest margin of this order across the operating band [fraction]; ``None`` when the craft cannot fly.
    worst_margin_in_band: float | None
    #: Single-degree-of-freedom magnification at hover; ``None`` when hover is unknown.
    magnification_at_hover: float | None
    #: Whether the window comes from the sensor fold.
    aliased: bool
    #: Nyquist zone of the true excitation (0 = not aliased).
    nyquist_zone: int
    #: Whether the window overlaps the operating band of its pack state.
    touches_operating_band: bool
    #: Relative weight of the order (after any anti-alias attenuation).
    weight: float
    #: Ranking figure: weight × amplification factor.
    severity: float
    #: True excitation frequency at the window's lower edge [Hz].
    excitation_low_hz: float
    #: True excitation frequency at the window's upper edge [Hz].
    excitation_high_hz: float


@dataclass(frozen=True)
class DangerRange:
    """Merged windows of one mode: a throttle range a person reads first."""

    #: Mode name.
    mode: str
    #: Lower edge [fraction].
    throttle_low: float
    #: Upper edge [fraction].
    throttle_high: float
    #: Order labels responsible, strongest first.
    orders: tuple[str, ...]
    #: Pack states in which some window lies in this range.
    pack_states: tuple[str, ...]
    #: Whether any of the windows is aliased.
    aliased: bool
    #: Whether every one of the windows is aliased.
    all_aliased: bool
    #: Whether any of the windows touches its operating band.
    touches_operating_band: bool


@dataclass(frozen=True)
class MarginAt:
    """The nearest order to a mode at one operating point."""

    #: ``"hover"`` or ``"cruise"``.
    point: str
    #: Pack state.
    pack_state: str
    #: Throttle [fraction].
    throttle: float
    #: Label of the nearest order.
    label: str
    #: Its family.
    family: str
    #: Its order number.
    order: float
    #: Its margin from the mode [fraction].
    margin: float
    #: Whether the nearest order is seen through the sensor fold.
    aliased: bool
    #: Whether the margin meets the required margin.
    enough: bool


@dataclass(frozen=True)
class ModeResult:
    """Everything found for one mode."""

    #: The mode.
    mode: Mode
    #: Damping ratio used.
    damping: float
    #: Whether the damping was assumed (the build's default).
    damping_assumed: bool
    #: Amplification factor 1/(2ζ).
    amplification_factor: float
    #: Required margin [fraction].
    required_margin: float
    #: Merged danger ranges.
    danger_ranges: tuple[DangerRange, ...]
    #: Nearest order at hover and at cruise, per pack state.
    margins: tuple[MarginAt, ...]
    #: Verdict for this mode.
    verdict: str


@dataclass(frozen=True)
class ClashResult:
    """The outcome of a clash check."""

    #: Build name.
    name: str
    #: Drive model description.
    model: str
    #: Policy name.
    policy: str
    #: Open-circuit pack voltage per pack state [V].
    pack_voltages: dict[str, float]
    #: Operating band per pack state.
    bands: tuple[OperatingBand, ...]
    #: Per-mode results.
    modes: tuple[ModeResult, ...]
    #: Orders considered.
    orders: tuple[Order, ...]
    #: All windows, most severe first.
    windows: tuple[Window, ...]
    #: Overall verdict.
    verdict: str
    #: Idle, max and cruise throttle [fraction].
    idle: float
    throttle_max: float
    cruise: float
    #: Sensor, when the build names one.
    sensor: Sensor | None
    #: Rotor rate at idle and at max per pack state [Hz].
    rotor_range_hz: dict[str, tuple[float, float]] = field(default_factory=dict)
    #: Findings and assumptions, one sentence each.
    notes: tuple[str, ...] = ()


def operating_bands(
    drive: Drive,
    mass_kg: float,
    pack_states: Sequence[str],
    idle: float,
    cruise: float,
    stated_hover: float | None = None,
) -> tuple[OperatingBand, ...]:
    """Hover and operating band per pack state.

    When hover is unknown (no C_T and none stated) the band starts at idle,
    which is conservative.  When the craft cannot hover at a pack state it has
    no band there (``throttle_low`` is ``nan``).
    """
    bands = []
    for state in pack_states:
        hover = drive.hover(mass_kg, state, stated_hover)
        if hover.how == "unknown":
            low = idle
        elif hover.can_hover:
            low = hover.throttle
        else:
            low = math.nan
        high = math.nan if math.isnan(low) else max(cruise, low)
        bands.append(OperatingBand(state, hover, low, high))
    return tuple(bands)


def _apparent_range(f_lo: float, f_hi: float, sensor: Sensor | None) -> list[tuple[float, float]]:
    """Apparent frequency intervals covered by true frequencies [f_lo, f_hi]."""
    if sensor is None:
        return [(f_lo, f_hi)]
    nyq = sensor.nyquist_hz
    edges = [f_lo]
    k = math.floor(f_lo / nyq) + 1
    while k * nyq < f_hi:
        edges.append(k * nyq)
        k += 1
    edges.append(f_hi)
    out = []
    for a, b in zip(edges[:-1], edges[1:]):
        fa, fb = fold(a, sensor.sample_rate_hz), fold(b, sensor.sample_rate_hz)
        out.append((min(fa, fb), max(fa, fb)))
    return out


def _min_margin(intervals: list[tuple[float, float]], mode: Mode) -> float:
    lo, hi = mode.frequency_low_hz, mode.frequency_high_hz
    assert lo is not None and hi is not None
    return min((float(interval_margin(a, b, lo, hi)) for a, b in intervals), default=math.inf)


def find_windows(
    drive: Drive,
    mode: Mode,
    order: Order,
    band: OperatingBand,
    policy: MarginPolicy,
    idle: float,
    throttle_max: float,
    sensor: Sensor | None = None,
) -> list[Window]:
    """Exact clash windows of one order on one mode at one pack state.

    Parameters
    ----------
    drive : Drive
        The drive model.
    mode : Mode
        The frame mode.
    order : Order
        The excitation order.
    band : OperatingBand
        The pack state's operating band (gives the pack state and hover).
    policy : MarginPolicy
        Margin policy.
    idle, throttle_max : float
        Throttle limits [fraction].
    sensor : Sensor, optional
        With a sensor, aliased windows are found too.

    Returns
    -------
    list of Window
        Possibly empty; at most one direct window and one per alias image.
    """
    state = band.pack_state
    sm = policy.required_margin(mode)
    zeta, _ = policy.damping_of(mode)
    af = amplification_factor(zeta)
    assert mode.frequency_low_hz is not None and mode.frequency_high_hz is not None
    band_lo_hz, band_hi_hz = margin_band(mode.frequency_low_hz, mode.frequency_high_hz, sm)
    if band_hi_hz <= band_lo_hz:
        return []
    n = order.order
    top_rotor_hz = float(drive.rotor_hz(throttle_max, state))

    # (zone, true band low, true band high, true frequency at the mode's nominal)
    images: list[tuple[int, float, float, float | None]] = [(0, band_lo_hz, band_hi_hz, mode.frequency_hz)]
    if sensor is not None:
        fs = sensor.sample_rate_hz
        for zone, a, b in alias_images(
            band_lo_hz, band_hi_hz, fs, min(n * top_rotor_hz, MAX_ALIAS_MULTIPLE * fs)
        ):
            m = (zone + 1) // 2
            nominal = m * fs - mode.frequency_hz if zone % 2 else m * fs + mode.frequency_hz
            images.append((zone, a, b, nominal if mode.frequency_hz <= sensor.nyquist_hz else None))

    hover = band.hover
    hover_known = not math.isnan(hover.rotor_hz) and hover.can_hover
    true_hz = np.array([[f_a, f_b, math.nan if f_nom is None else f_nom] for _, f_a, f_b, f_nom in images])
    params = drive.parameters.as_kwargs()
    v_oc = drive.pack.voltage(state)
    lows, highs = throttle_window(true_hz[:, 0], true_hz[:, 1], n, v_oc, idle, throttle_max, params)
    d_nominal = throttle_at_rad_s((true_hz[:, 2] / n) * TWO_PI, v_oc, **params)
    if not np.any(lows < highs):
        return []
    f_edges = n * drive.rotor_hz(np.stack([lows, np.maximum(lows, highs)], axis=-1), state)

    # Margin at hover and across the band: one figure for the direct line and
    # one for its fold, shared by every image of the same kind.
    seen: dict[bool, tuple[float | None, float | None, float | None]] = {}

    def margins(aliased: bool) -> tuple[float | None, float | None, float | None]:
        if aliased not in seen:
            margin_hover = mag = worst = None
            if hover_known:
                f_hover = n * hover.rotor_hz
                f_seen = fold(f_hover, sensor.sample_rate_hz) if aliased and sensor else f_hover
                margin_hover = float(relative_margin(f_seen, mode))
                mag = float(magnification(f_seen / mode.frequency_hz, zeta))
            if band.flies:
                f_band = n * drive.rotor_hz(np.array([band.throttle_low, band.throttle_high]), state)
                pieces = _apparent_range(float(f_band[0]), float(f_band[1]), sensor if aliased else None)
                worst = _min_margin(pieces, mode)
            seen[aliased] = (margin_hover, mag, worst)
        return seen[aliased]

    out = []
    for i, (zone, f_a, f_b, _f_nom) in enumerate(images):
        low, high = float(lows[i]), float(highs[i])
        if not low < high:
            continue
        d_c = float(d_nominal[i])
        crossing = d_c if idle <= d_c <= throttle_max else None
        margin_hover, mag, worst = margins(bool(zone))
        touches = band.flies and low <= band.throttle_high and band.throttle_low <= high
        weight = order.weight
        if zone and sensor is not None:
            weight = float(seen_weight(order.weight, sensor.gain(0.5 * (f_a + f_b))))
        out.append(
            Window(
                mode=mode.name,
                family=order.family,
                order=n,
                label=order.label,
                pack_state=state,
                throttle_low=low,
                throttle_high=high,
                crossing_throttle=crossing,
                required_margin=sm,
                margin_at_hover=margin_hover,
                worst_margin_in_band=worst,
                magnification_at_hover=mag,
                aliased=bool(zone),
                nyquist_zone=zone,
                touches_operating_band=bool(touches),
                weight=weight,
                severity=weight * af,
                excitation_low_hz=float(f_edges[i, 0]),
                excitation_high_hz=float(f_edges[i, 1]),
            )
        )
    return out


def merge_windows(mode: str, windows: Sequence[Window]) -> tuple[DangerRange, ...]:
    """Merge one mode's windows (all orders, all pack states) into danger ranges."""
    ranges: list[DangerRange] = []
    group: list[Window] = []
    for w in sorted(windows, key=lambda w: (w.throttle_low, w.throttle_high)):
        if group and w.throttle_low > max(g.throttle_high for g in group):
            ranges.append(_range_of(mode, group))
            group = []
        group.append(w)
    if group:
        ranges.append(_range_of(mode, group))
    return tuple(ranges)


def _range_of(mode: str, group: Sequence[Window]) -> DangerRange:
    labels: list[str] = []
    for w in sorted(group, key=lambda w: -w.severity):
        label = w.label + (" (aliased)" if w.aliased else "")
        if label not in labels:
            labels.append(label)
    states = tuple(s for s in ("full", "nominal", "empty") if any(w.pack_state == s for w in group))
    return DangerRange(
        mode=mode,
        throttle_low=min(w.throttle_low for w in group),
        throttle_high=max(w.throttle_high for w in group),
        orders=tuple(labels),
        pack_states=states,
        aliased=any(w.aliased for w in group),
        all_aliased=all(w.aliased for w in group),
        touches_operating_band=any(w.touches_operating_band for w in group),
    )


def _nearest(
    drive: Drive,
    mode: Mode,
    orders: Sequence[Order],
    state: str,
    point: str,
    throttle: float,
    required: float,
    sensor: Sensor | None,
    weight_floor: float = 0.0,
) -> MarginAt:
    rotor_hz = float(drive.rotor_hz(throttle, state))
    numbers = np.array([o.order for o in orders])
    true_hz = numbers * rotor_hz
    margins = np.asarray(relative_margin(true_hz, mode), dtype=float).reshape(-1)
    aliased = np.zeros(len(orders), dtype=bool)
    if sensor is not None:
        seen = np.asarray(fold(true_hz, sensor.sample_rate_hz)).reshape(-1)
        alias_margin = np.asarray(relative_margin(seen, mode), dtype=float).reshape(-1)
        weights = seen_weight(np.array([o.weight for o in orders]), np.asarray(sensor.gain(true_hz)).reshape(-1))
        above = (true_hz > sensor.nyquist_hz) & above_floor(weights, weight_floor)
        use = above & (alias_margin < margins)
        margins = np.where(use, alias_margin, margins)
        aliased = use
    i = int(np.argmin(margins))
    return MarginAt(
        point=point,
        pack_state=state,
        throttle=throttle,
        label=orders[i].label,
        family=orders[i].family,
        order=orders[i].order,
        margin=float(margins[i]),
        aliased=bool(aliased[i]),
        enough=bool(margins[i] >= required),
    )


def analyse(
    drive: Drive,
    modes: Sequence[Mode],
    orders: Sequence[Order],
    policy: MarginPolicy,
    *,
    mass_kg: float,
    pack_states: Sequence[str],
    idle: float,
    throttle_max: float,
    cruise: float,
    stated_hover: float | None = None,
    sensor: Sensor | None = None,
    name: str = "",
    notes: Sequence[str] = (),
    weight_floor: float = 0.0,
) -> ClashResult:
    """Run the whole clash check.

    Aliased windows whose weight, after the anti-alias filter, is below
    ``weight_floor`` are left out of the windows and the verdict; a note
    counts them.

    Returns
    -------
    ClashResult
        Windows for every mode × order × pack state, danger ranges per mode,
        margins at hover and cruise, and the verdict.
    """
    bands = operating_bands(drive, mass_kg, pack_states, idle, cruise, stated_hover)
    found_notes = list(notes)
    for b in bands:
        if b.hover.how == "unknown":
            found_notes.append(
                "hover is unknown (no prop.thrust_coefficient and no flight.hover): "
                "the operating band is taken from idle"
            )
            break
    for b in bands:
        if b.hover.how != "unknown" and not b.hover.can_hover:
            need = "more thrust than the motors give" if not math.isfinite(b.hover.throttle) else (
                f"{100 * b.hover.throttle:.0f} % throttle"
            )
            found_notes.append(f"cannot hover at the {b.pack_state} pack: hover needs {need}")
        elif b.flies and b.hover.how != "unknown" and b.hover.throttle > cruise:
            found_notes.append(
                f"hover ({100 * b.hover.throttle:.0f} %) sits above cruise ({100 * cruise:.0f} %) "
                f"at the {b.pack_state} pack"
            )
    for state in pack_states:  # past the pack's maximum-power point the rate falls with throttle
        grid = np.linspace(idle, throttle_max, 65)
        rate = drive.rotor_hz(grid, state)
        if np.any(np.diff(rate) < 0):
            peak = float(grid[int(np.argmax(rate))])
            found_notes.append(
                f"at the {state} pack the rotor rate peaks near {100 * peak:.0f} % throttle (pack sag wins above "
                "it); windows are solved on the rising side only"
            )
    assumed = [m.name for m in modes if m.damping is None]
    if assumed:
        found_notes.append(
            f"damping assumed at ζ = {policy.default_damping:g} for: " + ", ".join(assumed)
        )

    all_windows: list[Window] = []
    mode_results = []
    faint = 0
    verdict = "clear"
    for mode in modes:
        zeta, was_assumed = policy.damping_of(mode)
        sm = policy.required_margin(mode)
        windows = []
        for band in bands:
            for order in orders:
                for w in find_windows(drive, mode, order, band, policy, idle, throttle_max, sensor):
                    if w.aliased and not above_floor(w.weight, weight_floor):
                        faint += 1
                    else:
                        windows.append(w)
        margins = []
        for band in bands:
            if band.flies and not math.isnan(band.hover.rotor_hz) and band.hover.can_hover:
                margins.append(
                    _nearest(drive, mode, orders, band.pack_state, "hover", band.hover.throttle, sm, sensor,
                             weight_floor)
                )
            if band.flies:
                margins.append(
                    _nearest(drive, mode, orders, band.pack_state, "cruise", cruise, sm, sensor, weight_floor)
                )
        mode_verdict = "clear"
        if windows:
            mode_verdict = "clash" if any(w.touches_operating_band for w in windows) else "watch"
        verdict = worse_verdict(verdict, mode_verdict)
        all_windows.extend(windows)
        mode_results.append(
            ModeResult(
                mode=mode,
                damping=zeta,
                damping_assumed=was_assumed,
                amplification_factor=amplification_factor(zeta),
                required_margin=sm,
                danger_ranges=merge_windows(mode.name, windows),
                margins=tuple(margins),
                verdict=mode_verdict,
            )
        )
    if faint:
        found_notes.append(
            f"{faint} aliased window(s) left out: their weight after the anti-alias filter is "
            f"below the floor of {weight_floor:g}"
        )
    all_windows.sort(key=lambda w: (not w.touches_operating_band, -w.severity, w.throttle_low))
    rotor_range = {
        s: (float(drive.rotor_hz(idle, s)), float(drive.rotor_hz(throttle_max, s))) for s in pack_states
    }
    return ClashResult(
        name=name,
        model=drive.model_description(),
        policy=policy.name,
        pack_voltages={s: drive.pack.voltage(s) for s in pack_states},
        bands=bands,
        modes=tuple(mode_results),
        orders=tuple(orders),
        windows=tuple(all_windows),
        verdict=verdict,
        idle=idle,
        throttle_max=throttle_max,
        cruise=cruise,
        sensor=sensor,
        rotor_range_hz=rotor_range,
        notes=tuple(found_notes),
    )


def check_build(build) -> ClashResult:
    """Run the clash check of a :class:`~clashcheck.build.Build`."""
    fl = build.flight
    return analyse(
        build.drive(),
        build.modes,
        build.orders(),
        build.check.policy,
        mass_kg=build.mass_kg,
        pack_states=build.check.pack_states,
        idle=fl.idle,
        throttle_max=fl.max,
        cruise=fl.cruise,
        stated_hover=fl.hover,
        sensor=build.sensor,
        name=build.name,
        notes=build.notes,
        weight_floor=build.check.weight_floor,
    )
