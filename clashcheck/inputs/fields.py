"""Cleaning helpers for raw TOML tables: one per kind of value.

Each helper takes the raw table, a key and the dotted path of the table, and
returns a clean Python value or raises :class:`~clashcheck.errors.InputError`
naming the field, what was expected and what arrived.  Range checks are made
here, on the value as written, so the message shows the user's own text.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Iterable, Mapping
from typing import Any

from ..errors import MISSING, InputError
from .units import parse

__all__ = [
    "check_keys",
    "table",
    "tables",
    "quantity",
    "count",
    "ratio",
    "text",
    "choice",
    "choices",
]


def _path(where: str, key: str) -> str:
    return f"{where}.{key}" if where else key


def check_keys(raw: Mapping[str, Any], allowed: Iterable[str], where: str) -> None:
    """Refuse keys that are not in ``allowed``, with a "did you mean" hint.

    Parameters
    ----------
    raw : Mapping
        The raw table as read from TOML; it is not modified.
    allowed : Iterable of str
        The known keys.
    where : str
        Dotted path of ``raw`` for messages (``""`` at the top level), e.g.
        ``"motor"``.

    Returns
    -------
    None
        Returns only when every key is known.

    Raises
    ------
    InputError
        For the first unknown key, named ``where.key``, with the closest
        known key as a hint, or else the known keys (the first eight).
    """
    allowed = list(allowed)
    for key in raw:
        if key not in allowed:
            close = difflib.get_close_matches(str(key), allowed, n=1, cutoff=0.6)
            shown = ", ".join(allowed[:8]) + (f" and {len(allowed) - 8} more" if len(allowed) > 8 else "")
            hint = f"did you mean {close[0]!r}?" if close else "allowed: " + shown
            raise InputError(_path(where, str(key)), "a known key", str(key), hint)


def table(raw: Mapping[str, Any], key: str, where: str, *, required: bool = False) -> dict[str, Any] | None:
    """A sub-table, or ``None`` when absent and not required.

    Parameters
    ----------
    raw : Mapping
        The raw table as read from TOML; it is not modified.
    key : str
        The key to read in ``raw``.
    where : str
        Dotted path of ``raw`` for messages (``""`` at the top level), e.g.
        ``"motor"``; the field is named ``where.key``.
    required : bool
        Refuse a missing table instead of returning ``None``.

    Returns
    -------
    dict or None
        The sub-table itself (not a copy), or ``None`` when absent and not
        required.

    Raises
    ------
    InputError
        If the value is not a table, or it is missing and ``required``.
    """
    value = raw.get(key, MISSING)
    if value is MISSING:
        if required:
            raise InputError(_path(where, key), f"a [{_path(where, key)}] table", MISSING)
        return None
    if not isinstance(value, dict):
        raise InputError(_path(where, key), "a table", value)
    return value


def tables(raw: Mapping[str, Any], key: str, where: str) -> list[dict[str, Any]]:
    """An array of tables (``[[key]]``); empty when absent.

    Parameters
    ----------
    raw : Mapping
        The raw table as read from TOML; it is not modified.
    key : str
        The key to read in ``raw``.
    where : str
        Dotted path of ``raw`` for messages (``""`` at the top level), e.g.
        ``"motor"``; the field is named ``where.key``.

    Returns
    -------
    list of dict
        The tables in file order (the list itself, not a copy); an empty list
        when the key is absent.

    Raises
    ------
    InputError
        If the value is not a list whose items are all tables.
    """
    value = raw.get(key, MISSING)
    if value is MISSING:
        return []
    if not isinstance(value, list) or not all(isinstance(v, dict) for v in value):
        raise InputError(_path(where, key), f"an array of tables [[{_path(where, key)}]]", value)
    return value


def quantity(
    raw: Mapping[str, Any],
    key: str,
    where: str,
    unit: str,
    example: str,
    *,
    required: bool = False,
    default: float | None = None,
    minimum: float | None = None,
    maximum: float | None = None,
    exclusive_minimum: bool = False,
    range_text: str = "",
) -> float | None:
    """A physical value written as a string with units, in SI.

    ``minimum``/``maximum`` are in SI.  ``range_text`` describes the range in
    the user's units for the message, e.g. ``"from 0 % to 100 %"``.

    Parameters
    ----------
    raw : Mapping
        The raw table as read from TOML; it is not modified.
    key : str
        The key to read in ``raw``.
    where : str
        Dotted path of ``raw`` for messages (``""`` at the top level), e.g.
        ``"motor"``; the field is named ``where.key``.
    unit : str
        The unit the field is expressed in, e.g. ``"rpm/V"``; the value must
        have its dimension (see :func:`~clashcheck.inputs.units.parse`).
    example : str
        An example value for messages, e.g. ``"1950 rpm/V"``.
    required : bool
        Refuse a missing value instead of returning ``default``.
    default : float or None
        Returned as is when the key is absent and not required [SI].
    minimum : float or None
        Lowest allowed value [SI base units of ``unit``'s dimension], or
        ``None`` for no lower bound.
    maximum : float or None
        Highest allowed value (inclusive) [SI base units of ``unit``'s
        dimension], or ``None`` for no upper bound.
    exclusive_minimum : bool
        Refuse a value equal to ``minimum`` too.
    range_text : str
        The allowed range in the user's units, for the message; when empty
        the message shows ``example`` instead.

    Returns
    -------
    float or None
        The value in SI base units (rotation counted in cycles), or
        ``default`` when absent and not required.

    Raises
    ------
    InputError
        If the value is missing and ``required``, cannot be parsed with the
        unit's dimension, or lies outside the range.
    """
    field = _path(where, key)
    value = raw.get(key, MISSING)
    if value is MISSING:
        if required:
            raise InputError(field, f"a value like {example!r}", MISSING)
        return default
    si = parse(value, unit, field, example=example)
    low_bad = minimum is not None and (si <= minimum if exclusive_minimum else si < minimum)
    high_bad = maximum is not None and si > maximum
    if low_bad or high_bad:
        raise InputError(field, f"a value {range_text}" if range_text else f"a value like {example!r}", value)
    return si


def count(
    raw: Mapping[str, Any],
    key: str,
    where: str,
    *,
    minimum: int,
    maximum: int,
    required: bool = False,
    default: int | None = None,
    what: str = "a whole number",
) -> int | None:
    """A bare whole number (TOML integer).

    Parameters
    ----------
    raw : Mapping
        The raw table as read from TOML; it is not modified.
    key : str
        The key to read in ``raw``.
    where : str
        Dotted path of ``raw`` for messages (``""`` at the top level), e.g.
        ``"motor"``; the field is named ``where.key``.
    minimum : int
        Lowest allowed value (inclusive).
    maximum : int
        Highest allowed value (inclusive).
    required : bool
        Refuse a missing value instead of returning ``default``.
    default : int or None
        Returned as is when the key is absent and not required.
    what : str
        What the number is, for the message, e.g. ``"an arm count"``.

    Returns
    -------
    int or None
        The number, or ``default`` when absent and not required.

    Raises
    ------
    InputError
        If the value is missing and ``required``, is not a TOML integer
        (booleans and strings are refused), or lies outside
        ``minimum``–``maximum``.
    """
    field = _path(where, key)
    value = raw.get(key, MISSING)
    if value is MISSING:
        if required:
            raise InputError(field, f"{what} from {minimum} to {maximum}", MISSING)
        return default
    if isinstance(value, bool) or not isinstance(value, int):
        raise InputError(field, f"{what} from {minimum} to {maximum} (a bare number)", value)
    if not minimum <= value <= maximum:
        raise InputError(field, f"{what} from {minimum} to {maximum}", value)
    return value


def ratio(
    raw: Mapping[str, Any],
    key: str,
    where: str,
    *,
    low: float,
    high: float,
    open_low: bool = True,
    open_high: bool = True,
    required: bool = False,
    default: float | None = None,
    what: str = "a ratio",
) -> float | None:
    """A bare number (TOML integer or float) within a range.

    Parameters
    ----------
    raw : Mapping
        The raw table as read from TOML; it is not modified.
    key : str
        The key to read in ``raw``.
    where : str
        Dotted path of ``raw`` for messages (``""`` at the top level), e.g.
        ``"motor"``; the field is named ``where.key``.
    low : float
        Lower end of the range [-].
    high : float
        Upper end of the range [-].
    open_low : bool
        Exclude ``low`` itself.
    open_high : bool
        Exclude ``high`` itself.
    required : bool
        Refuse a missing value instead of returning ``default``.
    default : float or None
        Returned as is when the key is absent and not required.
    what : str
        What the number is, for the message.

    Returns
    -------
    float or None
        The number as a float, or ``default`` when absent and not required.

    Raises
    ------
    InputError
        If the value is missing and ``required``, is not a bare number
        (booleans and strings are refused), is not finite, or lies outside
        the range.
    """
    field = _path(where, key)
    value = raw.get(key, MISSING)
    lo_sym, hi_sym = ("(" if open_low else "["), (")" if open_high else "]")
    expected = f"{what} in {lo_sym}{low:g}, {high:g}{hi_sym} (a bare number)"
    if value is MISSING:
        if required:
            raise InputError(field, expected, MISSING)
        return default
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(field, expected, value)
    x = float(value)
    ok = math.isfinite(x) and (x > low if open_low else x >= low) and (x < high if open_high else x <= high)
    if not ok:
        raise InputError(field, expected, value)
    return x


def text(
    raw: Mapping[str, Any], key: str, where: str, *, required: bool = False, default: str | None = None,
    max_length: int = 200,
) -> str | None:
    """A free-text string.

    Parameters
    ----------
    raw : Mapping
        The raw table as read from TOML; it is not modified.
    key : str
        The key to read in ``raw``.
    where : str
        Dotted path of ``raw`` for messages (``""`` at the top level), e.g.
        ``"motor"``; the field is named ``where.key``.
    required : bool
        Refuse a missing value instead of returning ``default``.
    default : str or None
        Returned as is when the key is absent and not required.
    max_length : int
        Longest allowed text [characters].

    Returns
    -------
    str or None
        The text as written, or ``default`` when absent and not required.

    Raises
    ------
    InputError
        If the value is missing and ``required``, is not a string, or is
        longer than ``max_length``.
    """
    field = _path(where, key)
    value = raw.get(key, MISSING)
    if value is MISSING:
        if required:
            raise InputError(field, "a text string", MISSING)
        return default
    if not isinstance(value, str):
        raise InputError(field, "a text string", value)
    if len(value) > max_length:
        raise InputError(field, f"a text of at most {max_length} characters", value)
    return value


def choice(
    raw: Mapping[str, Any], key: str, where: str, options: Iterable[str], *, default: str | None = None,
    required: bool = False,
) -> str | None:
    """One of a fixed set of words.

    Parameters
    ----------
    raw : Mapping
        The raw table as read from TOML; it is not modified.
    key : str
        The key to read in ``raw``.
    where : str
        Dotted path of ``raw`` for messages (``""`` at the top level), e.g.
        ``"motor"``; the field is named ``where.key``.
    options : Iterable of str
        The allowed words.
    default : str or None
        Returned as is when the key is absent and not required.
    required : bool
        Refuse a missing value instead of returning ``default``.

    Returns
    -------
    str or None
        The word, or ``default`` when absent and not required.

    Raises
    ------
    InputError
        If the value is missing and ``required``, or is not one of
        ``options`` (with the closest option as a hint).
    """
    options = list(options)
    field = _path(where, key)
    value = raw.get(key, MISSING)
    if value is MISSING:
        if required:
            raise InputError(field, "one of " + ", ".join(options), MISSING)
        return default
    if not isinstance(value, str) or value not in options:
        close = difflib.get_close_matches(str(value), options, n=1) if isinstance(value, str) else []
        raise InputError(
            field, "one of " + ", ".join(options), value, f"did you mean {close[0]!r}?" if close else ""
        )
    return value


def choices(
    raw: Mapping[str, Any], key: str, where: str, options: Iterable[str], *, default: tuple[str, ...]
) -> tuple[str, ...]:
    """A list of words from a fixed set, without repeats.

    Parameters
    ----------
    raw : Mapping
        The raw table as read from TOML; it is not modified.
    key : str
        The key to read in ``raw``.
    where : str
        Dotted path of ``raw`` for messages (``""`` at the top level), e.g.
        ``"motor"``; the field is named ``where.key``.
    options : Iterable of str
        The allowed words.
    default : tuple of str
        Returned as is when the key is absent.

    Returns
    -------
    tuple of str
        The words in the order written, repeats dropped (not refused); or
        ``default`` when absent.

    Raises
    ------
    InputError
        If the value is not a list, or an item is not one of ``options``.
    """
    options = list(options)
    field = _path(where, key)
    value = raw.get(key, MISSING)
    if value is MISSING:
        return default
    if not isinstance(value, list):
        raise InputError(field, "a list of " + ", ".join(options), value)
    out: list[str] = []
    for item in value:
        if not isinstance(item, str) or item not in options:
            raise InputError(field, "a list of " + ", ".join(options), item)
        if item not in out:
            out.append(item)
    return tuple(out)
