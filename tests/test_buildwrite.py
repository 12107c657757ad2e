"""Tests for clashcheck.inputs.buildwrite: a build written out reads back the same.

The reference is the build loader itself (an independent path: TOML text →
tomllib → unit parser → dataclasses); the written text is never compared
with a stored copy.
"""

from __future__ import annotations

import tomllib
from dataclasses import replace
from pathlib import Path

import pytest

from clashcheck.analysis.clash import check_build
from clashcheck.errors import InputError
from clashcheck.inputs.buildfile import load_build, parse_build
from clashcheck.inputs.buildwrite import build_document, dump_build

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
_FIGURES = ("frequency_hz", "frequency_low_hz", "frequency_high_hz", "damping", "axis", "kind", "name")


def _reread(build, **kw):
    return parse_build(tomllib.loads(dump_build(build, **kw)), path="written.toml")


@pytest.mark.parametrize("path", sorted(EXAMPLES.glob("*.toml")), ids=lambda p: p.stem)
def test_examples_round_trip_exactly(path):
    build = load_build(path)
    again = _reread(build, header="a header\nof two lines")
    for part in ("motors", "mass_kg", "motor", "prop", "pack", "flight", "check", "sensor"):
        assert getattr(again, part) == getattr(build, part), part
    assert [tuple(getattr(m, k) for k in _FIGURES) for m in again.modes] == \
        [tuple(getattr(m, k) for k in _FIGURES) for m in build.modes]
    res_a, res_b = check_build(build), check_build(again)
    assert res_a.verdict == res_b.verdict
    assert [(w.mode, w.label, w.pack_state, w.throttle_low, w.throttle_high) for w in res_a.windows] == \
        [(w.mode, w.label, w.pack_state, w.throttle_low, w.throttle_high) for w in res_b.windows]


def test_header_is_comments_and_no_catalog_reference():
    build = load_build(EXAMPLES / "freestyle-5in.toml")
    text = dump_build(build, header="written by a test", description="the demo")
    assert text.startswith("# written by a test\n")
    data = tomllib.loads(text)
    assert data["description"] == "the demo"
    assert "catalog" not in data["frame"] and "catalog" not in data["motor"] and "catalog" not in data["prop"]


def test_a_mode_range_and_origin_survive():
    build = load_build(EXAMPLES / "freestyle-5in.toml")
    first = build.modes[0]
    ranged = replace(first, frequency_low_hz=first.frequency_hz * 0.9, frequency_high_hz=first.frequency_hz * 1.2,
                     origin="shifted", source="moved for a heavier motor")
    build = replace(build, modes=(ranged,) + build.modes[1:])
    table = build_document(build)["frame"]["modes"][0]
    assert table["source"] == "shifted: moved for a heavier motor"
    again = _reread(build)
    assert again.modes[0].frequency_low_hz == ranged.frequency_low_hz
    assert again.modes[0].frequency_high_hz == ranged.frequency_high_hz
    assert again.modes[0].is_range


def test_a_range_that_excludes_the_frequency_is_refused():
    build = load_build(EXAMPLES / "freestyle-5in.toml")
    data = build_document(build)
    data["frame"]["modes"][0]["frequency_low"] = "900 Hz"
    with pytest.raises(InputError, match="frequency_low"):
        parse_build(data)
