"""Presentation of a :class:`~.result.ModesResult`: table, JSON and a modes file.

The modes file is the ``[[frame.modes]]`` fragment that ``clashcheck check
--modes FILE`` merges into a build, with ``[[order_strengths]]`` from flight
recordings.  TOML is written here by hand (the standard library only reads
it); every string goes through :func:`_toml_string`.
"""

from __future__ import annotations

import datetime as _dt
import json
import math
from typing import Any

from ..identify.result import CONFIDENCE_FLOOR, MeasuredMode, ModesResult
from .common import CAUTIONS

__all__ = ["to_json_dict", "render_json", "render_table", "render_toml", "CAUTIONS"]



def _r(x: float | None, nd: int = 6) -> float | None:
    return None if x is None else round(float(x), nd)


def to_json_dict(result: ModesResult) -> dict[str, Any]:
    """The JSON form: ``modes[]``, ``candidates[]``, ``orders[]`` (flight) and ``warnings[]``, plus context.

    Examples
    --------
    >>> from clashcheck.identify.result import ModesResult
    >>> r = ModesResult("tap.wav", "tap", "tap test", 8000.0, 12.0, 0.5, ())
    >>> sorted(to_json_dict(r))
    ['candidates', 'cautions', 'kind', 'method', 'modes', 'orders', 'recording', 'resolution_hz', 'sample_rate_hz', 'warnings']
    """
    def mode(m: MeasuredMode) -> dict[str, Any]:
        return {
            "name": m.name,
            "frequency_hz": _r(m.frequency_hz, 3),
            "damping": _r(m.damping),
            "damping_low": _r(m.damping_low),
            "damping_high": _r(m.damping_high),
            "axis": m.axis,
            "confidence": _r(m.confidence, 3),
            "method": m.method,
        }

    modes = [mode(m) for m in result.modes]
    orders = [
        {"order": o.order, "family": o.family, "relative_strength": _r(o.relative_strength, 4)}
        for o in result.orders
    ]
    return {
        "recording": result.recording,
        "kind": result.kind,
        "method": result.method,
        "sample_rate_hz": _r(result.sample_rate_hz, 3),
        "resolution_hz": _r(result.resolution_hz, 4),
        "modes": modes,
        "candidates": [mode(m) for m in result.candidates],
        "orders": orders,
        "warnings": list(result.warnings),
        "cautions": list(CAUTIONS),
    }


def render_json(result: ModesResult) -> str:
    """JSON text of :func:`to_json_dict`, with a final newline."""
    return json.dumps(to_json_dict(result), indent=2, ensure_ascii=False) + "\n"


def _fmt_z(z: float | None) -> str:
    return "—" if z is None else f"{z:.4f}"


def render_table(result: ModesResult) -> str:
    """Plain-text tables of modes and order strengths, then warnings and cautions."""
    from tabulate import tabulate

    lines = [
        f"{result.recording}: {result.kind} recording, {result.sample_rate_hz:g} Hz, "
        f"{result.duration_s:.1f} s, resolution {result.resolution_hz:.3g} Hz, "
        f"{result.averages} {'impacts' if result.kind == 'tap' else 'segments'} averaged",
        f"method: {result.method}",
        "",
    ]
    if result.modes:
        rows = []
        for m in result.modes:
            if m.damping is None:
                zeta = f"< {m.damping_high:.4f}"
            else:
                zeta = f"{m.damping:.4f} ({m.damping_low:.4f}–{m.damping_high:.4f})"
            row = [m.name, f"{m.frequency_hz:.1f}", zeta, m.axis, f"{m.confidence:.2f}",
                   _fmt_z(m.damping_half_power)]
            if result.kind == "tap":
                row.append(_fmt_z(m.damping_decay))
            rows.append(row)
        head = ["mode", "frequency (Hz)", "damping ζ (range)", "axis", "confidence",
                "ζ half-power"]
        if result.kind == "tap":
            head.append("ζ decay fit")
        lines.append(tabulate(rows, headers=head, tablefmt="simple", disable_numparse=True))
    else:
        lines.append("no modes found")
    if result.candidates:
        lines += ["", f"candidates (confidence below {CONFIDENCE_FLOOR:g} or flagged; not written "
                      "to the modes file unless candidates are included):",
                  tabulate([[m.name, f"{m.frequency_hz:.1f}", _fmt_z(m.damping),
                             f"{m.confidence:.2f}", m.method] for m in result.candidates],
                           headers=["candidate", "frequency (Hz)", "damping ζ", "confidence",
                                    "why"], tablefmt="simple", disable_numparse=True)]
    if result.orders:
        lines += ["", tabulate(
            [[f"{o.order:g}", o.family, f"{o.relative_strength:.3f}"] for o in result.orders],
            headers=["order", "family", "relative strength"], tablefmt="simple",
            disable_numparse=True)]
    if result.warnings:
        lines += ["", "warnings:"] + [f"  - {w}" for w in result.warnings]
    lines += ["", "cautions:"] + [f"  - {c}" for c in CAUTIONS]
    return "\n".join(lines) + "\n"


def _toml_string(text: str) -> str:
    out = ['"']
    for ch in text:
        code = ord(ch)
        if ch == '"':
            out.append('\\"')
        elif ch == "\\":
            out.append("\\\\")
        elif code < 0x20 or code == 0x7F:
            out.append(f"\\u{code:04x}")
        elif 0xD800 <= code <= 0xDFFF:
            out.append("\\ufffd")
        else:
            out.append(ch)
    out.append('"')
    return "".join(out)


def _toml_float(x: float) -> str:
    if not math.isfinite(x):
        raise ValueError("a modes file holds finite numbers only")
    text = repr(round(float(x), 6))
    return text if ("." in text or "e" in text) else text + ".0"


def _comment(text: str) -> str:
    return "# " + " ".join(text.split())


def render_toml(result: ModesResult, today: _dt.date | None = None) -> str:
    """The modes file: ``[[frame.modes]]`` and, for flights, ``[[order_strengths]]``.

    Modes known only by an upper bound on ζ are written without ``damping``
    (so ``check`` uses the build's default and says so) and with
    ``damping_high``; a comment names the bound.

    Parameters
    ----------
    result : ModesResult
        The analysis result.
    today : datetime.date, optional
        Date written in the header (today by default).
    """
    day = (today or _dt.date.today()).isoformat()
    lines = [
        _comment(f"Frame modes measured by clashcheck from {result.recording} ({result.kind} "
                 f"recording), {day}."),
        _comment(f"Method: {result.method}."),
    ]
    lines += [_comment(c) for c in CAUTIONS]
    lines += [_comment("Use with: clashcheck check BUILD --modes THIS_FILE"), ""]
    source = f"measured: {result.recording}, {result.method}"
    if not result.modes:
        lines.append(_comment("no modes were found in this recording"))
    for m in result.modes:
        lines.append("[[frame.modes]]")
        lines.append(f"name = {_toml_string(m.name)}")
        lines.append(f"frequency = {_toml_string(f'{m.frequency_hz:.2f} Hz')}")
        if m.damping is not None:
            lines.append(f"damping = {_toml_float(m.damping)}")
        else:
            lines.append(_comment(f"damping: only known to be below {m.damping_high:.4f} (peak "
                                  "narrower than the resolution); check uses its default_damping"))
        if m.damping_low > 0:
            lines.append(f"damping_low = {_toml_float(m.damping_low)}")
        lines.append(f"damping_high = {_toml_float(m.damping_high)}")
        lines.append(f"axis = {_toml_string(m.axis)}")
        lines.append('kind = "other"')
        lines.append(f"source = {_toml_string(source)}")
        lines.append(f"confidence = {_toml_float(m.confidence)}")
        lines.append(f"method = {_toml_string(m.method)}")
        lines.append("")
    for m in result.candidates:
        lines.append(_comment(f"candidate, not a mode (confidence {m.confidence:.2f}): "
                              f"{m.frequency_hz:.2f} Hz; {m.method}"))
    if result.candidates:
        lines.append("")
    for o in result.orders:
        lines.append("[[order_strengths]]")
        lines.append(f"order = {_toml_float(o.order)}")
        lines.append(f"family = {_toml_string(o.family)}")
        lines.append(f"relative_strength = {_toml_float(o.relative_strength)}")
        lines.append("")
    return "\n".join(lines).rstrip("\n") + "\n"
