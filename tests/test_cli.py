"""Tests of the command line (``check``) through click's CliRunner: bad input and exit codes."""

from __future__ import annotations

import json
import subprocess
import sys
import time

import pytest

from clashcheck.cli import main
from clashcheck.inputs.buildfile import parse_build


def _assert_input_error(result, *needles):
    """Exit 2, one line on stderr naming the problem, no traceback (issue 2 §2)."""
    assert result.exit_code == 2, result.output
    assert isinstance(result.exception, SystemExit)
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    assert "Traceback" not in result.output
    assert result.stdout == ""
    for needle in needles:
        assert needle in lines[0], lines[0]
    return lines[0]


def _run(runner, path, *args):
    return runner.invoke(main, ["check", str(path), *args])


# --- bad-input classes (issue 2 §2 list) ----------------------------------------------


def _set(table, key, value):
    def edit(build):
        build[table][key] = value

    return edit


def _drop(table, key):
    def edit(build):
        del build[table][key]

    return edit


def _mode_damping(value):
    def edit(build):
        build["frame"]["modes"][0]["damping"] = value

    return edit


BAD = [
    ("wrong dimension", _set("motor", "kv", "5 kg"), ["motor.kv", "5 kg", "rpm/V"]),
    ("missing required field", _drop("motor", "kv"), ["motor.kv", "nothing"]),
    ("unknown key", _set("motor", "kvv", "1 rpm/V"), ["motor.kvv", "did you mean 'kv'"]),
    ("Kv zero", _set("motor", "kv", "0 rpm/V"), ["motor.kv"]),
    ("Kv negative", _set("motor", "kv", "-1950 rpm/V"), ["motor.kv"]),
    ("odd pole count", _set("motor", "poles", 13), ["motor.poles", "13"]),
    ("zero poles", _set("motor", "poles", 0), ["motor.poles"]),
    ("slots not a multiple of 3", _set("motor", "slots", 13), ["motor.slots", "multiple of 3"]),
    ("throttle above 100 %", _set("flight", "cruise", "120 %"), ["flight.cruise", "120 %"]),
    ("throttle below 0 %", _set("flight", "idle", "-2 %"), ["flight.idle"]),
    ("damping zero", _mode_damping(0.0), ["frame.modes[0].damping"]),
    ("damping one", _mode_damping(1.0), ["frame.modes[0].damping"]),
    ("negative resistance", _set("motor", "resistance", "-45 mohm"), ["motor.resistance", "-45 mohm"]),
    ("negative cell resistance", _set("battery", "cell_resistance", "-3 mohm"), ["battery.cell_resistance"]),
    ("idle above cruise", _set("flight", "idle", "70 %"), ["flight.idle", "cruise"]),
    ("unknown catalog id", _set("motor", "catalog", "2207-195kv"), ["motor.catalog", "did you mean '2207-1950kv'"]),
    ("number without unit", _set("prop", "diameter", 5.1), ["prop.diameter"]),
]


@pytest.mark.parametrize("label, edit, needles", BAD, ids=[b[0] for b in BAD])
def test_bad_input_classes(runner, write_build, base_build, label, edit, needles):
    edit(base_build)
    line = _assert_input_error(_run(runner, write_build(base_build)), *needles)
    assert line.startswith("clashcheck: error: ")


def test_pathological_value_returns_at_once(runner, write_build, base_build):
    # issue 2 §2: "9**9**9 rpm" must be refused at once, never handed to pint
    base_build["motor"]["kv"] = "9**9**9 rpm"
    path = write_build(base_build)
    start = time.perf_counter()
    result = _run(runner, path)
    assert time.perf_counter() - start < 1.0
    _assert_input_error(result, "motor.kv")


def test_non_utf8_bytes(runner, write_build, base_build, toml_text):
    data = toml_text(base_build).encode("utf-8").replace(b"test quad", b"test \xff\xfe quad")
    _assert_input_error(_run(runner, write_build(data)), "UTF-8", "build.toml")


@pytest.mark.parametrize("key", [r"x\ny", r"x\ry", r"x\u001ey", r"x\u2028y"])  # TOML escapes
def test_unknown_key_with_a_line_break_stays_on_one_line(runner, write_build, base_build, toml_text, key):
    # a quoted TOML key may hold control characters; the message must still be one line
    text = toml_text(base_build) + f'"{key}" = 1\n'
    _assert_input_error(_run(runner, write_build(text)), "expected a known key")


def test_invalid_toml(runner, write_build):
    _assert_input_error(_run(runner, write_build("[frame\nmotors = 4\n")), "valid TOML", "build.toml")


def test_missing_file(runner, tmp_path):
    _assert_input_error(_run(runner, tmp_path / "absent.toml"), "absent.toml")


def test_folder_instead_of_file(runner, tmp_path):
    result = _run(runner, tmp_path)
    assert result.exit_code == 2
    assert "Traceback" not in result.output


def test_missing_modes_file(runner, write_build, base_build, tmp_path):
    _assert_input_error(_run(runner, write_build(base_build), "--modes", str(tmp_path / "no.toml")), "no.toml")


# --- exit codes ----------------------------------------------------------------------


def _json(result):
    return json.loads(result.stdout)


def test_clash_exits_1_by_default(runner, write_build, base_build):
    path = write_build(base_build)
    result = _run(runner, path, "--format", "json")
    assert _json(result)["verdict"] == "clash"
    assert result.exit_code == 1
    assert result.stderr == ""
    assert _run(runner, path, "--fail-on", "never").exit_code == 0
    assert _run(runner, path, "--fail-on", "watch").exit_code == 1


@pytest.fixture
def watch_build(base_build):
    """A build whose only order (1×) meets its only mode near full throttle, far above cruise."""
    base_build["check"] = {"families": [], "orders": [{"order": 1.0, "label": "1× only", "weight": 1.0}]}
    drive = parse_build(base_build).drive()
    f_m = float(drive.rotor_hz(0.95, "empty"))
    base_build["frame"]["modes"] = [{"name": "high mode", "frequency": f"{f_m:.3f} Hz", "damping": 0.05}]
    return base_build


def test_watch_exit_codes(runner, write_build, watch_build):
    path = write_build(watch_build)
    result = _run(runner, path, "--format", "json")
    assert _json(result)["verdict"] == "watch"
    assert result.exit_code == 0  # default --fail-on clash
    assert _run(runner, path, "--fail-on", "watch").exit_code == 1
    assert _run(runner, path, "--fail-on", "never").exit_code == 0


def test_clear_exit_codes(runner, write_build, base_build):
    # REFERENCES.md §1: ζ > 0.2 → AF < 2.5 → no margin, so no window anywhere
    for mode in base_build["frame"]["modes"]:
        mode["damping"] = 0.3
    path = write_build(base_build)
    result = _run(runner, path, "--format", "json")
    assert _json(result)["verdict"] == "clear"
    assert result.exit_code == 0
    assert _run(runner, path, "--fail-on", "watch").exit_code == 0


@pytest.mark.parametrize("fmt, marker", [("table", "verdict:"), ("markdown", "# "), ("json", '"verdict"')])
def test_formats(runner, write_build, base_build, fmt, marker):
    result = _run(runner, write_build(base_build), "--format", fmt, "--fail-on", "never")
    assert result.exit_code == 0
    assert marker in result.stdout


def test_output_file_is_written_atomically(runner, write_build, base_build, tmp_path):
    path = write_build(base_build)
    out = tmp_path / "report.json"
    result = _run(runner, path, "--format", "json", "--output", str(out))
    assert result.exit_code == 1  # the verdict still sets the exit code
    assert result.stdout == ""
    written = json.loads(out.read_text(encoding="utf-8"))
    assert written == _json(_run(runner, path, "--format", "json"))
    assert not [p for p in tmp_path.iterdir() if p.name.endswith(".tmp")]


def test_output_refuses_to_overwrite_the_build_file(runner, write_build, base_build):
    path = write_build(base_build)
    before = path.read_bytes()
    _assert_input_error(_run(runner, path, "--output", str(path)), "input")
    assert path.read_bytes() == before


def test_output_refuses_to_overwrite_the_modes_file(runner, write_build, base_build):
    path = write_build(base_build)
    modes = write_build({"frame": {"modes": [{"name": "x", "frequency": "300 Hz"}]}}, "modes.toml")
    before = modes.read_bytes()
    _assert_input_error(_run(runner, path, "--modes", str(modes), "--output", str(modes)), "input")
    assert modes.read_bytes() == before


def test_output_into_a_missing_folder(runner, write_build, base_build, tmp_path):
    _assert_input_error(_run(runner, write_build(base_build), "--output", str(tmp_path / "no" / "r.txt")),
                        "does not exist")


def test_modes_file_is_merged(runner, write_build, base_build):
    path = write_build(base_build)
    modes = write_build({"frame": {"modes": [{"name": "arm flap", "frequency": "250 Hz", "damping": 0.03}]}},
                        "modes.toml")
    data = _json(_run(runner, path, "--format", "json", "--modes", str(modes)))
    arm = next(m for m in data["modes"] if m["name"] == "arm flap")
    assert arm["frequency_hz"] == 250.0 and arm["origin"] == "measured"


def test_bad_option_values(runner, write_build, base_build):
    path = write_build(base_build)
    assert _run(runner, path, "--format", "pdf").exit_code == 2
    assert _run(runner, path, "--fail-on", "sometimes").exit_code == 2
    assert runner.invoke(main, ["check"]).exit_code == 2


def test_help(runner):
    result = runner.invoke(main, ["--help"])
    assert result.exit_code == 0
    assert "check" in result.stdout and "catalog" in result.stdout
    assert runner.invoke(main, ["check", "--help"]).exit_code == 0


def test_python_dash_m(repo):
    proc = subprocess.run([sys.executable, "-m", "clashcheck", "--help"], capture_output=True, text=True,
                          cwd=repo, timeout=60)
    assert proc.returncode == 0, proc.stderr
    assert "check" in proc.stdout


def test_quick_exit_is_hooked_once_and_only_at_exit(monkeypatch):
    import atexit
    import gc

    from clashcheck import cli

    hooked = []
    monkeypatch.setattr(atexit, "register", lambda fn, *a, **k: hooked.append(fn))
    monkeypatch.setattr(cli, "_EXIT_HOOKED", False)
    cli._quick_exit()
    cli._quick_exit()
    assert hooked == [gc.freeze]  # once per process; nothing frozen before the exit
    assert gc.isenabled()


def test_command_output_is_complete_after_the_quick_exit(runner, repo, tmp_path):
    # the objects are frozen at exit, not collected: the output file and stdout of
    # a real process must be whole, the same as in this process, with the same exit code
    build = str(repo / "examples" / "freestyle-5in.toml")
    env = {"CLASHCHECK_CACHE_DIR": str(tmp_path / "c"), "PATH": ""}
    out = tmp_path / "r.json"
    proc = subprocess.run([sys.executable, "-m", "clashcheck", "check", build, "--format", "json",
                           "--output", str(out)], capture_output=True, text=True, cwd=repo, timeout=60,
                          env=env)
    here = runner.invoke(main, ["check", build, "--format", "json"])
    assert proc.returncode == here.exit_code == 1, proc.stderr  # the demo build clashes (README)
    assert json.loads(out.read_text(encoding="utf-8")) == json.loads(here.stdout)
    table = subprocess.run([sys.executable, "-m", "clashcheck", "check", build], capture_output=True,
                           text=True, cwd=repo, timeout=60, env=env)
    assert table.stdout == runner.invoke(main, ["check", build]).stdout


def test_check_does_not_import_scipy_or_matplotlib(repo, tmp_path):
    # issue 2 §9: `clashcheck check` on the demo build imports neither scipy nor matplotlib.
    # The first run with an empty cache imports pint, and pint itself imports scipy when it is
    # installed (pint.compat); the check is made on the second, warm-cache run.
    code = (
        "import sys\n"
        "from clashcheck.cli import main\n"
        "try:\n"
        "    main(['check', 'examples/freestyle-5in.toml', '--format', 'json', '--output', sys.argv[1]])\n"
        "except SystemExit as exc:\n"
        "    print(exc.code, 'scipy' in sys.modules, 'matplotlib' in sys.modules, 'pint' in sys.modules)\n"
    )
    env = {"CLASHCHECK_CACHE_DIR": str(tmp_path / "cache"), "PATH": ""}
    runs = [subprocess.run([sys.executable, "-c", code, str(tmp_path / "r.json")], capture_output=True,
                           text=True, cwd=repo, timeout=60, env=env) for _ in range(2)]
    assert runs[0].stdout.split()[0] == "1", runs[0].stderr
    assert runs[1].stdout.split() == ["1", "False", "False", "False"], runs[1].stderr
