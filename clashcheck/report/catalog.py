"""Presentation of catalog entries."""

from __future__ import annotations

from typing import Any

from .common import dump_json

__all__ = ["render_catalog"]


_CATALOG_COLUMNS = {
    "motors": ["stator", "kv", "poles", "slots", "resistance", "no_load_current", "mass"],
    "props": ["diameter", "pitch", "blades", "thrust_coefficient", "power_coefficient", "mass"],
    "batteries": ["full", "nominal", "empty", "typical_cell_resistance"],
    "frames": ["motors", "wheelbase", "modes"],
    "materials": ["modulus", "density"],
}


def render_catalog(kind: str, entries: dict[str, dict[str, Any]], fmt: str) -> str:
    """A catalog listing as a table or JSON.

    Parameters
    ----------
    kind : str
        Catalog kind, e.g. ``motors``.
    entries : dict of str to dict
        The raw catalog entries by id.
    fmt : str
        ``table`` or ``json``.

    Returns
    -------
    str
        The rendered catalog.
    """
    if fmt == "json":
        return dump_json({"kind": kind, "entries": [{"id": k, **v} for k, v in entries.items()]})
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
