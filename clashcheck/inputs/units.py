"""Units at the boundary: the one pint registry and the value parser.

Every physical value that enters clashcheck as text passes through
:func:`parse`, which checks the text's form, checks its dimension against the
unit the field expects, and returns a plain float in SI base units.  Nothing
below the build loader sees pint.

Rotation rates
--------------
pint counts the radian as dimensionless, so plain pint converts ``60 rpm`` to
6.28 Hz.  Here a revolution is one cycle: ``rpm`` means revolutions (cycles)
per minute and ``60 rpm`` is exactly 1 Hz.  A radian stays pint's plain 1 (right
for a stiffness in N·m/rad), so a radian in a rate field such as ``rad/s`` for a
rotor rate is refused with a hint rather than read 2π wrong.
Inside the code, rotation rates are kept in Hz (``*_hz``) and
:mod:`clashcheck.model.rates` holds ``TWO_PI`` for the drive model's rad/s.

Speed
-----
Importing pint and building a registry costs several tenths of a second, more
than the rest of a ``check`` run.  The registry is therefore built lazily, and
each unit expression's conversion (factor to SI and dimension) is remembered in
a small JSON file in the user's cache folder.  A later run that meets only
known expressions never imports pint.  Set ``CLASHCHECK_CACHE_DIR`` to move the
file, or to an empty string to turn the file off.

The cache file is keyed: it records a key made of the package version and
the conversion rules (the rewrite table below), and a checksum of its
entries.  A file written under other rules, or edited by hand, fails one of
the two and is ignored (the conversions are recomputed with pint), so a
well-formed but wrong cache can never change a result.

Text forms
----------
Value strings are normalised to Unicode NFKC first, so ``45 mΩ`` typed with
the OHM SIGN (U+2126), a MICRO SIGN, or a no-break space read as the plain
forms.  ``gr`` is refused as ambiguous: pint reads it as grains (64.8 mg),
while in the trade it is a common misspelling of grams.
"""

from __future__ import annotations

import hashlib
import json
import math
import os
import re
import sys
import tempfile
import unicodedata
from functools import cache
from pathlib import Path
from typing import Any

from ..errors import MISSING, InputError

__all__ = [
    "parse",
    "parse_optional",
    "conversion",
    "registry",
    "to_unit",
]

# A value string: a plain decimal number, optionally followed by a unit
# expression made of names, '*', '/', '^' or '**' with a one-digit exponent,
# and parentheses-free.  Anything else (nested powers, calls, brackets) is
# refused before pint sees it, so no input can make pint compute for long.
_NUMBER = r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d{1,3})?"
_NAME = r"(?:%|[A-Za-zµμΩ°][A-Za-z0-9_µμΩ°]*)"
_POWER = r"(?:\s*(?:\^|\*\*)\s*-?[1-4])?"
_FACTOR = _NAME + _POWER
_UNIT_EXPR = _FACTOR + r"(?:\s*[*/]\s*" + _FACTOR + r"|\s+" + _FACTOR + r")*"
_VALUE_RE = re.compile(r"\s*(" + _NUMBER + r")\s*(" + _UNIT_EXPR + r")?\s*")
_UNIT_RE = re.compile(r"\s*(" + _UNIT_EXPR + r")\s*")
_TOKEN_RE = re.compile(_NAME)
_RADIAN_NAMES = frozenset({"rad", "radian", "radians"})
_MAX_TEXT = 64

# Rotation is counted in cycles.  These names are rewritten before pint parses
# the expression, so pint's dimensionless radian never enters a rotation rate.
_REWRITE = {
    "rpm": "(1 / minute)",
    "RPM": "(1 / minute)",
    "krpm": "(1000 / minute)",
    "rps": "(1 / second)",
    "rev": "1",
    "revs": "1",
    "revolution": "1",
    "revolutions": "1",
    "turn": "1",
    "turns": "1",
    "cycle": "1",
    "cycles": "1",
    "%": "percent",
    "Ω": "ohm",
    "mΩ": "milliohm",
    "kΩ": "kiloohm",
    "µs": "microsecond",
    "μs": "microsecond",
}

_CACHE_NAME = "units-v2.json"
#: Unit names refused as ambiguous, with the hint shown.
_AMBIGUOUS = {
    "gr": "'gr' is a grain (64.8 mg) to the unit library but usually means grams: write 'g' for "
          "grams (or 'grain' if you mean grains)",
}
_CACHE_LIMIT = 512
_memo: dict[str, tuple[float, str]] = {}
_memo_loaded = False
_memo_dirty = False



@cache
def registry() -> Any:
    """The one pint registry, built on first use.

    Returns
    -------
    pint.UnitRegistry
    """
    import pint

    folder = _cache_dir()
    kwargs: dict[str, Any] = {}
    if folder is not None:
        kwargs["cache_folder"] = folder / "pint"
    try:
        return pint.UnitRegistry(**kwargs)
    except OSError:  # unwritable cache folder: build without it
        return pint.UnitRegistry()


def _cache_dir() -> Path | None:
    env = os.environ.get("CLASHCHECK_CACHE_DIR")
    if env is not None:
        return Path(env) if env.strip() else None
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "clashcheck"


def _rules_key() -> str:
    """The cache key: package version and conversion rules, hashed."""
    package = sys.modules.get(__name__.split(".")[0])
    version = str(getattr(package, "__version__", "unknown"))
    rules = json.dumps([version, _CACHE_NAME, sorted(_REWRITE.items())], ensure_ascii=True)
    return hashlib.sha256(rules.encode("utf-8")).hexdigest()


def _checksum(entries: dict[str, Any]) -> str:
    text = json.dumps(entries, sort_keys=True, ensure_ascii=True)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _load_memo() -> None:
    global _memo_loaded
    _memo_loaded = True
    folder = _cache_dir()
    if folder is None:
        return
    try:
        raw = (folder / _CACHE_NAME).read_bytes()
        if len(raw) > 1 << 20:
            return
        doc = json.loads(raw.decode("utf-8"))
    except (OSError, ValueError, RecursionError):
        return
    if not (isinstance(doc, dict) and doc.get("key") == _rules_key()
            and isinstance(doc.get("entries"), dict)
            and doc.get("checksum") == _checksum(doc["entries"])):
        return  # other rules, or edited: recompute with pint
    data = doc["entries"]
    if isinstance(data, dict):
        for key, val in data.items():
            if (
                isinstance(key, str)
                and isinstance(val, list)
                and len(val) == 2
                and isinstance(val[0], float)
                and math.isfinite(val[0])
                and val[0] != 0.0
                and isinstance(val[1], str)
            ):
                _memo[key] = (val[0], val[1])


def _save_memo() -> None:
    """Write the conversion memo atomically; failures are silent (it is a cache)."""
    global _memo_dirty
    folder = _cache_dir()
    if folder is None or not _memo_dirty:
        return
    _memo_dirty = False
    try:
        folder.mkdir(parents=True, exist_ok=True)
        items = dict(list(_memo.items())[-_CACHE_LIMIT:])
        fd, tmp = tempfile.mkstemp(dir=folder, prefix=".units-", suffix=".tmp")
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            entries = {k: list(v) for k, v in items.items()}
            json.dump({"key": _rules_key(), "checksum": _checksum(entries), "entries": entries}, fh)
        os.replace(tmp, folder / _CACHE_NAME)
    except OSError:
        pass


def _rewrite(expr: str) -> str:
    return _TOKEN_RE.sub(lambda m: _REWRITE.get(m.group(0), m.group(0)), expr)


def conversion(unit: str) -> tuple[float, str]:
    """Factor to SI base units and dimension of a unit expression.

    Parameters
    ----------
    unit : str
        A unit expression such as ``"rpm/V"`` or ``"mohm"``.  Must already
        have the form checked by :func:`parse`.

    Returns
    -------
    factor : float
        Multiply a magnitude in ``unit`` by this to get SI base units
        (rotation counted in cycles).
    dimension : str
        pint's dimensionality of the unit, as text, e.g. ``"1 / [time]"``.

    Raises
    ------
    KeyError
        If pint does not know a name in the expression.
    ValueError
        If the unit carries an offset (such as degC).
    """
    if not _memo_loaded:
        _load_memo()
    key = _rewrite(unit.strip())
    hit = _memo.get(key)
    if hit is not None:
        return hit
    ureg = registry()
    import pint

    try:
        parsed = ureg.parse_expression(key)
        if not isinstance(parsed, ureg.Quantity):
            parsed = ureg.Quantity(float(parsed))
        scale = float(parsed.magnitude)
        one = ureg.Quantity(1.0, parsed.units).to_base_units()
        zero = ureg.Quantity(0.0, parsed.units).to_base_units()
    except (pint.errors.UndefinedUnitError, pint.errors.DefinitionSyntaxError, AttributeError,
            TypeError, SyntaxError) as exc:
        raise KeyError(unit) from exc
    except pint.errors.OffsetUnitCalculusError as exc:
        raise ValueError(f"offset unit {unit!r}") from exc
    if float(zero.magnitude) != 0.0:
        raise ValueError(f"offset unit {unit!r}")
    result = (scale * float(one.magnitude), str(one.dimensionality))
    global _memo_dirty
    _memo[key] = result
    _memo_dirty = True
    _save_memo()
    return result


def parse(text: object, unit: str, field: str, *, example: str | None = None) -> float:
    """Parse a value string with units into a float in SI base units.

    Parameters
    ----------
    text : str
        The value as written, e.g. ``"1750 rpm/V"``.
    unit : str
        The unit the field is expressed in, e.g. ``"rpm/V"``; the value must
        have the same dimension.
    field : str
        Dotted path for error messages, e.g. ``"motor.kv"``.
    example : str, optional
        An example value for the error message; defaults to ``"1 <unit>"``.

    Returns
    -------
    float
        The value in SI base units, with rotation counted in cycles
        (``"1750 rpm/V"`` → 29.1667, in Hz per volt).

    Raises
    ------
    InputError
        If the text is not a string, has the wrong form, names an unknown
        or ambiguous unit (``gr``), has the wrong dimension, or is not finite.

    Examples
    --------
    >>> parse("1950 rpm/V", "rpm/V", "motor.kv")
    32.5
    >>> parse("5 in", "m", "prop.diameter")
    0.127
    """
    sample = example or f"1 {unit}"
    expected = f"a value in {unit} like {sample!r}"
    if text is MISSING or text is None:
        raise InputError(field, expected, MISSING)
    if isinstance(text, bool) or not isinstance(text, str):
        if isinstance(text, (int, float)):
            raise InputError(field, expected, text, "write the unit in a string")
        raise InputError(field, expected, text)
    if len(text) > _MAX_TEXT:
        raise InputError(field, expected, text, f"value strings are at most {_MAX_TEXT} characters")
    match = _VALUE_RE.fullmatch(unicodedata.normalize("NFKC", text))
    if match is None:
        raise InputError(field, expected, text, "write a number, a space and a unit")
    number_text, unit_text = match.group(1), match.group(2)
    magnitude = float(number_text)
    if not math.isfinite(magnitude):
        raise InputError(field, expected, text, "the number is not finite")
    target_dim = conversion(unit)[1]
    if unit_text is None:
        if target_dim != "dimensionless":
            raise InputError(field, expected, text, "the unit is missing")
        factor, dim = 1.0, "dimensionless"
    else:
        for name in _TOKEN_RE.findall(unit_text):
            if name in _AMBIGUOUS:
                raise InputError(field, expected, text, _AMBIGUOUS[name])
        try:
            factor, dim = conversion(unit_text)
        except KeyError:
            raise InputError(field, expected, text, "unknown unit") from None
        except ValueError:
            raise InputError(
                field, expected, text, "offset units are refused; give a difference in K"
            ) from None
    if dim != target_dim:
        raise InputError(field, expected, text, f"its dimension is {dim}")
    if unit_text is not None and "[time]" in target_dim:
        own = set(_TOKEN_RE.findall(unit_text)) & _RADIAN_NAMES
        if own and not set(_TOKEN_RE.findall(unit)) & _RADIAN_NAMES:
            raise InputError(field, expected, text, "give rotation rates in rpm or Hz, not radians")
    value = magnitude * factor
    if not math.isfinite(value):
        raise InputError(field, expected, text, "the value is not finite")
    return value


def parse_optional(
    text: object, unit: str, field: str, *, example: str | None = None
) -> float | None:
    """Like :func:`parse`, but ``None`` (or :data:`~clashcheck.errors.MISSING`) passes through.

    Parameters
    ----------
    text : str or None
        The value as written, e.g. ``"1750 rpm/V"``, or ``None`` /
        ``MISSING`` when not given.
    unit : str
        The unit the field is expressed in; the value must have the same
        dimension.
    field : str
        Dotted path for error messages, e.g. ``"motor.kv"``.
    example : str, optional
        An example value for the error message; defaults to ``"1 <unit>"``.

    Returns
    -------
    float or None
        The value in SI base units (rotation counted in cycles), or ``None``
        when ``text`` is ``None`` or ``MISSING``.

    Raises
    ------
    InputError
        As :func:`parse`, for any other ``text`` it refuses.
    """
    if text is None or text is MISSING:
        return None
    return parse(text, unit, field, example=example)


def to_unit(value_si: float, unit: str) -> float:
    """Express an SI value in ``unit`` (the inverse of :func:`parse`'s scaling).

    Parameters
    ----------
    value_si : float
        The value [SI base units, rotation counted in cycles].
    unit : str
        The unit to express it in, e.g. ``"in"`` or ``"rpm"``. Its dimension
        is not checked against the value's: the caller picks a unit of the
        right dimension.

    Returns
    -------
    float
        The value in ``unit``.

    Raises
    ------
    KeyError
        If pint does not know a name in ``unit``.
    ValueError
        If ``unit`` carries an offset (such as degC).

    Examples
    --------
    >>> round(to_unit(0.127, "in"), 6)
    5.0
    """
    factor, _dim = conversion(unit)
    return value_si / factor

