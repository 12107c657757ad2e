"""Shipped catalogs: generic, typical motors, propellers, chemistries, frames, materials.

The TOML files live in ``clashcheck/catalogs/`` (package data), so an
installed copy finds them from
any working directory.  Entries are raw tables in the build-file form (values
are strings with units); :mod:`clashcheck.build` validates them like any
other input.
"""

from __future__ import annotations

import tomllib
from functools import cache
from pathlib import Path
from typing import Any

from ..errors import InputError

__all__ = ["KINDS", "load_catalog", "entry", "catalog_path"]

#: Catalog kinds: file stem → the array-of-tables name inside the file.
KINDS = {
    "motors": "motor",
    "props": "prop",
    "batteries": "chemistry",
    "frames": "frame",
    "materials": "material",
}


def catalog_path(kind: str) -> Path:
    """Path of a catalog file, installed or in a source checkout.

    Parameters
    ----------
    kind : str
        Catalog kind, one of ``KINDS``.

    Returns
    -------
    pathlib.Path
        The catalog file.
    """
    if kind not in KINDS:
        raise InputError("catalog", "one of " + ", ".join(KINDS), kind)
    return Path(__file__).resolve().parent.parent / "catalogs" / f"{kind}.toml"


@cache
def load_catalog(kind: str) -> dict[str, dict[str, Any]]:
    """All entries of one catalog, by id.

    Parameters
    ----------
    kind : str
        ``motors``, ``props``, ``batteries``, ``frames`` or ``materials``.

    Returns
    -------
    dict
        id → raw entry table (without the ``id`` key).
    """
    path = catalog_path(kind)
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        return {}
    except tomllib.TOMLDecodeError as exc:  # a broken shipped file is our bug, but say where
        raise InputError(f"catalog {path.name}", "valid TOML", str(exc)) from None
    out: dict[str, dict[str, Any]] = {}
    for raw in data.get(KINDS[kind], []):
        item = dict(raw)
        ident = item.pop("id", None)
        if isinstance(ident, str):
            out[ident] = item
    return out


def entry(kind: str, ident: object, field: str) -> dict[str, Any]:
    """One catalog entry, or an :class:`InputError` with a "did you mean" hint.

    Parameters
    ----------
    kind : str
        Catalog kind, one of ``KINDS``.
    ident : object
        The entry id as written in the build file.
    field : str
        The build-file field that named it, for the error message.

    Returns
    -------
    dict
        A copy of the raw entry.
    """
    import difflib

    entries = load_catalog(kind)
    if not isinstance(ident, str) or ident not in entries:
        close = difflib.get_close_matches(str(ident), list(entries), n=3)
        hint = ("did you mean " + " or ".join(repr(c) for c in close) + "?") if close else (
            f"see 'clashcheck catalog {kind}'"
        )
        raise InputError(field, f"an id from the {kind} catalog", ident, hint)
    return dict(entries[ident])
