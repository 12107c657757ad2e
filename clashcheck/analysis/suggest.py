"""Suggestions computed from a check: what change would clear a clash.

Each clashing mode is looked at on its own (most severe first).  A change is
proposed only where the engine can compute one, and every proposal is then
run through a full :func:`~clashcheck.analysis.clash.check_build` of the
changed build.  It is a **fix** when that check takes the mode out of
``clash`` (to ``watch`` or ``clear``) without a new clash anywhere (no other
mode turning ``clash``, no pack state where the craft cannot hover);
otherwise it is **partial**, with the windows that remain on the mode.

The changes, each bounded so that it names something a builder can do:

- **Structural** (for every clashing mode):

  - *mode frequency*: the nearest frequency, below and above, at which no
    significant order in a dwell zone comes within the required margin at any
    pack state (stiffer or softer structure, or a moved mass); within
    :data:`MODE_SCALE_RANGE` of the present figure.  Of the two, a fix that
    lands close to no other mode (:func:`~clashcheck.analysis.close_modes.close_modes`)
    is preferred; a moved mode that lands close to another one names it in
    ``close_after``, the gap in ``details["close_gap"]`` (close modes exchange
    energy; the verdict does not judge that, so the suggestion stays a fix and
    the report says so);
  - *damping*: the damping ratio (damping tape, or soft mounting of the
    item) at which the required margin drops below the margin the dwell
    zones keep now; at most :data:`MAX_DAMPING` for the mode's kind.

- **Operating point** (for the order that makes the clash):

  - the clash lies in the cruise dwell zone (a build that cruises): the
    cruise throttle that keeps the zone (cruise ± the dwell spread) below the
    order's windows at every pack state (at least
    :data:`MIN_CRUISE_ABOVE_HOVER` above hover); the Kv that keeps the order
    below the mode's margin over that zone (solved with
    :func:`scipy.optimize.brentq` on the loaded drive model, winding
    resistance scaled as for a rewind,
    :func:`clashcheck.analysis.pick.kv_variant`; at most
    :data:`MAX_KV_CHANGE` lower); a neighbouring cell count
    (±:data:`MAX_CELL_STEP`) that clears it;
  - the clash lies in the hover dwell zone: the all-up mass (payload or
    pack, not at the arm tips) that moves the zone out of the margin (the
    hover rotor rate goes as √mass; Kv and cells move the hover throttle, not
    the hover rotor rate), within ±:data:`MAX_MASS_CHANGE`.

A clash is what the check calls one: a significant order in a dwell zone
(:func:`clashing_windows`); the dwell zones are the check's own
(:func:`dwell_zones`).

No change is proposed that puts hover outside the usable hover range
(:data:`USABLE_HOVER`, the same range ``pick`` ranks by) at a pack state
where it is inside now, or further outside where it is outside now; nor a
cell count on which the build cannot hover.

This module is pure: it returns :class:`Suggestion` records (kind, numbers,
mode and order) and formats nothing (see :mod:`clashcheck.report.decide`).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field, replace

import numpy as np

from ..model.modes import Mode, amplification_factor
from .clash import ClashResult, Window, _apparent_range, check_build
from .close_modes import ClosePair, close_modes
from .pick import DEFAULT_HOVER_RANGE

__all__ = [
    "SUGGESTION_KINDS",
    "USABLE_HOVER",
    "MAX_DAMPING",
    "MAX_CELL_STEP",
    "MAX_MASS_CHANGE",
    "MIN_CRUISE_ABOVE_HOVER",
    "MODE_SCALE_RANGE",
    "MAX_KV_CHANGE",
    "Remaining",
    "Suggestion",
    "clashing_windows",
    "dwell_zones",
    "suggest",
]

#: What a suggestion changes.
SUGGESTION_KINDS = ("mode-frequency", "damping", "cruise", "kv", "cells", "mass")
#: Usable hover throttle [fraction]: pick's hover range (headroom above, throttle resolution below).
USABLE_HOVER = DEFAULT_HOVER_RANGE
#: Largest damping ratio proposed, by mode kind: an item on soft mounts (stack, other) can reach it,
#: an arm or plate with damping treatment cannot go much past a few percent (judgement).
MAX_DAMPING = {"stack": 0.25, "other": 0.25, "arm": 0.08, "plate": 0.08}
#: Cell counts tried on either side of the build's own.
MAX_CELL_STEP = 2
#: Cruise proposed at least this far above the highest hover [fraction of throttle]: forward flight
#: needs thrust beyond hover, so a cruise barely above hover is no cruise (judgement).
MIN_CRUISE_ABOVE_HOVER = 0.10
#: Largest relative change of all-up mass proposed (a payload or pack change, judgement).
MAX_MASS_CHANGE = 0.25
#: Mode frequency proposed within this factor range of the present figure (stiffness ×0.44 to ×2.25
#: at the same mass: a re-designed part, not a new airframe; judgement).
MODE_SCALE_RANGE = (2.0 / 3.0, 1.5)
#: Largest relative change of Kv proposed: the next windings of the same stator (judgement).
MAX_KV_CHANGE = 0.25
#: Clashing modes looked at, most severe first.
_MAX_MODES = 6
#: How far past a computed limit the checked change goes [relative].
_STEP = 1e-3


@dataclass(frozen=True)
class Remaining:
    """A window that still makes the mode clash after a change."""

    #: Order label.
    order: str
    #: Whether it is seen through the sensor fold.
    aliased: bool
    #: Pack state.
    pack_state: str
    #: Throttle interval [fraction].
    throttle_low: float
    throttle_high: float


@dataclass(frozen=True)
class Suggestion:
    """One computed change and what a full check of the changed build gives."""

    #: One of :data:`SUGGESTION_KINDS`.
    kind: str
    #: Mode name.
    mode: str
    #: Label of the order it addresses (the mode's most severe clashing order for structural changes).
    order: str
    #: Whether that order is seen through the sensor fold.
    aliased: bool
    #: The proposed figure: frequency [Hz], damping ratio, cruise [fraction], Kv [Hz/V], cells, mass [kg].
    value: float
    #: The build's own figure, same unit.
    current: float
    #: ``"fix"`` or ``"partial"`` (see the module notes).
    status: str
    #: The mode's verdict after the change.
    mode_verdict_after: str
    #: The build's verdict after the change.
    verdict_after: str
    #: Modes that clash after the change but did not before.
    new_clashes: tuple[str, ...]
    #: Pack states at which the changed build cannot hover.
    cannot_hover: tuple[str, ...]
    #: Windows that still make the mode clash.
    remaining: tuple[Remaining, ...]
    #: Hover throttle after the change, lowest and highest over the pack states [fraction]; nan unknown.
    hover_after: tuple[float, float]
    #: Extra figures (other side of a two-sided limit, margins), SI, keys with unit suffixes.
    details: dict[str, float] = field(default_factory=dict)
    #: Modes that a moved mode sits close to after the move (mode-frequency only); the
    #: smallest gap is ``details["close_gap"]``.
    close_after: tuple[str, ...] = ()

    @property
    def change(self) -> float:
        """Relative change from the build's own figure [fraction]."""
        return self.value / self.current - 1.0 if self.current else math.nan

    @property
    def is_fix(self) -> bool:
        """Whether the full check confirms the mode leaves ``clash`` with no new clash."""
        return self.status == "fix"


# ---------------------------------------------------------------------------
# What counts as a clash, and where the craft dwells (the verdict rule's terms)


def clashing_windows(result: ClashResult, mode: str) -> list[Window]:
    """The windows that make ``mode`` clash in ``result``.

    Parameters
    ----------
    result : ClashResult
        A check.
    mode : str
        Mode name.

    Returns
    -------
    list of Window
        Windows of that mode at level ``clash`` (a significant order in a dwell zone), most severe first.
    """
    return [w for w in result.windows if w.mode == mode and w.level == "clash"]


def dwell_zones(result: ClashResult) -> list[tuple[str, float, float]]:
    """Where the craft dwells, per pack state: ``(pack state, low, high)`` throttle [fraction].

    Parameters
    ----------
    result : ClashResult
        A check.

    Returns
    -------
    list of tuple
        Every dwell zone of each pack state at which the craft flies (hover ± spread,
        cruise when the build cruises there, or the measured zones).
    """
    return [(b.pack_state, lo, hi) for b in result.bands if b.flies for _what, lo, hi in b.dwell]


# ---------------------------------------------------------------------------
# Confirming a change


def _clash_modes(result: ClashResult) -> set[str]:
    return {mr.mode.name for mr in result.modes if mr.verdict == "clash"}


def _cannot_hover(result: ClashResult) -> tuple[str, ...]:
    return tuple(b.pack_state for b in result.bands if b.hover.how != "unknown" and not b.hover.can_hover)


def _hover_span(result: ClashResult) -> tuple[float, float]:
    known = [b.hover.throttle for b in result.bands if b.hover.how != "unknown"]
    return (min(known), max(known)) if known else (math.nan, math.nan)


def _hover_ok(before: ClashResult, after: ClashResult) -> bool:
    """No pack state's hover leaves the usable range, or moves further out of it."""
    low, high = USABLE_HOVER
    was = {b.pack_state: b.hover for b in before.bands}
    for band in after.bands:
        h = band.hover
        if h.how == "unknown":
            continue
        if not h.can_hover:
            return False
        old = was.get(band.pack_state)
        distance = max(low - h.throttle, h.throttle - high, 0.0)
        old_distance = math.inf if old is None or not old.can_hover else max(
            low - old.throttle, old.throttle - high, 0.0)
        if distance > 0 and distance > old_distance + 1e-12:
            return False
    return True


def _confirm(kind, mode, window, value, current, before, changed, details=None) -> Suggestion:
    after = check_build(changed)
    mode_after = next(mr.verdict for mr in after.modes if mr.mode.name == mode)
    new = tuple(sorted(_clash_modes(after) - _clash_modes(before)))
    lost = tuple(s for s in _cannot_hover(after) if s not in _cannot_hover(before))
    fix = mode_after != "clash" and not new and not lost
    remaining = tuple(Remaining(w.label, w.aliased, w.pack_state, w.throttle_low, w.throttle_high)
                      for w in clashing_windows(after, mode))
    return Suggestion(kind, mode, window.label, window.aliased, float(value), float(current),
                      "fix" if fix else "partial", mode_after, after.verdict, new, _cannot_hover(after), remaining,
                      _hover_span(after), dict(details or {}))


def _order_clears(after: ClashResult, mode: str, window: Window) -> bool:
    return not any(w.label == window.label and w.aliased == window.aliased for w in clashing_windows(after, mode))


# ---------------------------------------------------------------------------
# Structural changes


def _excitation_intervals(build, result: ClashResult, zeta: float) -> list[tuple[float, float]]:
    """Apparent excitation frequency intervals [Hz] of the orders over the dwell zones.

    An order counts where it could be significant on this mode: its weight
    (after the anti-alias filter for aliased pieces) × the mode's amplification
    factor reaches the build's significance floor.  Aliased pieces count, as
    in the check, when that weight also reaches the weight floor.
    """
    drive = build.drive()
    sensor = build.sensor
    floor = build.check.significance_floor
    af = amplification_factor(zeta)
    out: list[tuple[float, float]] = []
    for state, low, high in dwell_zones(result):
        grid = np.linspace(low, high, 9)   # the rate may peak inside a zone on a sagging pack
        rates = np.asarray(drive.rotor_hz(grid, state), dtype=float)
        r_lo, r_hi = float(np.min(rates)), float(np.max(rates))
        for order in result.orders:
            x_lo, x_hi = order.order * r_lo, order.order * r_hi
            if order.weight * af >= floor:
                out.append((x_lo, x_hi))
            if sensor is not None and x_hi > sensor.nyquist_hz:
                weight = order.weight * float(sensor.gain(max(x_lo, sensor.nyquist_hz)))
                if weight >= build.check.weight_floor and weight * af >= floor:
                    out.extend(_apparent_range(max(x_lo, sensor.nyquist_hz), x_hi, sensor))
    return out


def _dwell_margin(mode: Mode, intervals: Sequence[tuple[float, float]]) -> float:
    """Smallest relative margin of the intervals from the mode's frequency (range)."""
    lo, hi = mode.frequency_low_hz, mode.frequency_high_hz
    assert lo is not None and hi is not None
    best = math.inf
    for a, b in intervals:
        if b >= lo and a <= hi:
            return 0.0
        best = min(best, (lo - b) / lo if b < lo else (a - hi) / hi)
    return best


def _scaled_mode(mode: Mode, scale: float) -> Mode:
    assert mode.frequency_low_hz is not None and mode.frequency_high_hz is not None
    return replace(mode, frequency_hz=mode.frequency_hz * scale, frequency_low_hz=mode.frequency_low_hz * scale,
                   frequency_high_hz=mode.frequency_high_hz * scale)


def _with_mode(build, mode: Mode):
    return replace(build, modes=tuple(mode if m.name == mode.name else m for m in build.modes))


def _mode_frequency(build, result, mr, window) -> list[Suggestion]:
    """The nearest mode frequencies (below and above) that keep every dwell excitation out of the margin."""
    mode, sm = mr.mode, mr.required_margin
    if sm >= 1.0:
        return []
    intervals = _excitation_intervals(build, result, mr.damping)
    # scale s is forbidden when [s·f_lo·(1−sm), s·f_hi·(1+sm)] meets an interval [a, b]
    forbidden = sorted((a / (mode.frequency_high_hz * (1 + sm)), b / (mode.frequency_low_hz * (1 - sm)))
                       for a, b in intervals)
    merged: list[list[float]] = []
    for a, b in forbidden:
        if merged and a <= merged[-1][1]:
            merged[-1][1] = max(merged[-1][1], b)
        else:
            merged.append([a, b])
    here = next((iv for iv in merged if iv[0] <= 1.0 <= iv[1]), None)
    if here is None:
        return []
    lo_s, hi_s = MODE_SCALE_RANGE
    down, up = here[0] * (1 - _STEP), here[1] * (1 + _STEP)
    options = []
    for scale in (down, up):
        if lo_s <= scale <= hi_s:
            changed = _with_mode(build, _scaled_mode(mode, scale))
            details = {"scale": scale, "required_margin": sm}
            pairs = _close_pairs(changed.modes, mode.name)
            if pairs:
                details["close_gap"] = min(p.gap for p in pairs)
            sug = _confirm("mode-frequency", mode.name, window, mode.frequency_hz * scale,
                           mode.frequency_hz, result, changed, details)
            options.append(replace(sug, close_after=tuple(
                p.upper if p.lower == mode.name else p.lower for p in pairs)))
    if not options:
        return []
    # the nearer figure that is a fix, and lands close to no other mode, else the nearer one
    best = min(options, key=lambda s: (not s.is_fix, bool(s.close_after), abs(math.log(s.value / s.current))))
    other = [s for s in options if s is not best]
    if other:
        key = "other_side_hz"
        best = replace(best, details={**best.details, key: other[0].value,
                                      "other_side_is_fix": float(other[0].is_fix)})
    return [best]


def _close_pairs(modes: Sequence[Mode], name: str) -> list[ClosePair]:
    """The close pairs (default separation, or overlapping half-power bands) that mode ``name`` is in."""
    return [p for p in close_modes(modes) if name in (p.lower, p.upper)]


def _damping(build, result, mr, window) -> list[Suggestion]:
    """The damping ratio whose required margin falls below the margin the dwell zones keep."""
    from scipy.optimize import brentq

    policy = build.check.policy
    mode = mr.mode
    cap = MAX_DAMPING.get(mode.kind, 0.08)
    parts = [w.margin_in_part for w in clashing_windows(result, mode.name) if w.margin_in_part is not None]
    present = min(parts) if parts else _dwell_margin(mode, _excitation_intervals(build, result, mr.damping))
    zeta0 = mr.damping
    if not math.isfinite(present) or zeta0 >= cap:
        return []

    def excess(z: float) -> float:
        return float(policy.margin_for_damping(z)) - present * (1 - _STEP)

    if excess(zeta0) <= 0 or excess(cap) > 0:
        return []  # already enough by the policy (the clash is elsewhere), or beyond what can be done
    if present * (1 - _STEP) <= 0:
        target = cap if float(policy.margin_for_damping(cap)) <= 0 else math.nan
        if math.isnan(target):
            return []
        # the smallest damping at which no margin is required
        target = brentq(lambda z: float(policy.margin_for_damping(z)) - 1e-12, zeta0, cap, xtol=1e-10)
        target *= 1 + _STEP
    else:
        target = brentq(excess, zeta0, cap, xtol=1e-10) * (1 + _STEP)
    target = min(target, cap)
    changed = _with_mode(build, replace(mode, damping=target))
    return [_confirm("damping", mode.name, window, target, zeta0, result, changed,
                     {"dwell_margin": present, "required_margin_after": float(policy.margin_for_damping(target)),
                      "damping_cap": cap})]


# ---------------------------------------------------------------------------
# Operating-point changes


def _zone(result, state, what):
    band = next(b for b in result.bands if b.pack_state == state)
    return next(((lo, hi) for w, lo, hi in band.dwell if w == what), None)


def _cruise(build, result, mr, windows) -> list[Suggestion]:
    """Cruise (with its dwell spread) kept below the order's windows at every pack state."""
    spread = build.flight.dwell_spread
    limit = min(w.throttle_low for w in windows)
    known = [b.hover.throttle for b in result.bands if b.flies and b.hover.how != "unknown"]
    if not known:
        return []
    top_hover = max(known)
    cruise = limit - spread - _STEP
    if cruise < max(top_hover + MIN_CRUISE_ABOVE_HOVER, build.flight.idle) or cruise >= build.flight.cruise:
        return []
    changed = replace(build, flight=replace(build.flight, cruise=cruise))
    after = check_build(changed)
    if not _order_clears(after, mr.mode.name, windows[0]):
        return []
    return [_confirm("cruise", mr.mode.name, windows[0], cruise, build.flight.cruise, result, changed,
                     {"window_starts_throttle": limit, "dwell_spread": spread})]


def _kv(build, result, mr, windows) -> list[Suggestion]:
    """The Kv that keeps the order below the mode's margin over the cruise dwell zone at every pack state."""
    from scipy.optimize import brentq

    from .pick import kv_variant

    if windows[0].aliased:
        return []  # an aliased line moves with the fold, not monotonically: no single Kv limit
    order = windows[0].order
    edge_hz = mr.mode.frequency_low_hz * (1.0 - mr.required_margin)
    kv0 = build.motor.kv_hz_per_v
    top = min(build.flight.max, build.flight.cruise + build.flight.dwell_spread)
    states = [b.pack_state for b in result.bands if b.flies]

    def excess(scale: float) -> float:
        drive = replace(build, motor=kv_variant(build.motor, kv0 * scale)).drive()
        return max(order * float(drive.rotor_hz(top, s)) for s in states) / edge_hz - 1.0

    lowest = 1.0 - MAX_KV_CHANGE
    if not states or excess(1.0) <= 0 or excess(lowest) >= 0:
        return []
    scale = brentq(excess, lowest, 1.0, xtol=1e-10) * (1 - _STEP)
    changed = replace(build, motor=kv_variant(build.motor, kv0 * scale))
    after = check_build(changed)
    if not _hover_ok(result, after) or not _order_clears(after, mr.mode.name, windows[0]):
        return []
    return [_confirm("kv", mr.mode.name, windows[0], kv0 * scale, kv0, result, changed,
                     {"margin_edge_hz": edge_hz, "cruise_top_throttle": top})]


def _cells(build, result, mr, windows) -> list[Suggestion]:
    n0 = build.pack.cells
    tries = sorted((n for n in range(n0 - MAX_CELL_STEP, n0 + MAX_CELL_STEP + 1) if n >= 1 and n != n0),
                   key=lambda n: (abs(n - n0), n))
    for cells in tries:
        changed = replace(build, pack=replace(build.pack, cells=cells))
        after = check_build(changed)
        if _hover_ok(result, after) and _order_clears(after, mr.mode.name, windows[0]):
            return [_confirm("cells", mr.mode.name, windows[0], cells, n0, result, changed)]
    return []


def _mass(build, result, mr, windows) -> list[Suggestion]:
    """All-up mass that takes the hover dwell zone out of the margin at every pack state.

    The hover rotor rate goes as √m (thrust N·C_T·ρ·n²·D⁴ = m·g); the zone is
    hover ± the dwell spread in throttle, so the mass is solved on the drive
    model (:func:`scipy.optimize.brentq`) for the zone's edge to meet the
    margin's edge.
    """
    from scipy.optimize import brentq

    mode, sm = mr.mode, mr.required_margin
    bands = [b for b in result.bands if b.flies]
    if windows[0].aliased or not bands or any(b.hover.how != "computed" or not b.hover.can_hover for b in bands):
        return []
    order = windows[0].order
    spread = build.flight.dwell_spread
    fl = build.flight
    m0 = build.mass_kg

    def zone_hz(mass: float, side: float) -> float:
        drive = build.drive()
        rates = []
        for b in bands:
            h = drive.hover(mass, b.pack_state, None)
            t = min(fl.max, max(fl.idle, h.throttle + side * spread))
            rates.append(order * float(drive.rotor_hz(t, b.pack_state)))
        return max(rates) if side > 0 else min(rates)

    options = []
    below = mode.frequency_low_hz * (1 - sm)
    above = mode.frequency_high_hz * (1 + sm)
    for lo_m, hi_m, f in (
        (m0 * (1 - MAX_MASS_CHANGE), m0, lambda m: zone_hz(m, +1.0) - below * (1 - _STEP)),   # lighter
        (m0, m0 * (1 + MAX_MASS_CHANGE), lambda m: zone_hz(m, -1.0) - above * (1 + _STEP)),   # heavier
    ):
        try:
            if f(lo_m) * f(hi_m) > 0:
                continue
            mass = brentq(f, lo_m, hi_m, xtol=1e-9)
        except ValueError:       # hover out of reach inside the range: no bracket
            continue
        changed = replace(build, mass_kg=mass)
        after = check_build(changed)
        if _hover_ok(result, after) and _order_clears(after, mode.name, windows[0]):
            options.append(_confirm("mass", mode.name, windows[0], mass, m0, result, changed,
                                    {"dwell_spread": spread}))
    if not options:
        return []
    return [min(options, key=lambda s: (not s.is_fix, abs(s.change)))]


# ---------------------------------------------------------------------------


def suggest(build, result: ClashResult | None = None) -> tuple[Suggestion, ...]:
    """Computed, checked suggestions for the clashing modes of ``build``.

    Parameters
    ----------
    build : Build
        The build.
    result : ClashResult, optional
        Its check; computed when not given.

    Returns
    -------
    tuple of Suggestion
        For the six most severe clashing modes at most, fixes first within a
        mode; empty when nothing clashes or nothing computable applies.
    """
    if result is None:
        result = check_build(build)
    ranked = []
    for mr in result.modes:
        ws = clashing_windows(result, mr.mode.name)
        if mr.verdict == "clash" and ws:
            ranked.append((max(w.severity for w in ws), mr, ws))
    ranked.sort(key=lambda t: -t[0])
    out: list[Suggestion] = []
    for _sev, mr, ws in ranked[:_MAX_MODES]:
        top = ws[0]
        group = [w for w in ws if w.label == top.label and w.aliased == top.aliased]
        zones = {w.dwell_zone for w in group}
        found = _mode_frequency(build, result, mr, top) + _damping(build, result, mr, top)
        if "hover" in zones:
            found += _mass(build, result, mr, group)
        elif zones & {"cruise", "operating band"}:
            found += _cruise(build, result, mr, group) + _kv(build, result, mr, group) + _cells(build, result, mr, group)
        found.sort(key=lambda s: not s.is_fix)
        out.extend(found)
    return tuple(out)
