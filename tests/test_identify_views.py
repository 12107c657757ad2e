"""Tests for clashcheck.identify.views: the bounded timeline and the decay views."""

from __future__ import annotations

import numpy as np
import pytest

from clashcheck.identify.views import MAX_COLUMNS, Timeline, TapView, decay_views


def test_timeline_stays_bounded_and_keeps_the_mean():
    rng = np.random.default_rng(0)
    n, nf, hop = 3 * MAX_COLUMNS + 7, 5, 0.25
    psd = rng.random((n, nf))
    aux = np.linspace(10.0, 20.0, n)
    tl = Timeline(hop)
    for a, b in ((0, 100), (100, 101), (101, n)):          # fed in uneven blocks, as segments arrive
        tl.add(psd[a:b], aux[a:b])
    times, spec, trace = tl.arrays()
    assert spec.shape[0] <= MAX_COLUMNS and spec.shape[1] == nf
    fill = np.asarray(tl.filled, float)
    # derived: every segment lands in exactly one column, so the weighted column means sum to the total
    np.testing.assert_allclose((spec * fill[:, None]).sum(axis=0), psd.sum(axis=0), rtol=1e-12)
    np.testing.assert_allclose((trace * fill).sum(), aux.sum(), rtol=1e-12)
    assert times[0] == pytest.approx(0.5 * fill[0] * hop) and times[-1] == pytest.approx((n - 0.5 * fill[-1]) * hop)
    assert np.all(np.diff(times) > 0)


def test_empty_timeline():
    t, s, a = Timeline(0.1).arrays()
    assert t.size == 0 and s.shape == (0, 0) and a.size == 0


def test_decay_views_on_a_stated_friction_decay():
    # stated: 200 Hz mode, ζ_v = 0.004 plus Coulomb friction, drop D = 0.002 per cycle (envelope
    # dA/dt = −ζωA − D f; Feeny & Liang 1996), three taps of different strength, noise 1e-4
    from dataclasses import dataclass

    fs, f, zv, drop = 8000.0, 200.0, 0.004, 0.002
    rng = np.random.default_rng(4)
    dt = 1 / fs
    x = [1e-4 * rng.standard_normal(int(0.3 * fs))]
    onsets = []
    for a0 in (1.0, 0.6, 0.35):
        n = int(1.2 * fs)
        amp = np.empty(n)
        amp[0] = a0
        for i in range(1, n):
            amp[i] = max(amp[i - 1] - (zv * 2 * np.pi * f * amp[i - 1] + drop * f) * dt, 0.0)
        onsets.append(sum(len(p) for p in x))
        x.append(amp * np.sin(2 * np.pi * f * np.arange(n) / fs) + 1e-4 * rng.standard_normal(n))
    sig = np.concatenate(x)

    @dataclass
    class _Mode:
        name: str
        frequency_hz: float
        amplitude_damping: object

    @dataclass
    class _Amp:
        model: str = "friction-viscous"

    view = TapView(np.zeros(2), np.zeros(2), np.zeros(2), None, fs, sig[:, None], np.array(onsets), (), 0)
    (d,) = decay_views(view, [_Mode("mode 1", f, _Amp())])
    assert set(d.fitted) == {"viscous", "friction-viscous"} and d.chosen == "friction-viscous"
    zv_fit, drop_fit = d.params["friction-viscous"]
    assert drop_fit == pytest.approx(drop, rel=0.25) and zv_fit == pytest.approx(zv, abs=0.002)
    for (t, a), curve in zip(d.envelopes, d.fitted["friction-viscous"]):
        assert np.max(np.abs(curve - a)) < 0.05 * a[0]            # the fitted decay follows the envelope
    assert decay_views(view, [_Mode("mode 1", f, None)]) == ()
