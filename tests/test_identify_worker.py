"""The second process for long flight analyses: same numbers, same errors, clean fall-backs.

The reference for every check here is the one-process analysis of the same
file (derived: the child runs the same streaming code on the same bytes).
"""

from __future__ import annotations

import functools
import sys

import numpy as np
import pytest

from clashcheck.errors import RecordingError
from clashcheck.identify import (
    Columns,
    FlightSettings,
    analyse_flight,
    open_recording,
    worker,
)
from clashcheck.identify.synth import (
    SynthMode,
    SynthOrder,
    flight_blocks,
    step_throttle,
    write_flight_csv,
)

COLS = Columns(signals=("gx", "gy", "gz"), time_column="t", rpm_columns=("rpm",))
SETTINGS = FlightSettings(blades=3, poles=14)


#: A throttle → rotor-rate curve [Hz], 20 + 380·throttle, that pickles by reference
#: to numpy (so the child can load it; a function of this test module might not import there).
ROTOR_OF_THROTTLE = functools.partial(np.polyval, [380.0, 20.0])
#: A curve that fails when called: polyval of text.
FAILING_CURVE = functools.partial(np.polyval, "not numbers")


@pytest.fixture(scope="module")
def flight_csv(tmp_path_factory):
    path = tmp_path_factory.mktemp("worker") / "flight.csv"
    blocks = flight_blocks([SynthMode(250.0, 0.03, (1.0, 0.5, 0.3)), SynthMode(610.0, 0.05, (0.4, 1.0, 0.5))],
                           [SynthOrder(1, (2.0, 2.0, 1.0)), SynthOrder(3, (4.0, 3.0, 1.0))],
                           2000.0, 60.0, throttle=step_throttle(), forcing_rms=5.0, seed=3)
    write_flight_csv(path, blocks)
    return path


def _analyse(path, switch, monkeypatch, columns=COLS, settings=SETTINGS, progress=None):
    monkeypatch.setenv(worker.ENV_SWITCH, switch)
    return analyse_flight(open_recording(path, columns), settings, progress=progress)


@pytest.fixture
def started(monkeypatch):
    """Records, per analysis, whether a child delivered the totals."""
    seen = []
    real = worker.Child.result

    def spy(self, progress=None):
        totals = real(self, progress)
        seen.append(totals is not None)
        return totals

    monkeypatch.setattr(worker.Child, "result", spy)
    return seen


def test_child_gives_the_same_result_as_one_process(flight_csv, monkeypatch, started):
    one = _analyse(flight_csv, "off", monkeypatch)
    two = _analyse(flight_csv, "on", monkeypatch)
    assert started == [True]
    assert two == one
    assert [round(m.frequency_hz / 250.0, 2) for m in two.modes][:1] == [1.0]  # generated mode


def test_child_with_a_drive_curve_gives_the_same_result(flight_csv, monkeypatch, started):
    cols = Columns(signals=("gx", "gy", "gz"), time_column="t", throttle_column="throttle")
    settings = FlightSettings(blades=3, rotor_of_throttle=ROTOR_OF_THROTTLE)
    one = _analyse(flight_csv, "off", monkeypatch, cols, settings)
    two = _analyse(flight_csv, "on", monkeypatch, cols, settings)
    assert started == [True]
    assert two == one and two.orders


def test_progress_crosses_from_the_child(flight_csv, monkeypatch, started):
    calls = []
    _analyse(flight_csv, "on", monkeypatch, progress=lambda done, total: calls.append((done, total)))
    done = [c[0] for c in calls]
    assert started == [True] and len(calls) >= 1 and done == sorted(done)
    assert done[-1] == 120_000  # 60 s at 2 kHz, every row read


def test_a_malformed_row_is_reported_as_in_one_process(tmp_path, flight_csv, monkeypatch):
    # the child reads in blocks of 2**17 rows, so row 100001 lies in its first block
    # and the error travels back as a pickled RecordingError
    lines = flight_csv.read_text(encoding="utf-8").splitlines(keepends=True)
    lines[100_000] = lines[100_000].replace(",", ",x", 1)
    bad = tmp_path / "bad.csv"
    bad.write_text("".join(lines), encoding="utf-8")
    with pytest.raises(RecordingError) as one:
        _analyse(bad, "off", monkeypatch)
    with pytest.raises(RecordingError) as two:
        _analyse(bad, "on", monkeypatch)
    assert str(two.value) == str(one.value)
    assert "row 100001" in str(two.value)


def test_a_lambda_keeps_the_analysis_in_one_process(flight_csv, monkeypatch):
    monkeypatch.setenv(worker.ENV_SWITCH, "on")
    rec = open_recording(flight_csv, COLS)
    assert worker.wanted(rec, SETTINGS)
    assert not worker.wanted(rec, FlightSettings(rotor_of_throttle=lambda thr: thr))
    monkeypatch.setenv(worker.ENV_SWITCH, "off")
    assert not worker.wanted(rec, SETTINGS)


def test_short_files_stay_in_one_process_by_default(flight_csv, monkeypatch):
    monkeypatch.delenv(worker.ENV_SWITCH, raising=False)
    rec = open_recording(flight_csv, COLS)
    assert flight_csv.stat().st_size < worker.MIN_BYTES
    assert not worker.wanted(rec, SETTINGS)
    monkeypatch.setattr(worker, "MIN_BYTES", 0)
    monkeypatch.setattr(worker, "_cpus", lambda: 2)
    assert worker.wanted(rec, SETTINGS)


@pytest.mark.parametrize("executable", ["/nonexistent/python", "/bin/false"])
def test_a_child_that_cannot_start_falls_back(flight_csv, monkeypatch, executable, started):
    one = _analyse(flight_csv, "off", monkeypatch)
    monkeypatch.setattr(sys, "executable", executable)
    assert _analyse(flight_csv, "on", monkeypatch) == one
    assert started == ([] if executable.startswith("/nonexistent") else [False])


def test_a_child_that_fails_midway_says_so(flight_csv, monkeypatch):
    cols = Columns(signals=("gx", "gy", "gz"), time_column="t", throttle_column="throttle")
    settings = FlightSettings(rotor_of_throttle=FAILING_CURVE)
    with pytest.raises(RuntimeError, match="the streaming process failed"):
        _analyse(flight_csv, "on", monkeypatch, cols, settings)


def test_a_warmed_up_child_takes_the_request(flight_csv, monkeypatch, started):
    one = _analyse(flight_csv, "off", monkeypatch)
    monkeypatch.setenv(worker.ENV_SWITCH, "on")
    worker.warm_up(flight_csv)
    spare = worker._spare
    assert spare is not None
    two = _analyse(flight_csv, "on", monkeypatch)
    assert worker._spare is None and started == [True] and two == one
    assert spare.proc.returncode is not None  # waited for once used


def test_a_spare_child_without_a_request_ends_cleanly(flight_csv, monkeypatch):
    monkeypatch.setenv(worker.ENV_SWITCH, "on")
    worker.warm_up(flight_csv)
    spare = worker._spare
    try:
        spare.proc.stdin.close()  # what the parent's exit does to it
        assert spare.proc.wait(timeout=60) == 0
    finally:
        worker._discard_spare()


def test_the_modes_command_gives_the_same_json_through_the_child(flight_csv, monkeypatch, started):
    from click.testing import CliRunner

    from clashcheck.cli import main

    args = ["modes", str(flight_csv), "--kind", "flight", "--signal", "gx,gy,gz", "--time-column", "t",
            "--rpm-columns", "rpm", "--blades", "3", "--format", "json", "--quiet"]
    outputs = []
    for switch in ("off", "on"):
        monkeypatch.setenv(worker.ENV_SWITCH, switch)
        res = CliRunner().invoke(main, args)
        assert res.exit_code == 0, res.output
        outputs.append(res.output)
    assert worker._spare is None and started == [True]
    assert outputs[1] == outputs[0]


def test_the_worker_imports_no_analysis():
    # issue 9 §6: the flight analysis imports the worker, never the other way round
    import ast
    import inspect

    tree = ast.parse(inspect.getsource(worker))
    imported = [node.module or "" for node in ast.walk(tree) if isinstance(node, ast.ImportFrom)]
    imported += [a.name for node in ast.walk(tree) if isinstance(node, ast.Import)
                 for a in node.names]
    assert not any(name.endswith("flight") or ".flight" in name for name in imported)


def test_the_worker_runs_only_passes_of_this_package():
    from clashcheck.identify import flight

    assert worker._resolve(flight.STREAM_PASS) is flight.stream_flight
    for bad in ("os:system", "clashcheck.identify.flight:not a name", "builtins:eval"):
        with pytest.raises(ValueError, match="unknown pass"):
            worker._resolve(bad)
