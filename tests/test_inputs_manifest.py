"""The fleet manifest: contract keys, paths, SI options, and one-line errors naming aircraft and field."""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import pytest

from clashcheck.cli import main
from clashcheck.errors import InputError
from clashcheck.inputs.manifest import load_manifest

BUILD = """name = "test quad"
[frame]
motors = 4
mass = "700 g"
[[frame.modes]]
name = "arm flap"
frequency = "180 Hz"
[motor]
kv = "1950 rpm/V"
poles = 14
slots = 12
[prop]
diameter = "5.1 in"
blades = 3
[battery]
cells = 6
"""

GOOD = """
[[aircraft]]
id = "HX-04"
build = "builds/quad.toml"

[[aircraft.recordings]]
path = "logs/hx04/a.wav"
date = 2026-10-02
kind = "tap"
rate = "8 kHz"
max_frequency = "1 kHz"

[[aircraft.recordings]]
path = "logs/hx04/b.csv"
date = 2026-10-09T10:30:00
kind = "flight"
signal = "gx,gy,gz"
throttle_column = "throttle"
rpm_columns = "rpm"
poles = 14

[[aircraft.events]]
date = 2026-10-05
what = "arm 2 replaced"
"""


@pytest.fixture
def fleet_dir(tmp_path: Path) -> Path:
    (tmp_path / "builds").mkdir()
    (tmp_path / "builds" / "quad.toml").write_text(BUILD, encoding="utf-8")
    (tmp_path / "logs" / "hx04").mkdir(parents=True)
    for name in ("a.wav", "b.csv", "c.wav"):
        (tmp_path / "logs" / "hx04" / name).write_bytes(b"placeholder")  # existence is all the manifest checks
    return tmp_path


def test_a_good_manifest_resolves_paths_and_parses_units(fleet_dir: Path):
    (fleet_dir / "fleet.toml").write_text(GOOD, encoding="utf-8")
    m = load_manifest(fleet_dir / "fleet.toml")
    (ac,) = m.aircraft
    assert ac.id == "HX-04" and ac.build.name == "test quad"
    assert Path(ac.build_path) == (fleet_dir / "builds" / "quad.toml").resolve()
    a, b = ac.recordings
    assert Path(a.path).is_absolute() and a.name == "logs/hx04/a.wav"
    assert a.options == {"rate": 8000.0, "max_frequency": 1000.0}
    assert a.date == dt.datetime(2026, 10, 2)
    assert b.date == dt.datetime(2026, 10, 9, 10, 30) and b.options["poles"] == 14
    assert ac.events[0].what == "arm 2 replaced"


def _bad(fleet_dir: Path, text: str, runner) -> str:
    (fleet_dir / "fleet.toml").write_text(text, encoding="utf-8")
    res = runner.invoke(main, ["fleet", str(fleet_dir / "fleet.toml"), "-q"])
    assert res.exit_code == 2, res.output
    assert "Traceback" not in res.output
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1, res.stderr
    return lines[0]


@pytest.mark.parametrize("change, field", [
    # an unknown key in a recording
    (('kind = "tap"\nrate', 'kind = "tap"\nsample_rat = "1 kHz"\nrate'), "recordings[0].sample_rat"),
    # an unknown key in an aircraft
    (('build = "builds/quad.toml"', 'build = "builds/quad.toml"\nframe = "x"'), "aircraft 'HX-04'.frame"),
    # a missing recording
    (("logs/hx04/a.wav", "logs/hx04/nope.wav"), "aircraft 'HX-04'.recordings[0].path"),
    # a missing build
    (("builds/quad.toml", "builds/none.toml"), "aircraft 'HX-04'.build"),
    # dates out of order
    (("2026-10-09T10:30:00", "2026-09-30"), "aircraft 'HX-04'.recordings[1].date"),
    # a date as a string
    (("date = 2026-10-02", 'date = "2 Oct"'), "aircraft 'HX-04'.recordings[0].date"),
    # a unit that is not a frequency
    (('rate = "8 kHz"', 'rate = "8 kg"'), "aircraft 'HX-04'.recordings[0].rate"),
    # an unknown kind
    (('kind = "tap"', 'kind = "knock"'), "aircraft 'HX-04'.recordings[0].kind"),
])
def test_bad_manifests_give_one_line_naming_aircraft_and_field(fleet_dir, runner, change, field):
    old, new = change
    assert old in GOOD
    line = _bad(fleet_dir, GOOD.replace(old, new, 1), runner)
    assert field in line


def test_duplicate_ids(fleet_dir, runner):
    second = '\n[[aircraft]]\nid = "HX-04"\nbuild = "builds/quad.toml"\n[[aircraft.recordings]]\n' \
             'path = "logs/hx04/c.wav"\ndate = 2026-10-02\nkind = "tap"\n'
    line = _bad(fleet_dir, GOOD + second, runner)
    assert "aircraft 'HX-04'.id" in line and "not used before" in line


def test_a_build_that_fails(fleet_dir, runner):
    (fleet_dir / "builds" / "quad.toml").write_text(BUILD.replace('kv = "1950 rpm/V"', 'kv = "1950 V"'),
                                                    encoding="utf-8")
    line = _bad(fleet_dir, GOOD, runner)
    assert "aircraft 'HX-04'.build" in line and "motor.kv" in line


def test_settings_that_fail_name_the_recording(fleet_dir, runner):
    text = GOOD.replace('max_frequency = "1 kHz"', 'min_frequency = "2 kHz"\nmax_frequency = "1 kHz"')
    line = _bad(fleet_dir, text, runner)
    assert "aircraft 'HX-04'.recordings[0]" in line and "max" in line


def test_event_dates_out_of_order(fleet_dir, runner):
    text = GOOD + '\n[[aircraft.events]]\ndate = 2026-10-01\nwhat = "earlier"\n'
    assert "aircraft 'HX-04'.events[1].date" in _bad(fleet_dir, text, runner)


def test_no_aircraft(fleet_dir):
    (fleet_dir / "fleet.toml").write_text("", encoding="utf-8")
    with pytest.raises(InputError, match="aircraft"):
        load_manifest(fleet_dir / "fleet.toml")


def test_not_toml(fleet_dir, runner):
    line = _bad(fleet_dir, "[[aircraft]\n", runner)
    assert "fleet.toml" in line and "TOML" in line
