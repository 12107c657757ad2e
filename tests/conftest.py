"""Shared fixtures for the core-engine tests.

- ``runner``: a click ``CliRunner`` for ``clashcheck.cli.main``.
- (the autouse fixture that keeps the unit cache out of the user's home is in
  the repository's root ``conftest.py``, so it covers the doctests too);
- ``write_build``: writes build text (or bytes, or a dict) to ``tmp_path``;
- ``toml_text``: turns a build dict into TOML text (inline tables only, so any
  mutated shape a fuzz test makes can be written);
- ``base_build``: a small self-contained build (no catalog references) using
  the loaded drive model.
"""

from __future__ import annotations

import copy
import math
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
from click.testing import CliRunner

REPO = Path(__file__).resolve().parent.parent

#: A small build with every loss term of the loaded model.  Invented figures,
#: for tests of behaviour only; no test uses them as a reference value.
BASE_BUILD: dict[str, Any] = {
    "name": "test quad",
    "frame": {
        "motors": 4,
        "mass": "690 g",
        "modes": [
            {"name": "arm flap", "frequency": "186 Hz", "damping": 0.03, "axis": "roll", "kind": "arm"},
            {"name": "plate", "frequency": "420 Hz", "damping": 0.04, "axis": "pitch", "kind": "plate"},
        ],
    },
    "motor": {
        "kv": "1950 rpm/V",
        "poles": 14,
        "slots": 12,
        "resistance": "45 mohm",
        "no_load_current": "1.1 A",
    },
    "prop": {
        "diameter": "5.1 in",
        "blades": 3,
        "thrust_coefficient": 0.12,
        "power_coefficient": 0.06,
    },
    "battery": {"cells": 6, "chemistry": "lipo", "cell_resistance": "3 mohm"},
    "flight": {"idle": "4 %", "max": "100 %", "cruise": "55 %", "altitude": "0 m"},
    "check": {"policy": "damping", "default_damping": 0.03},
}


def _key(key: str) -> str:
    if key and all(c.isalnum() or c in "-_" for c in key) and key.isascii():
        return key
    return _string(key)


def _string(text: str) -> str:
    out = ['"']
    for ch in text:
        code = ord(ch)
        if ch == '"':
            out.append('\\"')
        elif ch == "\\":
            out.append("\\\\")
        elif code < 0x20 or code == 0x7F:
            out.append(f"\\u{code:04x}")
        elif 0xD800 <= code <= 0xDFFF:  # a lone surrogate cannot be written as UTF-8
            out.append("\\ufffd")
        else:
            out.append(ch)
    out.append('"')
    return "".join(out)


def _inline(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        return _string(value)
    if isinstance(value, dict):
        return "{ " + ", ".join(f"{_key(str(k))} = {_inline(v)}" for k, v in value.items()) + " }"
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(_inline(v) for v in value) + "]"
    raise TypeError(f"cannot write {type(value).__name__} as TOML")


def toml_dumps(data: dict[str, Any]) -> str:
    """TOML text of ``data``: one ``key = <inline value>`` line per top-level key."""
    return "".join(f"{_key(str(k))} = {_inline(v)}\n" for k, v in data.items())


@pytest.fixture
def runner() -> CliRunner:
    """A click test runner (stdout and stderr kept apart)."""
    return CliRunner()


@pytest.fixture(scope="session")
def toml_text() -> Callable[[dict[str, Any]], str]:
    """The dict → TOML writer (stateless, so session-scoped)."""
    return toml_dumps


@pytest.fixture
def base_build() -> dict[str, Any]:
    """A fresh deep copy of :data:`BASE_BUILD` to edit."""
    return copy.deepcopy(BASE_BUILD)


@pytest.fixture
def write_build(tmp_path: Path) -> Callable[..., Path]:
    """Write build text, bytes or a dict to ``tmp_path/name`` and return the path."""

    def write(content: str | bytes | dict[str, Any], name: str = "build.toml") -> Path:
        path = tmp_path / name
        if isinstance(content, dict):
            content = toml_dumps(content)
        if isinstance(content, bytes):
            path.write_bytes(content)
        else:
            path.write_text(content, encoding="utf-8")
        return path

    return write


@pytest.fixture(scope="session")
def repo() -> Path:
    """The repository root."""
    return REPO
