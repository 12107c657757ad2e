"""Data-integrity tests of the shipped catalogs, and the ``catalog`` command."""

from __future__ import annotations

import json
import math
import tomllib

import pytest

from clashcheck.cli import main
from clashcheck.errors import InputError
from clashcheck.inputs.buildfile import parse_build
from clashcheck.inputs.catalog import KINDS, catalog_path, entry, load_catalog

MOTORS = sorted(load_catalog("motors"))
PROPS = sorted(load_catalog("props"))
FRAMES = sorted(load_catalog("frames"))


def _ids_in_file(kind):
    data = tomllib.loads(catalog_path(kind).read_text(encoding="utf-8"))
    return [item.get("id") for item in data.get(KINDS[kind], [])]


@pytest.mark.parametrize("kind", ["motors", "props", "batteries", "frames"])
def test_ids_are_unique_and_well_formed(kind):
    # catalogs/README.md: unique ids of lowercase letters, digits and dashes
    ids = _ids_in_file(kind)
    assert ids and len(ids) == len(set(ids))
    for ident in ids:
        assert isinstance(ident, str) and ident == ident.lower()
        assert all(c.isalnum() or c == "-" for c in ident)
    assert all(load_catalog(kind)[i].get("description") for i in ids)


def test_counts_and_ranges():
    # issue 2 §7: at least 12 motors from 1103 to 2810 stators, at least 10 props of 2–10 in with 2–5 blades
    assert len(MOTORS) >= 12
    assert len(PROPS) >= 10
    stators = [int(load_catalog("motors")[m]["stator"]) for m in MOTORS]
    assert min(stators) == 1103 and max(stators) == 2810
    assert all(1103 <= s <= 2810 for s in stators)
    blades = {load_catalog("props")[p]["blades"] for p in PROPS}
    assert blades <= {2, 3, 4, 5} and blades == {2, 3, 4, 5}


@pytest.mark.parametrize("motor_id", MOTORS)
def test_every_motor_loads_into_a_build(base_build, motor_id):
    raw = load_catalog("motors")[motor_id]
    for key in ("kv", "poles", "slots", "resistance", "no_load_current"):  # issue 2 §7
        assert key in raw
    base_build["motor"] = {"catalog": motor_id}
    motor = parse_build(base_build).motor
    assert motor.resistance_ohm > 0 and motor.no_load_current_a > 0
    assert motor.poles % 2 == 0 and motor.slots % 3 == 0
    # the id names the Kv: "2207-1950kv" → 1950 rpm/V
    assert motor.kv_hz_per_v * 60 == pytest.approx(float(motor_id.split("-")[1].removesuffix("kv")))


@pytest.mark.parametrize("prop_id", PROPS)
def test_every_prop_loads_into_a_build(base_build, prop_id):
    base_build["prop"] = {"catalog": prop_id}
    prop = parse_build(base_build).prop
    assert 2 * 0.0254 - 1e-9 <= prop.diameter_m <= 10 * 0.0254 + 1e-9
    assert 2 <= prop.blades <= 5
    ct, cp = prop.thrust_coefficient, prop.power_coefficient
    assert ct is not None and cp is not None
    # momentum theory: figure of merit FM = C_T^1.5/(√2·C_P) ≤ 1; small props stay well below 0.8
    # (catalogs/README.md; McCormick ch. 6, recalled)
    assert ct**1.5 / (math.sqrt(2) * cp) < 0.8


@pytest.mark.parametrize("frame_id", FRAMES)
def test_every_frame_loads_into_a_build(base_build, frame_id):
    base_build["frame"] = {"catalog": frame_id, "mass": "500 g"}
    build = parse_build(base_build)
    assert len(build.modes) == len(load_catalog("frames")[frame_id]["modes"]) >= 1
    assert all(m.origin == "catalog" and m.damping is not None for m in build.modes)


@pytest.mark.parametrize("chem_id", sorted(load_catalog("batteries")))
def test_every_chemistry_loads_into_a_build(base_build, chem_id):
    base_build["battery"] = {"cells": 4, "chemistry": chem_id}
    pack = parse_build(base_build).pack
    assert pack.voltage("empty") < pack.voltage("nominal") < pack.voltage("full")


def test_unknown_id_has_did_you_mean():
    with pytest.raises(InputError, match="did you mean '2207-1950kv'") as info:
        entry("motors", "2207-195kv", "motor.catalog")
    assert info.value.field == "motor.catalog"
    with pytest.raises(InputError, match="clashcheck catalog props"):
        entry("props", "zzzzzzzz", "prop.catalog")
    with pytest.raises(InputError):
        entry("props", 5, "prop.catalog")


def test_unknown_kind():
    with pytest.raises(InputError):
        catalog_path("gearboxes")


def test_entries_are_copies():
    first = entry("motors", MOTORS[0], "motor.catalog")
    first["kv"] = "1 rpm/V"
    assert load_catalog("motors")[MOTORS[0]]["kv"] != "1 rpm/V"


@pytest.mark.parametrize("kind", sorted(KINDS))
def test_catalog_command_lists_every_entry(runner, kind):
    result = runner.invoke(main, ["catalog", kind])
    assert result.exit_code == 0, result.output
    for ident in load_catalog(kind):
        assert ident in result.stdout
    as_json = runner.invoke(main, ["catalog", kind, "--format", "json"])
    assert as_json.exit_code == 0
    data = json.loads(as_json.stdout)
    assert data["kind"] == kind
    assert sorted(e["id"] for e in data["entries"]) == sorted(load_catalog(kind))
    assert data["schema_version"] >= 1


# Conversions by hand from the catalog text (derived): 1 rpm/V = 1/60 Hz/V, 1 in = 0.0254 m,
# 1 g = 0.001 kg, 1 mohm = 0.001 ohm, 1 GPa = 1e9 Pa.
@pytest.mark.parametrize("kind, key, text_key, factor", [
    ("motors", "kv_hz_per_v", "kv", 1 / 60),
    ("motors", "mass_kg", "mass", 1e-3),
    ("props", "diameter_m", "diameter", 0.0254),
    ("batteries", "typical_cell_resistance_ohm", "typical_cell_resistance", 1e-3),
    ("materials", "modulus_pa", "modulus", 1e9),
])
def test_catalog_json_is_si_with_unit_suffixes(runner, kind, key, text_key, factor):
    data = json.loads(runner.invoke(main, ["catalog", kind, "--format", "json"]).stdout)
    raw = load_catalog(kind)
    for item in data["entries"]:
        written = raw[item["id"]].get(text_key)
        if written is None:
            continue
        number = float(str(written).split()[0])
        assert item[key] == pytest.approx(number * factor, rel=1e-14)
        assert repr(item[key]) == repr(float(f"{item[key]:.15g}"))  # no float noise


def test_catalog_json_frames_carry_modes_in_hz(runner):
    data = json.loads(runner.invoke(main, ["catalog", "frames", "--format", "json"]).stdout)
    for item in data["entries"]:
        raw_modes = load_catalog("frames")[item["id"]]["modes"]
        assert [m["frequency_hz"] for m in item["modes"]] == [float(m["frequency"].split()[0]) for m in raw_modes]


def test_catalog_command_refuses_an_unknown_kind(runner):
    result = runner.invoke(main, ["catalog", "gearboxes"])
    assert result.exit_code == 2
