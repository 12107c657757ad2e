"""Damping estimators: half-power (raw and window-corrected), decay fits, bounds."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import signal

from clashcheck.identify.damping import (
    corrected_half_power,
    decay_fit,
    half_power_points,
    half_power_raw,
    sdof_fit,
    stationary_model,
    transient_model,
)
from clashcheck.identify.spectra import welch_psd
from clashcheck.identify.synth import resonator


def _m2(r, zeta):
    """Squared SDOF magnification M(r)² (Rao, Mechanical Vibrations 5th ed. §3.4)."""
    return 1.0 / ((1 - r**2) ** 2 + (2 * zeta * r) ** 2)


def test_half_power_points_of_the_exact_response():
    r = np.linspace(0.8, 1.2, 40001)
    m2 = _m2(r, 0.05)
    i = int(np.argmax(m2))
    r1, r2, rp, top = half_power_points(r, m2, i)
    # REFERENCES.md §2, ζ = 0.05 (derived): peak r = 0.997497, M_max = 10.012523,
    # half-power points about the true peak 0.946111 / 1.046363
    assert rp == pytest.approx(0.997497, abs=1e-5)  # grid step 1e-5
    assert math.sqrt(top) == pytest.approx(10.012523, abs=5e-5)
    assert r1 == pytest.approx(0.946111, abs=1e-6)
    assert r2 == pytest.approx(1.046363, abs=1e-6)
    # ... and the estimate from those points, ζ ≈ (f2 − f1)/(2 fn) = 0.050126 (REFERENCES.md §2)
    assert half_power_raw(r, m2, i) == pytest.approx(0.050126, abs=1e-6)


@pytest.mark.parametrize("zeta", [0.01, 0.05, 0.15])
def test_corrected_estimator_removes_the_estimator_bias(zeta):
    # with an exact (window-free) observation model the correction returns the true ζ;
    # the raw reading is biased high by O(ζ²) (Papagiannopoulos & Hatzigeorgiou 2011)
    f = np.linspace(50.0, 150.0, 20001)

    def model(fn, z):
        return _m2(f / fn, z)

    p = model(100.0, zeta)
    hp = corrected_half_power(f, p, int(np.argmax(p)), model)
    assert not hp.bound_only
    assert hp.damping == pytest.approx(zeta, rel=2e-3)
    assert hp.damping_low <= hp.damping <= hp.damping_high


def test_stationary_model_equals_the_mean_periodogram():
    # the expected Welch periodogram of a resonator driven by white noise, from the
    # analytic autocorrelation, against a long simulation (derived; scipy reference)
    fs, fn, zeta, nper = 2000.0, 150.0, 0.02, 256
    b, a = resonator(fn, zeta, fs)
    x = signal.lfilter(b, a, np.random.default_rng(5).normal(size=2_000_000))
    f, p = welch_psd(x, fs, nper, nfft=2 * nper)
    m = stationary_model(fs, signal.get_window("hann", nper), 2 * nper)(fn, zeta)
    band = (f > 100) & (f < 200)
    ratio = p[band] / m[band]
    assert np.std(ratio) / np.mean(ratio) < 0.05


def test_stationary_model_keeps_recent_shapes_unchanged():
    # a shape asked for again is the one computed before, bit for bit, and no caller
    # can write into it; one evicted by many others is computed again alike
    fs, nper = 2000.0, 256
    model = stationary_model(fs, signal.get_window("hann", nper), 2 * nper)
    first = model(150.0, 0.02)
    kept = first.copy()
    assert model(150.0, 0.02) is first
    with pytest.raises(ValueError):
        first[0] = 0.0
    for k in range(40):  # more shapes than are kept
        model(100.0 + k, 0.03)
    again = model(150.0, 0.02)
    assert again is not first
    assert np.array_equal(again, kept)
    fresh = stationary_model(fs, signal.get_window("hann", nper), 2 * nper)(150.0, 0.02)
    assert np.array_equal(fresh, kept)


def test_window_correction_on_a_coarse_welch_spectrum():
    # resolution 7.8 Hz against a half-power width of 2ζf = 9 Hz: the raw reading is
    # widened by the Hann window; the corrected one is not (known ζ, generated signal)
    fs, fn, zeta, nper = 4000.0, 150.0, 0.03, 512
    b, a = resonator(fn, zeta, fs)
    x = signal.lfilter(b, a, np.random.default_rng(2).normal(size=800_000))
    f, p = welch_psd(x, fs, nper, nfft=4 * nper)
    i = int(np.argmax(p * (f > 50)))
    model = stationary_model(fs, signal.get_window("hann", nper), 4 * nper)
    hp = corrected_half_power(f, p, i, model, rel_error=0.03)
    assert half_power_raw(f, p, i) > 1.3 * zeta
    assert hp.damping == pytest.approx(zeta, rel=0.08)


def test_peak_narrower_than_the_resolution_gives_an_upper_bound():
    fs, fn, zeta, nper = 4000.0, 150.0, 0.002, 256  # 2ζf = 0.6 Hz, bins 15.6 Hz apart
    b, a = resonator(fn, zeta, fs)
    x = signal.lfilter(b, a, np.random.default_rng(3).normal(size=400_000))
    f, p = welch_psd(x, fs, nper, nfft=4 * nper)
    i = int(np.argmax(p * (f > 50)))
    hp = corrected_half_power(f, p, i, stationary_model(fs, signal.get_window("hann", nper), 4 * nper))
    assert hp.bound_only and hp.damping is None
    assert zeta < hp.damping_high < 0.1


def test_transient_model_matches_a_windowed_decay():
    # a tap segment: the impulse response itself, windowed; the model is exact (derived)
    fs, fn, zeta, n, onset = 8000.0, 300.0, 0.02, 4000, 20
    w = np.ones(n)
    w[-1000:] = np.hanning(2000)[1000:]
    h = np.zeros(n)
    b, a = resonator(fn, zeta, fs)
    imp = np.zeros(n)
    imp[onset] = 1.0
    h = signal.lfilter(b, a, imp)
    spec = np.abs(np.fft.rfft(h * w, 4 * n)) ** 2
    f = np.fft.rfftfreq(4 * n, 1 / fs)
    model = transient_model(fs, w, 4 * n, onset + 1)  # lfilter's b = [0, ...] delays one sample
    hp = corrected_half_power(f, spec, int(np.argmax(spec)), model)
    assert hp.damping == pytest.approx(zeta, rel=1e-3)


@pytest.mark.parametrize("zeta", [0.005, 0.02, 0.08])
def test_decay_fit_against_the_log_decrement(zeta):
    # a damped sinusoid with logarithmic decrement δ = 2πζ/√(1 − ζ²);
    # inverse ζ = δ/√(4π² + δ²) (REFERENCES.md §2; Rao §2.6)
    fs, f = 5000.0, 180.0
    delta = 2 * math.pi * zeta / math.sqrt(1 - zeta**2)
    fd = f * math.sqrt(1 - zeta**2)
    t = np.arange(int(8 / (zeta * 2 * math.pi * f) * fs)) / fs
    # amplitude falls by e^-δ per period Td = 1/fd
    x = np.exp(-delta * fd * t) * np.sin(2 * math.pi * fd * t + 0.3)
    expect = delta / math.sqrt(4 * math.pi**2 + delta**2)
    assert expect == pytest.approx(zeta, rel=1e-12)
    fit = decay_fit(x, fs, fd, max(20 * zeta * f, 10.0))
    assert fit is not None and fit.r_squared > 0.99
    assert fit.damping == pytest.approx(expect, rel=0.02)
    joint = sdof_fit(x, fs, [f * 1.01], [zeta * 1.5])
    assert joint.dampings[0] == pytest.approx(expect, rel=1e-3)
    assert joint.freqs_hz[0] == pytest.approx(f, rel=1e-4)


def test_joint_fit_separates_close_modes_of_different_damping():
    # two modes 1.3× apart, the upper one heavily damped: the joint fit recovers both
    fs = 8000.0
    t = np.arange(8000) / fs
    x = np.zeros_like(t)
    for f, z, a in ((200.0, 0.01, 1.0), (260.0, 0.08, 2.0)):
        wn = 2 * math.pi * f
        x += a * np.exp(-z * wn * t) * np.sin(wn * math.sqrt(1 - z * z) * t)
    fit = sdof_fit(x, fs, [198.0, 265.0], [0.02, 0.05])
    assert fit.dampings[0] == pytest.approx(0.01, rel=1e-3)
    assert fit.dampings[1] == pytest.approx(0.08, rel=1e-3)


def test_decay_fit_refuses_what_does_not_decay():
    fs = 2000.0
    t = np.arange(4000) / fs
    assert decay_fit(np.sin(2 * np.pi * 100 * t), fs, 100.0, 40.0) is None
