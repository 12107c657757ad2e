"""Tests of clashcheck.model.battery and the shipped chemistry catalog (REFERENCES.md §7)."""

from __future__ import annotations

import pytest

from clashcheck.errors import InputError
from clashcheck.inputs.buildfile import parse_build
from clashcheck.inputs.catalog import load_catalog
from clashcheck.inputs.units import parse
from clashcheck.model.battery import PACK_STATES, Chemistry, Pack

# REFERENCES.md §7 (common practice; Linden's Handbook of Batteries 4th ed., recalled from memory;
# IEC 61960 leaves cell voltages to the maker): per-cell full / nominal / empty-under-load voltages
CHEMISTRIES = {
    "lipo": (4.20, 3.70, 3.50),
    "lihv": (4.35, 3.80, 3.50),
    "liion": (4.20, 3.60, 3.00),
}


@pytest.mark.parametrize("chem_id, volts", CHEMISTRIES.items())
def test_shipped_catalog_voltages(chem_id, volts):
    entry = load_catalog("batteries")[chem_id]
    got = tuple(parse(entry[state], "V", f"batteries[{chem_id}].{state}") for state in PACK_STATES)
    assert got == pytest.approx(volts, abs=1e-12)


@pytest.mark.parametrize("chem_id, volts", CHEMISTRIES.items())
@pytest.mark.parametrize("cells", [1, 4, 6])
def test_pack_voltage_through_a_build(base_build, chem_id, volts, cells):
    # DESIGN.md physics step 1: V_oc = cells × per-cell voltage at the pack state
    base_build["battery"] = {"cells": cells, "chemistry": chem_id}
    pack = parse_build(base_build).pack
    for state, per_cell in zip(PACK_STATES, volts):
        assert pack.voltage(state) == pytest.approx(cells * per_cell, rel=1e-12)


def test_own_cell_voltages_override_the_chemistry(base_build):
    base_build["battery"] = {"cells": 4, "chemistry": "lipo", "cell_empty": "3.3 V"}
    pack = parse_build(base_build).pack
    # REFERENCES.md §7: lithium-polymer 3.3 V at the limit
    assert pack.voltage("empty") == pytest.approx(13.2)
    assert pack.voltage("full") == pytest.approx(16.8)


def test_pack_resistance_is_cells_times_cell_resistance():
    # DESIGN.md physics step 1: R_pack = cells × cell resistance (0 when not given)
    chem = Chemistry("lipo", 4.2, 3.7, 3.5)
    assert Pack(6, chem, 0.003).resistance_ohm == pytest.approx(0.018)
    assert Pack(6, chem).resistance_ohm == 0.0


@pytest.mark.parametrize("volts", [(4.2, 3.5, 3.7), (3.5, 3.7, 4.2), (0.0, 3.7, 4.2), (3.5, 3.7, 12.0)])
def test_chemistry_order_is_checked(volts):
    full, nominal, empty = volts
    with pytest.raises(InputError):
        Chemistry("x", full, nominal, empty)


def test_unknown_pack_state():
    with pytest.raises(InputError, match="check.pack_states"):
        Chemistry("lipo", 4.2, 3.7, 3.5).cell_voltage("half")


@pytest.mark.parametrize(
    "kwargs, field",
    [({"cells": 0}, "battery.cells"), ({"cells": 25}, "battery.cells"), ({"cells": True}, "battery.cells"),
     ({"cell_resistance_ohm": -0.001}, "battery.cell_resistance")],
)
def test_pack_refusals(kwargs, field):
    args = {"cells": 4, "chemistry": Chemistry("lipo", 4.2, 3.7, 3.5), **kwargs}
    with pytest.raises(InputError) as info:
        Pack(**args)
    assert info.value.field == field


def test_build_refuses_voltages_out_of_order(base_build):
    base_build["battery"] = {"cells": 4, "chemistry": "lipo", "cell_empty": "3.8 V"}
    with pytest.raises(InputError) as info:
        parse_build(base_build)
    assert info.value.field == "battery"


def test_unknown_chemistry_has_a_hint(base_build):
    base_build["battery"] = {"cells": 4, "chemistry": "lipoo"}
    with pytest.raises(InputError, match="did you mean 'lipo'") as info:
        parse_build(base_build)
    assert info.value.field == "battery.chemistry"
