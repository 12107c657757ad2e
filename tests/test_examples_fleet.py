"""The demo fleet runs as its README section says (a check of the demo, not a reference value)."""

from __future__ import annotations

import importlib.util
import json
import shutil

import pytest

from clashcheck.cli import main


@pytest.mark.slow
def test_the_demo_fleet_flags_exactly_the_two_changed_aircraft(repo, tmp_path, runner):
    src = repo / "examples" / "fleet"
    spec = importlib.util.spec_from_file_location("make_fleet", src / "make_fleet.py")
    assert spec is not None and spec.loader is not None
    make_fleet = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(make_fleet)
    shutil.copytree(src / "builds", tmp_path / "builds")
    shutil.copy(src / "fleet.toml", tmp_path / "fleet.toml")
    assert len(make_fleet.make(tmp_path / "logs")) == 48
    res = runner.invoke(main, ["fleet", str(tmp_path / "fleet.toml"), "--format", "json", "-q"])
    assert res.exit_code == 1, res.output
    doc = json.loads(res.stdout)
    assert doc["flagged"] == ["WR-02", "WR-03"]
    assert {a["id"]: a["status"] for a in doc["aircraft"]}["WR-04"] == "baseline"
