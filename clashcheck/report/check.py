"""Presentation of check results: table, JSON and Markdown.

Nothing here computes physics; it formats :class:`~clashcheck.analysis.clash.ClashResult`.
JSON keys are part of the interface contract (DESIGN.md): throttles and
margins are fractions, frequencies end in ``_hz``.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

from ..analysis.clash import ClashResult, ModeResult
from .common import CAUTIONS, JSON_SCHEMA_VERSION, dump_json, num, pct

__all__ = [
    "result_to_dict",
    "render_json",
    "render_table",
    "render_markdown",
    "render",
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
    }


def result_to_dict(result: ClashResult) -> dict[str, Any]:
    """The JSON document of a check (stable keys; see the README)."""
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
            }
            for w in result.windows
        ],
        "notes": list(result.notes),
        "cautions": list(CAUTIONS),
    }


def render_json(result: ClashResult) -> str:
    """The check result as JSON text."""
    return dump_json(result_to_dict(result))


def _header_rows(result: ClashResult) -> list[tuple[str, str]]:
    volts = " · ".join(f"{k} {v:.2f} V" for k, v in result.pack_voltages.items())
    hover = " · ".join(
        f"{b.pack_state} {pct(b.hover.throttle) if b.hover.how != 'unknown' else 'unknown'}"
        + ("" if b.hover.how == "unknown" or b.hover.can_hover else " (cannot hover)")
        for b in result.bands
    )
    how = {b.hover.how for b in result.bands}
    band = " · ".join(
        f"{b.pack_state} {pct(b.throttle_low)}–{pct(b.throttle_high)}" if b.flies else f"{b.pack_state} none"
        for b in result.bands
    )
    rows = [
        ("drive model", result.model),
        ("pack voltage", volts),
        ("hover" + (" (stated)" if how == {"stated"} else ""), hover),
        ("operating band", band),
        ("throttle range", f"idle {pct(result.idle)} to max {pct(result.throttle_max)}"),
        ("margin policy", result.policy),
    ]
    if result.sensor is not None:
        s = result.sensor
        aa = (f", anti-alias {s.antialias_cutoff_hz:g} Hz order {s.antialias_order}"
              if s.antialias_cutoff_hz else ", no anti-alias filter")
        rows.append(("sensor", f"{s.sample_rate_hz:g} Hz (Nyquist {s.nyquist_hz:g} Hz){aa}"))
    return rows


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
            rows_at.append("-" if worst is None else (
                f"{pct(worst.margin, 1)} {worst.label}{' (aliased)' if worst.aliased else ''} "
                f"({worst.pack_state}){'' if worst.enough else ' SHORT'}"
            ))
        rows.append([
            m.name,
            freq,
            f"{mr.damping:.3f}" + (" (assumed)" if mr.damping_assumed else ""),
            f"{mr.amplification_factor:.1f}",
            pct(mr.required_margin, 1),
            *rows_at,
            m.origin,
            mr.verdict,
        ])
    return rows


_MODE_HEADERS = [
    "mode", "f (Hz)", "ζ", "AF", "required", "worst margin at hover", "worst margin at cruise", "source", "verdict",
]
_RANGE_HEADERS = ["mode", "throttle", "orders responsible", "pack states", "operating band"]


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
            rows.append([
                r.mode,
                f"{pct(r.throttle_low)}–{pct(r.throttle_high)}",
                ", ".join(r.orders),
                ", ".join(r.pack_states),
                "TOUCHES" if r.touches_operating_band else "outside",
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
        return f"verdict: CLASH — the operating band meets {', '.join(clashing)}"
    if result.verdict == "watch":
        return f"verdict: WATCH — windows on {', '.join(watching)}, none in the operating band"
    return "verdict: CLEAR — no window between idle and max throttle"


def render_table(result: ClashResult) -> str:
    """Plain-text report for a terminal."""
    from tabulate import tabulate

    parts = [f"clashcheck: {result.name}", ""]
    parts.append(tabulate(_header_rows(result), tablefmt="plain"))
    parts += ["", "Modes", tabulate(_mode_rows(result), headers=_MODE_HEADERS, tablefmt="simple")]
    ranges, hidden = _range_rows(result)
    parts.append("")
    if ranges:
        parts += ["Danger ranges", tabulate(ranges, headers=_RANGE_HEADERS, tablefmt="simple")]
    elif not hidden:
        parts.append("Danger ranges: none between idle and max throttle")
    if hidden:
        parts.append(_hidden_line(hidden))
    if result.notes:
        parts += ["", "Notes"] + [f"  - {n}" for n in result.notes]
    parts += ["", _verdict_line(result), ""] + [f"  ! {c}" for c in CAUTIONS]
    return "\n".join(parts) + "\n"


def render_markdown(result: ClashResult, extra_sections: Iterable[str] = ()) -> str:
    """Markdown report for pasting into a build log.

    ``extra_sections`` (Markdown text, each starting with its ``##`` heading)
    are placed after the danger ranges and before the safety section.
    """
    from tabulate import tabulate

    parts = [f"# Clash check: {result.name}", "", f"**{_verdict_line(result)}**", "", "## Build and assumptions", ""]
    parts.append(tabulate(_header_rows(result), headers=["item", "value"], tablefmt="github"))
    if result.notes:
        parts += [""] + [f"- {n}" for n in result.notes]
    parts += ["", "## Modes", "", tabulate(_mode_rows(result), headers=_MODE_HEADERS, tablefmt="github")]
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
    parts += ["", "## Safety", ""] + [f"- {c}" for c in CAUTIONS]
    return "\n".join(parts) + "\n"


def render(result: ClashResult, fmt: str) -> str:
    """Render in ``table``, ``json`` or ``markdown``."""
    if fmt == "json":
        return render_json(result)
    if fmt == "markdown":
        return render_markdown(result)
    return render_table(result)
