"""The 'clashcheck modes' command and its outputs: table, JSON, the modes file."""

from __future__ import annotations

import json
import subprocess
import sys
import tomllib

import pytest

from clashcheck.cli import main
from clashcheck.identify.result import MeasuredMode, ModesResult, OrderStrength
from clashcheck.identify.synth import (
    SynthMode,
    SynthOrder,
    flight_blocks,
    step_throttle,
    tap_signal,
    write_flight_csv,
    write_tap_wav,
)
from clashcheck.report.modes import CAUTIONS, render_toml, to_json_dict


@pytest.fixture(scope="module")
def tap_wav(tmp_path_factory):
    path = tmp_path_factory.mktemp("tap") / "tap.wav"
    modes = [SynthMode(180.0, 0.02, (1.0,)), SynthMode(420.0, 0.04, (0.7,))]
    write_tap_wav(path, tap_signal(modes, 8000.0, impacts=5, interval_s=1.2, seed=4), 8000.0)
    return path


@pytest.fixture(scope="module")
def flight_csv(tmp_path_factory):
    path = tmp_path_factory.mktemp("flight") / "flight.csv"
    blocks = flight_blocks([SynthMode(250.0, 0.03, (1.0, 0.5, 0.3))],
                           [SynthOrder(1, (2.0, 2.0, 1.0)), SynthOrder(3, (4.0, 3.0, 1.0))],
                           2000.0, 60.0, throttle=step_throttle(), forcing_rms=5.0, seed=2)
    write_flight_csv(path, blocks)
    return path


def test_tap_table(runner, tap_wav):
    res = runner.invoke(main, ["modes", str(tap_wav), "--kind", "tap"])
    assert res.exit_code == 0, res.output
    assert "tap recording, 8000 Hz" in res.output
    assert "ζ decay fit" in res.output and "mode 2" in res.output
    assert "propellers removed" in res.output  # the cautions


def test_tap_json_keys_are_the_contract(runner, tap_wav):
    res = runner.invoke(main, ["modes", str(tap_wav), "--kind", "tap", "--format", "json"])
    assert res.exit_code == 0, res.output
    data = json.loads(res.output)
    assert {"modes", "orders", "warnings"} <= set(data)
    assert data["orders"] == []
    for m in data["modes"]:
        assert set(m) == {"name", "frequency_hz", "damping", "damping_low", "damping_high", "axis",
                          "confidence", "method"}
    freqs = sorted(m["frequency_hz"] for m in data["modes"])
    assert freqs == pytest.approx([180.0, 420.0], rel=0.01)  # generated modes


def test_flight_json_and_modes_file(runner, flight_csv, tmp_path):
    out = tmp_path / "measured.toml"
    res = runner.invoke(main, ["modes", str(flight_csv), "--kind", "flight", "--signal", "gx,gy,gz",
                               "--time-column", "t", "--rpm-columns", "rpm", "--blades", "3",
                               "--format", "json", "--output", str(out), "--quiet"])
    assert res.exit_code == 0, res.output
    data = json.loads(res.output)
    assert [round(m["frequency_hz"] / 250.0, 2) for m in data["modes"]] == [1.0]
    assert {"order", "family", "relative_strength"} == set(data["orders"][0])
    assert data["orders"][0] == {"order": 3.0, "family": "blade", "relative_strength": 1.0}
    text = out.read_text(encoding="utf-8")
    assert text.startswith("# Frame modes measured by clashcheck from flight.csv")
    assert "propellers removed" in text
    parsed = tomllib.loads(text)
    (mode,) = parsed["frame"]["modes"]
    assert mode["frequency"].endswith(" Hz") and mode["kind"] == "other"
    assert mode["source"].startswith("measured: flight.csv")
    assert parsed["order_strengths"][0]["family"] == "blade"


def test_modes_file_is_read_by_the_build_loader(runner, flight_csv, tmp_path):
    from clashcheck.inputs.buildfile import load_modes_file

    out = tmp_path / "m.toml"
    res = runner.invoke(main, ["modes", str(flight_csv), "--kind", "flight", "--signal", "gx,gy,gz",
                               "--time-column", "t", "--rpm-columns", "rpm", "--blades", "3",
                               "--poles", "14", "--output", str(out)])
    assert res.exit_code == 0, res.output
    measured = load_modes_file(out)
    assert measured.modes[0].origin == "measured"
    assert measured.modes[0].frequency_hz == pytest.approx(250.0, rel=0.01)
    assert any(fam == "blade" for _o, fam, _s in measured.order_strengths)


def test_bound_only_mode_is_written_without_damping():
    mode = MeasuredMode("mode 1", 120.0, None, 0.0, 0.004, "any", 0.5, "half-power: bound")
    result = ModesResult("t.wav", "tap", "tap test", 8000.0, 10.0, 0.5, (mode,))
    parsed = tomllib.loads(render_toml(result))
    (m,) = parsed["frame"]["modes"]
    assert "damping" not in m and "damping_low" not in m and m["damping_high"] == 0.004
    assert to_json_dict(result)["modes"][0]["damping"] is None


def test_toml_strings_are_escaped():
    mode = MeasuredMode('odd "name"\\', 99.0, 0.02, 0.018, 0.022, "roll", 1.0, "line\nbreak")
    result = ModesResult('rec "1".csv', "flight", "m", 1000.0, 10.0, 1.0, (mode,),
                         (OrderStrength(2.0, "custom", 0.5),))
    parsed = tomllib.loads(render_toml(result))
    assert parsed["frame"]["modes"][0]["name"] == 'odd "name"\\'
    assert parsed["frame"]["modes"][0]["method"] == "line\nbreak"
    assert parsed["order_strengths"] == [{"order": 2.0, "family": "custom", "relative_strength": 0.5}]
    assert all(c in render_toml(result) for c in CAUTIONS)


@pytest.mark.parametrize(
    "args, message",
    [
        (["--kind", "flight", "--signal", "gx", "--time-column", "t"], "--rpm-columns"),
        (["--kind", "flight", "--signal", "nope", "--time-column", "t", "--rpm-columns", "rpm"],
         "no signal column 'nope'"),
        (["--kind", "flight", "--signal", "gx", "--rate", "fast", "--rpm-columns", "rpm"], "--rate"),
        (["--kind", "flight", "--signal", "gx", "--time-column", "t", "--rpm-columns", "rpm",
          "--rpm-unit", "erpm"], "--poles"),
    ],
)
def test_bad_options_exit_2_with_one_line(runner, flight_csv, args, message):
    res = runner.invoke(main, ["modes", str(flight_csv), *args])
    assert res.exit_code == 2
    lines = [ln for ln in res.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and message in lines[0]
    assert "Traceback" not in res.output


def test_malformed_recording_exit_2_names_row(runner, tmp_path):
    path = tmp_path / "broken.csv"
    rows = ["t,gx,rpm"] + [f"{i / 1000:.3f},0.1,6000" for i in range(30)]
    rows[12] = "0.011,oops,6000"
    path.write_text("\n".join(rows) + "\n")
    res = runner.invoke(main, ["modes", str(path), "--kind", "flight", "--signal", "gx",
                               "--time-column", "t", "--rpm-columns", "rpm"])
    assert res.exit_code == 2
    assert res.stderr.strip() == f"clashcheck: error: {path}, row 13: 'oops' is not a number"


def test_output_never_overwrites_the_recording(runner, tap_wav):
    before = tap_wav.read_bytes()
    res = runner.invoke(main, ["modes", str(tap_wav), "--kind", "tap", "--output", str(tap_wav)])
    assert res.exit_code == 2
    assert tap_wav.read_bytes() == before


def test_progress_bar_only_on_a_terminal(monkeypatch):
    from clashcheck.cli import modes as cli

    assert cli._modes_progress(False, 10_000_000, 3).__enter__() is None  # not a terminal
    monkeypatch.setattr(sys.stderr, "isatty", lambda: True, raising=False)
    assert cli._modes_progress(True, 10_000_000, 3).__enter__() is None  # --quiet
    assert cli._modes_progress(False, 1000, 3).__enter__() is None  # quick: no bar
    bar = cli._modes_progress(False, 10_000_000, 3)
    assert bar.__class__.__name__ == "ProgressBar"


def test_check_does_not_import_scipy_but_modes_does(repo, tap_wav):
    code = (
        "import sys\n"
        "from clashcheck.cli import main\n"
        "try:\n"
        "    main(sys.argv[1:], standalone_mode=False)\n"
        "except SystemExit:\n"
        "    pass\n"
        "print('scipy' in sys.modules, 'pandas' in sys.modules)\n"
    )
    build = repo / "examples" / "freestyle-5in.toml"
    # the first run fills the unit cache (a cold cache imports pint, which may pull
    # in scipy); the second is the ordinary warm run
    for _ in range(2):
        out = subprocess.run([sys.executable, "-c", code, "check", str(build)],
                             capture_output=True, text=True, cwd=repo, check=False)
    assert out.stdout.strip().splitlines()[-1] == "False False"
    out = subprocess.run([sys.executable, "-c", code, "modes", str(tap_wav), "--kind", "tap"],
                         capture_output=True, text=True, cwd=repo, check=False)
    assert out.stdout.strip().splitlines()[-1].startswith("True")


@pytest.fixture(scope="module")
def toned_csv(tmp_path_factory):
    """A flight with one mode (250 Hz) and a steady 315 Hz tone, a false low-damping peak."""
    import numpy as np

    path = tmp_path_factory.mktemp("tone") / "tone.csv"
    blocks = list(flight_blocks([SynthMode(250.0, 0.03, (1.0, 0.5, 0.3))],
                                [SynthOrder(1, (2.0, 2.0, 1.0)), SynthOrder(3, (4.0, 3.0, 1.0))],
                                2000.0, 60.0, throttle=step_throttle(), forcing_rms=5.0, seed=2))
    for b in blocks:  # the tone, added to every axis (stated here, not by the generator)
        b["signals"] = b["signals"] + 0.3 * np.sin(2 * np.pi * 315.0 * b["time_s"])[:, None]
    write_flight_csv(path, iter(blocks))
    return path


def test_candidates_stay_out_of_the_modes_file_unless_asked(runner, toned_csv, tmp_path):
    args = ["modes", str(toned_csv), "--kind", "flight", "--signal", "gx,gy,gz",
            "--time-column", "t", "--rpm-columns", "rpm", "--blades", "3", "--quiet"]
    out = tmp_path / "m.toml"
    res = runner.invoke(main, [*args, "--format", "json", "--output", str(out)])
    assert res.exit_code == 0, res.output
    data = json.loads(res.output)
    assert [round(m["frequency_hz"]) for m in data["modes"]] == [250]
    assert any(abs(c["frequency_hz"] - 315.0) < 1 for c in data["candidates"])
    parsed = tomllib.loads(out.read_text(encoding="utf-8"))
    assert [round(float(m["frequency"].split()[0])) for m in parsed["frame"]["modes"]] == [250]
    # the measured dwell, in the shape the verdict rule reads
    assert set(parsed["dwell"]) == {"throttle", "share"} or set(parsed["dwell"]) == {"rotor_hz",
                                                                                      "share"}
    assert sum(parsed["dwell"]["share"]) == pytest.approx(1.0)
    out2 = tmp_path / "all.toml"
    res = runner.invoke(main, [*args, "--include-candidates", "--output", str(out2)])
    assert res.exit_code == 0, res.output
    freqs = [float(m["frequency"].split()[0])
             for m in tomllib.loads(out2.read_text(encoding="utf-8"))["frame"]["modes"]]
    assert any(abs(f - 315.0) < 1 for f in freqs)


def test_check_reads_a_modes_file_with_dwell(runner, flight_csv, tmp_path, repo):
    out = tmp_path / "m.toml"
    res = runner.invoke(main, ["modes", str(flight_csv), "--kind", "flight", "--signal", "gx,gy,gz",
                               "--time-column", "t", "--throttle-column", "throttle",
                               "--rpm-columns", "rpm", "--blades", "3", "--output", str(out)])
    assert res.exit_code == 0, res.output
    assert "dwell" in tomllib.loads(out.read_text(encoding="utf-8"))
    res = runner.invoke(main, ["check", str(repo / "examples" / "freestyle-5in.toml"),
                               "--modes", str(out)])
    assert res.exit_code in (0, 1), res.output  # a verdict, not an input error


@pytest.mark.parametrize("args, flag", [
    (["--axes", "roll,pitch,sideways"], "--axes"),
    (["--axes", "roll"], "--axes"),
    (["--max-frequency", "10 Hz"], "--max-frequency"),
])
def test_library_fields_reach_the_user_as_flags(runner, flight_csv, args, flag):
    res = runner.invoke(main, ["modes", str(flight_csv), "--kind", "flight", "--signal", "gx,gy,gz",
                               "--time-column", "t", "--rpm-columns", "rpm", *args])
    assert res.exit_code == 2
    (line,) = [ln for ln in res.stderr.splitlines() if ln.strip()]
    assert line.startswith(f"clashcheck: error: {flag}:") and "Traceback" not in res.output
