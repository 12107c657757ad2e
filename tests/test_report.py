"""Tests of clashcheck.report.check: the JSON contract, the cautions, and safe file output."""

from __future__ import annotations

import json
import math
import os

import pytest

from clashcheck.analysis.clash import check_build
from clashcheck.errors import OutputError
from clashcheck.files import write_output
from clashcheck.inputs.buildfile import parse_build
from clashcheck.report.check import (
    render,
    render_json,
    render_markdown,
    render_table,
    result_to_dict,
)
from clashcheck.report.common import CAUTIONS, pct

# DESIGN.md interface contract
TOP_KEYS = {"verdict", "hover", "operating_band", "modes", "orders", "windows"}
WINDOW_KEYS = {
    "mode", "family", "order", "pack_state", "throttle_low", "throttle_high", "crossing_throttle",
    "required_margin", "margin_at_hover", "magnification_at_hover", "aliased",
}


@pytest.fixture
def result(base_build):
    base_build["sensor"] = {"sample_rate": "2 kHz"}
    return check_build(parse_build(base_build))


def _strict_json(text):
    def refuse(name):
        raise AssertionError(f"non-standard JSON constant {name}")

    return json.loads(text, parse_constant=refuse)


def test_json_contract(result):
    data = _strict_json(render_json(result))
    assert TOP_KEYS <= set(data)
    assert data["verdict"] in ("clear", "watch", "clash")
    assert set(data["hover"]) == {"full", "nominal", "empty"}
    assert set(data["operating_band"]) == {"full", "nominal", "empty"}
    assert data["windows"], "the base build has windows"
    assert any(w["aliased"] for w in data["windows"])
    for w in data["windows"]:
        assert WINDOW_KEYS <= set(w)
        # DESIGN.md: throttles and margins are fractions (0–1)
        assert 0.0 <= w["throttle_low"] < w["throttle_high"] <= 1.0
        assert 0.0 <= w["required_margin"] < 1.0
        assert w["crossing_throttle"] is None or 0.0 <= w["crossing_throttle"] <= 1.0
        assert isinstance(w["aliased"], bool)
        assert w["mode"] in {m["name"] for m in data["modes"]}
    for o in data["orders"]:
        assert {"order", "family"} <= set(o)
    for m in data["modes"]:
        assert "frequency_hz" in m  # frequencies end in _hz
    assert data["cautions"] == list(CAUTIONS)


def test_json_matches_the_result(result):
    data = result_to_dict(result)
    assert data["verdict"] == result.verdict
    assert len(data["windows"]) == len(result.windows)
    for state in ("full", "nominal", "empty"):
        band = next(b for b in result.bands if b.pack_state == state)
        assert data["hover"][state]["throttle"] == pytest.approx(band.hover.throttle)
        assert data["operating_band"][state]["throttle_low"] == pytest.approx(band.throttle_low)


def test_json_has_no_nan_when_the_craft_cannot_hover(base_build):
    base_build["frame"]["mass"] = "40 kg"
    result = check_build(parse_build(base_build))
    data = _strict_json(render_json(result))
    assert data["hover"]["empty"]["can_hover"] is False
    assert data["operating_band"]["empty"]["throttle_low"] is None
    assert {"kind": "cannot_hover", "level": "clash", "pack_state": "empty"}.items() <= data["findings"][-1].items()


@pytest.mark.parametrize("fmt", ["table", "markdown", "json"])
def test_every_format_carries_the_cautions(result, fmt):
    # brief safety rule: props off for bench and tap tests, supervised lithium packs, design advice only
    text = render(result, fmt)
    for caution in CAUTIONS:
        assert caution in text
    lowered = " ".join(CAUTIONS).lower()
    assert "propellers removed" in lowered and "supervision" in lowered and "aviation rules" in lowered


def test_table_and_markdown_content(result):
    table = render_table(result)
    md = render_markdown(result)
    for text in (table, md):
        assert result.name in text
        assert result.verdict.upper() in text
        for mr in result.modes:
            assert mr.mode.name in text
    assert md.startswith("# ")
    assert "|" in md


def test_render_dispatch(result):
    assert render(result, "json") == render_json(result)
    assert render(result, "markdown") == render_markdown(result)
    assert render(result, "table") == render_table(result)


def test_pct():
    assert pct(0.235) == "24 %"
    assert pct(0.2351, 1) == "23.5 %"
    assert pct(None) == "-"
    assert pct(math.nan) == "-"
    assert pct(math.inf) == "unreachable"


# --- write_output ------------------------------------------------------------------


def _leftovers(folder):
    return [p.name for p in folder.iterdir() if p.name.endswith(".tmp")]


def test_write_output_writes_and_replaces(tmp_path):
    target = tmp_path / "report.json"
    write_output(target, "first\n")
    assert target.read_text(encoding="utf-8") == "first\n"
    write_output(target, "second ζ\n")
    assert target.read_text(encoding="utf-8") == "second ζ\n"
    write_output(target, b"\x00bytes")
    assert target.read_bytes() == b"\x00bytes"
    assert _leftovers(tmp_path) == []
    umask = os.umask(0)
    os.umask(umask)
    # an ordinary new file's mode, not the temp file's private 0o600 (common practice)
    assert target.stat().st_mode & 0o777 == 0o666 & ~umask


def test_write_output_refuses_an_input(tmp_path, monkeypatch):
    build = tmp_path / "build.toml"
    build.write_text("name = 'x'\n", encoding="utf-8")
    with pytest.raises(OutputError, match="input"):
        write_output(build, "report", inputs=[build])
    # the same file by another spelling of its path
    (tmp_path / "sub").mkdir()
    monkeypatch.chdir(tmp_path)
    with pytest.raises(OutputError):
        write_output("sub/../build.toml", "report", inputs=["build.toml"])
    link = tmp_path / "link.toml"
    link.symlink_to(build)
    with pytest.raises(OutputError):
        write_output(link, "report", inputs=[build])
    assert build.read_text(encoding="utf-8") == "name = 'x'\n"
    assert _leftovers(tmp_path) == []


def test_write_output_refuses_a_folder_and_a_missing_folder(tmp_path):
    with pytest.raises(OutputError, match="folder"):
        write_output(tmp_path, "x")
    with pytest.raises(OutputError, match="does not exist"):
        write_output(tmp_path / "nowhere" / "r.json", "x")
    assert _leftovers(tmp_path) == []


@pytest.mark.skipif(os.geteuid() == 0, reason="root can write into read-only folders")
def test_write_output_into_a_read_only_folder(tmp_path):
    folder = tmp_path / "ro"
    folder.mkdir()
    folder.chmod(0o500)
    try:
        with pytest.raises(OutputError, match="cannot write"):
            write_output(folder / "r.json", "x")
        assert list(folder.iterdir()) == []
    finally:
        folder.chmod(0o700)
