"""Presentation of check results: table, JSON and Markdown.

Nothing here computes physics; it formats :class:`~clashcheck.analysis.clash.ClashResult`.
JSON keys are part of the interface contract (DESIGN.md): throttles and
margins are fractions, frequencies end in ``_hz``.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from typing import Any

from ..analysis.clash import CheckNote, ClashResult, ModeResult
from .common import (
    CAUTIONS,
    JSON_SCHEMA_VERSION,
    cautions_block,
    dump_json,
    num,
    pct,
    pct_pair,
    text_block,
)
from .frame import close_modes_json, close_modes_lines

__all__ = [
    "reason_data",
    "reason_text",
    "finding_text",
    "result_to_dict",
    "render_json",
    "render_table",
    "render_markdown",
    "render",
    "note_text",
    "note_texts",
]


def _mode_dict(mr: ModeResult) -> dict[str, Any]:
    m = mr.mode
    return {
        "name": m.name,
        "frequency_hz": m.frequency_hz,
        "frequency_low_hz": m.frequency_low_hz,
        "frequency_high_hz": m.frequency_high_hz,
        "axis": m.axis,
        "kind": m.kind,
        "origin": m.origin,
        "source": m.source,
        "damping": mr.damping,
        "damping_assumed": mr.damping_assumed,
        "amplification_factor": mr.amplification_factor,
        "required_margin": mr.required_margin,
        "verdict": mr.verdict,
        "danger_ranges": [
            {
                "throttle_low": r.throttle_low,
                "throttle_high": r.throttle_high,
                "orders": list(r.orders),
                "pack_states": list(r.pack_states),
                "aliased": r.aliased,
                "touches_operating_band": r.touches_operating_band,
                "lies_in": r.lies_in,
                "level": r.level,
                "per_pack_state": [
                    {"pack_state": st, "throttle_low": lo, "throttle_high": hi} for st, lo, hi in r.per_state
                ],
            }
            for r in mr.danger_ranges
        ],
        "margins": [
            {
                "point": x.point,
                "pack_state": x.pack_state,
                "throttle": x.throttle,
                "nearest_order": x.label,
                "family": x.family,
                "order": x.order,
                "margin": x.margin,
                "aliased": x.aliased,
                "enough": x.enough,
            }
            for x in mr.margins
        ],
        "details": {k: v for k, v in m.details.items() if isinstance(v, (str, int, float, bool))},
        "lies_in": mr.lies_in,
        "reason": reason_data(mr),
    }


def _same(values: list[float]) -> bool:
    return bool(values) and all(math.isclose(v, values[0], rel_tol=1e-9, abs_tol=1e-12) for v in values)


def _hover_rotor(result: ClashResult) -> float | None:
    """Hover rotor rate [Hz] when it is the same at every pack state (a computed hover), else ``None``."""
    rates = [b.hover.rotor_hz for b in result.bands if b.hover.how != "unknown" and b.hover.can_hover]
    return rates[0] if len(rates) == len(result.bands) and _same(rates) else None


def _alike(result: ClashResult, mr: ModeResult) -> list:
    """Windows of the same mode, order, level and place as the deciding one, one per pack state at most."""
    w = mr.deciding
    if w is None:
        return []
    return [x for x in result.windows if x.mode == w.mode and x.label == w.label and x.level == w.level
            and x.lies_in == w.lies_in and x.dwell_zone == w.dwell_zone and x.aliased == w.aliased]


def reason_data(mr: ModeResult) -> dict[str, Any] | None:
    """The facts behind a mode's verdict (for JSON ``modes[].reason``; the sentence is :func:`reason_text`).

    Parameters
    ----------
    mr : ModeResult
        One mode's result.

    Returns
    -------
    dict or None
        ``None`` when no window counts (the mode is clear).
    """
    w = mr.deciding
    if w is None:
        return None
    return {
        "level": w.level,
        "lies_in": w.lies_in,
        "order": w.order,
        "label": w.label,
        "aliased": w.aliased,
        "pack_state": w.pack_state,
        "dwell_zone": w.dwell_zone,
        "dwell_low": w.dwell_low,
        "dwell_high": w.dwell_high,
        "throttle_low": w.throttle_low,
        "throttle_high": w.throttle_high,
        "margin": w.margin_in_part,
        "required_margin": w.required_margin,
        "significance": num(w.significance),
        "significant": w.significant,
    }


def _span(lo: float | None, hi: float | None) -> str:
    return "–".join(pct_pair(lo, hi))


def reason_text(result: ClashResult, mr: ModeResult) -> str:
    """One sentence a builder can act on: why this mode has its verdict.

    Parameters
    ----------
    result : ClashResult
        The whole check (for pack states and the significance floor).
    mr : ModeResult
        One mode's result.

    Returns
    -------
    str
    """
    w = mr.deciding
    if w is None:
        return "no window of a significant order between idle and max throttle"
    label = w.label + (" (aliased)" if w.aliased else "")
    alike = _alike(result, mr)
    states = list(dict.fromkeys(x.pack_state for x in alike))
    every = len(result.bands) > 1 and len(states) == len(result.bands)
    if w.lies_in == "dwell":
        lows = [x.dwell_low for x in alike if x.dwell_low is not None]
        highs = [x.dwell_high for x in alike if x.dwell_high is not None]
        span = _span(min(lows), max(highs)) if lows else _span(w.dwell_low, w.dwell_high)
        where = "from full to empty pack" if every else ", ".join(states) + " pack"
        zone = {
            "hover": f"hover ({span}, {where})",
            "cruise": f"cruise ({span}, {where})",
            "measured": f"the measured dwell band {span} ({where})",
            "operating band": f"the operating band ({span}, {where}; hover unknown)",
        }.get(w.dwell_zone or "", "a dwell zone")
        at_point = w.margin_at_hover if w.dwell_zone == "hover" else None
        assert w.margin_in_part is not None
        if at_point is not None and not w.aliased:
            keeps = f"keeps {pct(at_point, 1)} from it"
            if w.margin_in_part < at_point - 5e-4:
                keeps += (" (crosses it within the spread)" if w.margin_in_part <= 0
                          else f" ({pct(w.margin_in_part, 1)} within the spread)")
        else:
            keeps = "crosses it" if w.margin_in_part <= 0 else f"comes within {pct(w.margin_in_part, 1)} of it"
        if w.level == "clash":
            return f"{zone} {keeps} on {label}; its damping asks for {pct(w.required_margin, 1)}"
        return (f"{zone} {keeps} on {label}, a weak order there (weight × magnification "
                f"{w.significance:.2f}, below {result.significance_floor:g}); its damping asks for "
                f"{pct(w.required_margin, 1)}")
    lows = [x.throttle_low for x in alike]
    highs = [x.throttle_high for x in alike]
    where = "from full to empty pack" if every else ", ".join(states) + " pack"
    return (f"passes through it on {label} between {pct(min(lows))} and {pct(max(highs))} throttle "
            f"({where}); no dwell there")


def finding_text(kind: str, pack_state: str, hover_throttle: float) -> str:
    """The sentence for a check finding (``findings[]``).

    Parameters
    ----------
    kind : str
        Finding kind, e.g. ``"cannot_hover"``.
    pack_state : str
        Pack state.
    hover_throttle : float
        Hover throttle needed [fraction].

    Returns
    -------
    str
    """
    if kind == "cannot_hover":
        need = (f"{pct(hover_throttle)} throttle" if math.isfinite(hover_throttle)
                else "more thrust than the motors give at any throttle")
        return f"cannot hover at the {pack_state} pack: hover needs {need}"
    return f"{kind} at the {pack_state} pack"


def result_to_dict(result: ClashResult) -> dict[str, Any]:
    """The JSON document of a check (stable keys; see the README).

    Parameters
    ----------
    result : ClashResult
        The result of a clash check.

    Returns
    -------
    dict
        JSON-ready document with ``schema_version``; frequencies in ``*_hz``
        keys [Hz], throttle and margins as fractions.
    """
    sensor = None
    if result.sensor is not None:
        sensor = {
            "sample_rate_hz": result.sensor.sample_rate_hz,
            "nyquist_hz": result.sensor.nyquist_hz,
            "antialias_cutoff_hz": result.sensor.antialias_cutoff_hz,
            "antialias_order": result.sensor.antialias_order,
        }
    return {
        "schema_version": JSON_SCHEMA_VERSION,
        "name": result.name,
        "verdict": result.verdict,
        "model": result.model,
        "policy": result.policy,
        "pack_voltages": {k: v for k, v in result.pack_voltages.items()},
        "throttle": {"idle": result.idle, "max": result.throttle_max, "cruise": result.cruise},
        "hover": {
            b.pack_state: {
                "throttle": num(b.hover.throttle),
                "rotor_hz": num(b.hover.rotor_hz),
                "how": b.hover.how,
                "can_hover": b.hover.can_hover if b.hover.how != "unknown" else None,
            }
            for b in result.bands
        },
        "operating_band": {
            b.pack_state: {"throttle_low": num(b.throttle_low), "throttle_high": num(b.throttle_high)}
            for b in result.bands
        },
        "rotor_range_hz": {k: {"idle": v[0], "max": v[1]} for k, v in result.rotor_range_hz.items()},
        "sensor": sensor,
        "modes": [_mode_dict(mr) for mr in result.modes],
        "orders": [
            {"order": o.order, "family": o.family, "label": o.label, "weight": o.weight,
             "weight_source": o.weight_source}
            for o in result.orders
        ],
        "windows": [
            {
                "mode": w.mode,
                "family": w.family,
                "order": w.order,
                "label": w.label,
                "pack_state": w.pack_state,
                "throttle_low": w.throttle_low,
                "throttle_high": w.throttle_high,
                "crossing_throttle": w.crossing_throttle,
                "required_margin": w.required_margin,
                "margin_at_hover": w.margin_at_hover,
                "worst_margin_in_band": w.worst_margin_in_band,
                "magnification_at_hover": w.magnification_at_hover,
                "aliased": w.aliased,
                "nyquist_zone": w.nyquist_zone,
                "touches_operating_band": w.touches_operating_band,
                "weight": w.weight,
                "severity": w.severity,
                "excitation_low_hz": w.excitation_low_hz,
                "excitation_high_hz": w.excitation_high_hz,
                "lies_in": w.lies_in,
                "dwell_zone": w.dwell_zone,
                "dwell_low": w.dwell_low,
                "dwell_high": w.dwell_high,
                "significance": num(w.significance),
                "significant": w.significant,
                "level": w.level,
                "margin_in_part": w.margin_in_part,
                "side": w.side,
            }
            for w in result.windows
        ],
        "findings": [
            {"kind": f.kind, "level": f.level, "pack_state": f.pack_state,
             "hover_throttle": num(f.hover_throttle)}
            for f in result.findings
        ],
        "dwell": {
            "source": result.dwell_source,
            "spread": result.dwell_spread,
            "cruise": result.cruise_dwell,
            "zones": {
                b.pack_state: [{"what": what, "throttle_low": lo, "throttle_high": hi} for what, lo, hi in b.dwell]
                for b in result.bands
            },
        },
        "significance_floor": result.significance_floor,
        "hover_rotor_hz": _hover_rotor(result),
        "close_modes": close_modes_json(result.close_pairs),
        "notes": note_texts(result),
        "cautions": list(CAUTIONS),
    }


def render_json(result: ClashResult) -> str:
    """The check result as JSON text.

    Parameters
    ----------
    result : ClashResult
        The result of a clash check.

    Returns
    -------
    str
        JSON text of :func:`result_to_dict`.
    """
    return dump_json(result_to_dict(result))


def _header_rows(result: ClashResult) -> list[tuple[str, str]]:
    volts = " · ".join(f"{k} {v:.2f} V" for k, v in result.pack_voltages.items())
    known = [b for b in result.bands if b.hover.how != "unknown"]
    if known and _same([b.hover.throttle for b in result.bands]):
        b0 = result.bands[0]
        hover = pct(b0.hover.throttle) + ("" if b0.hover.can_hover else " (cannot hover)") + " at every pack state"
    else:
        hover = " · ".join(
            f"{b.pack_state} {pct(b.hover.throttle) if b.hover.how != 'unknown' else 'unknown'}"
            + ("" if b.hover.how == "unknown" or b.hover.can_hover else " (cannot hover)")
            for b in result.bands
        )
    how = {b.hover.how for b in result.bands}
    band = " · ".join(
        f"{b.pack_state} {_span(b.throttle_low, b.throttle_high)}" if b.flies else f"{b.pack_state} none"
        for b in result.bands
    )
    rows = [
        ("drive model", result.model),
        ("pack voltage", volts),
        ("hover" + (" (stated)" if how == {"stated"} else ""), hover),
    ]
    single = _hover_rotor(result)
    if single is not None:
        rows.append(("hover rotor rate", f"{single:.1f} Hz ({60 * single:.0f} rpm) at every pack state"))
    else:
        rates = [f"{b.pack_state} {b.hover.rotor_hz:.1f} Hz ({60 * b.hover.rotor_hz:.0f} rpm)"
                 for b in result.bands if b.hover.how != "unknown" and b.hover.can_hover]
        if rates:
            rows.append(("hover rotor rate", " · ".join(rates)))
    rows.append(("operating band", band))
    rows.append(("dwell zones", _dwell_text(result)))
    rows += [
        ("throttle range", f"idle {pct(result.idle)} to max {pct(result.throttle_max)}"),
        ("margin policy", result.policy),
        ("significance floor", f"{result.significance_floor:g} (order weight after the filter × magnification)"),
    ]
    if result.sensor is not None:
        s = result.sensor
        aa = (f", anti-alias {s.antialias_cutoff_hz:g} Hz order {s.antialias_order}"
              if s.antialias_cutoff_hz else ", no anti-alias filter")
        rows.append(("sensor", f"{s.sample_rate_hz:g} Hz (Nyquist {s.nyquist_hz:g} Hz){aa}"))
    return rows


def _dwell_text(result: ClashResult) -> str:
    zones = {b.pack_state: [(what, lo, hi) for what, lo, hi in b.dwell] for b in result.bands}
    flying = [b for b in result.bands if b.dwell]
    if not flying:
        return "none (the craft flies at no pack state checked)"
    if result.dwell_source == "measured":
        per_state = [(b.pack_state, ", ".join(_span(lo, hi) for _w, lo, hi in b.dwell)) for b in flying]
        if len({text for _s, text in per_state}) == 1:
            return f"measured throttle occupancy: {per_state[0][1]}"
        return "measured occupancy: " + " · ".join(f"{st} {text}" for st, text in per_state)
    parts = []
    for what in ("hover", "cruise", "operating band"):
        spans = [(st, lo, hi) for st, zs in zones.items() for w, lo, hi in zs if w == what]
        if not spans:
            continue
        if _same([lo for _s, lo, _h in spans]) and _same([hi for _s, _l, hi in spans]):
            text = _span(spans[0][1], spans[0][2])
        else:
            text = " · ".join(f"{st} {_span(lo, hi)}" for st, lo, hi in spans)
        name = {"operating band": "operating band (hover unknown)"}.get(what, what)
        spread = f" (± {pct(result.dwell_spread)})" if what != "operating band" else ""
        parts.append(f"{name}{spread} {text}")
    return "; ".join(parts) + "; the rest is passage"


def _mode_rows(result: ClashResult) -> list[list[str]]:
    rows = []
    for mr in result.modes:
        m = mr.mode
        freq = f"{m.frequency_hz:.0f}" if not m.is_range else (
            f"{m.frequency_hz:.0f} ({m.frequency_low_hz:.0f}–{m.frequency_high_hz:.0f})"
        )
        rows_at = []
        for point in ("hover", "cruise"):
            at = [x for x in mr.margins if x.point == point]
            worst = min(at, key=lambda x: x.margin) if at else None
            if worst is None:
                rows_at.append("-")
                continue
            same = len(at) == len(result.bands) and _same([x.margin for x in at]) and len(
                {(x.label, x.aliased) for x in at}) == 1
            tag = "" if same or len(result.bands) == 1 else f" ({worst.pack_state})"
            rows_at.append(
                f"{pct(worst.margin, 1)} {worst.label}{' (aliased)' if worst.aliased else ''}"
                f"{tag}{'' if worst.enough else ' SHORT'}"
            )
        rows.append([
            m.name,
            freq,
            f"{mr.damping:.3f}" + (" (assumed)" if mr.damping_assumed else ""),
            f"{mr.amplification_factor:.1f}",
            pct(mr.required_margin, 1),
            *rows_at,
            m.origin,
            mr.lies_in or "-",
            mr.verdict,
        ])
    return rows


_MODE_HEADERS = [
    "mode", "f (Hz)", "ζ", "AF", "required", "worst margin at hover", "worst margin at cruise", "source",
    "lies in", "verdict",
]
_RANGE_HEADERS = ["mode", "throttle", "orders responsible", "lies in", "counts as"]


def _range_rows(result: ClashResult) -> tuple[list[list[str]], int]:
    """Danger-range rows for the table, and how many aliased-only slivers were folded away.

    Ranges made only of aliased windows outside the operating band are counted
    rather than listed (the JSON lists every window).
    """
    rows = []
    hidden = 0
    for mr in result.modes:
        for r in mr.danger_ranges:
            if not r.touches_operating_band and r.all_aliased:
                hidden += 1
                continue
            same = _same([lo for _s, lo, _h in r.per_state]) and _same([hi for _s, _l, hi in r.per_state])
            if same or len(r.per_state) <= 1:
                throttle = _span(r.throttle_low, r.throttle_high)
                if len(result.bands) > 1:
                    throttle += (" (every pack state)" if len(r.pack_states) == len(result.bands)
                                 else f" ({', '.join(r.pack_states)})")
            else:
                throttle = " · ".join(f"{st} {_span(lo, hi)}" for st, lo, hi in r.per_state)
            rows.append([
                r.mode,
                throttle,
                ", ".join(r.orders),
                r.lies_in,
                r.level,
            ])
    return rows, hidden


def _hidden_line(hidden: int) -> str:
    return (
        f"{hidden} more range(s) made only of aliased orders lie outside the operating band; "
        "--format json lists every window."
    )


def _verdict_line(result: ClashResult) -> str:
    clashing = [mr.mode.name for mr in result.modes if mr.verdict == "clash"]
    watching = [mr.mode.name for mr in result.modes if mr.verdict == "watch"]
    if result.verdict == "clash":
        why = []
        if clashing:
            why.append("a significant order sits within its margin of " + ", ".join(clashing) + " where the craft dwells")
        hover_states = [f.pack_state for f in result.findings if f.kind == "cannot_hover"]
        if hover_states:
            why.append("the craft cannot hover at the " + ", ".join(hover_states) + " pack")
        return "verdict: CLASH — " + "; ".join(why)
    if result.verdict == "watch":
        return (f"verdict: WATCH — windows on {', '.join(watching)}, only in passage or from weak orders; "
                "no clash where the craft dwells")
    return "verdict: CLEAR — no window of a significant order between idle and max throttle"


def note_text(note: CheckNote) -> str:
    """The sentence for a check note.

    Parameters
    ----------
    note : CheckNote
        A note of :attr:`ClashResult.notes`.

    Returns
    -------
    str
        The note in words.
    """
    k = note.kind
    if k == "hover_unknown":
        return ("hover is unknown (no prop.thrust_coefficient and no flight.hover): "
                "the operating band is taken from idle, and all of it counts as dwell")
    if k == "hover_above_cruise":
        return (f"hover ({100 * (note.value or 0):.0f} %) sits above cruise ({100 * (note.other or 0):.0f} %) "
                f"at the {note.pack_state} pack")
    if k == "rotor_peak":
        return (f"at the {note.pack_state} pack the rotor rate peaks at {note.value:.1f} Hz near "
                f"{100 * (note.other or 0):.0f} % throttle (pack sag wins above it); windows are found on both sides")
    if k == "damping_default":
        return f"damping assumed at ζ = {note.value:g} for: " + ", ".join(note.names)
    if k == "damping_bound":
        return (f"damping of {note.names[0]} taken at its measured upper bound ζ = {note.value:.4g} (below the "
                f"default {note.other:g}; less damping asks for more margin)")
    if k == "aliased_left_out":
        return (f"{note.count} aliased window(s) left out: their weight after the anti-alias filter is "
                f"below the floor of {note.value:g}")
    return note.text


def note_texts(result: ClashResult) -> list[str]:
    """Every note of a check, in words.

    Parameters
    ----------
    result : ClashResult
        The result of a clash check.

    Returns
    -------
    list of str
        One sentence per note, in order.
    """
    return [note_text(n) for n in result.notes]


def _finding_lines(result: ClashResult) -> list[str]:
    return [f"{f.level.upper()}: {finding_text(f.kind, f.pack_state, f.hover_throttle)}" for f in result.findings]


def _reason_lines(result: ClashResult) -> list[str]:
    return [f"{mr.mode.name} ({mr.verdict}): {reason_text(result, mr)}" for mr in result.modes]


def render_table(result: ClashResult) -> str:
    """Plain-text report for a terminal.

    Parameters
    ----------
    result : ClashResult
        The result of a clash check.

    Returns
    -------
    str
        Plain text, ending with the verdict line and the safety cautions.
    """
    from tabulate import tabulate

    parts = [f"clashcheck: {result.name}", ""]
    parts.append(tabulate(_header_rows(result), tablefmt="plain"))
    if result.findings:
        parts += ["", "Findings"] + [f"  - {line}" for line in _finding_lines(result)]
    parts += ["", "Modes", tabulate(_mode_rows(result), headers=_MODE_HEADERS, tablefmt="simple")]
    parts += ["", "Why"] + [f"  - {line}" for line in _reason_lines(result)]
    ranges, hidden = _range_rows(result)
    parts.append("")
    if ranges:
        parts += ["Danger ranges", tabulate(ranges, headers=_RANGE_HEADERS, tablefmt="simple")]
    elif not hidden:
        parts.append("Danger ranges: none between idle and max throttle")
    if hidden:
        parts.append(_hidden_line(hidden))
    if result.close_pairs:
        parts += [""] + close_modes_lines(result.close_pairs)
    if result.notes:
        parts += text_block("Notes", note_texts(result))
    parts += ["", _verdict_line(result)] + cautions_block()
    return "\n".join(parts) + "\n"


def render_markdown(result: ClashResult, extra_sections: Iterable[str] = ()) -> str:
    """Markdown report for pasting into a build log.

    ``extra_sections`` (Markdown text, each starting with its ``##`` heading)
    are placed after the danger ranges and before the safety section.

    Parameters
    ----------
    result : ClashResult
        The result of a clash check.
    extra_sections : iterable of str, optional
        Extra Markdown sections, each starting with its ``##`` heading;
        none by default.

    Returns
    -------
    str
        Markdown text, ending with the safety section.
    """
    from tabulate import tabulate

    parts = [f"# Clash check: {result.name}", "", f"**{_verdict_line(result)}**", "", "## Build and assumptions", ""]
    parts.append(tabulate(_header_rows(result), headers=["item", "value"], tablefmt="github"))
    if result.notes:
        parts += [""] + [f"- {n}" for n in note_texts(result)]
    if result.findings:
        parts += ["", "## Findings", ""] + [f"- **{line}**" for line in _finding_lines(result)]
    if result.close_pairs:
        lines = close_modes_lines(result.close_pairs)
        parts += ["", "## Close modes", ""] + [f"- {line.strip().lstrip('- ')}" for line in lines[1:]]
    parts += ["", "## Modes", "", tabulate(_mode_rows(result), headers=_MODE_HEADERS, tablefmt="github")]
    parts += ["", "Why:", ""] + [f"- {line}" for line in _reason_lines(result)]
    ranges, hidden = _range_rows(result)
    parts += ["", "## Danger ranges", ""]
    if ranges:
        parts.append(tabulate(ranges, headers=_RANGE_HEADERS, tablefmt="github"))
    elif not hidden:
        parts.append("None between idle and max throttle.")
    if hidden:
        parts += ["", _hidden_line(hidden)]
    for section in extra_sections:
        parts += ["", section.strip("\n")]
    parts += ["", "## Cautions", ""] + [f"- {c}" for c in CAUTIONS]
    return "\n".join(parts) + "\n"


def render(result: ClashResult, fmt: str) -> str:
    """Render in ``table``, ``json`` or ``markdown``.

    Parameters
    ----------
    result : ClashResult
        The result of a clash check.
    fmt : str
        ``"json"`` or ``"markdown"``; any other value gives the plain-text
        table.

    Returns
    -------
    str
        The rendered report.
    """
    if fmt == "json":
        return render_json(result)
    if fmt == "markdown":
        return render_markdown(result)
    return render_table(result)
