"""Fuzz test: random and mutated build files through ``clashcheck check``.

Every case must end in a result (exit 0 or 1) or an input error (exit 2, one
line on stderr), never any other exception (issue 2 §8).  The mutations start
from the shipped example builds and a self-contained test build: keys and
tables deleted, types swapped, absurd magnitudes, odd unit strings, random
text, non-UTF-8 bytes, truncated files.
"""

from __future__ import annotations

import copy
import json
import os
import tomllib
from pathlib import Path
from typing import Any

from click.testing import CliRunner
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from clashcheck.cli import main

REPO = Path(__file__).resolve().parent.parent
EXAMPLES = sorted((REPO / "examples").glob("*.toml"))
#: A self-contained seed without catalog references, so mutations reach every field's own check.
OWN_SEED: dict[str, Any] = {
    "name": "fuzz seed",
    "frame": {"motors": 4, "mass": "690 g", "wheelbase": "225 mm",
              "modes": [{"name": "arm", "frequency": "186 Hz", "damping": 0.03, "axis": "roll", "kind": "arm"},
                        {"name": "plate", "frequency": "420 Hz"}]},
    "motor": {"kv": "1950 rpm/V", "poles": 14, "slots": 12, "resistance": "45 mohm",
              "no_load_current": "1.1 A", "mass": "33 g"},
    "prop": {"diameter": "5.1 in", "pitch": "4 in", "blades": 3, "thrust_coefficient": 0.12,
             "power_coefficient": 0.06},
    "battery": {"cells": 6, "chemistry": "lipo", "cell_resistance": "3 mohm"},
    "sensor": {"sample_rate": "8 kHz", "antialias_cutoff": "1 kHz", "antialias_order": 2},
    "flight": {"idle": "4 %", "max": "100 %", "cruise": "55 %", "hover": "30 %", "altitude": "350 m",
               "temperature_offset": "5 K"},
    "check": {"policy": "fixed", "margin": "10 %", "default_damping": 0.03, "pack_states": ["full", "empty"],
              "families": ["rotor", "blade", "cogging"], "weight_floor": 0.02,
              "orders": [{"order": 1.5, "label": "belt", "weight": 0.5}],
              "order_strengths": [{"order": 1.0, "family": "rotor", "relative_strength": 0.9}]},
}
SEEDS: list[dict[str, Any]] = [OWN_SEED] + [tomllib.loads(p.read_text(encoding="utf-8")) for p in EXAMPLES]

ODD_UNITS = [
    "", "furlong/fortnight", "rad/s", "degC", "Hz**4", "m*m*m*m*m*m", "%", "µs", "Ω", "kΩ", "rpm/V/V",
    "1/s", "g/cm^3", "rpm**2", "dimensionless", "inf", "nan", "e", "pi", "kg m/s^2", "mohm*A", "°",
    "rpm/V rpm/V", "meter ** -4", "(rpm)", "rpm^9^9", "rpm / 0",
]
ODD_NUMBERS = ["1e300", "-1e300", "0", "-0", "1e-300", "1e308", "9" * 40, "nan", "inf", ".", "1e", "+-1", "0x10"]


def _paths(value: Any, prefix: tuple = ()) -> list[tuple]:
    """Every path (tuple of keys and list indices) into a decoded TOML document."""
    out = [prefix] if prefix else []
    if isinstance(value, dict):
        for k, v in value.items():
            out += _paths(v, prefix + (k,))
    elif isinstance(value, list):
        for i, v in enumerate(value):
            out += _paths(v, prefix + (i,))
    return out


def _get(doc: Any, path: tuple) -> Any:
    for key in path:
        doc = doc[key]
    return doc


def _parent(doc: Any, path: tuple) -> tuple[Any, Any]:
    return _get(doc, path[:-1]), path[-1]


scalars = st.one_of(
    st.integers(-(10**20), 10**20),
    st.floats(allow_nan=True, allow_infinity=True),
    st.booleans(),
    st.text(max_size=30),
    st.sampled_from(["1950 rpm/V", "5 kg", "1e300 g", "9**9**9 rpm", "-45 mohm", "120 %", "0 Hz"]),
)
values = st.recursive(scalars, lambda inner: st.one_of(st.lists(inner, max_size=3),
                                                       st.dictionaries(st.text(max_size=8), inner, max_size=3)),
                      max_leaves=6)


def _mutate(data: st.DataObject, doc: dict[str, Any]) -> None:
    """Apply one random mutation to ``doc`` in place."""
    paths = _paths(doc)
    kind = data.draw(st.sampled_from(["delete", "swap", "magnitude", "unit", "text", "add", "table"]
                                     + ["rescale"] * 5))
    if not paths:
        kind = "add"
    if kind == "table":
        key = data.draw(st.sampled_from(["frame", "motor", "prop", "battery", "sensor", "flight", "check"]))
        doc.pop(key, None)
        return
    if kind == "add":
        where = data.draw(st.sampled_from([()] + [p for p in paths if isinstance(_get(doc, p), dict)]))
        _get(doc, where)[data.draw(st.text(min_size=1, max_size=10))] = data.draw(values)
        return
    path = data.draw(st.sampled_from(paths))
    parent, key = _parent(doc, path)
    if kind == "delete":
        del parent[key]
    elif kind == "swap":
        parent[key] = data.draw(values)
    elif kind == "rescale":  # a legal-looking but extreme figure: the engine must cope or refuse
        old = parent[key]
        factor = data.draw(st.sampled_from([1e-6, 1e-3, 0.01, 0.1, 0.5, 0.9, 1.1, 2.0, 10.0, 100.0, 1e4]))
        if isinstance(old, str) and " " in old:
            number, _, unit = old.partition(" ")
            try:
                parent[key] = f"{float(number) * factor:.6g} {unit}"
            except ValueError:
                parent[key] = old
        elif isinstance(old, (int, float)) and not isinstance(old, bool):
            parent[key] = type(old)(old * factor) if isinstance(old, float) else max(0, round(old * factor))
    elif kind in ("magnitude", "unit"):
        old = parent[key]
        number, _, unit = old.partition(" ") if isinstance(old, str) else ("1", " ", "Hz")
        if kind == "magnitude":
            number = data.draw(st.sampled_from(ODD_NUMBERS))
        else:
            unit = data.draw(st.one_of(st.sampled_from(ODD_UNITS), st.text(max_size=12)))
        parent[key] = f"{number} {unit}".strip()
    else:
        parent[key] = data.draw(st.text(max_size=70))


def _build_bytes(data: st.DataObject, toml_dumps) -> bytes:
    """Bytes of a build file: a mutated seed, random text, or damaged bytes."""
    shape = data.draw(st.sampled_from(["mutated"] * 6 + ["random text", "bytes", "truncated"]))
    if shape == "random text":
        return data.draw(st.text(max_size=300)).encode("utf-8", "surrogatepass")
    doc = copy.deepcopy(data.draw(st.sampled_from(SEEDS)))
    for _ in range(data.draw(st.integers(1, 4))):
        _mutate(data, doc)
    raw = toml_dumps(doc).encode("utf-8")
    if shape == "bytes":
        at = data.draw(st.integers(0, len(raw)))
        raw = raw[:at] + data.draw(st.binary(min_size=1, max_size=8)) + raw[at:]
    elif shape == "truncated":
        raw = raw[: data.draw(st.integers(0, len(raw)))]
    return raw


# Bounded so the suite stays fast; set CLASHCHECK_FUZZ_EXAMPLES for a longer, randomised hunt.
_LONG = os.environ.get("CLASHCHECK_FUZZ_EXAMPLES")


@settings(max_examples=int(_LONG) if _LONG else 150, deadline=None, derandomize=not _LONG,
          suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data())
def test_fuzzed_build_files_end_in_a_result_or_an_input_error(data, tmp_path_factory, toml_text):
    path = tmp_path_factory.getbasetemp() / "fuzz-build.toml"
    path.write_bytes(_build_bytes(data, toml_text))
    fmt = data.draw(st.sampled_from(["json", "table", "markdown"]))
    result = CliRunner().invoke(main, ["check", str(path), "--format", fmt])
    # CliRunner catches everything: an escaped exception shows here, not as a crash
    assert result.exception is None or isinstance(result.exception, SystemExit), repr(result.exception)
    assert result.exit_code in (0, 1, 2), result.output
    event(f"exit {result.exit_code}")
    assert "Traceback" not in result.output
    if result.exit_code == 2:
        lines = result.stderr.strip().splitlines()
        assert len(lines) == 1 and lines[0].startswith("clashcheck: error: "), result.stderr
        assert result.stdout == ""
    else:
        assert result.stderr == ""
        if fmt == "json":
            verdict = json.loads(result.stdout)["verdict"]
            assert (verdict == "clash") == (result.exit_code == 1)
