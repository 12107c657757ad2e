"""Tests of clashcheck.inputs.units: the value parser at the boundary and rpm ↔ Hz."""

from __future__ import annotations

import json
import math
import subprocess
import sys
import time

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from clashcheck.errors import MISSING, InputError
from clashcheck.inputs import units
from clashcheck.model import rates

FAST = settings(max_examples=60, deadline=None, derandomize=True)


# --- rotation is counted in cycles ------------------------------------------


def test_sixty_rpm_is_one_hz():
    # issue 2 §2 and DESIGN.md units rule: 60 rpm = 1 Hz (a revolution is one cycle)
    assert units.parse("60 rpm", "Hz", "x") == pytest.approx(1.0, rel=1e-15)


def test_kv_in_rpm_per_volt_is_not_read_through_radians():
    # issue 2 §2: plain pint turns "1950 rpm/V" into 204 Hz/V where 32.5 is right
    # (1950 / 60 = 32.5, derived)
    assert units.parse("1950 rpm/V", "rpm/V", "motor.kv") == pytest.approx(32.5, rel=1e-15)
    assert units.parse("1950 rpm/V", "Hz/V", "motor.kv") == pytest.approx(32.5, rel=1e-15)


def test_krpm_and_rps():
    # derived: 1 krpm = 1000/60 rev/s; 1 rps = 1 rev/s
    assert units.parse("1 krpm", "Hz", "x") == pytest.approx(1000 / 60, rel=1e-15)
    assert units.parse("30 rps", "Hz", "x") == pytest.approx(30.0, rel=1e-15)


@FAST
@given(st.floats(min_value=-1e9, max_value=1e9, allow_nan=False))
def test_rpm_hz_round_trip(rpm):
    # derived: hz = rpm / 60, and back
    hz = rates.rpm_to_hz(rpm)
    assert hz == pytest.approx(rpm / 60.0, rel=1e-15, abs=1e-300)
    assert rates.hz_to_rpm(hz) == pytest.approx(rpm, rel=1e-12, abs=1e-300)


def test_rad_s_helpers():
    # derived: ω = 2π f
    assert float(rates.hz_to_rad_s(1.0)) == pytest.approx(2 * math.pi, rel=1e-15)
    assert float(rates.rad_s_to_hz(2 * math.pi * 226.93)) == pytest.approx(226.93, rel=1e-15)


# --- other units against pint itself (reference library) --------------------


@pytest.mark.parametrize(
    "text, unit, target_si",
    [
        ("8 kHz", "Hz", "Hz"),
        ("3 mohm", "ohm", "ohm"),
        ("5.1 in", "m", "m"),
        ("720 g", "kg", "kg"),
        ("350 m", "m", "m"),
        ("1.1 A", "A", "A"),
        ("14.8 V", "V", "V"),
        ("225 mm", "m", "m"),
        ("10 K", "K", "K"),
    ],
)
def test_parse_matches_pint(text, unit, target_si):
    # reference: pint's own conversion (these units involve no rotation)
    ureg = units.registry()
    expected = ureg.Quantity(text).to(target_si).magnitude
    assert units.parse(text, unit, "x") == pytest.approx(expected, rel=1e-12)


def test_exact_values():
    # NIST SP 811: 1 in = 0.0254 m exactly; SI prefixes
    assert units.parse("5.1 in", "m", "x") == pytest.approx(0.12954, rel=1e-14)
    assert units.parse("3 mohm", "ohm", "x") == pytest.approx(0.003, rel=1e-14)
    assert units.parse("4 %", "%", "x") == pytest.approx(0.04, rel=1e-14)
    # the symbol Ω is accepted as well as "ohm" (common practice)
    assert units.parse("3 mΩ", "ohm", "x") == pytest.approx(0.003, rel=1e-14)


def test_to_unit_inverts_parse():
    # derived: to_unit(parse(x u), u) == x
    for text, unit in (("5.1 in", "in"), ("3 mohm", "mohm"), ("1950 rpm/V", "rpm/V"), ("720 g", "g")):
        value = float(text.split()[0])
        assert units.to_unit(units.parse(text, unit, "x"), unit) == pytest.approx(value, rel=1e-12)


def test_whitespace_and_number_forms():
    # common practice: a plain decimal number, optional sign and exponent
    assert units.parse(" 5 m ", "m", "x") == 5.0
    assert units.parse(".5 m", "m", "x") == 0.5
    assert units.parse("5. m", "m", "x") == 5.0
    assert units.parse("+5 m", "m", "x") == 5.0
    assert units.parse("2e3 mm", "m", "x") == pytest.approx(2.0)


def test_bare_number_for_dimensionless_field():
    # a percentage field accepts a bare fraction (percent is dimensionless): 0.5 = 50 %
    assert units.parse("0.5", "%", "flight.cruise") == pytest.approx(0.5)


def test_parse_optional_passes_none():
    assert units.parse_optional(None, "m", "x") is None
    assert units.parse_optional(MISSING, "m", "x") is None
    assert units.parse_optional("1 km", "m", "x") == pytest.approx(1000.0)


# --- refusals ---------------------------------------------------------------


@pytest.mark.parametrize(
    "value, hint",
    [
        ("5 kg", "dimension"),  # wrong dimension
        ("5", "unit is missing"),
        ("abc m", "write a number"),
        ("5 furlongs_x", "unknown unit"),
        ("20 degC", "offset"),
        ("1e999 m", "not finite"),
        ("1 (m)", "write a number"),
        ("x" * 65, "at most"),
    ],
)
def test_refusals_name_the_field(value, hint):
    with pytest.raises(InputError, match=hint) as info:
        units.parse(value, "m", "prop.diameter")
    assert info.value.field == "prop.diameter"
    assert str(info.value).startswith("prop.diameter: expected")
    assert info.value.got == value


@pytest.mark.parametrize("value", [5, 5.0, True, None, ["5 m"], {"a": 1}])
def test_non_strings_are_refused(value):
    with pytest.raises(InputError) as info:
        units.parse(value, "m", "prop.diameter")
    assert info.value.field == "prop.diameter"


def test_number_without_string_gets_a_hint():
    with pytest.raises(InputError, match="write the unit in a string"):
        units.parse(5.1, "m", "prop.diameter")


def test_missing_says_nothing():
    with pytest.raises(InputError, match="got nothing"):
        units.parse(MISSING, "rpm/V", "motor.kv")


@pytest.mark.parametrize(
    "value",
    ["9**9**9 rpm", "9 rpm**9**9", "9 ** 9 ** 9 rpm", "1 m**99", "1 rpm^(9^9)", "__import__('os') m", "1 m; 2"],
)
def test_pathological_strings_are_refused_at_once(value):
    # issue 2 §2: such input makes pint compute for ever, so it must be refused at once
    start = time.perf_counter()
    with pytest.raises(InputError):
        units.parse(value, "rpm/V", "motor.kv")
    assert time.perf_counter() - start < 1.0


def test_conversion_dimension_text():
    factor, dim = units.conversion("rpm/V")
    # derived: rpm → 1/60 rev/s, V → kg·m²/(A·s³) in SI base units
    assert factor == pytest.approx(1 / 60)
    assert "[time]" in dim and "[current]" in dim


# --- the conversion memo stays in CLASHCHECK_CACHE_DIR ------------------------


def test_memo_file_lets_a_later_run_skip_pint(tmp_path, repo):
    # DESIGN/issue §9: a later run that meets only known expressions never imports pint
    env_code = (
        "import sys, json\n"
        "from clashcheck.inputs import units\n"
        "v = units.parse('1950 rpm/V', 'rpm/V', 'motor.kv')\n"
        "print(json.dumps([v, 'pint' in sys.modules]))\n"
    )
    env = {"CLASHCHECK_CACHE_DIR": str(tmp_path), "PATH": "", "PYTHONPATH": str(repo)}
    first = subprocess.run([sys.executable, "-c", env_code], capture_output=True, text=True, env=env,
                           cwd=repo, timeout=60, check=True)
    assert json.loads(first.stdout) == [32.5, True]
    assert (tmp_path / "units-v2.json").is_file()
    second = subprocess.run([sys.executable, "-c", env_code], capture_output=True, text=True, env=env,
                            cwd=repo, timeout=60, check=True)
    assert json.loads(second.stdout) == [32.5, False]


# --- text forms and the keyed cache (issue 12) -------------------------------------------


@pytest.mark.parametrize("text", ["45 m\u2126", "45 m\u03a9", "45\u00a0mohm", "45\u202fmohm", "45 mohm"])
def test_unit_strings_are_nfkc_normalised(text):
    assert units.parse(text, "ohm", "motor.resistance") == pytest.approx(0.045)  # 45 mΩ, derived


def test_micro_sign_and_greek_mu_agree():
    assert units.parse("3 \u00b5s", "s", "t") == units.parse("3 \u03bcs", "s", "t") == pytest.approx(3e-6)


def test_gr_is_refused_as_ambiguous_with_a_hint():
    with pytest.raises(InputError, match=r"frame\.mass: .*'690 gr'.*write 'g' for grams"):
        units.parse("690 gr", "kg", "frame.mass")
    assert units.parse("690 grain", "kg", "frame.mass") == pytest.approx(0.0447, rel=1e-3)  # 64.79891 mg each


def test_cache_file_is_keyed_and_checksummed(tmp_path, monkeypatch):
    monkeypatch.setenv("CLASHCHECK_CACHE_DIR", str(tmp_path))
    monkeypatch.setattr(units, "_memo", {})
    monkeypatch.setattr(units, "_memo_loaded", False)
    units.parse("5 in", "m", "prop.diameter")
    doc = json.loads((tmp_path / units._CACHE_NAME).read_text())
    assert doc["key"] == units._rules_key() and doc["checksum"] == units._checksum(doc["entries"])
    # a well-formed file under other rules is ignored
    doc["key"] = "0" * 64
    doc["entries"]["in"] = [1.0, "[length]"]
    doc["checksum"] = units._checksum(doc["entries"])
    (tmp_path / units._CACHE_NAME).write_text(json.dumps(doc))
    monkeypatch.setattr(units, "_memo", {})
    monkeypatch.setattr(units, "_memo_loaded", False)
    assert units.parse("5 in", "m", "prop.diameter") == pytest.approx(0.127)  # 5 × 25.4 mm
