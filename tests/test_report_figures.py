"""Content tests of the flight and tap figures (clashcheck.report.flight_figure, tap_figure).

The recordings come from generators written here and in ``tests/flight_gen.py``
(apart from ``clashcheck.identify.synth``), with stated parameters: motor
speed spread, noise, mains hum, a double hit.  The tests read back what
matplotlib holds (meshes, lines, patches, texts, legend entries) and compare
it with the analysis result the figure was drawn from.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))

from flight_gen import Flight, write_npy  # noqa: E402

from clashcheck.identify import Columns, FlightSettings, TapSettings, analyse_flight, analyse_tap  # noqa: E402
from clashcheck.identify import open_recording  # noqa: E402
from clashcheck.identify.views import FlightView, TapView, decay_views  # noqa: E402

pytest.importorskip("matplotlib")

from matplotlib.text import Text  # noqa: E402

from clashcheck.report.flight_figure import flight_figure, time_figure, time_path  # noqa: E402
from clashcheck.report.tap_figure import tap_figure  # noqa: E402


def _overlaps(fig):
    fig.canvas.draw()
    r = fig.canvas.get_renderer()
    texts = [t for t in fig.findobj(Text) if t.get_visible() and t.get_text()
             and str(t.get_gid() or "").startswith("label:")]
    boxes = [(t.get_gid(), Text.get_window_extent(t, r).shrunk(0.98, 0.9)) for t in texts]
    return [(a, b) for i, (a, ba) in enumerate(boxes) for b, bb in boxes[i + 1:] if ba.overlaps(bb)]


@pytest.fixture(scope="module")
def flight(tmp_path_factory):
    # stated flight: 4 motors with ±1.5 % speed spread, 3 orders, 2 modes, 50 Hz hum, noise
    spec = Flight(fs=2000.0, duration_s=36.0, levels=(0.25, 0.45, 0.65, 0.85, 0.55, 0.35), dwell_s=5.0,
                  curve=lambda u: 30.0 + 150.0 * np.asarray(u), spread=(-0.015, -0.005, 0.005, 0.015),
                  orders=[(1, (2.0, 2.0, 0.6)), (3, (4.0, 3.0, 1.0)), (7, (1.5, 1.5, 0.5))],
                  modes=[(135.0, 0.02, (1.0, 0.4, 0.2)), (290.0, 0.03, (0.3, 1.0, 0.3))],
                  tones=[(50.0, (0.3, 0.3, 0.3))], noise_rms=0.05, seed=3)
    path = write_npy(tmp_path_factory.mktemp("fl") / "f.npy", spec)
    cols = Columns(signals=("gx", "gy", "gz"), time_column="t", rpm_columns=("rpm1", "rpm2", "rpm3", "rpm4"),
                   rpm_scale_hz=1 / 60)
    return analyse_flight(open_recording(path, cols), FlightSettings(blades=3, poles=14, resolution_hz=2.0,
                                                                     resolution_given=True))


def test_flight_view_holds_the_binned_spectra(flight):
    v = flight.view
    assert isinstance(v, FlightView)
    nb, nax, nf = v.binned.shape
    assert nax == 3 and nf == v.freq_hz.size and nb == v.bin_values.size == v.bin_counts.size
    assert np.all(np.diff(v.bin_values) > 0) and v.rotor_known
    # the timeline spans the recording's clean time: segments × hop (derived: half-overlapping Welch)
    assert v.times_s[-1] < 36.0 and v.times_s[-1] > 30.0
    assert v.spectrogram.shape == (v.times_s.size, nf)
    # the trace is the logged rotor rate: 30 + 150 u Hz over the stated throttle steps
    assert v.trace.min() >= 30 + 150 * 0.25 * 0.98 and v.trace.max() <= 30 + 150 * 0.85 * 1.02


def test_flight_map_content(flight):
    fig = flight_figure(flight, provenance="clashcheck test · flight")
    v = flight.view
    mesh = {a.get_gid(): a for ax in fig.axes for a in ax.collections if a.get_gid()}
    for i, axis in enumerate(v.axes):
        arr = np.asarray(mesh[f"map:{axis}"].get_array()).reshape(v.freq_hz.size, -1)
        np.testing.assert_allclose(arr, 10 * np.log10(v.binned[:, i, :].T), rtol=1e-9)
    assert mesh[f"map:{v.axes[0]}"].get_cmap().name == "viridis"
    lines = {ln.get_gid(): ln for ax in fig.axes for ln in ax.get_lines() if ln.get_gid()}
    for m in flight.modes:
        for axis in v.axes:
            assert list(lines[f"mode:{m.name}:{axis}"].get_ydata()) == [m.frequency_hz] * 2
    for k in (1.0, 3.0):
        ln = lines[f"order:{k:g}:{v.axes[0]}"]
        np.testing.assert_allclose(ln.get_ydata(), k * np.asarray(ln.get_xdata()) / 60.0, rtol=1e-12)
    colourbar = next(ax for ax in fig.axes if ax.get_gid() == "colourbar")
    assert "dB" in colourbar.get_ylabel()
    bars = [p for ax in fig.axes for p in ax.patches if p.get_gid() == "dwell"]
    heights = np.array([b.get_height() for b in bars])
    np.testing.assert_allclose(heights, 100 * v.bin_counts / v.bin_counts.sum(), rtol=1e-12)
    entries = [t.get_text() for leg in (a.get_legend() for a in fig.axes) if leg for t in leg.get_texts()]
    for needle in ("identified mode", "rotor order line (k × rotor rate)", "blade order line (k × rotor rate)",
                   "stationary (median) spectrum", "half-power band f(1 ± ζ)", "measured dwell (share of time)"):
        assert needle in entries, needle
    assert _overlaps(fig) == []
    assert "clashcheck test · flight" in [t.get_text() for t in fig.texts]


def test_flight_time_view(flight):
    fig = time_figure(flight)
    v = flight.view
    trace = next(ln for ax in fig.axes for ln in ax.get_lines() if ln.get_gid() == "trace")
    np.testing.assert_allclose(trace.get_xdata(), v.times_s)
    np.testing.assert_allclose(trace.get_ydata(), 60 * v.trace)
    assert "dB" in next(ax for ax in fig.axes if ax.get_gid() == "colourbar").get_ylabel()
    assert _overlaps(fig) == []
    assert time_path("a/b.svg").as_posix() == "a/b-time.svg"


def _tap_recording(path, fs=8000.0):
    """Stated tap test: modes 160 Hz ζ 0.01 and 410 Hz ζ 0.02, 6 taps of graded strength and a
    double hit (a second tap 0.2 s after the fourth), 50 Hz hum, noise, 16-bit rounding."""
    from scipy.io import wavfile

    rng = np.random.default_rng(11)
    n = int(14.0 * fs)
    x = np.zeros(n)
    taps = [(1.0, 1.0), (3.0, 0.6), (5.0, 0.9), (7.0, 0.5), (7.2, 0.4), (9.0, 0.8), (11.0, 0.7)]
    t = np.arange(int(1.8 * fs)) / fs
    for start, amp in taps:
        i = int(start * fs)
        resp = sum(a * np.exp(-z * 2 * np.pi * f * t) * np.sin(2 * np.pi * f * np.sqrt(1 - z * z) * t)
                   for f, z, a in ((160.0, 0.01, 1.0), (410.0, 0.02, 0.6)))
        seg = amp * resp[: n - i]
        x[i:i + seg.size] += seg
    x += 0.004 * np.sin(2 * np.pi * 50 * np.arange(n) / fs) + 0.002 * rng.standard_normal(n)
    wavfile.write(path, int(fs), np.round(x / np.max(np.abs(x)) * 30000).astype(np.int16))
    return path


@pytest.fixture(scope="module")
def tap(tmp_path_factory):
    path = _tap_recording(tmp_path_factory.mktemp("tap") / "t.wav")
    return analyse_tap(open_recording(path, Columns()), TapSettings())


def test_tap_view_marks_the_double_hit(tap):
    v = tap.view
    assert isinstance(v, TapView)
    fs = v.sample_rate_hz
    rejected = sorted(r[0] / fs for r in v.rejected)
    assert [r[1] for r in v.rejected] == ["double hit", "double hit"]
    assert rejected == pytest.approx([7.0, 7.2], abs=0.01)
    assert len(v.impacts) == 5


def test_tap_figure_content(tap):
    decays = decay_views(tap.view, tap.modes)
    fig = tap_figure(tap, decays, provenance="clashcheck test · tap")
    v = tap.view
    lines = {ln.get_gid(): ln for ax in fig.axes for ln in ax.get_lines() if ln.get_gid()}
    np.testing.assert_allclose(lines["spectrum"].get_ydata(), 10 * np.log10(v.spectrum))
    np.testing.assert_allclose(lines["impacts"].get_xdata(), v.impacts / v.sample_rate_hz)
    np.testing.assert_allclose(lines["rejected"].get_xdata(), [r[0] / v.sample_rate_hz for r in v.rejected])
    for stated in (160.0, 410.0):                                       # the stated modes are found
        assert any(abs(m.frequency_hz / stated - 1) < 0.01 for m in tap.modes)
    patches = {p.get_gid(): p for ax in fig.axes for p in ax.patches if p.get_gid()}
    for m in tap.modes:
        assert lines[f"peak:{m.name}"].get_xdata()[0] == m.frequency_hz
        band = patches[f"band:{m.name}"]
        assert band.get_x() == pytest.approx(m.frequency_hz * (1 - m.damping))
        assert band.get_x() + band.get_width() == pytest.approx(m.frequency_hz * (1 + m.damping))
    assert decays, "the stated modes decay freely; their envelopes must be followed"
    for d in decays:
        for k, (t, a) in enumerate(d.envelopes):
            env = lines[f"envelope:{d.mode}:{k}"]
            np.testing.assert_allclose(env.get_ydata(), a)
            assert f"fit:{d.mode}:viscous:{k}" in lines and f"fit:{d.mode}:friction-viscous:{k}" in lines
        # a viscous decay: the viscous fit's ζ within 20 % of the stated one (derived from the generator)
        stated = {160.0: 0.01, 410.0: 0.02}
        for f, z in stated.items():
            if abs(d.frequency_hz / f - 1) < 0.01:
                assert d.params["viscous"][0] == pytest.approx(z, rel=0.2)
    assert {round(d.frequency_hz, -1) for d in decays} >= {160.0, 410.0}
    entries = [t.get_text() for leg in [*fig.legends, *(a.get_legend() for a in fig.axes)] if leg
               for t in leg.get_texts()]
    for needle in ("averaged impact spectrum", "noise floor estimated from the spectrum", "mode peak",
                   "half-power band f(1 ± ζ) of a mode", "impact used", "impact left out: double hit",
                   "viscous fit", "friction-viscous fit"):
        assert needle in entries, needle
    assert _overlaps(fig) == []


def test_figures_need_their_views(tap, flight):
    from dataclasses import replace

    from clashcheck.errors import InputError

    with pytest.raises(InputError, match="FlightView"):
        flight_figure(replace(flight, view=None))
    with pytest.raises(InputError, match="TapView"):
        tap_figure(replace(tap, view=flight.view))
