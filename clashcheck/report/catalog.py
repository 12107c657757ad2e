"""Presentation of catalog entries."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from .common import JSON_SCHEMA_VERSION, dump_json, rounded

if TYPE_CHECKING:
    from ..inputs.catalog_entries import CatalogItem

__all__ = ["render_catalog", "catalog_json"]


_CATALOG_COLUMNS = {
    "motors": ["stator", "kv", "poles", "slots", "resistance", "no_load_current", "mass"],
    "props": ["diameter", "pitch", "blades", "thrust_coefficient", "power_coefficient", "mass"],
    "batteries": ["full", "nominal", "empty", "typical_cell_resistance"],
    "frames": ["motors", "wheelbase", "modes"],
    "materials": ["modulus", "density"],
}


def render_catalog(kind: str, entries: dict[str, dict[str, Any]], fmt: str) -> str:
    """A catalog listing as a table, values as written in the catalog.

    Parameters
    ----------
    kind : str
        Catalog kind, e.g. ``motors``.
    entries : dict of str to dict
        The raw catalog entries by id.
    fmt : str
        ``table`` (the only text layout; JSON is :func:`catalog_json`).

    Returns
    -------
    str
        The rendered catalog.
    """
    from tabulate import tabulate

    columns = _CATALOG_COLUMNS.get(kind, [])
    rows = []
    for ident, item in entries.items():
        row = [ident]
        for col in columns:
            value = item.get(col, "")
            if col == "modes" and isinstance(value, list):
                value = ", ".join(f"{m.get('name')} {m.get('frequency')}" for m in value)
            row.append(value)
        row.append(item.get("description", ""))
        rows.append(row)
    head = f"{kind} catalog: generic, typical figures for first estimates, not any maker's data\n\n"
    return head + tabulate(rows, headers=["id", *columns, "description"], tablefmt="simple") + "\n"


def catalog_json(kind: str, items: list[CatalogItem]) -> str:
    """A catalog listing as JSON, values in SI under unit-suffixed keys.

    Parameters
    ----------
    kind : str
        Catalog kind, e.g. ``motors``.
    items : list of CatalogItem
        The validated entries (:func:`clashcheck.inputs.catalog_entries.validated_entries`).

    Returns
    -------
    str
        JSON text with ``schema_version``, ``kind`` and ``entries``.
    """
    entries = [{"id": it.id, "description": it.description, **rounded(it.values)} for it in items]
    return dump_json({"schema_version": JSON_SCHEMA_VERSION, "kind": kind, "entries": entries})
