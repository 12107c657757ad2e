"""Tests of clashcheck.inputs.buildfile: validation, catalog references, and reading files."""

from __future__ import annotations

import math

import pytest

from clashcheck.errors import InputError
from clashcheck.inputs.buildfile import (
    MAX_FILE_BYTES,
    load_build,
    load_modes_file,
    parse_build,
)
from clashcheck.inputs.catalog import load_catalog
from clashcheck.inputs.units import parse
from clashcheck.model.atmosphere import isa_density
from clashcheck.model.build import Flight


def _error(data) -> InputError:
    with pytest.raises(InputError) as info:
        parse_build(data)
    return info.value


def test_base_build_in_si(base_build):
    build = parse_build(base_build)
    assert build.motors == 4
    assert build.mass_kg == pytest.approx(0.69)
    assert build.motor.kv_hz_per_v == pytest.approx(1950 / 60)  # 60 rpm = 1 Hz (issue 2 §2)
    assert build.motor.resistance_ohm == pytest.approx(0.045)
    assert build.prop.diameter_m == pytest.approx(5.1 * 0.0254)  # 1 in = 25.4 mm exactly (NIST SP 811)
    assert build.pack.resistance_ohm == pytest.approx(6 * 0.003)
    assert [m.name for m in build.modes] == ["arm flap", "plate"]
    assert all(m.origin == "manual" for m in build.modes)
    assert build.sensor is None
    assert build.notes == ()


def test_defaults_are_noted(base_build):
    del base_build["flight"]
    build = parse_build(base_build)
    assert (build.flight.idle, build.flight.max, build.flight.cruise) == (0.04, 1.0, 0.6)
    assert any("flight.idle not given" in n for n in build.notes)


def test_altitude_sets_the_density(base_build):
    base_build["flight"]["altitude"] = "350 m"
    base_build["flight"]["temperature_offset"] = "10 K"
    build = parse_build(base_build)
    assert build.density_kg_m3() == pytest.approx(isa_density(350.0, 10.0))
    assert build.drive().density_kg_m3 == pytest.approx(isa_density(350.0, 10.0))


def test_catalog_entry_with_override(base_build):
    base_build["motor"] = {"catalog": "2207-1950kv", "kv": "1800 rpm/V"}
    base_build["prop"] = {"catalog": "5in-3b-mid"}
    build = parse_build(base_build)
    raw = load_catalog("motors")["2207-1950kv"]
    assert build.motor.kv_hz_per_v == pytest.approx(30.0)  # the override wins: 1800/60
    assert build.motor.poles == raw["poles"] and build.motor.slots == raw["slots"]
    assert build.motor.resistance_ohm == pytest.approx(parse(raw["resistance"], "ohm", "x"))
    praw = load_catalog("props")["5in-3b-mid"]
    assert build.prop.blades == praw["blades"]
    assert build.prop.thrust_coefficient == praw["thrust_coefficient"]


def test_frame_catalog_modes_and_own_modes(base_build):
    frame_raw = load_catalog("frames")["freestyle-5in-a"]
    catalog_names = [m["name"] for m in frame_raw["modes"]]
    own = {"name": catalog_names[0], "frequency": "199 Hz", "damping": 0.02}
    base_build["frame"] = {"catalog": "freestyle-5in-a", "mass": "690 g", "modes": [own]}
    build = parse_build(base_build)
    by_name = {m.name: m for m in build.modes}
    assert set(by_name) == set(catalog_names)
    assert by_name[catalog_names[0]].frequency_hz == 199.0  # the build's own figure replaces the catalog's
    assert by_name[catalog_names[0]].origin == "manual"
    assert by_name[catalog_names[1]].origin == "catalog"
    assert build.motors == frame_raw["motors"]


@pytest.mark.parametrize(
    "edit, field, hint",
    [
        (lambda b: b.__setitem__("frmae", {}), "frmae", "did you mean 'frame'"),
        (lambda b: b["motor"].__setitem__("kvv", "1 rpm/V"), "motor.kvv", "did you mean 'kv'"),
        (lambda b: b["frame"]["modes"][0].__setitem__("dampng", 0.1), "frame.modes[0].dampng", "did you mean"),
        (lambda b: b["check"].__setitem__("polcy", "fixed"), "check.polcy", "did you mean 'policy'"),
        (lambda b: b["flight"].__setitem__("zzz", 1), "flight.zzz", "allowed:"),
    ],
)
def test_unknown_keys_are_refused(base_build, edit, field, hint):
    edit(base_build)
    err = _error(base_build)
    assert err.field == field
    assert hint in str(err)


@pytest.mark.parametrize("table", ["frame", "motor", "prop", "battery"])
def test_missing_tables(base_build, table):
    del base_build[table]
    err = _error(base_build)
    assert err.field == table
    assert "got nothing" in str(err)


@pytest.mark.parametrize(
    "table, key",
    [("frame", "mass"), ("frame", "motors"), ("motor", "kv"), ("motor", "poles"), ("motor", "slots"),
     ("prop", "diameter"), ("prop", "blades"), ("battery", "cells")],
)
def test_missing_required_fields(base_build, table, key):
    del base_build[table][key]
    err = _error(base_build)
    assert err.field == f"{table}.{key}"


def test_no_modes_at_all(base_build):
    del base_build["frame"]["modes"]
    assert _error(base_build).field == "frame.modes"


@pytest.mark.parametrize(
    "table, key, value, field",
    [
        ("motor", "kv", "5 kg", "motor.kv"),
        ("motor", "kv", 1950, "motor.kv"),
        ("motor", "kv", "0 rpm/V", "motor.kv"),
        ("motor", "poles", "14", "motor.poles"),
        ("motor", "poles", 13, "motor.poles"),
        ("motor", "poles", 0, "motor.poles"),
        ("motor", "slots", 13, "motor.slots"),
        ("motor", "resistance", "-45 mohm", "motor.resistance"),
        ("prop", "diameter", "5.1 V", "prop.diameter"),
        ("prop", "thrust_coefficient", "0.1", "prop.thrust_coefficient"),
        ("prop", "blades", 2.5, "prop.blades"),
        ("battery", "cells", 0, "battery.cells"),
        ("battery", "cell_resistance", "-1 mohm", "battery.cell_resistance"),
        ("flight", "cruise", "120 %", "flight.cruise"),
        ("flight", "idle", "-1 %", "flight.idle"),
        ("flight", "idle", "70 %", "flight.idle"),  # idle above cruise
        ("flight", "hover", "0 %", "flight.hover"),
        ("flight", "altitude", "20 km", "flight.altitude"),
        ("check", "policy", "dampng", "check.policy"),
        ("check", "default_damping", 1.0, "check.default_damping"),
        ("check", "margin", "10 %", "check.margin"),  # a margin without policy = "fixed"
        ("check", "pack_states", [], "check.pack_states"),
        ("check", "pack_states", ["full", "half"], "check.pack_states"),
        ("check", "families", ["rotor", "gearbox"], "check.families"),
        ("check", "families", [], "check.families"),
        ("frame", "modes", "none", "frame.modes"),
        ("frame", "mass", "0 g", "frame.mass"),
    ],
)
def test_out_of_range_and_wrong_types(base_build, table, key, value, field):
    base_build[table][key] = value
    err = _error(base_build)
    assert err.field == field
    assert str(err).startswith(f"{field}: expected ")


@pytest.mark.parametrize("damping", [0, 0.0, 1, 1.5, -0.1, "0.03"])
def test_mode_damping_outside_zero_one(base_build, damping):
    base_build["frame"]["modes"][0]["damping"] = damping
    assert _error(base_build).field == "frame.modes[0].damping"


def test_duplicate_mode_names(base_build):
    base_build["frame"]["modes"][1]["name"] = "arm flap"
    assert _error(base_build).field == "frame.modes[1].name"


def test_table_of_the_wrong_type(base_build):
    base_build["motor"] = "2207-1950kv"
    err = _error(base_build)
    assert err.field == "motor" and "a table" in str(err)


def test_fixed_policy(base_build):
    base_build["check"] = {"policy": "fixed", "margin": "12 %"}
    build = parse_build(base_build)
    assert build.check.policy.required_margin(build.modes[0]) == pytest.approx(0.12)
    base_build["check"] = {"policy": "fixed"}
    assert _error(base_build).field == "check.margin"


def test_families_custom_orders_and_pack_states(base_build):
    base_build["check"] = {
        "families": ["rotor"],
        "pack_states": ["empty"],
        "orders": [{"order": 1.5, "label": "belt", "weight": 0.7}],
    }
    build = parse_build(base_build)
    assert build.check.pack_states == ("empty",)
    assert [(o.family, o.order) for o in build.orders()] == [("rotor", 1.0), ("rotor", 2.0), ("custom", 1.5)]


def test_stated_hover(base_build):
    base_build["flight"]["hover"] = "35 %"
    assert parse_build(base_build).flight.hover == pytest.approx(0.35)


@pytest.mark.parametrize(
    "kwargs, field",
    [
        ({"idle": 0.5, "max": 0.5, "cruise": 0.5}, "flight.idle"),
        ({"idle": 0.3, "cruise": 0.2}, "flight.idle"),
        ({"cruise": 0.9, "max": 0.8}, "flight.cruise"),
        ({"idle": 1.5}, "flight.idle"),
        ({"hover": 0.0}, "flight.hover"),
        ({"max": math.nan}, "flight.max"),
    ],
)
def test_flight_refusals(kwargs, field):
    with pytest.raises(InputError) as info:
        Flight(**kwargs)
    assert info.value.field == field


def test_nothing_is_evaluated(base_build):
    # issue 2 §2: nothing in a build file is evaluated as code
    base_build["name"] = "__import__('os').system('false')"
    assert parse_build(base_build).name == "__import__('os').system('false')"
    base_build["motor"]["kv"] = "__import__('os') rpm/V"
    assert _error(base_build).field == "motor.kv"


# --- reading files ---------------------------------------------------------------


def test_load_build_from_file(base_build, write_build):
    path = write_build(base_build, "quad.toml")
    build = load_build(path)
    assert build.path == str(path)
    assert build.name == "test quad"
    del base_build["name"]
    assert load_build(write_build(base_build, "unnamed.toml")).name == "unnamed"  # the file's stem


def test_missing_file(tmp_path):
    with pytest.raises(InputError, match="readable build file"):
        load_build(tmp_path / "absent.toml")


def test_folder_is_not_a_build(tmp_path):
    with pytest.raises(InputError, match="a folder"):
        load_build(tmp_path)


def test_non_utf8(write_build):
    with pytest.raises(InputError, match="UTF-8") as info:
        load_build(write_build(b'name = "\xff\xfe"\n'))
    assert "0xff" in str(info.value)


@pytest.mark.parametrize("text", ["[frame\nmotors = 4\n", "a = \n", "a = 1\na = 2\n", "x = [" * 5000])
def test_invalid_toml(write_build, text):
    with pytest.raises(InputError, match="valid TOML"):
        load_build(write_build(text))


def test_too_large_file(write_build):
    with pytest.raises(InputError, match="at most"):
        load_build(write_build("# " + "x" * MAX_FILE_BYTES + "\n"))


def test_modes_file_merges_as_measured(base_build, write_build):
    build = load_build(write_build(base_build))
    modes_path = write_build(
        {
            "frame": {"modes": [{"name": "arm flap", "frequency": "201 Hz", "damping": 0.025},
                                {"name": "new one", "frequency": "333 Hz"}]},
            "order_strengths": [{"order": 1.0, "family": "rotor", "relative_strength": 0.8}],
        },
        "modes.toml",
    )
    measured = load_modes_file(modes_path)
    assert all(m.origin == "measured" for m in measured.modes)
    merged = build.with_measured(measured)
    by_name = {m.name: m for m in merged.modes}
    assert set(by_name) == {"arm flap", "plate", "new one"}
    assert by_name["arm flap"].frequency_hz == 201.0 and by_name["arm flap"].origin == "measured"
    first = merged.orders()[0]
    assert (first.order, first.weight, first.weight_source) == (1.0, 0.8, "measured")
    assert any("measured mode(s) merged" in n for n in merged.notes)


def test_modes_file_refusals(write_build):
    with pytest.raises(InputError):
        load_modes_file(write_build({"frame": {"modes": []}}, "m.toml"))
    with pytest.raises(InputError, match="did you mean"):
        load_modes_file(write_build({"frame": {"modes": [{"name": "a", "frequncy": "1 Hz"}]}}, "m.toml"))
