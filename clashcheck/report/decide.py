"""Presentation of the deciding commands: compare, pick, and the check report with a diagram.

Nothing here computes physics; it formats :class:`~clashcheck.compare.CompareResult`,
:class:`~clashcheck.pick.PickResult` and :class:`~clashcheck.suggest.Suggestion`
as plain-text tables, JSON dicts and Markdown.  JSON follows the contract
conventions (DESIGN.md): throttles and margins are fractions, frequencies end
in ``_hz``, masses in ``_kg``.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

from .check import render_markdown, result_to_dict
from .common import CAUTIONS, JSON_SCHEMA_VERSION, dump_json, pct
from .common import num as _num

__all__ = [
    "compare_to_dict",
    "render_compare",
    "pick_to_dict",
    "render_pick",
    "suggestions_to_dict",
    "build_summary_rows",
    "render_check_report",
    "image_reference",
    "report_with_diagram",
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


def compare_to_dict(cmp) -> dict[str, Any]:
    """The JSON document of a comparison."""
    def hover(h):
        return {"throttle": _num(h.throttle), "rotor_hz": _num(h.rotor_hz), "how": h.how,
                "can_hover": h.can_hover if h.how != "unknown" else None}

    return {
        "schema_version": JSON_SCHEMA_VERSION,
        "a": result_to_dict(cmp.a),
        "b": result_to_dict(cmp.b),
        "mode_shift": _shift_dict(cmp.shift),
        "changes": {
            "clashes_appeared": _finding_dicts(cmp.appeared),
            "clashes_disappeared": _finding_dicts(cmp.disappeared),
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
        "notes": list(cmp.notes),
        "cautions": list(CAUTIONS),
    }


def _side_rows(cmp) -> list[list[str]]:
    a, b = cmp.a, cmp.b
    rows = [["verdict", a.verdict, b.verdict], ["drive model", a.model, b.model]]
    bands_b = {x.pack_state: x for x in b.bands}
    for band in a.bands:
        other = bands_b.get(band.pack_state)
        rows.append([f"hover ({band.pack_state})", _hover_text(band.hover),
                     "-" if other is None else _hover_text(other.hover)])
    for band in a.bands:
        other = bands_b.get(band.pack_state)

        def text(x):
            return f"{pct(x.throttle_low)}–{pct(x.throttle_high)}" if x.flies else "none"
        rows.append([f"operating band ({band.pack_state})", text(band), "-" if other is None else text(other)])
    rows.append(["hover on an empty pack", _hover_text(cmp.empty_hover_a), _hover_text(cmp.empty_hover_b)])
    return rows


def _ranges(mr) -> str:
    if not mr.danger_ranges:
        return "none"
    return "; ".join(f"{pct(r.throttle_low)}–{pct(r.throttle_high)}{' *' if r.touches_operating_band else ''}"
                     for r in mr.danger_ranges)


def _mode_rows(cmp) -> list[list[str]]:
    b_modes = {mr.mode.name: mr for mr in cmp.b.modes}
    rows = []
    names = [mr.mode.name for mr in cmp.a.modes] + [n for n in b_modes if n not in
                                                      {mr.mode.name for mr in cmp.a.modes}]
    a_modes = {mr.mode.name: mr for mr in cmp.a.modes}
    for name in names:
        row = [name]
        for mr in (a_modes.get(name), b_modes.get(name)):
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
            row += [freq, _ranges(mr), mr.verdict]
        rows.append(row)
    return rows


def _margin_rows(cmp) -> list[list[str]]:
    rows = []
    order = {name: i for i, name in enumerate(mr.mode.name for mr in cmp.a.modes)}
    for m in sorted(cmp.margin_changes, key=lambda m: (order.get(m.mode, 0), _STATE_ORDER.get(m.pack_state, 9))):
        if m.point != "hover":
            continue
        rows.append([m.mode, m.pack_state, f"{pct(m.margin_a, 1)} ({m.order_a})",
                     f"{pct(m.margin_b, 1)} ({m.order_b})", _pp(m.change), pct(m.required_b, 1)])
    return rows


def _change_lines(cmp) -> list[str]:
    lines = []
    for title, items in (("clashes that appear in B", cmp.appeared), ("clashes that disappear in B", cmp.disappeared),
                         ("windows outside the band that appear", cmp.windows_appeared),
                         ("windows outside the band that disappear", cmp.windows_disappeared)):
        lines.append(f"{title}: " + (", ".join(f.describe() for f in items) if items else "none"))
    for v in cmp.verdict_changes:
        lines.append(f"verdict of {v.mode}: {v.verdict_a or 'absent'} → {v.verdict_b or 'absent'}")
    grouped: dict[tuple[str, str, str], list[str]] = {}
    for m in cmp.margin_changes:
        if abs(m.change) >= 0.0005:
            grouped.setdefault((m.mode, m.point, _pp(m.change)), []).append(m.pack_state)
    moved = sorted(grouped.items(), key=lambda kv: -abs(float(kv[0][2].split()[0])))
    def phrase(key, states):
        states = sorted(states, key=lambda x: _STATE_ORDER.get(x, 9))
        return f"{key[0]} at {key[1]} ({', '.join(states)}) {key[2]}"
    grow = [phrase(k, v) for k, v in moved if not k[2].startswith("-")][:5]
    shrink = [phrase(k, v) for k, v in moved if k[2].startswith("-")][:5]
    for title, items in (("margins that grow most", grow), ("margins that shrink most", shrink)):
        lines.append(f"{title}: " + (", ".join(items) if items else "none"))
    h = cmp.empty_hover_b
    if h.how == "unknown":
        lines.append("B's hover on an empty pack is unknown (no C_T)")
    elif h.can_hover:
        lines.append(f"B can still hover on an empty pack ({pct(h.throttle)})")
    else:
        lines.append("B cannot hover on an empty pack")
    return lines


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
        self.section("Safety")
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
    doc.section("Side by side")
    doc.table(_side_rows(cmp), ["", head_a, head_b])
    doc.section("Modes and danger ranges (* touches the operating band)")
    doc.table(_mode_rows(cmp), ["mode", "A f (Hz)", "A danger ranges", "A verdict",
                                "B f (Hz)", "B danger ranges", "B verdict"])
    margins = _margin_rows(cmp)
    if margins:
        doc.section("Margins at hover (nearest order)")
        doc.table(margins, ["mode", "pack", "A", "B", "change", "B needs"])
    doc.section("Changes")
    doc.bullets(_change_lines(cmp))
    if cmp.notes:
        doc.section("Notes")
        doc.bullets(cmp.notes)
    doc.cautions()
    return doc.text()


# ---------------------------------------------------------------------------
# pick


def _pick_dict(p) -> dict[str, Any]:
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
        "reasons": list(p.reasons),
    }


def pick_to_dict(res) -> dict[str, Any]:
    """The JSON document of a search."""
    sp = res.space
    return {
        "schema_version": JSON_SCHEMA_VERSION,
        "name": res.name,
        "searched": res.searched,
        "clear_count": res.clear_count,
        "hover_range": {"low": res.hover_range[0], "high": res.hover_range[1]},
        "ranking": [
            "hovers at every pack state",
            "operating band clear at every pack state",
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
        "top": [_pick_dict(p) for p in res.top],
        "notes": list(res.notes),
        "cautions": list(CAUTIONS),
    }


def _pick_rows(res) -> list[list[str]]:
    rows = []
    for p in res.top:
        hov = [h for h in p.hover.values()]
        span = "-" if not hov else f"{pct(min(hov))}–{pct(max(hov))}"
        band = "clear" if p.band_clear else ("no hover" if not p.flies else f"{p.clash_count} clash")
        rows.append([p.rank, p.label, band, span + ("" if p.hover_in_range else " (!)"),
                     f"{p.response:.2f}", f"{pct(p.worst_margin, 1)}", p.result.verdict])
    return rows


def render_pick(res, fmt: str) -> str:
    """A search result as ``table``, ``json`` or ``markdown``."""
    if fmt == "json":
        return dump_json(pick_to_dict(res))
    doc = _Doc(fmt == "markdown")
    low, high = res.hover_range
    doc.title(f"Pick: {res.name}")
    doc.para(f"{res.searched} candidates searched; {res.clear_count} keep the operating band clear at every "
             "pack state.")
    doc.table(_pick_rows(res), ["rank", "candidate", "band", "hover", "peak response", "worst margin", "check"])
    doc.para(f"Ranked by: hovers at every pack state; operating band clear; hover within "
             f"{100 * low:.0f}–{100 * high:.0f} % at every pack state (else marked (!)); then the lowest peak "
             "weighted response (order weight × single-degree-of-freedom magnification over the operating band).")
    doc.section("Reasons")
    doc.numbered([f"{p.label}: " + "; ".join(p.reasons) for p in res.top])
    if res.notes:
        doc.section("Notes")
        doc.bullets(res.notes)
    doc.cautions()
    return doc.text()


# ---------------------------------------------------------------------------
# check report with a diagram and suggestions


def suggestions_to_dict(suggestions) -> list[dict[str, Any]]:
    """Suggestions as JSON-ready dicts."""
    return [{"kind": s.kind, "mode": s.mode, "order": s.order, "value": _num(s.value), "change": _num(s.change),
             "verdict_after": s.verdict_after, "clears": s.clears, "text": s.text,
             "details": {k: (_num(v) if isinstance(v, float) else v) for k, v in s.details.items()}}
            for s in suggestions]


def build_summary_rows(build) -> list[list[str]]:
    """The parts of a build, one row per part, for a report."""
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
    """How the report refers to the diagram: relative to the report's folder when it is written to a file."""
    image = Path(image_path)
    if report_path is None:
        return image.as_posix()
    try:
        return Path(os.path.relpath(image.resolve(), Path(report_path).resolve().parent)).as_posix()
    except ValueError:  # another drive
        return image.resolve().as_posix()


def _assumption_lines(build, result) -> list[str]:
    lines = [f"drive model: {result.model}"]
    assumed = [mr.mode.name for mr in result.modes if mr.damping_assumed]
    if assumed:
        lines.append(f"damping assumed at ζ = {build.check.policy.default_damping:g} for: " + ", ".join(assumed))
    else:
        lines.append("damping: every mode has its own figure")
    estimated = [mr.mode.name for mr in result.modes if mr.mode.origin == "estimated"]
    lines.append("estimated modes (beam model): " + (", ".join(estimated) if estimated else "none"))
    hover = {b.hover.how for b in result.bands}
    lines.append("hover: " + ("computed from C_T and the all-up mass" if hover == {"computed"} else
                              "stated in the build" if hover == {"stated"} else ", ".join(sorted(hover))))
    return lines


def render_check_report(build, result, suggestions, image_ref: str | None) -> str:
    """One Markdown report: summary, assumptions, the check, the diagram, suggestions, safety.

    The check's own Markdown (:func:`clashcheck.report.render_markdown`) is
    kept whole; the summary, assumptions, diagram and suggestions go in as
    its extra sections, before the safety section.
    """
    from tabulate import tabulate

    summary = tabulate(build_summary_rows(build), headers=["part", "as checked"], tablefmt="github")
    sections = [
        "## Build summary\n\n" + summary,
        "## Assumptions\n\n" + "\n".join(f"- {line}" for line in _assumption_lines(build, result)),
    ]
    if image_ref is not None:
        sections.append(
            f"## Diagram\n\n![Campbell diagram of {result.name}]({image_ref})\n\n"
            "Excitation frequency against throttle: each order is a band from the full to the empty pack, "
            "dashed lines are aliased orders as the sensor sees them, grey lines are the frame modes with "
            "their required-margin bands, thick orange segments are the danger ranges (solid where they "
            "touch the operating band), dots are crossings, dotted verticals the hover points."
        )
    if suggestions:
        lines = [f"- {s.text}" for s in suggestions]
    elif result.verdict == "clash":
        lines = ["- No single computed change clears the clashes found; see `clashcheck pick`."]
    else:
        lines = [f"- None needed: the verdict is {result.verdict}."]
    sections.append("## Suggestions\n\n" + "\n".join(lines))
    return render_markdown(result, sections)


def report_with_diagram(build, result, fmt: str, plot_path, report_path=None, *, inputs=(),
                        provenance: str | None = None, curves=None) -> str:
    """Draw the diagram of a check to ``plot_path`` and return the report text.

    With ``fmt == "markdown"`` the report is :func:`render_check_report` with
    the diagram embedded (its path relative to ``report_path`` when the report
    goes to a file) and the computed suggestions of :func:`clashcheck.suggest.suggest`;
    otherwise it is the check's own report in that format.

    Parameters
    ----------
    build : Build
        The checked build.
    result : ClashResult
        Its check.
    fmt : str
        Report format: ``table``, ``json`` or ``markdown``.
    plot_path : path-like
        Where the diagram goes.
    report_path : path-like, optional
        Where the report goes (for the image's relative path).
    inputs : sequence of path-like
        Input files (never overwritten).
    provenance : str, optional
        Provenance line printed on the diagram.
    curves : DiagramCurves, optional
        The diagram's curves (computed from the build when not given).

    Returns
    -------
    str
        The report text.

    Raises
    ------
    OutputError
        When the diagram cannot be written, would overwrite an input, or is
        the report's own path.
    """
    from ..errors import OutputError
    from .campbell import campbell_data, save_campbell
    from .check import render

    if report_path is not None and Path(report_path).resolve() == Path(plot_path).resolve():
        raise OutputError(str(plot_path), "the diagram and the report need different files")
    save_campbell(plot_path, [campbell_data(build, result, curves, provenance=provenance)], inputs=inputs)
    if fmt != "markdown":
        return render(result, fmt)
    from ..analysis.suggest import suggest

    return render_check_report(build, result, suggest(build, result), image_reference(plot_path, report_path))
