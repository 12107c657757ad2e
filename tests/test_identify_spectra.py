"""Welch spectra: the wrapper and the streamed segments against scipy.signal.welch."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import signal

from clashcheck.identify.spectra import (
    SegmentStream,
    WelchAverage,
    segment_length,
    welch_psd,
)


def test_wrapper_matches_scipy_welch():
    rng = np.random.default_rng(0)
    x = rng.normal(size=(3, 5000))
    f, p = welch_psd(x, 2000.0, 512, nfft=1024)
    # reference: scipy.signal.welch with the same parameters (reference library)
    f_ref, p_ref = signal.welch(x, fs=2000.0, window="hann", nperseg=512, nfft=1024,
                                detrend="constant", scaling="density")
    np.testing.assert_allclose(f, f_ref)
    np.testing.assert_allclose(p, p_ref, rtol=1e-12)


def test_density_scaling_white_noise_level_and_parseval():
    rng = np.random.default_rng(1)
    fs, sigma = 1000.0, 2.0
    x = sigma * rng.normal(size=200_000)
    f, p = welch_psd(x, fs, 1000)
    # one-sided density of white noise is 2σ²/fs (derived)
    assert np.median(p[5:-5]) == pytest.approx(2 * sigma**2 / fs, rel=0.05)
    # Parseval: the integral of the PSD is the variance (derived)
    assert np.sum(p) * (f[1] - f[0]) == pytest.approx(np.var(x), rel=0.02)


def test_tone_amplitude_from_density():
    fs, amp, f0 = 1000.0, 3.0, 125.0
    t = np.arange(20000) / fs
    x = amp * np.sin(2 * np.pi * f0 * t)
    f, p = welch_psd(x, fs, 800)
    band = np.abs(f - f0) <= 5
    # a sine of amplitude A has power A²/2 (derived)
    assert np.sum(p[band]) * (f[1] - f[0]) == pytest.approx(amp**2 / 2, rel=1e-3)


@settings(max_examples=15, deadline=None, derandomize=True)
@given(
    nperseg=st.sampled_from([64, 100, 256]),
    # 0.3 leaves a hop that does not divide the segment (the running-sum path of the
    # segment means); the others take the sum-of-hops path
    overlap_frac=st.sampled_from([0.0, 0.3, 0.5, 0.75]),
    cuts=st.lists(st.integers(1, 900), min_size=1, max_size=6),
)
def test_streamed_blocks_equal_one_shot_welch(nperseg, overlap_frac, cuts):
    rng = np.random.default_rng(nperseg)
    n = 3000
    x = rng.normal(size=(n, 2))
    aux = np.linspace(10.0, 40.0, n)[:, None]
    noverlap = int(nperseg * overlap_frac)
    stream = SegmentStream(500.0, nperseg, noverlap, nfft=2 * nperseg)
    avg = WelchAverage()
    aux_means = []
    edges = sorted({0, n, *[min(c * 3, n) for c in cuts]})
    for a, b in zip(edges[:-1], edges[1:]):
        for segs in stream.feed(0, x[a:b], aux[a:b]):
            avg.add(segs.psd)
            aux_means.append(segs.aux_mean[0])
    f_ref, p_ref = signal.welch(x.T, fs=500.0, window="hann", nperseg=nperseg, noverlap=noverlap,
                                nfft=2 * nperseg, detrend="constant", scaling="density")
    nseg = (n - noverlap) // (nperseg - noverlap)
    assert avg.count == nseg
    np.testing.assert_allclose(stream.freq_hz, f_ref)
    np.testing.assert_allclose(avg.mean(), p_ref, rtol=1e-10)
    # the per-segment mean of the auxiliary series: a linear ramp's mean over each segment
    hop = nperseg - noverlap
    starts = np.arange(nseg) * hop
    expect = np.array([aux[s:s + nperseg, 0].mean() for s in starts])
    np.testing.assert_allclose(np.concatenate(aux_means), expect, rtol=1e-12)


def test_new_run_drops_the_unfinished_segment():
    stream = SegmentStream(100.0, 20)
    assert list(stream.feed(0, np.ones((15, 1)))) == []
    out = list(stream.feed(1, np.ones((25, 1))))  # the 15 samples of run 0 are not joined
    assert sum(s.psd.shape[0] for s in out) == 1


@pytest.mark.parametrize("n", [4, 255, 256, 8000])
def test_periodic_hann_is_scipys_welch_window(n):
    from clashcheck.identify.spectra import hann_periodic

    # scipy.signal.get_window("hann", n) is the DFT-even (periodic) Hann (reference library)
    np.testing.assert_allclose(hann_periodic(n), signal.get_window("hann", n), atol=1e-15)


def test_segment_length_for_resolution():
    assert segment_length(8000.0, 1.0) == 8000
    assert segment_length(1000.0, 3.0) == 334  # ceil(333.3) → 334, even (derived)
    assert 8000.0 / segment_length(8000.0, 0.7) <= 0.7


@pytest.mark.parametrize("noverlap", [50, 30, 0])  # hop divides the segment, does not, no overlap
def test_segment_means_of_the_auxiliary_series_on_both_paths(noverlap):
    # reference: the plain mean over each segment's rows (derived)
    aux = np.random.default_rng(7).normal(size=(1000, 2))
    stream = SegmentStream(500.0, 100, noverlap)
    (segs,) = list(stream.feed(0, np.zeros((1000, 1)), aux))
    hop = 100 - noverlap
    expect = np.array([aux[s:s + 100].mean(axis=0) for s in range(0, 1000 - 100 + 1, hop)]).T
    np.testing.assert_allclose(segs.aux_mean, expect, rtol=1e-12, atol=1e-15)
