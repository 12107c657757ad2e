"""Tests for clashcheck.report.campbell, the plot command and check --plot.

The expected curves come from the no-load rule f_rotor = Kv·d·V (REFERENCES.md
§4, derived), the fold f_app = |f − fs·round(f/fs)| (REFERENCES.md §9,
cross-checked against a NumPy FFT), the hover relation N·C_T·ρ·n²·D⁴ = m·g
(§5) and the API margin rule (§1).  Everything renders headless on the Agg
canvas; the tests read the plotted data back from the figure.
"""

from __future__ import annotations

import math
import subprocess
import sys
import tomllib
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from clashcheck.analysis.clash import check_build
from clashcheck.cli import main
from clashcheck.errors import InputError, OutputError
from clashcheck.inputs.buildfile import parse_build
from clashcheck.report.campbell import campbell_data, make_figure, save_campbell

pytest.importorskip("matplotlib")

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
KV_HZ = 2000 / 60                         # 2000 rpm/V in rev/s per volt
V = {"full": 4 * 4.20, "nominal": 4 * 3.70, "empty": 4 * 3.50}   # 4-cell lipo (REFERENCES.md §7)

# Invented no-load fixture: no resistances and no C_P, so rotor rate = Kv·d·V exactly.
NOLOAD = """
name = "no-load quad"
[frame]
motors = 4
mass = "500 g"
[[frame.modes]]
name = "arm flap"
frequency = "150 Hz"
damping = 0.03
kind = "arm"
[[frame.modes]]
name = "plate"
frequency = "320 Hz"
damping = 0.05
kind = "plate"
[motor]
kv = "2000 rpm/V"
poles = 14
slots = 12
[prop]
diameter = "5 in"
blades = 3
thrust_coefficient = 0.12
[battery]
cells = 4
[sensor]
sample_rate = "1 kHz"
[flight]
idle = "5 %"
max = "100 %"
cruise = "50 %"
[check]
families = ["rotor", "blade"]
"""


def _build(text=NOLOAD):
    return parse_build(tomllib.loads(text), path="noload.toml")


def _api_margin(zeta):
    af = 1 / (2 * zeta)     # REFERENCES.md §1
    return 0.0 if af < 2.5 else min(0.16, 0.17 * (1 - 1 / (af - 1.5)))


def test_order_bands_follow_the_no_load_rule():
    data = campbell_data(_build(), points=101)
    d = np.linspace(0.05, 1.0, 101)
    np.testing.assert_allclose(data.throttle, d, rtol=0, atol=1e-15)
    assert [o.order for o in data.orders] == [1.0, 2.0, 3.0, 6.0]
    for o in data.orders:
        np.testing.assert_allclose(o.low_hz, o.order * KV_HZ * d * V["empty"], rtol=1e-12)
        np.testing.assert_allclose(o.high_hz, o.order * KV_HZ * d * V["full"], rtol=1e-12)


def test_figure_lines_carry_the_computed_data():
    data = campbell_data(_build(), points=101)
    fig = make_figure([data])
    ax = fig.axes[0]
    lines = {line.get_gid(): line for line in ax.get_lines()}
    d = np.linspace(0.05, 1.0, 101)
    drawn = 0
    for o in data.orders:
        low = lines.get(f"order:{o.label}:low")
        if low is None:
            assert np.min(o.order * KV_HZ * d * V["empty"]) > data.y_max_hz   # only off-scale orders are skipped
            continue
        high = lines[f"order:{o.label}:high"]
        np.testing.assert_allclose(low.get_xdata(), 100 * d, rtol=1e-12)
        np.testing.assert_allclose(low.get_ydata(), o.order * KV_HZ * d * V["empty"], rtol=1e-12)
        np.testing.assert_allclose(high.get_ydata(), o.order * KV_HZ * d * V["full"], rtol=1e-12)
        drawn += 1
    assert drawn >= 2
    # mode lines sit at the mode frequencies, with the API margin band around them
    for name, freq, zeta in (("arm flap", 150.0, 0.03), ("plate", 320.0, 0.05)):
        y = lines[f"mode:{name}"].get_ydata()
        assert list(y) == [freq, freq]
        mode = next(m for m in data.modes if m.name == name)
        assert mode.band_low_hz == pytest.approx(freq * (1 - _api_margin(zeta)), rel=1e-12)
        assert mode.band_high_hz == pytest.approx(freq * (1 + _api_margin(zeta)), rel=1e-12)
    # hover: n = √(m·g/(N·C_T·ρ·D⁴)), throttle = n/(Kv·V)  (REFERENCES.md §4–5; ρ = 1.225 at 0 m)
    n_hover = math.sqrt(0.5 * 9.80665 / (4 * 0.12 * 1.225 * 0.127**4))
    for state, volts in V.items():
        x = lines[f"hover:{state}"].get_xdata()
        assert x[0] == pytest.approx(100 * n_hover / (KV_HZ * volts), rel=1e-6)
    assert ax.get_title(loc="left") == f"no-load quad: {check_build(_build()).verdict.upper()}"
    assert ax.get_xlabel() == "throttle (%)" and ax.get_ylabel() == "frequency (Hz)"


def test_crossings_are_where_orders_meet_modes():
    data = campbell_data(_build(), points=101)
    nominal = [c for c in data.crossings if c.pack_state == "nominal" and not c.aliased]
    assert nominal
    for c in nominal:
        order = next(o.order for o in data.orders if o.label == c.label)
        # order × Kv × d × V = f_mode  →  d = f_mode/(order·Kv·V)  (derived)
        assert c.throttle == pytest.approx(c.frequency_hz / (order * KV_HZ * V["nominal"]), rel=1e-9)


def test_aliased_orders_are_drawn_as_the_sensor_sees_them():
    data = campbell_data(_build(), points=101)
    d = np.linspace(0.05, 1.0, 101)
    fs = 1000.0
    assert data.aliases
    fig = make_figure([data])
    lines = {line.get_gid(): line for line in fig.axes[0].get_lines()}
    for a in data.aliases:
        order = next(o.order for o in data.orders if o.label == a.label)
        true_hz = order * KV_HZ * d * V[a.pack_state]
        expected = np.where(true_hz > fs / 2, np.abs(true_hz - fs * np.round(true_hz / fs)), np.nan)
        np.testing.assert_allclose(a.apparent_hz, expected, rtol=1e-12)
        np.testing.assert_allclose(lines[f"alias:{a.label}:{a.pack_state}"].get_ydata(), expected, rtol=1e-12)
    # one point against a NumPy FFT of the sampled tone (REFERENCES.md §9 cross-check)
    a = data.aliases[-1]
    i = int(np.nanargmax(a.apparent_hz))
    order = next(o.order for o in data.orders if o.label == a.label)
    f_true = order * KV_HZ * d[i] * V[a.pack_state]
    n = 20000
    tone = np.sin(2 * np.pi * f_true * np.arange(n) / fs)
    spectrum = np.abs(np.fft.rfft(tone * np.hanning(n)))
    peak_hz = np.argmax(spectrum) * fs / n
    assert a.apparent_hz[i] == pytest.approx(peak_hz, abs=2 * fs / n)


def test_save_png_svg_and_errors(tmp_path, monkeypatch):
    data = campbell_data(_build(), points=101)
    png, svg = tmp_path / "d.png", tmp_path / "d.svg"
    save_campbell(png, [data])
    save_campbell(svg, [data, data])
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert b"<svg" in svg.read_bytes()[:2000]
    with pytest.raises(InputError, match=r"\.png"):
        save_campbell(tmp_path / "d.jpg", [data])
    with pytest.raises(OutputError, match="does not exist"):
        save_campbell(tmp_path / "missing" / "d.png", [data])
    with pytest.raises(OutputError, match="input"):
        save_campbell(png, [data], inputs=[png])
    monkeypatch.setitem(sys.modules, "matplotlib", None)      # as if the extra were not installed
    with pytest.raises(InputError, match=r"pip install 'clashcheck\[plot\]'"):
        save_campbell(tmp_path / "x.png", [data])


def test_plot_command(tmp_path):
    runner = CliRunner()
    out = tmp_path / "diagram.svg"
    res = runner.invoke(main, ["plot", str(EXAMPLES / "freestyle-5in.toml"), "-o", str(out)])
    assert res.exit_code == 0, res.output
    assert out.exists() and "verdict clash" in res.stdout
    res = runner.invoke(main, ["plot", str(EXAMPLES / "freestyle-5in.toml"), "-o", str(tmp_path / "no" / "d.png")])
    assert res.exit_code == 2 and "does not exist" in res.stderr


def test_check_markdown_report_with_diagram(tmp_path):
    runner = CliRunner()
    report, diagram = tmp_path / "report.md", tmp_path / "img" / "diagram.png"
    diagram.parent.mkdir()
    res = runner.invoke(main, ["check", str(EXAMPLES / "freestyle-5in.toml"), "--format", "markdown",
                               "--plot", str(diagram), "-o", str(report)])
    assert res.exit_code == 1, res.output          # the example clashes
    text = report.read_text(encoding="utf-8")
    for needle in ("## Build and assumptions", "## Parts", "## Danger ranges", "verdict: CLASH",
                   "![Campbell diagram", "(img/diagram.png)", "## Suggestions", "propellers removed",
                   "loaded model", "hover: computed from C_T"):
        assert needle in text, needle
    assert diagram.read_bytes()[:4] == b"\x89PNG"
    # same file for the report and the diagram, and an unwritable diagram path: exit 2
    for plot in (report, tmp_path / "none" / "d.png"):
        res = runner.invoke(main, ["check", str(EXAMPLES / "freestyle-5in.toml"), "--format", "markdown",
                                   "--plot", str(plot), "-o", str(report)])
        assert res.exit_code == 2 and "Traceback" not in res.output


def test_check_without_plot_imports_no_matplotlib_or_scipy():
    code = ("import sys; from click.testing import CliRunner; from clashcheck.cli import main; "
            f"CliRunner().invoke(main, ['check', {str(EXAMPLES / 'freestyle-5in.toml')!r}]); "
            "print('matplotlib' in sys.modules, 'scipy' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.split() == ["False", "False"]
