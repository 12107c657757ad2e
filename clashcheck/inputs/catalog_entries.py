"""Catalog entries validated into SI values, for listings and scripts.

:func:`clashcheck.inputs.catalog.load_catalog` returns the raw tables (values
are strings with units, as in a build file).  :func:`validated_entries` runs
each entry through the same parsers a build file goes through and returns
plain SI numbers under unit-suffixed keys (``kv_hz_per_v``, ``diameter_m``,
``frequency_hz``), so ``clashcheck catalog --format json`` speaks the same
JSON conventions as ``check``.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import Any

from . import fields as f
from .catalog import KINDS, load_catalog

__all__ = ["CatalogItem", "validated_entries"]


@dataclass(frozen=True)
class CatalogItem:
    """One catalog entry in SI."""

    #: Catalog id.
    id: str
    #: One-line description.
    description: str
    #: The entry's values in SI, keyed with unit suffixes (``mass_kg``, ``frequency_hz``).
    values: dict[str, Any]


def _plain(obj: Any, drop: tuple[str, ...] = ("id", "description", "details")) -> dict[str, Any]:
    return {k: v for k, v in dataclasses.asdict(obj).items() if k not in drop}


def _frame(ident: str, raw: dict[str, Any]) -> dict[str, Any]:
    from .buildfile import parse_mode

    where = f"frames[{ident}]"
    motors = f.count(raw, "motors", where, minimum=1, maximum=16, required=True, what="a motor count")
    wheelbase = f.quantity(raw, "wheelbase", where, "m", "225 mm", minimum=0.0, exclusive_minimum=True,
                           maximum=10.0, range_text="above 0 mm and up to 10 m")
    modes = [_plain(parse_mode(m, f"{where}.modes[{i}]", "catalog"))
             for i, m in enumerate(f.tables(raw, "modes", where))]
    return {"motors": motors, "wheelbase_m": wheelbase, "modes": modes}


def validated_entries(kind: str) -> list[CatalogItem]:
    """Every entry of one catalog, validated and converted to SI.

    Parameters
    ----------
    kind : str
        Catalog kind, one of :data:`~clashcheck.inputs.catalog.KINDS`.

    Returns
    -------
    list of CatalogItem
        In catalog order.

    Raises
    ------
    InputError
        When an entry does not validate (a defect of the shipped catalog).
    """
    from .buildfile import parse_motor, parse_pack_chemistry, parse_prop

    if kind == "materials":
        from .armfile import materials

        return [CatalogItem(m.id, m.description, _plain(m)) for m in materials().values()]
    out = []
    for ident, raw in load_catalog(kind).items():
        if kind == "motors":
            values = _plain(parse_motor({"catalog": ident}))
        elif kind == "props":
            values = _plain(parse_prop({"catalog": ident}))
        elif kind == "batteries":
            chemistry, resistance = parse_pack_chemistry(ident)
            values = {**_plain(chemistry), "typical_cell_resistance_ohm": resistance}
        else:
            assert kind == "frames" and kind in KINDS
            values = _frame(ident, raw)
        out.append(CatalogItem(ident, str(raw.get("description", "")), values))
    return out
