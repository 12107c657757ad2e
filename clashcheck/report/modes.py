"""Presentation of a :class:`~.result.ModesResult`: table, JSON and a modes file.

The modes file is the ``[[frame.modes]]`` fragment that ``clashcheck check
--modes FILE`` merges into a build, with ``[[order_strengths]]`` and a
``[dwell]`` table from flight recordings.  The TOML is written by ``tomli_w``;
only the comment lines at the top (which no TOML writer makes) are added here.

Peaks below the flight analysis's confidence floor (``ModesResult.candidates``)
are listed as comments in the modes file, and only written as modes when asked
(``include_candidates``).
"""

from __future__ import annotations

import datetime as _dt
import json
import math
from typing import Any

from ..identify.decay import AmplitudeDamping
from ..identify.result import MeasuredMode, ModesResult
from .common import CAUTIONS, JSON_SCHEMA_VERSION, cautions_block, text_block

__all__ = ["to_json_dict", "render_json", "render_table", "render_toml", "CAUTIONS", "amplitude_fields",
           "amplitude_entries", "AMPLITUDE_KEYS"]



def _r(x: float | None, nd: int = 6) -> float | None:
    return None if x is None else round(float(x), nd)


def amplitude_fields(a: AmplitudeDamping | None) -> dict[str, Any]:
    """The damping-against-amplitude keys of one mode (JSON and modes file).

    Amplitudes and the friction drop are in the recording's own units (the
    signal as read); the ``_rec`` suffix says so.  Every key is present; the
    values are ``None`` when the decay could not be followed.

    Parameters
    ----------
    a : AmplitudeDamping or None
        How the mode's damping depends on its amplitude (from a tap test), or
        ``None`` when the decay could not be followed.

    Returns
    -------
    dict
        Each of :data:`AMPLITUDE_KEYS` → its value: the decay kind and model
        name as text, damping ratios ζ [-] rounded to 6 decimals (the
        exponent to 4), amplitudes and friction drops [recording's signal
        units] to 6 significant figures, the number of taps combined and
        whether they were alike; all ``None`` when ``a`` is ``None``.

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


def _dwell_dict(result: ModesResult) -> dict[str, list[float]] | None:
    """``{"throttle": edges, "share": shares}`` (or ``rotor_hz`` edges), or ``None``."""
    d = result.dwell
    if d is None:
        return None
    return {d.quantity: [round(float(e), 6) for e in d.edges],
            "share": [round(float(x), 6) for x in d.share]}


def to_json_dict(result: ModesResult) -> dict[str, Any]:
    """The JSON form: ``modes[]``, ``candidates[]``, ``orders[]``, ``dwell`` and ``warnings[]``.

    Parameters
    ----------
    result : ModesResult
        The analysis result.

    Returns
    -------
    dict
        JSON-ready document; ``dwell`` is ``{"throttle": [band edges, fractions 0–1],
        "share": [time fractions summing to 1]}`` (``rotor_hz`` edges in Hz instead
        of ``throttle`` when the log has no throttle), or ``null``.

    Examples
    --------
    >>> from clashcheck.identify.result import ModesResult
    >>> r = ModesResult("tap.wav", "tap", "tap test", 8000.0, 12.0, 0.5, ())
    >>> sorted(to_json_dict(r))
    ['candidates', 'cautions', 'dwell', 'kind', 'method', 'modes', 'orders', 'recording', 'resolution_hz', 'sample_rate_hz', 'schema_version', 'warnings']
    """
    def mode_dict(m: MeasuredMode) -> dict[str, Any]:
        return {
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

    modes = [mode_dict(m) for m in result.modes]
    orders = [
        {"order": o.order, "family": o.family, "relative_strength": _r(o.relative_strength, 4)}
        for o in result.orders
    ]
    return {
        "schema_version": JSON_SCHEMA_VERSION,
        "recording": result.recording,
        "kind": result.kind,
        "method": result.method,
        "sample_rate_hz": _r(result.sample_rate_hz, 3),
        "resolution_hz": _r(result.resolution_hz, 4),
        "modes": modes,
        "candidates": [mode_dict(m) for m in result.candidates],
        "orders": orders,
        "dwell": _dwell_dict(result),
        "warnings": list(result.warnings),
        "cautions": list(CAUTIONS),
    }


def render_json(result: ModesResult) -> str:
    """JSON text of :func:`to_json_dict`, with a final newline.

    Parameters
    ----------
    result : ModesResult
        The analysis result.

    Returns
    -------
    str
    """
    return json.dumps(to_json_dict(result), indent=2, ensure_ascii=False) + "\n"


def _fmt_z(z: float | None) -> str:
    return "—" if z is None else f"{z:.4f}"


def _mode_rows(modes: Any, kind: str) -> list[list[str]]:
    rows = []
    for m in modes:
        if m.damping is None:
            zeta = f"< {m.damping_high:.4f}"
        else:
            zeta = f"{m.damping:.4f} ({m.damping_low:.4f}–{m.damping_high:.4f})"
        row = [m.name, f"{m.frequency_hz:.1f}", zeta, m.axis, f"{m.confidence:.2f}",
               _fmt_z(m.damping_half_power)]
        if kind == "tap":
            row.append(_fmt_z(m.damping_decay))
        rows.append(row)
    return rows


def render_table(result: ModesResult) -> str:
    """Plain-text tables of modes, candidates, order strengths and dwell, then warnings
    and cautions.

    Parameters
    ----------
    result : ModesResult
        The analysis result.

    Returns
    -------
    str
    """
    from tabulate import tabulate

    lines = [
        f"{result.recording}: {result.kind} recording, {result.sample_rate_hz:g} Hz, "
        f"{result.duration_s:.1f} s, resolution {result.resolution_hz:.3g} Hz, "
        f"{result.averages} {'impacts' if result.kind == 'tap' else 'segments'} averaged",
        f"method: {result.method}",
        "",
    ]
    head = ["mode", "frequency (Hz)", "damping ζ (range)", "axis", "confidence",
            "ζ half-power"]
    if result.kind == "tap":
        head.append("ζ decay fit")
    if result.modes:
        lines.append(tabulate(_mode_rows(result.modes, result.kind), headers=head,
                              tablefmt="simple", disable_numparse=True))
    else:
        lines.append("no modes found")
    amp = [m for m in result.modes if m.amplitude_damping is not None]
    if amp:
        lines += ["", "damping against amplitude (amplitudes and drop in the recording's units; "
                  "95 % intervals):", _amplitude_table(amp)]
    if result.candidates:
        lines += ["", "candidates (below the confidence floor; not in the modes file unless "
                  "asked for):",
                  tabulate(_mode_rows(result.candidates, result.kind), headers=head,
                           tablefmt="simple", disable_numparse=True)]
    if result.orders:
        lines += ["", tabulate(
            [[f"{o.order:g}", o.family, f"{o.relative_strength:.3f}"] for o in result.orders],
            headers=["order", "family", "relative strength"], tablefmt="simple",
            disable_numparse=True)]
    if result.dwell is not None:
        d = result.dwell
        if d.quantity == "throttle":
            bands = [f"{100 * a:.0f}–{100 * b:.0f} %" for a, b in zip(d.edges, d.edges[1:])]
            label = "throttle"
        else:
            bands = [f"{a:.0f}–{b:.0f} Hz" for a, b in zip(d.edges, d.edges[1:])]
            label = "rotor rate"
        lines += ["", tabulate([[b, f"{100 * x:.1f} %"] for b, x in zip(bands, d.share) if x > 0],
                               headers=[label, "share of time"], tablefmt="simple",
                               disable_numparse=True)]
    if result.warnings:
        lines += text_block("Warnings", result.warnings)
    lines += cautions_block()
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


def _comment(text: str) -> str:
    return "# " + " ".join(text.split())


def _clean(x: float) -> float:
    if not math.isfinite(x):
        raise ValueError("a modes file holds finite numbers only")
    return round(float(x), 6)


def _mode_table(m: Any, source: str) -> dict[str, Any]:
    out: dict[str, Any] = {"name": m.name, "frequency": f"{m.frequency_hz:.2f} Hz"}
    if m.damping is not None:
        out["damping"] = _clean(m.damping)
    if m.damping_low > 0:
        out["damping_low"] = _clean(m.damping_low)
    out.update(damping_high=_clean(m.damping_high), axis=m.axis, kind="other", source=source,
               confidence=_clean(m.confidence), method=m.method)
    out.update(amplitude_entries(m))  # damping against amplitude (tap tests), when measured
    return out


def render_toml(result: ModesResult, today: _dt.date | None = None,
                include_candidates: bool = False) -> str:
    """The modes file: ``[[frame.modes]]`` and, for flights, ``[[order_strengths]]`` and ``[dwell]``.

    Modes known only by an upper bound on ζ are written without ``damping``
    (so ``check`` uses the build's default and says so) and with
    ``damping_high``.  Candidates (below the confidence floor) are named in
    comments only, unless ``include_candidates``.  ``[dwell]`` holds
    ``throttle = [band edges, fractions 0–1]`` (or ``rotor_hz = [edges in Hz]``)
    and ``share = [time fractions summing to 1]``.

    Parameters
    ----------
    result : ModesResult
        The analysis result.
    today : datetime.date, optional
        Date written in the header (today by default).
    include_candidates : bool
        Write the candidates as modes too.

    Returns
    -------
    str
        TOML text.
    """
    import tomli_w

    day = (today or _dt.date.today()).isoformat()
    lines = [
        _comment(f"Frame modes measured by clashcheck from {result.recording} ({result.kind} "
                 f"recording), {day}."),
        _comment(f"Method: {result.method}."),
    ]
    lines += [_comment(c) for c in CAUTIONS]
    lines.append(_comment("Use with: clashcheck check BUILD --modes THIS_FILE"))
    source = f"measured: {result.recording}, {result.method}"
    modes = list(result.modes)
    if result.candidates:
        if include_candidates:
            modes += list(result.candidates)
            lines.append(_comment("Candidates below the confidence floor are included as "
                                  "modes (asked for)."))
        else:
            lines.append(_comment("Candidates below the confidence floor, left out: " + ", ".join(
                f"{m.frequency_hz:.1f} Hz (confidence {m.confidence:.2f})"
                for m in result.candidates)))
    if any(m.amplitude_damping is not None for m in modes):
        lines.append(_comment("Damping against amplitude: amplitudes and the drop per cycle are in the "
                              "recording's units. Set operating_amplitude_rec to the amplitude the frame "
                              "sees in flight and check uses the damping there; without it, check uses "
                              "the lowest damping over the measured range."))
    for m in modes:
        if m.damping is None:
            lines.append(_comment(f"{m.name}: damping only known to be below "
                                  f"{m.damping_high:.4f}; check uses its default_damping"))
    if any(getattr(m, "amplitude_damping", None) is not None for m in modes):
        lines.append(_comment("damping against amplitude; amplitudes and the drop per cycle are in "
                              "the recording's units. Set operating_amplitude_rec to the amplitude "
                              "the frame sees in flight and check uses the damping there; without "
                              "it, check uses the lowest damping over the measured range."))
    if not modes:
        lines.append(_comment("no modes were found in this recording"))
    doc: dict[str, Any] = {}
    if modes:
        doc["frame"] = {"modes": [_mode_table(m, source) for m in modes]}
    if result.orders:
        doc["order_strengths"] = [
            {"order": _clean(o.order), "family": o.family,
             "relative_strength": _clean(o.relative_strength)} for o in result.orders]
    dwell = _dwell_dict(result)
    if dwell is not None:
        doc["dwell"] = dwell
    return "\n".join(lines) + "\n\n" + tomli_w.dumps(doc)
