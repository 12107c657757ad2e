"""Suggestions computed from a check: what change would clear a clash.

Each clash (an order's windows on a mode that touch the operating band) is
looked at on its own, and a change is suggested only where the engine can
compute one and then confirm it with a full check of the changed build:

- **The window sits above hover** (the band's top, cruise, reaches it):
  the cruise throttle that keeps below it at every pack state; the Kv that
  keeps the order below the mode's margin at cruise at every pack state
  (solved with :func:`scipy.optimize.brentq` on the loaded drive model, the
  winding resistance scaled as for a rewind, see :func:`clashcheck.pick.kv_variant`);
  the largest smaller cell count that clears it.
- **Hover sits inside the margin**: a computed hover rotor rate is set by
  thrust (N·C_T·ρ·n²·D⁴ = m·g), not by Kv or cell count, so neither can move
  it.  Suggested instead are the mode frequency that keeps hover out of the
  margin at every pack state, and the all-up mass (payload or pack, not at
  the arm tips) that moves hover out of it.  Clearing hover does not always
  clear the clash (the band may still sweep through the mode on the way to
  cruise); the full check of the changed build says which.

Every suggestion carries the verdict of the changed build and whether this
clash is gone, so its text is never canned: it reports numbers found here.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

from .clash import ClashResult, check_build

__all__ = ["Suggestion", "suggest"]

#: Clashes looked at, most severe first.
_MAX_CLASHES = 6
#: How far past a computed limit the checked change goes [relative].
_STEP = 1e-3


@dataclass(frozen=True)
class Suggestion:
    """One computed change and what a full check of it gives."""

    #: ``"cruise"``, ``"kv"``, ``"cells"``, ``"mode-frequency"`` or ``"mass"``.
    kind: str
    #: Mode name.
    mode: str
    #: Order label (with ``(aliased)`` when it is).
    order: str
    #: The sentence for the report, built from the numbers below.
    text: str
    #: The key figure: cruise [fraction], Kv [Hz/V], cells, frequency [Hz] or mass [kg].
    value: float
    #: Relative change from the build's own figure [fraction]; ``nan`` where not meaningful.
    change: float
    #: Verdict of the changed build; ``None`` when no build was checked.
    verdict_after: str | None
    #: Whether this clash is gone in the changed build.
    clears: bool
    #: Extra numbers for JSON.
    details: dict[str, float | str] = field(default_factory=dict)


def _clash_groups(result: ClashResult):
    groups: dict[tuple[str, str, bool], list] = {}
    for w in result.windows:
        if w.touches_operating_band:
            groups.setdefault((w.mode, w.label, w.aliased), []).append(w)
    ranked = sorted(groups.items(), key=lambda kv: -max(w.severity for w in kv[1]))
    return ranked[:_MAX_CLASHES]


def _still_clashes(result: ClashResult, key) -> bool:
    mode, label, aliased = key
    return any(w.touches_operating_band and (w.mode, w.label, w.aliased) == (mode, label, aliased)
               for w in result.windows)


def _verify(build, key):
    res = check_build(build)
    return res, not _still_clashes(res, key)


def _hover_span(res: ClashResult) -> str:
    known = [b.hover.throttle for b in res.bands if b.hover.how != "unknown"]
    if not known:
        return "hover unknown"
    if not all(b.hover.can_hover for b in res.bands if b.hover.how != "unknown"):
        return "cannot hover at every pack state"
    return f"hover {100 * min(known):.0f}–{100 * max(known):.0f} %"


def _after(res: ClashResult, clears: bool) -> str:
    return (f"checked: this clash {'goes' if clears else 'stays'}, verdict {res.verdict}, {_hover_span(res)}")


def _cruise(build, result, key, windows):
    above = [w for w in windows if w.throttle_low > _band(result, w.pack_state).throttle_low]
    if len(above) != len(windows):
        return None
    limit = min(w.throttle_low for w in windows)
    top_hover = max(b.throttle_low for b in result.bands if b.flies)
    cruise = limit - _STEP
    if cruise <= max(top_hover, build.flight.idle):
        return None
    res, clears = _verify(replace(build, flight=replace(build.flight, cruise=cruise)), key)
    label = key[1] + (" (aliased)" if key[2] else "")
    state = min(windows, key=lambda w: w.throttle_low).pack_state
    text = (f"Keep cruise below {100 * limit:.1f} % (now {100 * build.flight.cruise:.0f} %): the {label} window "
            f"on {key[0]} starts there at the {state} pack; {_after(res, clears)}.")
    return Suggestion("cruise", key[0], label, text, cruise, cruise / build.flight.cruise - 1, res.verdict,
                      clears, {"window_starts_throttle": limit})


def _band(result, state):
    return next(b for b in result.bands if b.pack_state == state)


def _kv(build, result, key, windows):
    from scipy.optimize import brentq

    from .pick import kv_variant

    mode_result = next(mr for mr in result.modes if mr.mode.name == key[0])
    if key[2]:
        return None  # an aliased line moves with the fold, not monotonically: no single Kv limit
    order = windows[0].order
    edge_hz = mode_result.mode.frequency_low_hz * (1.0 - mode_result.required_margin)
    kv0 = build.motor.kv_hz_per_v
    cruise = build.flight.cruise
    states = [b.pack_state for b in result.bands if b.flies]

    def excess(scale: float) -> float:
        drive = replace(build, motor=kv_variant(build.motor, kv0 * scale)).drive()
        return max(order * float(drive.rotor_hz(cruise, s)) for s in states) / edge_hz - 1.0

    if not states or excess(1.0) <= 0 or excess(0.2) >= 0:
        return None
    scale = brentq(excess, 0.2, 1.0, xtol=1e-10) * (1 - _STEP)
    changed = replace(build, motor=kv_variant(build.motor, kv0 * scale))
    res, clears = _verify(changed, key)
    text = (f"A Kv {100 * (1 - scale):.1f} % lower ({60 * kv0 * scale:.0f} rpm/V instead of {60 * kv0:.0f}) keeps "
            f"{key[1]} below the {100 * mode_result.required_margin:.1f} % margin of {key[0]} "
            f"({edge_hz:.0f} Hz) at cruise at every pack state; {_after(res, clears)}.")
    return Suggestion("kv", key[0], key[1], text, kv0 * scale, scale - 1, res.verdict, clears,
                      {"kv_rpm_per_v": 60 * kv0 * scale, "margin_edge_hz": edge_hz})


def _cells(build, key):
    for cells in range(build.pack.cells - 1, 0, -1):
        changed = replace(build, pack=replace(build.pack, cells=cells))
        res, clears = _verify(changed, key)
        flies = all(b.flies for b in res.bands)
        if not flies:
            return None
        if clears:
            text = (f"{cells} cells instead of {build.pack.cells} keeps {key[1]} off {key[0]} across the band "
                    f"at every pack state; {_after(res, clears)}.")
            return Suggestion("cells", key[0], key[1], text, float(cells), cells / build.pack.cells - 1,
                              res.verdict, clears)
    return None


def _hover_inside(build, result, key, windows):
    mr = next(m for m in result.modes if m.mode.name == key[0])
    sm = mr.required_margin
    bands = [b for b in result.bands if b.flies and b.hover.how == "computed" and b.hover.can_hover]
    if key[2] or not bands or len(bands) != len([b for b in result.bands if b.flies]):
        return []
    order = windows[0].order
    f_hover = [order * b.hover.rotor_hz for b in bands]
    lo, hi = min(f_hover), max(f_hover)
    mode = mr.mode
    assert mode.frequency_low_hz is not None and mode.frequency_high_hz is not None
    margin_now = min(abs(f - mode.frequency_hz) / mode.frequency_hz for f in f_hover)
    down = lo / (1.0 + sm) * (1 - _STEP)       # the whole mode range must sit at or below this
    up = hi / (1.0 - sm) * (1 + _STEP) if sm < 1 else math.inf
    head = (f"Hover puts {key[1]} at {lo:.0f} Hz, {100 * margin_now:.1f} % from {key[0]} "
            f"({mode.frequency_hz:.0f} Hz; it needs {100 * sm:.1f} %). Kv and cell count move the hover throttle, "
            f"not the hover rotor rate, so they cannot clear it.")
    out = []
    target_hi = down * mode.frequency_hz / mode.frequency_high_hz
    target_lo = up * mode.frequency_hz / mode.frequency_low_hz
    shifted = []
    for target in (target_hi, target_lo):
        ratio = target / mode.frequency_hz
        if mode.is_range:
            new_mode = replace(mode, frequency_hz=target, frequency_low_hz=min(mode.frequency_low_hz * ratio, target),
                               frequency_high_hz=max(mode.frequency_high_hz * ratio, target))
        else:
            new_mode = replace(mode, frequency_hz=target, frequency_low_hz=target, frequency_high_hz=target)
        modes = tuple(new_mode if m.name == mode.name else m for m in build.modes)
        res, clears = _verify(replace(build, modes=modes), key)
        shifted.append((target, ratio - 1, res, clears))
    (f_dn, c_dn, r_dn, ok_dn), (f_up, c_up, r_up, ok_up) = shifted
    text = (head + f" Hover keeps the margin if the mode sits at or below {f_dn:.0f} Hz ({100 * c_dn:+.0f} %; "
            f"{_after(r_dn, ok_dn)}) or at or above {f_up:.0f} Hz ({100 * c_up:+.0f} %; {_after(r_up, ok_up)}).")
    best = min(shifted, key=lambda t: (not t[3], abs(t[1])))
    out.append(Suggestion("mode-frequency", key[0], key[1], text, best[0], best[1], best[2].verdict, best[3],
                          {"at_or_below_hz": f_dn, "at_or_above_hz": f_up}))
    # all-up mass: n_hover ∝ √m, so m' = m·(f'/f)²
    masses = []
    for edge, f_ref in ((mode.frequency_low_hz * (1 - sm) * (1 - _STEP), lo),
                        (mode.frequency_high_hz * (1 + sm) * (1 + _STEP), hi)):
        mass = build.mass_kg * (edge / f_ref) ** 2
        res, clears = _verify(replace(build, mass_kg=mass), key)
        masses.append((mass, mass / build.mass_kg - 1, res, clears))
    (m_dn, d_dn, mr_dn, k_dn), (m_up, d_up, mr_up, k_up) = masses
    text = (f"Hover rotor rate goes as √(all-up mass): at hover, {key[1]} leaves the margin of {key[0]} "
            f"at an all-up mass of at most {1e3 * m_dn:.0f} g ({100 * d_dn:+.0f} %; {_after(mr_dn, k_dn)}) or at least "
            f"{1e3 * m_up:.0f} g ({100 * d_up:+.0f} %; {_after(mr_up, k_up)}), with the change in payload or "
            f"pack, not at the arm tips (that would move the arm modes too).")
    best = min(masses, key=lambda t: (not t[3], abs(t[1])))
    out.append(Suggestion("mass", key[0], key[1], text, best[0], best[1], best[2].verdict, best[3],
                          {"at_most_kg": m_dn, "at_least_kg": m_up}))
    return out


def suggest(build, result: ClashResult | None = None) -> tuple[Suggestion, ...]:
    """Computed suggestions for the clashes of ``build``.

    Parameters
    ----------
    build : Build
        The build.
    result : ClashResult, optional
        Its check; computed when not given.

    Returns
    -------
    tuple of Suggestion
        For the six most severe clashes at most; empty when nothing clashes
        or nothing computable would clear it.
    """
    if result is None:
        result = check_build(build)
    out: list[Suggestion] = []
    for key, windows in _clash_groups(result):
        inside = [w for w in windows if w.throttle_low <= _band(result, w.pack_state).throttle_low]
        if inside:
            out.extend(_hover_inside(build, result, key, windows))
            continue
        for make in (_cruise, _kv):
            s = make(build, result, key, windows)
            if s is not None:
                out.append(s)
        if not key[2]:
            s = _cells(build, key)
            if s is not None:
                out.append(s)
    return tuple(out)
