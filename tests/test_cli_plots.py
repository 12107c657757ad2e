"""The --plot options of modes, check, plot and compare, end to end; matplotlib stays off every other path."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

from clashcheck.cli import main

pytest.importorskip("matplotlib")

ROOT = Path(__file__).resolve().parent.parent
EX = ROOT / "examples"
FLIGHT = ["modes", str(EX / "recordings" / "flight.csv"), "--kind", "flight", "--signal", "gx,gy,gz",
          "--rate", "1.6 kHz", "--resolution", "2 Hz", "--rpm-columns", "rpm", "--blades", "3", "--poles", "14"]


def test_modes_flight_plot_writes_the_map_and_the_time_view(runner, tmp_path):
    out = tmp_path / "flight.png"
    res = runner.invoke(main, FLIGHT + ["--plot", str(out)])
    assert res.exit_code == 0, res.output
    assert out.read_bytes()[:4] == b"\x89PNG" and (tmp_path / "flight-time.png").read_bytes()[:4] == b"\x89PNG"
    assert f"wrote {out}" in res.stderr and "mode 1" in res.stdout


def test_modes_tap_plot(runner, tmp_path):
    sys.path.insert(0, str(Path(__file__).resolve().parent))
    from test_report_figures import _tap_recording

    wav = _tap_recording(tmp_path / "t.wav")
    out = tmp_path / "tap.svg"
    res = runner.invoke(main, ["modes", str(wav), "--kind", "tap", "--plot", str(out)])
    assert res.exit_code == 0, res.output
    text = out.read_text(encoding="utf-8")
    assert "<svg" in text[:2000] and "inputs sha256:" in text


@pytest.mark.parametrize("target", ["flight.jpg", "missing/flight.png"])
def test_modes_plot_bad_target_is_one_line_exit_2(runner, tmp_path, target):
    res = runner.invoke(main, FLIGHT + ["--plot", str(tmp_path / target)])
    assert res.exit_code == 2
    assert "Traceback" not in res.output and len(res.stderr.strip().splitlines()) == 1


def test_compare_markdown_carries_provenance(runner, tmp_path):
    res = runner.invoke(main, ["compare", str(EX / "freestyle-5in.toml"), str(EX / "freestyle-5in-swap.toml"),
                               "--format", "markdown", "--plot", str(tmp_path / "c.png")])
    assert res.exit_code in (0, 1), res.output
    assert "<sub>clashcheck " in res.stdout and "inputs sha256:" in res.stdout
    assert (tmp_path / "c.png").exists()


@pytest.mark.parametrize("args", [
    ["check", str(EX / "freestyle-5in.toml"), "--format", "markdown"],
    ["compare", str(EX / "freestyle-5in.toml"), str(EX / "freestyle-5in-swap.toml")],
    FLIGHT,
    ["modes", str(EX / "recordings" / "tap.wav"), "--kind", "tap"],
])
def test_no_matplotlib_without_plot(args):
    code = ("import sys; from click.testing import CliRunner; from clashcheck.cli import main; "
            f"r = CliRunner().invoke(main, {args!r}); "
            "print(r.exit_code, 'matplotlib' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True, cwd=ROOT)
    code_, loaded = out.stdout.split()
    assert code_ in ("0", "1") and loaded == "False"
