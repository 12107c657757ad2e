"""The modes report: the modes file written by tomli_w, candidates and the measured dwell."""

from __future__ import annotations

import datetime as dt
import json
import tomllib

import pytest

from clashcheck.errors import InputError
from clashcheck.identify.result import Dwell, MeasuredMode, ModesResult, OrderStrength
from clashcheck.report.modes import render_json, render_table, render_toml, to_json_dict

MODE = MeasuredMode("mode 1", 186.0, 0.03, 0.025, 0.036, "roll", 0.9, "SDOF fit")
TONE = MeasuredMode("candidate 1", 315.0, None, 0.0, 0.0013, "any", 0.2, "narrow: a tone?")
DWELL = Dwell("throttle", (0.0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 1.0),
              (0.0, 0.0, 0.1, 0.6, 0.2, 0.05, 0.05, 0.0, 0.0, 0.0))


def _result(**kw):
    base = dict(recording="log.csv", kind="flight", method="flight", sample_rate_hz=2000.0,
                duration_s=60.0, resolution_hz=1.0, modes=(MODE,),
                orders=(OrderStrength(3.0, "blade", 1.0, 40), OrderStrength(1.0, "rotor", 0.5, 40)),
                candidates=(TONE,), dwell=DWELL)
    base.update(kw)
    return ModesResult(**base)


def test_modes_file_has_dwell_and_leaves_candidates_out():
    text = render_toml(_result(), today=dt.date(2026, 1, 2))
    data = tomllib.loads(text)
    assert [m["name"] for m in data["frame"]["modes"]] == ["mode 1"]
    # the shape the verdict rule reads: band edges (fractions) and shares summing to 1
    assert data["dwell"] == {"throttle": list(DWELL.edges), "share": list(DWELL.share)}
    assert sum(data["dwell"]["share"]) == pytest.approx(1.0)
    assert "315.0 Hz (confidence 0.20)" in text  # named in a comment
    assert [o["order"] for o in data["order_strengths"]] == [3.0, 1.0]


def test_candidates_in_the_modes_file_when_asked():
    data = tomllib.loads(render_toml(_result(), include_candidates=True))
    names = [m["name"] for m in data["frame"]["modes"]]
    assert names == ["mode 1", "candidate 1"]
    assert "damping" not in data["frame"]["modes"][1]  # a bound only


def test_rotor_rate_dwell_when_there_is_no_throttle():
    d = Dwell("rotor_hz", (60.0, 80.0, 100.0), (0.25, 0.75))
    data = tomllib.loads(render_toml(_result(dwell=d)))
    assert data["dwell"] == {"rotor_hz": [60.0, 80.0, 100.0], "share": [0.25, 0.75]}
    assert json.loads(render_json(_result(dwell=d)))["dwell"]["rotor_hz"] == [60.0, 80.0, 100.0]


def test_json_lists_candidates_and_dwell():
    data = to_json_dict(_result())
    assert data["schema_version"] >= 1
    assert [m["frequency_hz"] for m in data["candidates"]] == [315.0]
    assert data["dwell"]["throttle"][0] == 0.0 and data["dwell"]["throttle"][-1] == 1.0
    assert to_json_dict(_result(dwell=None, candidates=()))["dwell"] is None


def test_table_shows_candidates_and_dwell():
    text = render_table(_result())
    assert "candidates (below the confidence floor" in text and "candidate 1" in text
    assert "30–40 %" in text and "60.0 %" in text


def test_tap_file_has_no_dwell():
    r = ModesResult("t.wav", "tap", "tap test", 8000.0, 10.0, 0.5, (MODE,))
    assert "dwell" not in tomllib.loads(render_toml(r))


@pytest.mark.parametrize("kw, field", [
    (dict(quantity="speed"), "dwell.quantity"),
    (dict(edges=(0.0, 1.0)), "dwell.edges"),
    (dict(edges=(0.0, 0.5, 0.5)), "dwell.edges"),
    (dict(share=(0.5, 0.6)), "dwell.share"),
])
def test_dwell_checks_itself(kw, field):
    args = dict(quantity="throttle", edges=(0.0, 0.5, 1.0), share=(0.5, 0.5))
    args.update(kw)
    with pytest.raises(InputError, match=field.replace(".", r"\.")):
        Dwell(**args)
