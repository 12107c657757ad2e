"""Clash windows, danger ranges and the verdict.

For each pack state, mode and order the mode's band f_m·(1 ± SM) is mapped
through the closed-form inverse drive model to an exact throttle interval
(no grid search).  With a sensor, the same band is also mapped from each
Nyquist zone, so an excitation whose *fold* lands on the mode gives an
aliased window.  Windows are clipped to [idle, max] and merged per mode into
danger ranges.

With pack sag the rotor rate can peak below full throttle; each band is
then met on both sides of the peak (:func:`~clashcheck.analysis.windows.throttle_windows`).

Verdict (DESIGN.md vocabulary; the rule itself is
:func:`clashcheck.analysis.windows.window_levels`):

- the craft **dwells** at hover at each pack state, within ± the build's
  ``flight.dwell_spread``, and at cruise when ``flight.cruise_dwell`` says it
  cruises there; a measured throttle occupancy (``--modes`` with ``[dwell]``)
  replaces these zones; everything else between idle and max is **passage**;
- an order is **significant** at a point when its weight after the anti-alias
  filter × the single-degree-of-freedom magnification there reaches
  ``check.significance_floor`` (default 1);
- ``clash``: a significant order inside its required margin in a dwell zone
  at some pack state, or the craft cannot hover at a pack state checked (a
  finding of its own);
- ``watch``: windows crossed only in passage, or weak orders in a dwell zone;
- ``clear``: no window of a significant order between idle and max.

This module is pure: it returns result dataclasses and formats nothing.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from ..model.drive import Drive, Hover, throttle_at_rad_s, throttle_fall_rad_s
from ..model.excitation import Order, Sensor, alias_images, fold
from ..model.modes import (
    MarginPolicy,
    Mode,
    amplification_factor,
    magnification,
    relative_margin,
)
from ..model.rates import TWO_PI
from .close_modes import ClosePair, close_modes
from .levels import FAIL_LEVELS, VERDICTS, worse_verdict
from .windows import (
    LEVEL_CODES,
    MAX_ALIAS_MULTIPLE,
    SIGNIFICANCE_FLOOR,
    above_floor,
    interval_margin,
    margin_band,
    rotor_peak,
    rotor_range_hz,
    seen_weight,
    window_levels,
    windows_from_roots,
)

__all__ = [
    "VERDICTS",
    "FAIL_LEVELS",
    "LIES_IN",
    "CheckFinding",
    "CheckNote",
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
    #: Dwell zones at this pack state: (what, low, high) throttle [fraction];
    #: ``what`` is ``"hover"``, ``"cruise"``, ``"measured"`` or ``"operating band"``
    #: (hover unknown: the whole band is taken as dwell).
    dwell: tuple[tuple[str, float, float], ...] = ()

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
    #: Lowest true excitation frequency over the window [Hz].
    excitation_low_hz: float
    #: Highest true excitation frequency over the window [Hz] (the peak rate × order where the window holds the peak).
    excitation_high_hz: float
    #: ``"dwell"`` when the window overlaps a dwell zone of its pack state, else ``"passage"``.
    lies_in: str = "passage"
    #: Weight after the anti-alias filter × peak magnification, in the dwell zone
    #: (when it lies in one) or over the window.
    significance: float = math.inf
    #: Whether the significance reaches the build's floor.
    significant: bool = True
    #: What the window adds to the verdict: ``"clash"``, ``"watch"`` or ``"clear"`` (a weak order in passage).
    level: str = "watch"
    #: The dwell zone it overlaps: ``"hover"``, ``"cruise"``, ``"measured"``, ``"operating band"``; ``None`` in passage.
    dwell_zone: str | None = None
    #: That zone's throttle edges [fraction]; ``None`` in passage.
    dwell_low: float | None = None
    dwell_high: float | None = None
    #: Smallest margin of the order in the part that counts (dwell overlap or window) [fraction].
    margin_in_part: float | None = None
    #: ``"rising"`` or ``"falling"``: the side of the rotor-rate peak (``"rising"`` without sag).
    side: str = "rising"


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
    #: ``"dwell"`` when any of the windows lies in a dwell zone, else ``"passage"``.
    lies_in: str = "passage"
    #: The worst window level in the range: ``"clash"``, ``"watch"`` or ``"clear"``.
    level: str = "watch"
    #: Throttle range per pack state: (pack state, low, high) [fraction].
    per_state: tuple[tuple[str, float, float], ...] = ()


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
    #: ``"dwell"`` when a window that counts lies in a dwell zone, ``"passage"`` when they
    #: lie only in passage, ``None`` without windows that count.
    lies_in: str | None = None
    #: The window that sets the verdict (highest level, then significance); ``None`` when clear.
    deciding: Window | None = None


#: Where a window or mode lies.
LIES_IN = ("dwell", "passage")


@dataclass(frozen=True)
class CheckFinding:
    """A finding of the check that is not a window (data only; the report words it)."""

    #: ``"cannot_hover"``: hover needs more than full throttle at a pack state checked.
    kind: str
    #: Its level: ``"clash"``.
    level: str
    #: Pack state.
    pack_state: str
    #: Hover throttle needed [fraction; above 1, ``inf`` when no throttle gives it].
    hover_throttle: float


@dataclass(frozen=True)
class CheckNote:
    """A fact about how the check was run (data only; ``report.check.note_text`` words it).

    ``kind`` is one of ``"given"`` (a note handed in with the build, kept as
    written in ``text``), ``"hover_unknown"``, ``"hover_above_cruise"``
    (``pack_state``, ``value`` = hover, ``other`` = cruise throttle),
    ``"rotor_peak"`` (``pack_state``, ``value`` = peak rotor rate [Hz],
    ``other`` = its throttle), ``"damping_default"`` (``names``, ``value`` =
    the default ζ), ``"damping_bound"`` (``names`` = one mode, ``value`` = the
    bound used, ``other`` = the default ζ) and ``"aliased_left_out"``
    (``count``, ``value`` = the weight floor).
    """

    #: What the note says, as a code.
    kind: str
    #: Pack state it concerns, if one.
    pack_state: str | None = None
    #: Its main figure (unit by kind).
    value: float | None = None
    #: A second figure (unit by kind).
    other: float | None = None
    #: Mode names it concerns.
    names: tuple[str, ...] = ()
    #: A count (windows left out).
    count: int = 0
    #: The note's words, for ``"given"`` only (notes made by the inputs layer).
    text: str = ""


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
    notes: tuple[CheckNote, ...] = ()
    #: Findings that are not windows (cannot hover), each at its level.
    findings: tuple[CheckFinding, ...] = ()
    #: Where the dwell zones come from: ``"default"`` (hover ± spread, cruise when
    #: stated) or ``"measured"`` (a recording's throttle occupancy).
    dwell_source: str = "default"
    #: Half-width of the default dwell zones [throttle fraction].
    dwell_spread: float = 0.03
    #: Whether cruise is a dwell zone.
    cruise_dwell: bool = False
    #: Significance floor used.
    significance_floor: float = SIGNIFICANCE_FLOOR
    #: Neighbouring modes close enough to exchange energy (any origin).
    close_pairs: tuple[ClosePair, ...] = ()


def operating_bands(
    drive: Drive,
    mass_kg: float,
    pack_states: Sequence[str],
    idle: float,
    cruise: float,
    stated_hover: float | None = None,
    *,
    throttle_max: float = 1.0,
    dwell_spread: float = 0.03,
    cruise_dwell: bool = False,
    measured_dwell: Sequence[tuple[float, float]] | None = None,
    measured_dwell_hz: bool = False,
) -> tuple[OperatingBand, ...]:
    """Hover, operating band and dwell zones per pack state.

    When hover is unknown (no C_T and none stated) the band starts at idle,
    and the whole band counts as dwell, which is conservative.  When the craft
    cannot hover at a pack state it has no band and no dwell there
    (``throttle_low`` is ``nan``).

    Parameters
    ----------
    drive : Drive
        The drive model.
    mass_kg : float
        All-up mass [kg].
    pack_states : sequence of str
        Pack states checked.
    idle, cruise : float
        Idle and cruise throttle [fraction].
    stated_hover : float, optional
        Hover throttle stated by the build [fraction].
    throttle_max : float
        Maximum throttle [fraction].
    dwell_spread : float
        Half-width of the hover (and cruise) dwell zones [throttle fraction].
    cruise_dwell : bool
        Whether the craft dwells at cruise.
    measured_dwell : sequence of (low, high), optional
        Dwell zones from a measured throttle occupancy [fraction]; they
        replace the hover and cruise zones at every pack state.
    measured_dwell_hz : bool
        When true, ``measured_dwell`` holds rotor-rate bands [Hz], turned into
        throttles per pack state with the inverse drive model (rising side).

    Returns
    -------
    tuple of OperatingBand
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
        dwell: list[tuple[str, float, float]] = []
        if math.isnan(low):
            pass
        elif measured_dwell is not None:
            spans = list(measured_dwell)
            if measured_dwell_hz:
                edges = drive.throttle_at(np.array(spans, dtype=float), state)
                spans = [(float(a), float(b)) for a, b in np.minimum(edges, throttle_max)]
            dwell = [("measured", max(idle, a), min(throttle_max, b)) for a, b in spans]
        else:
            if hover.how == "unknown":
                dwell.append(("operating band", low, high))
            else:
                dwell.append(("hover", max(idle, hover.throttle - dwell_spread),
                              min(throttle_max, hover.throttle + dwell_spread)))
            if cruise_dwell:
                dwell.append(("cruise", max(idle, cruise - dwell_spread), min(throttle_max, cruise + dwell_spread)))
        bands.append(OperatingBand(state, hover, low, high, tuple(z for z in dwell if z[1] <= z[2])))
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


@functools.lru_cache(maxsize=256)
def _peak(drive: Drive, state: str, throttle_max: float) -> tuple[float, float]:
    """Peak rotor rate [Hz] and its throttle below ``throttle_max`` at one pack state (``inf`` without one; cached)."""
    peak_hz, peak_d = rotor_peak(drive.pack.voltage(state), drive.parameters.as_kwargs(), throttle_max)
    return float(peak_hz), float(peak_d)


def find_windows(
    drive: Drive,
    mode: Mode,
    order: Order,
    band: OperatingBand,
    policy: MarginPolicy,
    idle: float,
    throttle_max: float,
    sensor: Sensor | None = None,
    significance_floor: float = SIGNIFICANCE_FLOOR,
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
        The pack state's operating band (gives the pack state, hover and dwell zones).
    policy : MarginPolicy
        Margin policy.
    idle, throttle_max : float
        Throttle limits [fraction].
    sensor : Sensor, optional
        With a sensor, aliased windows are found too.
    significance_floor : float
        Weight after the filter × magnification an order needs to count as significant.

    Returns
    -------
    list of Window
        Possibly empty; for the direct line and each alias image, a window on
        the rising side of the rotor rate and, with pack sag, one on the
        falling side.
    """
    return _windows_of(drive, mode, (order,), band, policy, idle, throttle_max, sensor, significance_floor)[0]


def _windows_of(
    drive: Drive,
    mode: Mode,
    orders: Sequence[Order],
    band: OperatingBand,
    policy: MarginPolicy,
    idle: float,
    throttle_max: float,
    sensor: Sensor | None,
    significance_floor: float,
) -> list[list[Window]]:
    """:func:`find_windows` for several orders at once (one array pass); a list of windows per order."""
    out: list[list[Window]] = [[] for _ in orders]
    state = band.pack_state
    sm = policy.required_margin(mode)
    zeta, _ = policy.damping_of(mode)
    af = amplification_factor(zeta)
    assert mode.frequency_low_hz is not None and mode.frequency_high_hz is not None
    band_lo_hz, band_hi_hz = margin_band(mode.frequency_low_hz, mode.frequency_high_hz, sm)
    if band_hi_hz <= band_lo_hz or not orders:
        return out
    params = drive.parameters.as_kwargs()
    v_oc = drive.pack.voltage(state)
    peak = _peak(drive, state, throttle_max)
    top_rotor_hz = float(rotor_range_hz(idle, throttle_max, v_oc, params, peak)[1])

    # one row per (order, image): order index, zone, true band low, true band high, true frequency at nominal
    rows: list[tuple[int, int, float, float, float]] = []
    seen_images: list[tuple[int, float, float, float]] = [(0, band_lo_hz, band_hi_hz, mode.frequency_hz)]
    for oi, order in enumerate(orders):
        rows.append((oi, *seen_images[0]))
        if sensor is None:
            continue
        fs = sensor.sample_rate_hz
        for zone, a, b in alias_images(
            band_lo_hz, band_hi_hz, fs, min(order.order * top_rotor_hz, MAX_ALIAS_MULTIPLE * fs)
        ):
            m = (zone + 1) // 2
            nominal = m * fs - mode.frequency_hz if zone % 2 else m * fs + mode.frequency_hz
            rows.append((oi, zone, a, b, nominal if mode.frequency_hz <= sensor.nyquist_hz else math.nan))

    hover = band.hover
    hover_known = not math.isnan(hover.rotor_hz) and hover.can_hover
    table = np.array(rows, dtype=float)
    order_of = table[:, 0].astype(int)
    alias_zones = table[:, 1].astype(int)
    true_hz = table[:, 2:5]
    numbers = np.array([o.order for o in orders])[order_of]
    omega = (true_hz / numbers[:, None]) * TWO_PI     # band low, band high, nominal: both roots in one call each
    with np.errstate(invalid="ignore"):
        up = throttle_at_rad_s(omega, v_oc, **params)
        down = throttle_fall_rad_s(omega, v_oc, **params)
    rise_lo, rise_hi, fall_lo, fall_hi = windows_from_roots(up[:, 0], up[:, 1], down[:, 0], down[:, 1], idle,
                                                            throttle_max)
    n_rows = len(rows)
    lows = np.concatenate([rise_lo, fall_lo])          # rising windows, then falling ones
    highs = np.concatenate([rise_hi, fall_hi])
    some = np.nonzero(lows < highs)[0]
    if some.size == 0:
        return out
    d_nominal = {"rising": up[:, 2], "falling": down[:, 2]}

    # Margin at hover and across the band: one figure per order for the direct line and one for its
    # fold, shared by every image of the same kind.
    seen: dict[tuple[int, bool], tuple[float | None, float | None, float | None]] = {}

    def margins(oi: int, aliased: bool) -> tuple[float | None, float | None, float | None]:
        if (oi, aliased) not in seen:
            n = orders[oi].order
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
            seen[(oi, aliased)] = (margin_hover, mag, worst)
        return seen[(oi, aliased)]

    zones = band.dwell or (("none", 1.0, 0.0),)
    zone_lo = np.array([z[1] for z in zones])
    zone_hi = np.array([z[2] for z in zones])
    code_name = {v: k for k, v in LEVEL_CODES.items()}
    weights = np.array([o.weight for o in orders])[order_of]
    if sensor is not None:
        aliased_rows = alias_zones > 0
        if np.any(aliased_rows):
            mid = 0.5 * (true_hz[aliased_rows, 0] + true_hz[aliased_rows, 1])
            weights[aliased_rows] = seen_weight(weights[aliased_rows], np.asarray(sensor.gain(mid), dtype=float))
    fs = sensor.sample_rate_hz if sensor is not None else 0.0
    row_of = some % n_rows
    rule = window_levels(lows[some], highs[some], numbers[row_of], v_oc, params, peak, zone_lo, zone_hi,
                         weights[row_of], mode.frequency_low_hz, mode.frequency_high_hz, zeta, significance_floor,
                         alias_zones[row_of], fs)
    for j, k in enumerate(some):
        side = "rising" if k < n_rows else "falling"
        i = int(k % n_rows)
        oi = int(order_of[i])
        order = orders[oi]
        n = order.order
        zone = int(alias_zones[i])
        low, high = float(lows[k]), float(highs[k])
        d_c = float(d_nominal[side][i])
        crossing = d_c if idle <= d_c <= throttle_max else None
        margin_hover, mag, worst = margins(oi, bool(zone))
        touches = band.flies and low <= band.throttle_high and band.throttle_low <= high
        weight = float(weights[i])
        in_dwell = bool(rule["in_dwell"][j])
        dz = zones[int(rule["dwell_index"][j])] if in_dwell else None
        significance = float(rule["significance"][j])
        out[oi].append(
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
                excitation_low_hz=float(n * rule["rotor_low_hz"][j]),
                excitation_high_hz=float(n * rule["rotor_high_hz"][j]),
                lies_in="dwell" if in_dwell else "passage",
                significance=significance,
                significant=bool(significance >= significance_floor),
                level=code_name[int(rule["level"][j])],
                dwell_zone=None if dz is None else dz[0],
                dwell_low=None if dz is None else dz[1],
                dwell_high=None if dz is None else dz[2],
                margin_in_part=float(rule["margin"][j]),
                side=side,
            )
        )
    for group in out:
        group.sort(key=lambda w: (w.side != "rising", w.nyquist_zone))
    return out


def merge_windows(mode: str, windows: Sequence[Window]) -> tuple[DangerRange, ...]:
    """Merge one mode's windows (all orders, all pack states) into danger ranges.

    Parameters
    ----------
    mode : str
        Name of the mode the windows belong to.
    windows : sequence of Window
        That mode's clash windows (throttle edges as fractions).

    Returns
    -------
    tuple of DangerRange
        Danger ranges in rising throttle order; overlapping or touching windows
        share a range.
    """
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
    order_of_states = list(dict.fromkeys(["full", "nominal", "empty"] + [w.pack_state for w in group]))
    states = tuple(s for s in order_of_states if any(w.pack_state == s for w in group))
    return DangerRange(
        mode=mode,
        throttle_low=min(w.throttle_low for w in group),
        throttle_high=max(w.throttle_high for w in group),
        orders=tuple(labels),
        pack_states=states,
        aliased=any(w.aliased for w in group),
        all_aliased=all(w.aliased for w in group),
        touches_operating_band=any(w.touches_operating_band for w in group),
        lies_in="dwell" if any(w.lies_in == "dwell" for w in group) else "passage",
        level=max((w.level for w in group), key=lambda lv: LEVEL_CODES[lv]),
        per_state=tuple(
            (s, min(w.throttle_low for w in group if w.pack_state == s),
             max(w.throttle_high for w in group if w.pack_state == s))
            for s in states
        ),
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
    dwell_spread: float = 0.03,
    cruise_dwell: bool = False,
    measured_dwell: Sequence[tuple[float, float]] | None = None,
    significance_floor: float = SIGNIFICANCE_FLOOR,
    measured_dwell_hz: bool = False,
) -> ClashResult:
    """Run the whole clash check.

    Aliased windows whose weight, after the anti-alias filter, is below
    ``weight_floor`` are left out of the windows and the verdict; a note
    counts them.

    Parameters
    ----------
    drive : Drive
        The drive model.
    modes : sequence of Mode
        The frame modes.
    orders : sequence of Order
        The excitation orders.
    policy : MarginPolicy
        Margin policy.
    mass_kg : float
        All-up mass [kg].
    pack_states : sequence of str
        Pack states checked.
    idle, throttle_max, cruise : float
        Idle, maximum and cruise throttle [fraction].
    stated_hover : float, optional
        Hover throttle stated by the build [fraction].
    sensor : Sensor, optional
        The flight sensor (aliased windows).
    name : str
        Build name.
    notes : sequence of str
        Notes carried from the build.
    weight_floor : float
        Aliased windows below this weight after the filter are left out.
    dwell_spread : float
        Half-width of the hover and cruise dwell zones [throttle fraction].
    cruise_dwell : bool
        Whether the craft dwells at cruise.
    measured_dwell : sequence of (low, high), optional
        Dwell zones from a measured throttle occupancy [fraction].
    significance_floor : float
        Weight after the filter × magnification an order needs to make a clash.
    measured_dwell_hz : bool
        Whether ``measured_dwell`` holds rotor-rate bands [Hz] instead of throttles.

    Returns
    -------
    ClashResult
        Windows for every mode × order × pack state, danger ranges per mode,
        margins at hover and cruise, findings and the verdict.
    """
    bands = operating_bands(drive, mass_kg, pack_states, idle, cruise, stated_hover, throttle_max=throttle_max,
                            dwell_spread=dwell_spread, cruise_dwell=cruise_dwell, measured_dwell=measured_dwell,
                            measured_dwell_hz=measured_dwell_hz)
    findings = tuple(
        CheckFinding("cannot_hover", "clash", b.pack_state, b.hover.throttle)
        for b in bands if b.hover.how != "unknown" and not b.hover.can_hover
    )
    found_notes = [CheckNote("given", text=str(n)) for n in notes]
    if any(b.hover.how == "unknown" for b in bands):
        found_notes.append(CheckNote("hover_unknown"))
    for b in bands:
        if b.hover.how != "unknown" and not b.hover.can_hover:
            continue  # a finding of its own (findings[])
        elif b.flies and b.hover.how != "unknown" and b.hover.throttle > cruise:
            found_notes.append(CheckNote("hover_above_cruise", b.pack_state, b.hover.throttle, cruise))
    for state in pack_states:  # past the pack's maximum-power point the rate falls with throttle
        peak_hz, peak_d = _peak(drive, state, throttle_max)
        if idle < peak_d < throttle_max:
            found_notes.append(CheckNote("rotor_peak", state, float(peak_hz), float(peak_d)))
    used = {m.name: policy.damping_of(m)[0] for m in modes if m.damping is None}
    defaulted = tuple(name for name, z in used.items() if z == policy.default_damping)
    if defaulted:  # each mode's note names the ζ it is checked with, as the table shows it
        found_notes.append(CheckNote("damping_default", value=policy.default_damping, names=defaulted))
    for name, z in used.items():
        if z != policy.default_damping:
            found_notes.append(CheckNote("damping_bound", value=z, other=policy.default_damping, names=(name,)))

    all_windows: list[Window] = []
    mode_results = []
    faint = 0
    verdict = "clear"
    for mode in modes:
        zeta, was_assumed = policy.damping_of(mode)
        sm = policy.required_margin(mode)
        windows = []
        for band in bands:
            for per_order in _windows_of(drive, mode, orders, band, policy, idle, throttle_max, sensor,
                                         significance_floor):
                for w in per_order:
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
        counted = [w for w in windows if w.level != "clear"]
        deciding = max(counted, key=lambda w: (LEVEL_CODES[w.level], w.significance), default=None)
        mode_verdict = "clear" if deciding is None else deciding.level
        lies_in = None
        if counted:
            lies_in = "dwell" if any(w.lies_in == "dwell" for w in counted) else "passage"
        verdict = worse_verdict(verdict, mode_verdict)
        all_windows.extend(windows)
        mode_results.append(
            ModeResult(
                mode=mode,
                damping=zeta,
                damping_assumed=was_assumed,
                amplification_factor=amplification_factor(zeta),
                required_margin=sm,
                danger_ranges=merge_windows(mode.name, counted),
                margins=tuple(margins),
                verdict=mode_verdict,
                lies_in=lies_in,
                deciding=deciding,
            )
        )
    if faint:
        found_notes.append(CheckNote("aliased_left_out", value=weight_floor, count=faint))
    for finding in findings:
        verdict = worse_verdict(verdict, finding.level)
    all_windows.sort(key=lambda w: (-LEVEL_CODES[w.level], not w.touches_operating_band, -w.severity,
                                    w.throttle_low))
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
        findings=findings,
        dwell_source="default" if measured_dwell is None else "measured",
        dwell_spread=dwell_spread,
        cruise_dwell=cruise_dwell,
        significance_floor=significance_floor,
        close_pairs=close_modes(modes),
    )


def check_build(build) -> ClashResult:
    """Run the clash check of a build.

    Parameters
    ----------
    build : Build
        The build (:class:`clashcheck.model.build.Build`).

    Returns
    -------
    ClashResult
    """
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
        dwell_spread=fl.dwell_spread,
        cruise_dwell=fl.cruise_dwell,
        measured_dwell=None if fl.occupancy is None else fl.occupancy.dwell_zones(),
        significance_floor=build.check.significance_floor,
        measured_dwell_hz=fl.occupancy is not None and fl.occupancy.quantity == "rotor_hz",
    )
