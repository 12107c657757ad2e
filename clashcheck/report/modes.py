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

from ..identify.decay import AmplitudeDamping
from ..identify.result import ModesResult
from .common import CAUTIONS

__all__ = ["to_json_dict", "render_json", "render_table", "render_toml", "CAUTIONS", "amplitude_fields",
           "amplitude_entries", "AMPLITUDE_KEYS"]



def _r(x: float | None, nd: int = 6) -> float | None:
    return None if x is None else round(float(x), nd)


def amplitude_fields(a: AmplitudeDamping | None) -> dict[str, Any]:
    """The damping-against-amplitude keys of one mode (JSON and modes file).

    Amplitudes and the friction drop are in the recording's own units (the
    signal as read); the ``_rec`` suffix says so.  Every key is present; the
    values are ``None`` when the decay could not be followed.

    Examples
    --------
    >>> sorted(amplitude_fields(None))[:3]
    ['amplitude_high_rec', 'amplitude_low_rec', 'damping_at_amplitude_high']
    """
    if a is None:
        return dict.fromkeys(AMPLITUDE_KEYS)
    return {
        "decay": a.decay,
        "damping_model": a.model,
        "viscous_damping": _r(a.viscous_damping),
        "viscous_damping_low": _r(a.viscous_damping_low),
        "viscous_damping_high": _r(a.viscous_damping_high),
        "friction_drop_per_cycle": _sig(a.friction_drop_per_cycle),
        "friction_drop_per_cycle_low": _sig(a.friction_drop_low),
        "friction_drop_per_cycle_high": _sig(a.friction_drop_high),
        "amplitude_low_rec": _sig(a.amplitude_low),
        "amplitude_high_rec": _sig(a.amplitude_high),
        "damping_at_amplitude_low": _r(a.damping_at_amplitude_low),
        "damping_at_amplitude_high": _r(a.damping_at_amplitude_high),
        "damping_exponent": _r(a.power_exponent, 4),
        "taps_combined": a.taps,
        "taps_alike": a.taps_alike,
    }


def amplitude_entries(mode: Any) -> dict[str, Any]:
    """The damping-against-amplitude keys of a mode's ``[[frame.modes]]`` table (no ``None`` values).

    Parameters
    ----------
    mode : MeasuredMode
        A measured mode.

    Returns
    -------
    dict
        Empty when the mode has no damping against amplitude.
    """
    if getattr(mode, "amplitude_damping", None) is None:
        return {}
    return {k: v for k, v in amplitude_fields(mode.amplitude_damping).items() if v is not None}


#: Keys :func:`amplitude_fields` gives each mode, in order.
AMPLITUDE_KEYS = (
    "decay", "damping_model", "viscous_damping", "viscous_damping_low", "viscous_damping_high",
    "friction_drop_per_cycle", "friction_drop_per_cycle_low", "friction_drop_per_cycle_high",
    "amplitude_low_rec", "amplitude_high_rec", "damping_at_amplitude_low",
    "damping_at_amplitude_high", "damping_exponent", "taps_combined", "taps_alike",
)


def _sig(x: float | None, digits: int = 6) -> float | None:
    """``x`` to ``digits`` significant figures (amplitudes in any units)."""
    if x is None or x == 0 or not math.isfinite(x):
        return None if x is None else float(x)
    return round(float(x), digits - 1 - int(math.floor(math.log10(abs(x)))))


def to_json_dict(result: ModesResult) -> dict[str, Any]:
    """The JSON form: ``modes[]``, ``orders[]`` (flight) and ``warnings[]``, plus context.

    Examples
    --------
    >>> from clashcheck.identify.result import ModesResult
    >>> r = ModesResult("tap.wav", "tap", "tap test", 8000.0, 12.0, 0.5, ())
    >>> sorted(to_json_dict(r))
    ['cautions', 'kind', 'method', 'modes', 'orders', 'recording', 'resolution_hz', 'sample_rate_hz', 'warnings']
    """
    modes = [
        {
            "name": m.name,
            "frequency_hz": _r(m.frequency_hz, 3),
            "damping": _r(m.damping),
            "damping_low": _r(m.damping_low),
            "damping_high": _r(m.damping_high),
            "axis": m.axis,
            "confidence": _r(m.confidence, 3),
            "method": m.method,
            **(amplitude_fields(m.amplitude_damping) if result.kind == "tap" else {}),
        }
        for m in result.modes
    ]
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
    amp = [m for m in result.modes if m.amplitude_damping is not None]
    if amp:
        lines += ["", "damping against amplitude (amplitudes and drop in the recording's units; "
                  "95 % intervals):", _amplitude_table(amp)]
    if result.orders:
        lines += ["", tabulate(
            [[f"{o.order:g}", o.family, f"{o.relative_strength:.3f}"] for o in result.orders],
            headers=["order", "family", "relative strength"], tablefmt="simple",
            disable_numparse=True)]
    if result.warnings:
        lines += ["", "warnings:"] + [f"  - {w}" for w in result.warnings]
    lines += ["", "cautions:"] + [f"  - {c}" for c in CAUTIONS]
    return "\n".join(lines) + "\n"


def _amplitude_table(modes: list) -> str:
    from tabulate import tabulate

    rows = []
    for m in modes:
        a = m.amplitude_damping
        model = a.model + (f" p={a.power_exponent:.2f}" if a.power_exponent is not None else "")
        rows.append([
            m.name, a.decay, model,
            f"{a.viscous_damping:.4f} ({a.viscous_damping_low:.4f}–{a.viscous_damping_high:.4f})",
            f"{a.friction_drop_per_cycle:.3g} ({a.friction_drop_low:.3g}–{a.friction_drop_high:.3g})",
            f"{a.amplitude_low:.3g}–{a.amplitude_high:.3g}",
            f"{a.damping_at_amplitude_low:.4f} → {a.damping_at_amplitude_high:.4f}",
            f"{a.taps}" + (" (alike)" if a.taps_alike else ""),
        ])
    return tabulate(rows, headers=["mode", "decay", "model", "ζ viscous", "friction drop/cycle",
                                   "amplitude range", "ζ bottom → top", "taps"],
                    tablefmt="simple", disable_numparse=True)


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
        if m.amplitude_damping is not None:  # damping against amplitude (issue 14)
            lines.append(_comment("damping against amplitude; amplitudes and the drop per cycle are in "
                                  "the recording's units. Set operating_amplitude_rec to the amplitude "
                                  "the frame sees in flight and check uses the damping there; without "
                                  "it, check uses the lowest damping over the measured range."))
            for key, value in amplitude_entries(m).items():
                if isinstance(value, bool):
                    lines.append(f"{key} = {'true' if value else 'false'}")
                elif isinstance(value, str):
                    lines.append(f"{key} = {_toml_string(value)}")
                elif isinstance(value, int):
                    lines.append(f"{key} = {value}")
                else:  # already rounded; any magnitude
                    lines.append(f"{key} = {float(value)!r}")
        lines.append("")
    for o in result.orders:
        lines.append("[[order_strengths]]")
        lines.append(f"order = {_toml_float(o.order)}")
        lines.append(f"family = {_toml_string(o.family)}")
        lines.append(f"relative_strength = {_toml_float(o.relative_strength)}")
        lines.append("")
    return "\n".join(lines).rstrip("\n") + "\n"
