"""Presentation of the deciding commands: compare, pick, suggestions, the check report with a diagram.

Nothing here computes: it turns the records of
:class:`~clashcheck.analysis.compare.CompareResult`,
:class:`~clashcheck.analysis.pick.PickResult` and
:class:`~clashcheck.analysis.suggest.Suggestion` into words, plain-text
tables, JSON dicts and Markdown.  This is the only place their sentences are
written.  JSON follows the contract conventions (DESIGN.md): throttles and
margins are fractions, frequencies end in ``_hz``, masses in ``_kg``.
"""

from __future__ import annotations

import math
import os
from pathlib import Path
from typing import Any

from .check import render, render_markdown, result_to_dict
from .common import CAUTIONS, JSON_SCHEMA_VERSION, dump_json, pct, pct_pair
from .common import num as _num

__all__ = [
    "finding_text",
    "mass_rule_text",
    "compare_to_dict",
    "render_compare",
    "pick_reasons",
    "search_note_text",
    "pick_to_dict",
    "render_pick",
    "suggestion_text",
    "suggestions_to_dict",
    "render_check_with_suggestions",
    "build_summary_rows",
    "render_check_report",
    "image_reference",
]


_STATE_ORDER = {"full": 0, "nominal": 1, "empty": 2}


def _pp(change: float) -> str:
    """A change of a fraction in percentage points."""
    return f"{100 * change:+.1f} pp"


def _hover_text(hover) -> str:
    if hover.how == "unknown":
        return "unknown"
    if not hover.can_hover:
        return "cannot hover" + (f" ({pct(hover.throttle)} needed)" if hover.throttle != float("inf") else "")
    return pct(hover.throttle)


# ---------------------------------------------------------------------------
# compare


def finding_text(f) -> str:
    """``"1× rotor on arm flap"`` (with ``(aliased)`` when it is), for a :class:`~clashcheck.analysis.compare.Finding`.

    Parameters
    ----------
    f : Finding
        A compare finding.

    Returns
    -------
    str
    """
    return f"{f.label}{' (aliased)' if f.aliased else ''} on {f.mode}"


def mass_rule_text(rule) -> str:
    """The sentence for how B's all-up mass was found (a :class:`~clashcheck.analysis.compare.MassRule`).

    Parameters
    ----------
    rule : MassRule
        The rule compare used.

    Returns
    -------
    str
    """
    used = f"{1e3 * rule.b_used_kg:.0f} g"
    change = "" if math.isnan(rule.parts_change_kg) else f"{1e3 * rule.parts_change_kg:+.1f} g"
    if rule.rule == "parts":
        why = ("B states the same all-up mass as A while its motors and propellers weigh differently, so the "
               "change in part mass is added, as pick does" if rule.reason == "same-mass-parts-differ"
               else "the change in part mass is added (asked)")
        return f"B's all-up mass: {used} (A's {1e3 * rule.a_kg:.0f} g {change}): {why}."
    why = {
        "b-states-own-mass": f"B states its own mass (its parts change the mass by {change or 'an unknown amount'})",
        "parts-unchanged": "B's motors and propellers weigh what A's do",
        "part-mass-unknown": "a motor or propeller mass is not known, so no part change can be added",
        "asked": "B's stated mass is kept (asked)",
    }.get(rule.reason, rule.reason)
    return f"B's all-up mass: {used} as stated: {why}."


def _finding_dicts(items) -> list[dict[str, Any]]:
    return [{"mode": f.mode, "order": f.label, "aliased": f.aliased} for f in items]


def _shift_dict(shift) -> dict[str, Any]:
    return {
        "applied": shift.applied,
        "old_tip_mass_kg": shift.old_tip_kg,
        "new_tip_mass_kg": shift.new_tip_kg,
        "arm_mass_kg": shift.arm_mass_kg,
        "arm_mass_source": shift.arm_mass_source,
        "frequency_ratio": _num(shift.ratio),
        "damping_ratio_factor": _num(shift.ratio),
        "shifted_modes": list(shift.shifted),
    }


def _ranges_dict(per_mode) -> dict[str, Any]:
    return {mode: {state: [{"throttle_low": r.throttle_low, "throttle_high": r.throttle_high,
                            "orders": list(r.orders), "touches_operating_band": r.touches_operating_band,
                            "lies_in": r.lies_in, "level": r.level}
                           for r in ranges] for state, ranges in per.items()}
            for mode, per in per_mode.items()}


def _mass_dict(rule) -> dict[str, Any] | None:
    if rule is None:
        return None
    return {"rule": rule.rule, "reason": rule.reason, "a_kg": rule.a_kg, "b_stated_kg": rule.b_stated_kg,
            "b_used_kg": rule.b_used_kg, "parts_change_kg": _num(rule.parts_change_kg)}


def compare_to_dict(cmp) -> dict[str, Any]:
    """The JSON document of a comparison.

    Parameters
    ----------
    cmp : CompareResult
        The comparison.

    Returns
    -------
    dict
    """
    def hover(h):
        return {"throttle": _num(h.throttle), "rotor_hz": _num(h.rotor_hz), "how": h.how,
                "can_hover": h.can_hover if h.how != "unknown" else None}

    return {
        "schema_version": JSON_SCHEMA_VERSION,
        "a": result_to_dict(cmp.a),
        "b": result_to_dict(cmp.b),
        "mode_shift": _shift_dict(cmp.shift),
        "mass": _mass_dict(cmp.mass),
        "danger_ranges_by_pack_state": {"a": _ranges_dict(cmp.ranges_a), "b": _ranges_dict(cmp.ranges_b)},
        "changes": {
            "clashes_appeared": _finding_dicts(cmp.appeared),
            "clashes_disappeared": _finding_dicts(cmp.disappeared),
            "clashes_deepened": [
                {"mode": d.mode, "point": d.point, "pack_state": d.pack_state, "margin_a": d.margin_a,
                 "margin_b": d.margin_b, "order_a": d.order_a, "order_b": d.order_b,
                 "required_margin_b": d.required_b, "magnification_a": d.magnification_a,
                 "magnification_b": d.magnification_b}
                for d in cmp.deepened
            ],
            "cannot_hover_b": list(cmp.lost_hover),
            "windows_appeared": _finding_dicts(cmp.windows_appeared),
            "windows_disappeared": _finding_dicts(cmp.windows_disappeared),
            "verdict_changes": [{"mode": v.mode, "verdict_a": v.verdict_a, "verdict_b": v.verdict_b}
                                for v in cmp.verdict_changes],
            "margin_changes": [
                {"mode": m.mode, "point": m.point, "pack_state": m.pack_state, "margin_a": m.margin_a,
                 "margin_b": m.margin_b, "change": m.change, "order_a": m.order_a, "order_b": m.order_b,
                 "required_margin_a": m.required_a, "required_margin_b": m.required_b}
                for m in cmp.margin_changes
            ],
            "empty_pack_hover": {"a": hover(cmp.empty_hover_a), "b": hover(cmp.empty_hover_b)},
        },
        "b_worse": {level: cmp.worse_at(level) for level in ("clash", "watch")},
        "notes": _compare_notes(cmp),
        "cautions": list(CAUTIONS),
    }


def _compare_notes(cmp) -> list[str]:
    notes = [] if cmp.mass is None else [mass_rule_text(cmp.mass)]
    notes += list(cmp.notes)
    h = cmp.empty_hover_b
    if h.how != "unknown" and not h.can_hover:
        notes.append("B cannot hover on an empty pack")
    return notes


def _states_text(per_state: dict[str, tuple[str, ...]], states: list[str]) -> str:
    """One text per pack state, printed once when every state reads the same."""
    texts = {state: "; ".join(per_state.get(state, ())) or "none" for state in states}
    if len(set(texts.values())) <= 1:
        return next(iter(texts.values()), "none")
    return "; ".join(f"{state}: {text}" for state, text in texts.items())


def _range_strings(per_state) -> dict[str, tuple[str, ...]]:
    """Per pack state: the ranges that reach a dwell zone (``*`` when they clash), and a count of the others."""
    out = {}
    for state, ranges in per_state.items():
        inside = [f"{pct(r.throttle_low)}–{pct(r.throttle_high)}{' *' if r.level == 'clash' else ''}"
                  for r in ranges if r.lies_in == "dwell"]
        others = len(ranges) - len(inside)
        if others:
            inside.append(f"+{others} in passage")
        out[state] = tuple(inside)
    return out


def _side_rows(cmp) -> list[list[str]]:
    a, b = cmp.a, cmp.b
    rows = [["verdict", a.verdict, b.verdict], ["drive model", a.model, b.model]]
    states = [x.pack_state for x in a.bands] + [x.pack_state for x in b.bands
                                                 if x.pack_state not in {y.pack_state for y in a.bands}]

    def per_state(result, text) -> str:
        bands = {x.pack_state: x for x in result.bands}
        return _states_text({s: (text(bands[s]),) for s in states if s in bands}, [s for s in states if s in bands])

    rows.append(["hover", per_state(a, lambda x: _hover_text(x.hover)), per_state(b, lambda x: _hover_text(x.hover))])

    def band_text(x):
        return f"{pct(x.throttle_low)}–{pct(x.throttle_high)}" if x.flies else "none"
    rows.append(["operating band", per_state(a, band_text), per_state(b, band_text)])

    def dwell_text(x):
        return ", ".join(f"{what} {pct(lo)}–{pct(hi)}" for what, lo, hi in x.dwell) if x.flies else "none"
    rows.append(["dwell zones", per_state(a, dwell_text), per_state(b, dwell_text)])
    rows.append(["all-up mass", f"{1e3 * cmp.build_a.mass_kg:.0f} g" if cmp.build_a is not None else "-",
                 f"{1e3 * cmp.build_b.mass_kg:.0f} g" if cmp.build_b is not None else "-"])
    rows.append(["hover on an empty pack", _hover_text(cmp.empty_hover_a), _hover_text(cmp.empty_hover_b)])
    return rows


def _mode_rows(cmp) -> list[list[str]]:
    b_modes = {mr.mode.name: mr for mr in cmp.b.modes}
    rows = []
    names = [mr.mode.name for mr in cmp.a.modes] + [n for n in b_modes if n not in
                                                      {mr.mode.name for mr in cmp.a.modes}]
    a_modes = {mr.mode.name: mr for mr in cmp.a.modes}
    for name in names:
        row = [name]
        for mr, result, ranges in ((a_modes.get(name), cmp.a, cmp.ranges_a), (b_modes.get(name), cmp.b, cmp.ranges_b)):
            if mr is None:
                row += ["-", "-", "-"]
                continue
            freq = f"{mr.mode.frequency_hz:.0f}"
            if mr.mode.origin == "shifted":
                d = mr.mode.details
                freq = f"{d['old_frequency_hz']:.0f} → {freq} (shifted"
                if isinstance(d.get("old_damping"), float) and isinstance(d.get("new_damping"), float):
                    freq += f"; ζ {d['old_damping']:.3f} → {d['new_damping']:.3f}"
                freq += ")"
            states = [x.pack_state for x in result.bands]
            row += [freq, _states_text(_range_strings(ranges.get(name, {})), states), mr.verdict]
        rows.append(row)
    return rows


def _margin_rows(cmp) -> list[list[str]]:
    """Margins at hover, each distinct row once (pack states that read the same are listed together)."""
    order = {name: i for i, name in enumerate(mr.mode.name for mr in cmp.a.modes)}
    grouped: dict[tuple[str, ...], list[str]] = {}
    for m in sorted(cmp.margin_changes, key=lambda m: (order.get(m.mode, 0), _STATE_ORDER.get(m.pack_state, 9))):
        if m.point != "hover":
            continue
        key = (m.mode, f"{pct(m.margin_a, 1)} ({m.order_a})", f"{pct(m.margin_b, 1)} ({m.order_b})",
               _pp(m.change), pct(m.required_b, 1))
        grouped.setdefault(key, []).append(m.pack_state)
    all_states = {m.pack_state for m in cmp.margin_changes}
    rows = []
    for row_key, states in grouped.items():
        packs = "all" if len(all_states) > 1 and set(states) == all_states else ", ".join(states)
        rows.append([row_key[0], packs, *row_key[1:]])
    return rows


def _change_lines(cmp) -> list[str]:
    lines = []
    for title, items in (("clashes that appear in B", cmp.appeared), ("clashes that disappear in B", cmp.disappeared),
                         ("windows outside the band that appear", cmp.windows_appeared),
                         ("windows outside the band that disappear", cmp.windows_disappeared)):
        lines.append(f"{title}: " + (", ".join(finding_text(f) for f in items) if items else "none"))
    deeper = [f"{d.mode} at {d.point} ({d.pack_state} pack): {pct(d.margin_a, 1)} → {pct(d.margin_b, 1)} "
              f"(needs {pct(d.required_b, 1)}; response ×{d.magnification_b / d.magnification_a:.1f})"
              for d in cmp.deepened]
    lines.append("clashes that get much worse in B: " + (", ".join(deeper) if deeper else "none"))
    if cmp.lost_hover:
        lines.append("B cannot hover at the " + ", ".join(cmp.lost_hover) + " pack (A can)")
    for v in cmp.verdict_changes:
        lines.append(f"verdict of {v.mode}: {v.verdict_a or 'absent'} → {v.verdict_b or 'absent'}")
    grouped: dict[tuple[str, str, str], list[str]] = {}
    for m in cmp.margin_changes:
        # only margins near their requirement in A or B (under twice it) are listed: a cruise
        # margin falling from 317 % to 234 % changes nothing a builder acts on (JSON has them all)
        near = min(m.margin_a, m.margin_b) < NEAR_FACTOR * max(m.required_a, m.required_b)
        if abs(m.change) >= 0.0005 and near:
            grouped.setdefault((m.mode, m.point, _pp(m.change)), []).append(m.pack_state)
    moved = sorted(grouped.items(), key=lambda kv: -abs(float(kv[0][2].split()[0])))

    def phrase(key, states):
        states = sorted(states, key=lambda x: _STATE_ORDER.get(x, 9))
        return f"{key[0]} at {key[1]} ({', '.join(states)}) {key[2]}"
    grow = [phrase(k, v) for k, v in moved if not k[2].startswith("-")][:5]
    shrink = [phrase(k, v) for k, v in moved if k[2].startswith("-")][:5]
    for title, items in (("margins near their requirement that grow most", grow),
                         ("margins near their requirement that shrink most", shrink)):
        lines.append(f"{title}: " + (", ".join(items) if items else "none"))
    h = cmp.empty_hover_b
    if h.how == "unknown":
        lines.append("B's hover on an empty pack is unknown (no C_T)")
    elif h.can_hover:
        lines.append(f"B can still hover on an empty pack ({pct(h.throttle)})")
    else:
        lines.append("B cannot hover on an empty pack")
    return lines


#: A margin under this many times its requirement (in A or B) is "near" it and its
#: change is listed among the changes; judgement.
NEAR_FACTOR = 2.0


class _Doc:
    """Lines of a report, as plain text for a terminal or as Markdown."""

    def __init__(self, markdown: bool) -> None:
        self.md = markdown
        self.lines: list[str] = []

    @property
    def table_format(self) -> str:
        return "github" if self.md else "simple"

    def title(self, text: str) -> None:
        self.lines += [f"# {text}" if self.md else text, ""]

    def section(self, text: str) -> None:
        if self.lines and self.lines[-1] != "":
            self.lines.append("")
        self.lines += [f"## {text}", ""] if self.md else [text]

    def para(self, text: str) -> None:
        self.lines += [text, ""]

    def bullets(self, items, mark: str = "-") -> None:
        self.lines += [("- " if self.md else f"  {mark} ") + str(i) for i in items]
        self.lines.append("")

    def numbered(self, items) -> None:
        self.lines += [(f"{i}. " if self.md else f"  {i}. ") + str(x) for i, x in enumerate(items, start=1)]
        self.lines.append("")

    def table(self, rows, headers) -> None:
        from tabulate import tabulate

        self.lines += [tabulate(rows, headers=headers, tablefmt=self.table_format), ""]

    def cautions(self) -> None:
        self.section("Cautions")
        self.bullets(CAUTIONS, mark="!")

    def text(self) -> str:
        return "\n".join(self.lines).rstrip("\n") + "\n"


def render_compare(cmp, fmt: str, fail_on: str = "clash") -> str:
    """A comparison as ``table``, ``json`` or ``markdown``.

    Parameters
    ----------
    cmp : CompareResult
    fmt : {"table", "json", "markdown"}
    fail_on : {"clash", "watch", "never"}
        The level at which "B is worse" is judged and stated.
    """
    if fmt == "json":
        return dump_json(compare_to_dict(cmp))
    doc = _Doc(fmt == "markdown")
    head_a, head_b = f"A: {cmp.a.name}", f"B: {cmp.b.name}"
    doc.title(f"Compare: {cmp.a.name} → {cmp.b.name}")
    if fail_on != "never":
        worse = cmp.worse_at(fail_on)
        line = f"B is {'worse' if worse else 'not worse'} than A at the '{fail_on}' level."
        doc.para(f"**{line}**" if doc.md else line)
    doc.section("Side by side (per pack state where they differ)")
    doc.table(_side_rows(cmp), ["", head_a, head_b])
    doc.section("Modes and danger ranges in dwell zones, per pack state (* clash; JSON has them all)")
    doc.table(_mode_rows(cmp), ["mode", "A f (Hz)", "A danger ranges", "A verdict",
                                "B f (Hz)", "B danger ranges", "B verdict"])
    margins = _margin_rows(cmp)
    if margins:
        doc.section("Margins at hover (nearest order)")
        doc.table(margins, ["mode", "pack", "A", "B", "change", "B needs"])
    doc.section("Changes")
    doc.bullets(_change_lines(cmp))
    notes = _compare_notes(cmp)
    if notes:
        doc.section("Notes")
        doc.bullets(notes)
    doc.cautions()
    return doc.text()


# ---------------------------------------------------------------------------
# pick


def pick_reasons(p, hover_range: tuple[float, float]) -> tuple[str, ...]:
    """The reasons for a candidate's place in the ranking, one phrase each.

    Parameters
    ----------
    p : Pick
        A ranked candidate.
    hover_range : (float, float)
        The hover range the search ranked by [fraction].

    Returns
    -------
    tuple of str
    """
    out = []
    if not p.flies:
        states = [s for s, h in p.hover.items() if not (math.isfinite(h) and h <= 1.0)]
        out.append("cannot hover at the " + ", ".join(states) + " pack")
    elif p.band_clear:
        out.append("no clash at any pack state (no significant order in a dwell zone)")
    else:
        out.append(f"{p.clash_count} clash window(s): a significant order in a dwell zone")
    known = [h for h in p.hover.values() if math.isfinite(h)]
    if known:
        span = f"{100 * min(known):.0f}–{100 * max(known):.0f} %"
        inside = "within" if p.hover_in_range else "outside"
        out.append(f"hover {span}, {inside} {100 * hover_range[0]:.0f}–{100 * hover_range[1]:.0f} %")
    else:
        out.append("hover unknown (no C_T): band taken from idle")
    if math.isfinite(p.response):
        out.append(
            f"peak weighted response {p.response:.2f} ({p.response_order}"
            f"{' aliased' if p.response_aliased else ''} near {p.response_mode}, {p.response_state} pack)"
        )
        out.append(f"worst margin {100 * p.worst_margin:.1f} % ({p.margin_order} to {p.margin_mode})")
    return tuple(out)


def _pick_dict(p, hover_range) -> dict[str, Any]:
    b = p.build
    return {
        "rank": p.rank,
        "index": p.index,
        "label": p.label,
        "motor": {"kv_rpm_per_v": 60 * b.motor.kv_hz_per_v, "poles": b.motor.poles, "slots": b.motor.slots,
                  "resistance_ohm": b.motor.resistance_ohm, "mass_kg": b.motor.mass_kg},
        "prop": {"diameter_m": b.prop.diameter_m, "blades": b.prop.blades,
                 "thrust_coefficient": b.prop.thrust_coefficient, "power_coefficient": b.prop.power_coefficient,
                 "mass_kg": b.prop.mass_kg},
        "cells": b.pack.cells,
        "mass_kg": b.mass_kg,
        "flies": p.flies,
        "band_clear": p.band_clear,
        "hover_in_range": p.hover_in_range,
        "hover": {s: _num(h) for s, h in p.hover.items()},
        "peak_response": _num(p.response),
        "peak_response_at": {"mode": p.response_mode, "order": p.response_order, "pack_state": p.response_state,
                             "aliased": p.response_aliased},
        "worst_margin": _num(p.worst_margin),
        "worst_margin_at": {"mode": p.margin_mode, "order": p.margin_order, "pack_state": p.margin_state},
        "clash_windows": p.clash_count,
        "verdict": p.result.verdict,
        "modes": [{"name": mr.mode.name, "frequency_hz": mr.mode.frequency_hz, "damping": mr.damping,
                   "origin": mr.mode.origin, "verdict": mr.verdict} for mr in p.result.modes],
        "reasons": list(pick_reasons(p, hover_range)),
    }


def search_note_text(note) -> str:
    """The sentence for one :class:`~clashcheck.analysis.pick.SearchNote`.

    Parameters
    ----------
    note : SearchNote
        What was searched or assumed.

    Returns
    -------
    str
    """
    f = note.figures
    texts = {
        "default-search": lambda: "no search option given: catalog motors and catalog propellers that fit are searched",
        "motor-mass-window": lambda: (f"catalog motors from {1e3 * f['min_kg']:.1f} g to {1e3 * f['max_kg']:.1f} g "
                                      "(half to twice the build motor's mass; --stator or --max-motor-mass to "
                                      "change)"),
        "catalog-motors": lambda: f"{f['count']:.0f} catalog motor(s)",
        "kv-sweep": lambda: (f"Kv swept from {60 * f['low_hz_per_v']:g} to {60 * f['high_hz_per_v']:g} rpm/V in "
                             f"steps of {60 * f['step_hz_per_v']:g} on the build's motor: winding resistance scaled "
                             "as (Kv₀/Kv)², no-load current and mass held"),
        "prop-diameters": lambda: (f"catalog propellers from {f['min_m'] / 0.0254:.2f} in to "
                                   f"{f['max_m'] / 0.0254:.2f} in"),
        "pinned": lambda: "pinned: " + ", ".join(note.names),
        "mass-held-with-cells": lambda: "the all-up mass is held when the cell count changes (no --cell-mass given)",
        "arm-shift": lambda: (f"arm modes move with each candidate's tip mass (×{f['min_ratio']:.3f} to "
                              f"×{f['max_ratio']:.3f}); " + ("arm mass from [frame.arm]" if note.names else
                                                             "no [frame.arm]: m_eff = tip mass (motor + propeller)")),
        "arm-not-shifted": lambda: "arm modes not shifted: the build's motor or propeller mass is not known",
        "stated-hover-dropped": lambda: (f"the stated hover ({100 * f['hover']:.0f} %) belongs to the build's own "
                                         "parts: candidates whose propeller has a C_T get a computed hover instead"),
    }
    make = texts.get(note.kind)
    return make() if make is not None else note.kind


def _pick_notes(res) -> list[str]:
    return [search_note_text(n) for n in res.notes] + [
        f"candidate {label}: the full check disagrees with the search" for label in res.disagreements]


def pick_to_dict(res) -> dict[str, Any]:
    """The JSON document of a search.

    Parameters
    ----------
    res : PickResult
        The search.

    Returns
    -------
    dict
    """
    sp = res.space
    return {
        "schema_version": JSON_SCHEMA_VERSION,
        "name": res.name,
        "searched": res.searched,
        "clear_count": res.clear_count,
        "hover_range": {"low": res.hover_range[0], "high": res.hover_range[1]},
        "ranking": [
            "hovers at every pack state",
            "no clash window (a significant order in a dwell zone) at any pack state",
            "hover within the hover range at every pack state",
            "lowest peak weighted response (order weight x magnification) over the operating band",
        ],
        "space": {
            "motors": [o.label for o in sp.motors][:200],
            "motor_count": len(sp.motors),
            "poles": list(sp.poles),
            "props": [o.label for o in sp.props],
            "cells": list(sp.cells),
        },
        "top": [_pick_dict(p, res.hover_range) for p in res.top],
        "notes": _pick_notes(res),
        "cautions": list(CAUTIONS),
    }


def _pick_rows(res) -> list[list[str]]:
    rows = []
    for p in res.top:
        hov = [h for h in p.hover.values()]
        span = "-" if not hov else f"{pct(min(hov))}–{pct(max(hov))}"
        band = "none" if p.band_clear else ("no hover" if not p.flies else f"{p.clash_count}")
        rows.append([p.rank, p.label, band, span + ("" if p.hover_in_range else " (!)"),
                     f"{p.response:.2f}", f"{pct(p.worst_margin, 1)}", p.result.verdict])
    return rows


def render_pick(res, fmt: str) -> str:
    """A search result as ``table``, ``json`` or ``markdown``.

    Parameters
    ----------
    res : PickResult
        The search.
    fmt : {"table", "json", "markdown"}
        Output format.

    Returns
    -------
    str
    """
    if fmt == "json":
        return dump_json(pick_to_dict(res))
    doc = _Doc(fmt == "markdown")
    low, high = res.hover_range
    doc.title(f"Pick: {res.name}")
    doc.para(f"{res.searched} candidates searched; {res.clear_count} have no clash at any pack state "
             "(no significant order in a dwell zone, hover everywhere).")
    doc.table(_pick_rows(res), ["rank", "candidate", "clash windows", "hover", "peak response", "worst margin", "check"])
    doc.para(f"Ranked by: hovers at every pack state; no clash window; hover within "
             f"{100 * low:.0f}–{100 * high:.0f} % at every pack state (else marked (!)); then the lowest peak "
             "weighted response (order weight × single-degree-of-freedom magnification over the operating band).")
    doc.section("Reasons")
    doc.numbered([f"{p.label}: " + "; ".join(pick_reasons(p, res.hover_range)) for p in res.top])
    notes = _pick_notes(res)
    if notes:
        doc.section("Notes")
        doc.bullets(notes)
    doc.cautions()
    return doc.text()


# ---------------------------------------------------------------------------
# check report with a diagram and suggestions


def _g(kg: float) -> str:
    return f"{1e3 * kg:.0f} g"


def _outcome(sug) -> str:
    """What the full check of the changed build says."""
    lo, hi = sug.hover_after
    hover = "" if math.isnan(lo) else (f", hover {100 * lo:.0f} %" if round(100 * lo) == round(100 * hi)
                                       else f", hover {100 * lo:.0f}–{100 * hi:.0f} %")
    if sug.is_fix:
        return (f"checked: fix, {sug.mode} becomes {sug.mode_verdict_after} with no new clash "
                f"(verdict {sug.verdict_after}{hover})")
    parts = []
    if sug.mode_verdict_after == "clash":
        left = []
        for r in sug.remaining[:3]:
            left.append(f"{r.order}{' (aliased)' if r.aliased else ''} {pct(r.throttle_low)}–{pct(r.throttle_high)} "
                        f"({r.pack_state})")
        more = f" and {len(sug.remaining) - 3} more" if len(sug.remaining) > 3 else ""
        parts.append(f"{sug.mode} still clashes: " + ", ".join(left) + more)
    if sug.new_clashes:
        parts.append("new clash on " + ", ".join(sug.new_clashes))
    if sug.cannot_hover:
        parts.append("cannot hover at the " + ", ".join(sug.cannot_hover) + " pack")
    return f"checked: partial; {'; '.join(parts)} (verdict {sug.verdict_after}{hover})"


def suggestion_text(sug) -> str:
    """The sentence for one :class:`~clashcheck.analysis.suggest.Suggestion`, with what its check found.

    Parameters
    ----------
    sug : Suggestion
        A computed, checked suggestion.

    Returns
    -------
    str
    """
    order = sug.order + (" (aliased)" if sug.aliased else "")
    d = sug.details
    if sug.kind == "mode-frequency":
        other = d.get("other_side_hz")
        tail = "" if other is None else f"; or {other:.0f} Hz, {100 * (other / sug.current - 1):+.0f} %"
        how = "stiffer" if sug.value > sug.current else "softer or heavier"
        head = (f"Move {sug.mode} from {sug.current:.0f} Hz to {sug.value:.0f} Hz ({100 * sug.change:+.0f} %, a "
                f"{how} structure{tail}): no significant order in a dwell zone then comes within its margin at "
                "any pack state.")
        if sug.close_after:
            head += (f" It then sits {pct(d.get('close_gap'), 1)} from {', '.join(sug.close_after)}: close "
                     "modes exchange energy, so separate them too.")
    elif sug.kind == "damping":
        how = "soft-mount the item" if sug.value > 0.1 else "add damping, e.g. constrained-layer tape"
        head = f"Raise the damping of {sug.mode} from ζ = {sug.current:.3f} to ζ = {sug.value:.3f} ({how}): "
        if d.get("dwell_margin", 0.0) > 0:
            after, kept = pct_pair(d.get("required_margin_after"), d.get("dwell_margin"), 1)
            head += (f"its required margin falls to {after}, below the "
                     f"{kept} the orders keep from it in the dwell zones.")
        else:
            head += ("an order sits on it in a dwell zone, and at this damping the policy asks no margin "
                     "(amplification factor below 2.5).")
    elif sug.kind == "cruise":
        head = (f"Keep cruise below {pct(d.get('window_starts_throttle'), 1)} (now {pct(sug.current)}): the {order} "
                f"window on {sug.mode} starts there.")
    elif sug.kind == "kv":
        head = (f"A Kv of {60 * sug.value:.0f} rpm/V instead of {60 * sug.current:.0f} ({100 * sug.change:+.1f} %) "
                f"keeps {order} below the margin of {sug.mode} ({d.get('margin_edge_hz', math.nan):.0f} Hz) "
                "at cruise at every pack state.")
    elif sug.kind == "cells":
        head = f"{sug.value:.0f} cells instead of {sug.current:.0f} keep {order} off {sug.mode}."
    elif sug.kind == "mass":
        head = (f"An all-up mass of {_g(sug.value)} instead of {_g(sug.current)} ({100 * sug.change:+.0f} %, in "
                f"payload or pack, not at the arm tips) moves hover's {order} out of the margin of {sug.mode}.")
    else:
        head = f"{sug.kind} of {sug.mode}: {sug.value:g} instead of {sug.current:g}."
    return f"{head} {_outcome(sug)}."


def suggestions_to_dict(suggestions) -> list[dict[str, Any]]:
    """Suggestions as JSON-ready dicts (the ``suggestions`` array).

    Parameters
    ----------
    suggestions : sequence of Suggestion
        Computed, checked suggestions.

    Returns
    -------
    list of dict
        ``value``/``current`` in SI with the unit in ``unit``; ``status`` is
        ``fix`` or ``partial``.
    """
    units = {"mode-frequency": "hz", "damping": "ratio", "cruise": "fraction", "kv": "hz_per_v",
             "cells": "count", "mass": "kg"}
    return [{"kind": s.kind, "mode": s.mode, "order": s.order, "aliased": s.aliased, "value": _num(s.value),
             "current": _num(s.current), "unit": units.get(s.kind, ""), "change": _num(s.change),
             "status": s.status, "mode_verdict_after": s.mode_verdict_after, "verdict_after": s.verdict_after,
             "new_clashes": list(s.new_clashes), "cannot_hover": list(s.cannot_hover),
             "close_after": list(s.close_after),
             "remaining": [{"order": r.order, "aliased": r.aliased, "pack_state": r.pack_state,
                            "throttle_low": r.throttle_low, "throttle_high": r.throttle_high} for r in s.remaining],
             "hover_after": {"low": _num(s.hover_after[0]), "high": _num(s.hover_after[1])},
             "text": suggestion_text(s),
             "details": {k: _num(v) for k, v in s.details.items()}}
            for s in suggestions]


def _suggestion_lines(result, suggestions) -> list[str]:
    if suggestions:
        covered = {s.mode for s in suggestions}
        left = [mr.mode.name for mr in result.modes if mr.verdict == "clash" and mr.mode.name not in covered]
        lines = [suggestion_text(s) for s in suggestions]
        if left:
            lines.append("No computed change within the bounds clears " + ", ".join(left)
                         + "; see 'clashcheck pick'.")
        return lines
    if result.verdict == "clash":
        return ["No single computed change clears the clashes found; see 'clashcheck pick'."]
    return [f"None needed: the verdict is {result.verdict}."]


def render_check_with_suggestions(result, suggestions, fmt: str) -> str:
    """A check in ``table``, ``json`` or ``markdown`` with its computed suggestions.

    Parameters
    ----------
    result : ClashResult
        The check.
    suggestions : sequence of Suggestion
        Its suggestions (:func:`clashcheck.analysis.suggest.suggest`).
    fmt : {"table", "json", "markdown"}
        Output format.

    Returns
    -------
    str
        JSON gains a ``suggestions`` array; table and Markdown a Suggestions section.
    """
    if fmt == "json":
        data = result_to_dict(result)
        data["suggestions"] = suggestions_to_dict(suggestions)
        return dump_json(data)
    lines = _suggestion_lines(result, suggestions)
    if fmt == "markdown":
        return render_markdown(result, ["## Suggestions\n\n" + "\n".join(f"- {line}" for line in lines)])
    text = render(result, "table").rstrip("\n")
    return text + "\n\nSuggestions (each checked in full):\n" + "".join(f"  - {line}\n" for line in lines)


def build_summary_rows(build) -> list[list[str]]:
    """The parts of a build, one row per part, for a report.

    Parameters
    ----------
    build : clashcheck.model.build.Build
        The build that was checked.

    Returns
    -------
    list of list of str
        ``[part, description]`` rows (frame, motor, propeller, battery, flight,
        and sensor when the build has one), with figures in display units
        (rpm/V, g, mΩ, in, m, Hz).
    """
    m, p, pack = build.motor, build.prop, build.pack
    rows = [
        ["frame", f"{build.motors} motors, all-up mass {1e3 * build.mass_kg:.0f} g, {len(build.modes)} mode(s)"],
        ["motor", f"Kv {60 * m.kv_hz_per_v:.0f} rpm/V, {m.poles} poles, {m.slots} slots"
                  + (f", {1e3 * m.resistance_ohm:.0f} mΩ" if m.resistance_ohm else "")
                  + (f", {1e3 * m.mass_kg:.1f} g" if m.mass_kg else "")],
        ["propeller", f"{p.diameter_m / 0.0254:.2f} in, {p.blades} blades"
                      + (f", C_T {p.thrust_coefficient:g}" if p.thrust_coefficient else "")
                      + (f", C_P {p.power_coefficient:g}" if p.power_coefficient else "")
                      + (f", {1e3 * p.mass_kg:.1f} g" if p.mass_kg else "")],
        ["battery", f"{pack.cells} cells {pack.chemistry.id}"
                    + (f", {1e3 * pack.cell_resistance_ohm:g} mΩ per cell" if pack.cell_resistance_ohm else "")],
        ["flight", f"idle {pct(build.flight.idle)}, cruise {pct(build.flight.cruise)}, max {pct(build.flight.max)}, "
                   f"field altitude {build.flight.altitude_m:.0f} m"],
    ]
    if build.sensor is not None:
        rows.append(["sensor", f"{build.sensor.sample_rate_hz:g} Hz sample rate"])
    return rows


def image_reference(image_path: str | Path, report_path: str | Path | None) -> str:
    """How the report refers to the diagram: relative to the report's folder when it is written to a file.

    Parameters
    ----------
    image_path : str or pathlib.Path
        Path of the diagram image.
    report_path : str or pathlib.Path or None
        Path the report is written to; ``None`` when it goes to the terminal.

    Returns
    -------
    str
        POSIX-style path: ``image_path`` as given when ``report_path`` is
        ``None``, else relative to the report's folder (absolute when no
        relative path exists, e.g. another drive).
    """
    image = Path(image_path)
    if report_path is None:
        return image.as_posix()
    try:
        return Path(os.path.relpath(image.resolve(), Path(report_path).resolve().parent)).as_posix()
    except ValueError:  # another drive
        return image.resolve().as_posix()


def _assumption_lines(build, result) -> list[str]:
    """What the check's own "Build and assumptions" section does not say (drive model and assumed damping are there)."""
    lines = []
    estimated = [mr.mode.name for mr in result.modes if mr.mode.origin == "estimated"]
    lines.append("estimated modes (beam model): " + (", ".join(estimated) if estimated else "none"))
    hover = {b.hover.how for b in result.bands}
    lines.append("hover: " + ("computed from C_T and the all-up mass" if hover == {"computed"} else
                              "stated in the build" if hover == {"stated"} else ", ".join(sorted(hover))))
    return lines


def render_check_report(build, result, suggestions, image_ref: str | None) -> str:
    """One Markdown report: the check, the parts, the diagram, suggestions, safety.

    The check's own Markdown (:func:`clashcheck.report.check.render_markdown`) is
    kept whole (with its build and assumptions); the parts, the diagram and
    the suggestions go in as its extra sections, before the safety section.

    Parameters
    ----------
    build : Build
        The build as checked.
    result : ClashResult
        Its check.
    suggestions : sequence of Suggestion
        Its computed suggestions.
    image_ref : str or None
        How the report refers to the diagram (:func:`image_reference`); no diagram section when ``None``.

    Returns
    -------
    str
        Markdown.
    """
    from tabulate import tabulate

    summary = tabulate(build_summary_rows(build), headers=["part", "as checked"], tablefmt="github")
    sections = [
        "## Parts\n\n" + summary + "\n\n" + "\n".join(f"- {line}" for line in _assumption_lines(build, result)),
    ]
    if image_ref is not None:
        sections.append(
            f"## Diagram\n\n![Campbell diagram of {result.name}]({image_ref})\n\n"
            "Excitation frequency against rotor speed, with a throttle scale per pack state underneath: "
            "each order is a line k × rotor rate coloured by family, dashed lines are aliased orders as the "
            "sensor sees them, dark lines are the frame modes with their required-margin bands (grey), "
            "orange segments are the danger ranges (thick and solid in a dwell zone, thin and dashed where "
            "only passed through), hatched strips are the dwell zones, the yellow strip the operating band, "
            "dots are crossings, dotted verticals the hover points."
        )
    lines = [f"- {line}" for line in _suggestion_lines(result, suggestions)]
    sections.append("## Suggestions\n\n" + "\n".join(lines))
    return render_markdown(result, sections)
