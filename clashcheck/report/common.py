"""What every report shares: the cautions, the JSON schema version, number formatting."""

from __future__ import annotations

import json
import math
from typing import Any

__all__ = ["CAUTIONS", "JSON_SCHEMA_VERSION", "pct", "pct_pair", "dump_json", "num", "rounded", "text_block",
           "cautions_block"]

#: Safety lines printed with results that may lead to hardware work.
CAUTIONS = (
    "Bench and tap tests are done with the propellers removed, or in a test rig behind guards.",
    "Lithium packs: charge and store under supervision.",
    "Design advice only: it does not replace inspection, test flights in a safe area, "
    "or the aviation rules and licensed practice that apply locally.",
)

#: Version of the JSON layout; bumped only when a key changes meaning.
JSON_SCHEMA_VERSION = 1


def pct(x: float | None, digits: int = 0) -> str:
    """A fraction as a percentage string; ``-`` for ``None`` or ``nan``.

    Parameters
    ----------
    x : float or None
        A fraction.
    digits : int, optional
        Decimal places.

    Returns
    -------
    str
        For example ``'27 %'``.
    """
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return "-"
    if math.isinf(x):
        return "unreachable"
    return f"{100 * x:.{digits}f} %"


def pct_pair(a: float | None, b: float | None, digits: int = 0) -> tuple[str, str]:
    """Two fractions as percentages with enough decimals to tell them apart.

    Two different numbers that print alike ("4 %–4 %", "13.6 %, below the
    13.6 %") read as a mistake; up to two more decimals are added until they
    differ.

    Parameters
    ----------
    a, b : float or None
        Fractions.
    digits : int, optional
        Decimal places when the two already differ.

    Returns
    -------
    (str, str)
        The two percentages, as :func:`pct` writes them.

    Examples
    --------
    >>> pct_pair(0.0401, 0.0449)
    ('4.0 %', '4.5 %')
    >>> pct_pair(0.27, 0.31)
    ('27 %', '31 %')
    """
    for d in range(digits, digits + 3):
        sa, sb = pct(a, d), pct(b, d)
        if sa != sb or a == b:
            break
    return sa, sb


def num(x: float | None) -> float | None:
    """JSON-safe float: ``None`` for nan and inf.

    Parameters
    ----------
    x : float or None
        A number.

    Returns
    -------
    float or None
        ``x``, or ``None`` when it is missing or not finite (JSON has no nan).
    """
    if x is None or not math.isfinite(x):
        return None
    return float(x)


def dump_json(data: Any) -> str:
    """JSON text with a trailing newline, refusing nan/inf.

    Parameters
    ----------
    data : object
        JSON-ready data (dicts, lists, numbers, strings).

    Returns
    -------
    str
        Indented JSON text ending in a newline.
    """
    return json.dumps(data, indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def rounded(data: Any, digits: int = 15) -> Any:
    """``data`` with every float rounded to ``digits`` significant digits.

    Unit conversions leave float noise (``0.0036000000000000003`` for 3.6 g);
    fifteen significant digits drop that noise and keep every figure the inputs carry.

    Parameters
    ----------
    data : object
        Floats, or dicts, lists and tuples of them (other values pass through).
    digits : int, optional
        Significant digits to keep.

    Returns
    -------
    object
        The same shape, floats rounded (non-finite floats unchanged).

    Examples
    --------
    >>> rounded({"mass_kg": 0.0036000000000000003, "n": [25.200000000000003]})
    {'mass_kg': 0.0036, 'n': [25.2]}
    """
    if isinstance(data, float):
        return float(f"{data:.{digits}g}") if math.isfinite(data) else data
    if isinstance(data, dict):
        return {k: rounded(v, digits) for k, v in data.items()}
    if isinstance(data, (list, tuple)):
        return [rounded(v, digits) for v in data]
    return data


def text_block(title: str, items: Any, mark: str = "-") -> list[str]:
    """A titled list for a text report, in the one heading style of every command.

    Parameters
    ----------
    title : str
        Heading, a capitalised word or two with no colon (``Notes``, ``Warnings``).
    items : iterable of str
        The lines; no block at all when there are none.
    mark : str, optional
        Bullet mark (``!`` for cautions).

    Returns
    -------
    list of str
        A blank line, the title and one indented line per item; empty without items.

    Examples
    --------
    >>> text_block("Notes", ["a", "b"])
    ['', 'Notes', '  - a', '  - b']
    """
    lines = [str(i) for i in items]
    return ["", title] + [f"  {mark} {line}" for line in lines] if lines else []


def cautions_block() -> list[str]:
    """The safety cautions as a text-report block (heading ``Cautions``, ``!`` marks).

    Returns
    -------
    list of str
        The block's lines.
    """
    return text_block("Cautions", CAUTIONS, "!")
