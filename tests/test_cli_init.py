"""Tests of clashcheck.cli's group: exit code 3 for a bug, and output that no encoding can break."""

from __future__ import annotations

import io
import os
import subprocess
import sys

import pytest

from clashcheck.cli import ASCII_SPELLINGS, main


def test_forced_internal_error_exits_3_with_one_line(runner, monkeypatch, repo, tmp_path):
    import clashcheck.analysis.clash as clash

    def boom(build):
        raise RuntimeError("forced for a test")

    monkeypatch.setattr(clash, "check_build", boom)
    import tempfile

    monkeypatch.setattr(tempfile, "tempdir", str(tmp_path))
    res = runner.invoke(main, ["check", str(repo / "examples" / "freestyle-5in.toml")])
    assert res.exit_code == 3
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1 and "internal error (a bug" in lines[0] and "RuntimeError: forced" in lines[0]
    assert "Traceback" not in res.output
    from pathlib import Path

    path = Path(lines[0].rsplit("traceback in ", 1)[1])
    assert path.parent == tmp_path
    text = path.read_text(encoding="utf-8")
    assert "Traceback" in text and "forced for a test" in text


def test_debug_shows_the_traceback(runner, monkeypatch, repo):
    import clashcheck.analysis.clash as clash

    monkeypatch.setattr(clash, "check_build", lambda build: 1 / 0)
    res = runner.invoke(main, ["--debug", "check", str(repo / "examples" / "freestyle-5in.toml")])
    assert res.exit_code == 3
    assert "Traceback" in res.stderr and "ZeroDivisionError" in res.stderr


def test_bad_input_is_still_exit_2(runner, tmp_path):
    res = runner.invoke(main, ["check", str(tmp_path / "missing.toml")])
    assert res.exit_code == 2


def test_every_report_character_has_an_ascii_spelling():
    for ch, spelled in ASCII_SPELLINGS.items():
        assert spelled.isascii() and not ch.isascii()
    for ch in "ζΩµ–·×±":
        assert ch in ASCII_SPELLINGS


COMMANDS = [
    ["check", "examples/freestyle-5in.toml", "--format", "markdown"],
    ["compare", "examples/freestyle-5in.toml", "examples/freestyle-5in-swap.toml"],
    ["pick", "examples/freestyle-5in.toml", "--top", "1", "--cells", "6", "--pin", "prop", "--kv-from",
     "1700 rpm/V", "--kv-to", "1900 rpm/V", "--kv-step", "100 rpm/V"],
    ["modes", "examples/recordings/tap.wav", "--kind", "tap"],
    ["arm", "--length", "110 mm", "--width", "12 mm", "--thickness", "5 mm", "--material", "carbon-qi",
     "--tip-mass", "48 g"],
]


@pytest.mark.parametrize("encoding", ["ascii", "cp1252"])
def test_check_under_a_narrow_encoding_in_a_real_process(repo, tmp_path, encoding):
    # the real thing: PYTHONIOENCODING as a redirected stream on a Western-European machine would have it
    env = dict(os.environ, PYTHONIOENCODING=encoding, CLASHCHECK_CACHE_DIR=str(tmp_path))
    res = subprocess.run([sys.executable, "-m", "clashcheck", "check", "examples/freestyle-5in.toml"], cwd=repo,
                         env=env, capture_output=True, timeout=120)
    assert res.returncode == 1, res.stderr.decode("utf-8", "replace")
    assert b"Traceback" not in res.stderr
    text = res.stdout.decode(encoding)                   # everything written is in the stream's encoding
    if encoding == "ascii":
        assert "zeta" in text and " | " in text and "?" not in text     # spelled out, not '?'
    else:
        assert "–" in text                               # cp1252 has the en dash: kept


@pytest.mark.parametrize("encoding", ["ascii", "cp1252"])
@pytest.mark.parametrize("args", COMMANDS, ids=[" ".join(a[:2]) for a in COMMANDS])
def test_no_output_encoding_crashes(repo, monkeypatch, encoding, args):
    # the same streams in this process (a text stream over bytes in that encoding, strict errors), for speed
    monkeypatch.chdir(repo)
    out_bytes, err_bytes = io.BytesIO(), io.BytesIO()
    out = io.TextIOWrapper(out_bytes, encoding=encoding, errors="strict")
    err = io.TextIOWrapper(err_bytes, encoding=encoding, errors="strict")
    monkeypatch.setattr(sys, "stdout", out)
    monkeypatch.setattr(sys, "stderr", err)
    with pytest.raises(SystemExit) as done:
        main(args, prog_name="clashcheck")
    out.flush()
    err.flush()
    assert done.value.code in (0, 1, None), err_bytes.getvalue().decode(encoding)
    assert b"Traceback" not in err_bytes.getvalue()
    text = out_bytes.getvalue().decode(encoding)
    assert text.strip()
