"""The output policy (clashcheck.files): atomic, never over an input or a foreign file, regular files only."""

from __future__ import annotations

import io
import os
import wave
from pathlib import Path

import numpy as np
import pytest

from clashcheck.cli import main
from clashcheck.errors import OutputError
from clashcheck.files import MARKER, check_target, write_output, written_by_clashcheck

REPO = Path(__file__).resolve().parent.parent
EXAMPLE = REPO / "examples" / "freestyle-5in.toml"
FOREIGN = "somebody's notes, not ours\n"


def test_write_then_rewrite_own_file(tmp_path):
    p = tmp_path / "r.txt"
    write_output(p, "first")
    assert written_by_clashcheck(p)
    write_output(p, "second")  # ours, unchanged since: replaced without force
    assert p.read_text() == "second"


def test_foreign_file_needs_force(tmp_path):
    p = tmp_path / "notes.txt"
    p.write_text(FOREIGN)
    with pytest.raises(OutputError, match="not written by clashcheck"):
        write_output(p, "report")
    assert p.read_text() == FOREIGN
    write_output(p, "report", force=True)
    assert p.read_text() == "report"


def test_own_file_edited_since_counts_as_foreign(tmp_path):
    p = tmp_path / "r.txt"
    write_output(p, "ours")
    p.write_text("ours, then edited by hand")
    with pytest.raises(OutputError, match="changed since"):
        write_output(p, "again")


def test_marker_is_recognised_without_the_register(tmp_path, monkeypatch):
    monkeypatch.setenv("CLASHCHECK_CACHE_DIR", "")
    p = tmp_path / "m.toml"
    p.write_bytes(MARKER + b" from x.wav\n")
    write_output(p, "new modes")
    assert p.read_text() == "new modes"


def test_input_folder_fifo_and_missing_folder(tmp_path):
    inp = tmp_path / "in.toml"
    inp.write_text("x")
    with pytest.raises(OutputError, match="input"):
        check_target(inp, [inp], force=True)
    with pytest.raises(OutputError, match="folder"):
        check_target(tmp_path, force=True)
    fifo = tmp_path / "f"
    os.mkfifo(fifo)
    with pytest.raises(OutputError, match="FIFO"):
        check_target(fifo, force=True)
    with pytest.raises(OutputError, match="does not exist"):
        check_target(tmp_path / "no" / "x.json")


def test_link_to_an_input_is_refused_and_a_link_to_an_output_is_written_through(tmp_path):
    inp = tmp_path / "in.toml"
    inp.write_text("x")
    link = tmp_path / "link.toml"
    link.symlink_to(inp)
    with pytest.raises(OutputError, match="input"):
        write_output(link, "y", [inp])
    out = tmp_path / "out.txt"
    write_output(out, "one")
    link2 = tmp_path / "link2.txt"
    link2.symlink_to(out)
    write_output(link2, "two")
    assert link2.is_symlink() and out.read_text() == "two"


# ------------------------------------------------------------ one test per command


def _tap_wav(path: Path) -> Path:
    fs = 8000
    t = np.arange(int(1.5 * fs)) / fs
    x = 0.002 * np.random.default_rng(0).standard_normal(t.size)
    for t0 in (0.2, 0.7, 1.2):  # taps ringing at 180 Hz, ζ 0.02 (stated here)
        on = t >= t0
        x[on] += np.exp(-2 * np.pi * 180 * 0.02 * (t[on] - t0)) * np.sin(2 * np.pi * 180 * (t[on] - t0))
    buf = io.BytesIO()
    with wave.open(buf, "wb") as w:
        w.setnchannels(1)
        w.setsampwidth(2)
        w.setframerate(fs)
        w.writeframes(np.round(x * 12000).astype("<i2").tobytes())
    path.write_bytes(buf.getvalue())
    return path


def _commands(tmp_path: Path) -> dict[str, tuple[list[str], list[Path]]]:
    """Each writing command, with '-o OUT' to be appended, and its inputs."""
    build = tmp_path / "build.toml"
    build.write_text(EXAMPLE.read_text())
    wav = _tap_wav(tmp_path / "tap.wav")
    return {
        "check": (["check", str(build)], [build]),
        "compare": (["compare", str(build), str(EXAMPLE)], [build]),
        "pick": (["pick", str(build), "--top", "1"], [build]),
        "modes": (["modes", str(wav), "--kind", "tap"], [wav]),
        "arm": (["arm", "--length", "110 mm", "--width", "12 mm", "--thickness", "5 mm",
                 "--material", "carbon-qi", "--tip-mass", "48 g"], []),
    }


@pytest.mark.parametrize("command", ["check", "compare", "pick", "modes", "arm"])
def test_no_command_overwrites_an_input_or_a_foreign_file(runner, tmp_path, command):
    argv, inputs = _commands(tmp_path)[command]
    for inp in inputs:  # never over an input, even with --force
        before = inp.read_bytes()
        res = runner.invoke(main, [*argv, "-o", str(inp), "--force"])
        assert res.exit_code == 2 and "input" in res.stderr, res.output
        assert inp.read_bytes() == before
    foreign = tmp_path / f"{command}-notes.txt"
    foreign.write_text(FOREIGN)
    res = runner.invoke(main, [*argv, "-o", str(foreign)])
    assert res.exit_code == 2 and "--force" in res.stderr, res.output
    assert foreign.read_text() == FOREIGN
    res = runner.invoke(main, [*argv, "-o", str(foreign), "--force"])
    assert res.exit_code in (0, 1), res.output
    assert foreign.read_text() != FOREIGN
    res = runner.invoke(main, [*argv, "-o", str(foreign)])  # now ours: replaced without --force
    assert res.exit_code in (0, 1), res.output


def test_plot_policy(runner, tmp_path):
    pytest.importorskip("matplotlib")
    out = tmp_path / "c.png"
    out.write_bytes(b"not ours")
    res = runner.invoke(main, ["plot", str(EXAMPLE), "-o", str(out)])
    assert res.exit_code == 2 and "--force" in res.stderr
    assert out.read_bytes() == b"not ours"
