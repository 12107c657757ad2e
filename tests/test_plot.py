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


def _labels_overlap(fig):
    """Pairs of visible placed labels (gid ``label:...``) whose boxes overlap on the Agg canvas."""
    from matplotlib.text import Text

    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    texts = [t for t in fig.findobj(Text) if t.get_visible() and t.get_text()
             and str(t.get_gid() or "").startswith("label:")]
    # the text's own box (an annotation's extent also holds its leader line)
    boxes = [(t.get_gid(), Text.get_window_extent(t, renderer).shrunk(0.98, 0.9)) for t in texts]
    return [(a, b) for i, (a, ba) in enumerate(boxes) for b, bb in boxes[i + 1:] if ba.overlaps(bb)]


def test_throttle_scales_follow_the_no_load_rule():
    data = campbell_data(_build(), points=101)
    d = np.linspace(0.05, 1.0, 101)
    assert [o.order for o in data.orders] == [1.0, 2.0, 3.0, 6.0]
    for state, volts in V.items():
        thr, rpm = data.throttle_scales[state]
        np.testing.assert_allclose(thr, d, rtol=0, atol=1e-15)
        np.testing.assert_allclose(rpm, 60 * KV_HZ * d * volts, rtol=1e-12)   # rpm = 60·Kv·d·V (derived)
    assert data.rpm_low == pytest.approx(60 * KV_HZ * 0.05 * V["empty"], rel=1e-12)
    assert data.rpm_high == pytest.approx(60 * KV_HZ * 1.0 * V["full"], rel=1e-12)


def test_figure_lines_carry_the_computed_data():
    data = campbell_data(_build(), points=101)
    fig = make_figure([data])
    ax = fig.axes[0]
    lines = {line.get_gid(): line for line in ax.get_lines()}
    drawn = 0
    for o in data.orders:
        line = lines.get(f"order:{o.label}")
        if line is None:
            continue
        x, y = np.asarray(line.get_xdata()), np.asarray(line.get_ydata())
        np.testing.assert_allclose(y, o.order * x / 60.0, rtol=1e-12)     # f = k × rotor rate
        drawn += 1
    assert drawn >= 2
    # mode lines sit at the mode frequencies, with the API margin band around them
    for name, freq, zeta in (("arm flap", 150.0, 0.03), ("plate", 320.0, 0.05)):
        assert list(lines[f"mode:{name}"].get_ydata()) == [freq, freq]
        mode = next(m for m in data.modes if m.name == name)
        assert mode.band_low_hz == pytest.approx(freq * (1 - _api_margin(zeta)), rel=1e-12)
        assert mode.band_high_hz == pytest.approx(freq * (1 + _api_margin(zeta)), rel=1e-12)
        band = next(p for p in ax.patches if p.get_gid() == f"margin:{name}")
        assert band.get_y() == pytest.approx(mode.band_low_hz)
        assert band.get_y() + band.get_height() == pytest.approx(mode.band_high_hz)
    # hover: n = √(m·g/(N·C_T·ρ·D⁴)) whatever the pack state (REFERENCES.md §4–5; ρ = 1.225 at 0 m)
    n_hover = math.sqrt(0.5 * 9.80665 / (4 * 0.12 * 1.225 * 0.127**4))
    for state in V:
        assert lines[f"hover:{state}"].get_xdata()[0] == pytest.approx(60 * n_hover, rel=1e-6)
    assert ax.get_title(loc="left") == f"no-load quad: {check_build(_build()).verdict.upper()}"
    assert ax.get_xlabel() == "rotor speed (rpm)" and ax.get_ylabel() == "frequency (Hz)"


def test_crossings_are_where_orders_meet_modes():
    data = campbell_data(_build(), points=101)
    direct = [c for c in data.crossings if not c.aliased]
    assert direct
    for c in direct:
        order = next(o.order for o in data.orders if o.label == c.label)
        # order × rotor rate = f_mode  →  rpm = 60 f_mode / order, any pack state (derived)
        assert c.rpm == pytest.approx(60 * c.frequency_hz / order, rel=1e-3)


def test_aliased_orders_are_drawn_as_the_sensor_sees_them():
    data = campbell_data(_build(), points=101)
    fs = 1000.0
    assert data.aliases
    fig = make_figure([data])
    lines = {line.get_gid(): line for line in fig.axes[0].get_lines()}
    for a in data.aliases:
        order = next(o.order for o in data.orders if o.label == a.label)
        true_hz = order * a.rpm / 60.0
        expected = np.abs(true_hz - fs * np.round(true_hz / fs))          # REFERENCES.md §9
        shown = np.isfinite(a.apparent_hz)
        assert shown.any() and np.all(true_hz[shown] > fs / 2)
        np.testing.assert_allclose(a.apparent_hz[shown], expected[shown], rtol=1e-12)
        np.testing.assert_allclose(lines[f"alias:{a.label}"].get_ydata(), a.apparent_hz, rtol=1e-12)
    # one point against a NumPy FFT of the sampled tone (REFERENCES.md §9 cross-check)
    a = data.aliases[-1]
    i = int(np.nanargmax(a.apparent_hz))
    order = next(o.order for o in data.orders if o.label == a.label)
    f_true = order * a.rpm[i] / 60.0
    n = 20000
    tone = np.sin(2 * np.pi * f_true * np.arange(n) / fs)
    spectrum = np.abs(np.fft.rfft(tone * np.hanning(n)))
    assert a.apparent_hz[i] == pytest.approx(np.argmax(spectrum) * fs / n, abs=2 * fs / n)


def test_a_steep_antialias_filter_leaves_aliases_out_and_says_how_many():
    steep = NOLOAD.replace('sample_rate = "1 kHz"', 'sample_rate = "1 kHz"\nantialias_cutoff = "60 Hz"\n'
                           'antialias_order = 4')
    data = campbell_data(_build(steep), points=101)
    # a 4th-order low-pass at 60 Hz passes (60/500)^4 ≈ 2e-4 at Nyquist, far below the 0.02 floor (derived)
    assert data.aliases == () and data.aliases_left_out >= 1
    fig = make_figure([data])
    assert f"{data.aliases_left_out} left out" in fig.axes[0].get_title(loc="right")


#: Invented close modes (172/186, 118/124, 264/265 Hz) on a build that clashes with them.
CLOSE = NOLOAD.replace("""[[frame.modes]]
name = "plate"
frequency = "320 Hz"
damping = 0.05
kind = "plate"
""", "".join(f"""[[frame.modes]]
name = "m{f}"
frequency = "{f} Hz"
damping = 0.02
""" for f in (118, 124, 172, 186, 264, 265)))


@pytest.mark.parametrize("text", [NOLOAD, CLOSE])
def test_every_family_and_fill_has_a_legend_entry_and_labels_do_not_overlap(text):
    build = _build(text)
    data = campbell_data(build, points=201, provenance="clashcheck test · inputs sha256:0000")
    fig = make_figure([data])
    ax = fig.axes[0]
    legend = fig.legends[0]
    entries = [t.get_text().replace("\n", " ") for t in legend.get_texts()]
    families = {o.family for o in data.orders if f"order:{o.label}" in {ln.get_gid() for ln in ax.get_lines()}}
    for fam in families:
        assert f"{fam} orders" in entries
        handle = legend.legend_handles[entries.index(f"{fam} orders")]
        colour_of = {f"order:{o.label}": o.family for o in data.orders}
        drawn_colours = {ln.get_color() for ln in ax.get_lines() if colour_of.get(ln.get_gid()) == fam}
        assert drawn_colours == {handle.get_color()}
    for needle in ("required-margin band of a mode", "operating band (hover to cruise, all pack states)",
                   "dwell zone (hover ± spread, cruise; per pack state)", "hover (one line per pack state)"):
        assert needle in entries, needle
    aliased = "aliased order as the sensor sees it (dashed, in its family's colour)"
    assert (aliased in entries) == bool(data.aliases)      # listed only when drawn
    # one meaning per fill: margin bands, the operating band and dwell zones differ in colour or hatch
    fills = {p.get_gid().split(":")[0]: (p.get_facecolor()[:3], p.get_hatch()) for p in ax.patches if p.get_gid()}
    assert len({fills[k] for k in ("margin", "operating-band", "dwell")}) == 3
    assert _labels_overlap(fig) == []
    texts = [t.get_text() for t in fig.texts]
    assert "clashcheck test · inputs sha256:0000" in texts


def test_close_modes_keep_apart():
    data = campbell_data(_build(CLOSE), points=201)
    fig = make_figure([data])
    ax = fig.axes[0]
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    from matplotlib.text import Text

    label = {t.get_gid(): Text.get_window_extent(t, renderer) for t in ax.texts}
    for a, b in (("m118", "m124"), ("m172", "m186"), ("m264", "m265")):
        assert not label[f"label:mode:{a}"].overlaps(label[f"label:mode:{b}"])
    # range bars of 264 and 265 Hz are drawn a few points apart on the canvas
    bars = {}
    for line in ax.get_lines():
        gid = line.get_gid() or ""
        if gid.startswith("range:m264:") or gid.startswith("range:m265:"):
            y = line.get_transform().transform(np.column_stack([line.get_xdata(), line.get_ydata()]))[0, 1]
            bars.setdefault(gid.split(":")[1], y)
    if len(bars) == 2:
        assert abs(bars["m264"] - bars["m265"]) >= 3.0 * fig.dpi / 72


def test_compare_figure_reads_on_a4():
    a = campbell_data(_build(), points=101)
    b = campbell_data(_build(CLOSE), points=101)
    fig = make_figure([a, b])
    w, h = fig.get_size_inches()
    assert (w, h) == pytest.approx((8.27, 11.69))                      # A4 portrait (ISO 216)
    assert min(t.get_fontsize() for t in fig.findobj(lambda o: hasattr(o, "get_fontsize"))
               if getattr(t, "get_text", lambda: "")()) >= 6
    assert _labels_overlap(fig) == []
    # the legend lists only what is drawn: each family entry has lines in some axes
    drawn = {o.family for d in (a, b) for o in d.orders}
    entries = [t.get_text().replace("\n", " ") for t in fig.legends[0].get_texts()]
    assert {e[:-len(" orders")] for e in entries if e.endswith(" orders")} <= drawn


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
                   "loaded model", "hover: computed from C_T",
                   "<sub>clashcheck ", "inputs sha256:"):
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
