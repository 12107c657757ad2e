"""Words and numbers for a before-and-after tap test (:mod:`clashcheck.analysis.retest`).

Computes nothing: it formats a :class:`~clashcheck.analysis.retest.RetestResult`
as a plain-text table or a JSON document (``schema_version``; frequencies in
``*_hz``; damping ratios bare; amplitudes and friction drops in the
recording's own units, ``*_rec`` / ``friction_drop_per_cycle``).
"""

from __future__ import annotations

from typing import Any

from ..analysis.retest import Change, RetestResult
from .common import CAUTIONS, JSON_SCHEMA_VERSION, cautions_block, dump_json, num

__all__ = ["retest_to_dict", "render_retest", "RULE"]

#: The exit-code rule, in words (README "Before and after").
RULE = ("damping got worse: for at least one mode found in both tests, the damping fell by more than "
        "the 95 % uncertainty of the difference")


def _change(c: Change | None) -> dict[str, Any] | None:
    if c is None:
        return None
    return {"before": num(c.before), "after": num(c.after), "change": num(c.change),
            "uncertainty": num(c.uncertainty), "significant": c.significant}


def retest_to_dict(result: RetestResult) -> dict[str, Any]:
    """The JSON form of a before-and-after comparison.

    Parameters
    ----------
    result : RetestResult
        The comparison.

    Returns
    -------
    dict
        ``schema_version``, ``before``, ``after``, ``modes[]`` (each with
        ``frequency_hz``, ``viscous_damping``, ``friction_drop_per_cycle`` and
        ``damping`` as ``{before, after, change, uncertainty, significant}``,
        plus ``basis``, ``amplitude_rec``, ``decay_before``, ``decay_after``,
        ``worse``), ``only_before``, ``only_after``, ``worse``, ``rule``, ``cautions``.
    """
    return {
        "schema_version": JSON_SCHEMA_VERSION,
        "before": result.before_path,
        "after": result.after_path,
        "frequency_tolerance": result.tolerance,
        "modes": [
            {
                "before_name": m.before_name,
                "after_name": m.after_name,
                "axis": m.axis,
                "frequency_hz": _change(m.frequency_hz),
                "viscous_damping": _change(m.viscous_damping),
                "friction_drop_per_cycle": _change(m.friction_drop_per_cycle),
                "damping": _change(m.damping),
                "basis": m.basis,
                "amplitude_rec": num(m.amplitude_rec),
                "decay_before": m.decay_before,
                "decay_after": m.decay_after,
                "worse": m.worse,
            }
            for m in result.modes
        ],
        "only_before": list(result.only_before),
        "only_after": list(result.only_after),
        "worse": result.worse,
        "rule": RULE,
        "cautions": list(CAUTIONS),
    }


def _fmt(c: Change | None, spec: str) -> str:
    if c is None:
        return "—"
    u = "" if c.uncertainty is None else f" ± {c.uncertainty:{spec}}"
    return f"{c.before:{spec}} → {c.after:{spec}} ({c.change:+{spec}}{u})"


def render_retest(result: RetestResult, fmt: str = "table") -> str:
    """Plain-text table (``fmt="table"``) or JSON text (``fmt="json"``).

    Parameters
    ----------
    result : RetestResult
        The comparison.
    fmt : str
        ``table`` or ``json``.

    Returns
    -------
    str
    """
    if fmt == "json":
        return dump_json(retest_to_dict(result))
    from tabulate import tabulate

    lines = [f"before: {result.before_path}", f"after:  {result.after_path}", ""]
    if result.modes:
        rows = []
        for m in result.modes:
            decay = "—" if m.decay_before is None else f"{m.decay_before} → {m.decay_after}"
            rows.append([
                f"{m.before_name} / {m.after_name}",
                f"{m.frequency_hz.before:.1f} → {m.frequency_hz.after:.1f} ({m.frequency_hz.change:+.1f})",
                decay, _fmt(m.viscous_damping, ".4f"), _fmt(m.friction_drop_per_cycle, ".3g"),
                _fmt(m.damping, ".4f"),
                f"amplitude {m.amplitude_rec:.3g}" if m.amplitude_rec is not None else m.basis,
                "WORSE" if m.worse else ("better" if m.damping.significant else "same"),
            ])
        lines.append(tabulate(rows, headers=["mode (before / after)", "f (Hz)", "decay", "ζ viscous",
                                             "friction drop/cycle", "ζ compared", "compared at", "damping"],
                              tablefmt="simple", disable_numparse=True))
        lines.append("")
        lines.append("Changes are after − before ± the 95 % uncertainty of the difference. With damping "
                     "against amplitude in both files, ζ is compared at the end of the amplitude range both "
                     "taps covered where it fell most (recording units).")
    else:
        lines.append("no mode was found in both tests")
    if result.only_before:
        lines.append("only before (not found after): " + ", ".join(result.only_before))
    if result.only_after:
        lines.append("only after (new): " + ", ".join(result.only_after))
    lines += ["", ("verdict: WORSE — " if result.worse else "verdict: not worse — ") + (
        RULE if result.worse else "no mode's damping fell by more than its uncertainty")]
    lines += cautions_block()
    return "\n".join(lines) + "\n"
