"""Tests of clashcheck.model.excitation: orders, the sensor fold and alias images."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from clashcheck.errors import InputError
from clashcheck.model.excitation import (
    DEFAULT_WEIGHTS,
    FAMILIES,
    Order,
    Sensor,
    alias_images,
    antialias_gain,
    build_orders,
    fold,
    nyquist_zone,
)
from clashcheck.model.motor import Motor
from clashcheck.model.propeller import Propeller

PROPS = settings(max_examples=80, deadline=None, derandomize=True)


# --- §9 the fold ------------------------------------------------------------------


@pytest.mark.parametrize(
    "f, fs, apparent",
    [
        # REFERENCES.md §9 check values; Oppenheim & Schafer 3rd ed. §4.2, Lyons 3rd ed. §2.1 (memory)
        (1400.0, 1000.0, 400.0),
        (1700.0, 1000.0, 300.0),
        (2250.0, 1000.0, 250.0),
        (14000.0, 8000.0, 2000.0),
    ],
)
def test_alias_table(f, fs, apparent):
    assert fold(f, fs) == pytest.approx(apparent, abs=1e-9)


def test_fold_is_vectorised():
    out = fold(np.array([1400.0, 1700.0, 2250.0]), 1000.0)
    assert out == pytest.approx([400.0, 300.0, 250.0])


@PROPS
@given(st.integers(200, 16000), st.floats(0.0, 20.0))
def test_fold_matches_numpy_fft_peak(fs, ratio):
    # reference: numpy FFT. Sample a tone at fs; the peak bin of np.fft.rfft sits at the
    # apparent frequency within one bin (REFERENCES.md §9 cross-check)
    f = ratio * fs
    n = 4096
    t = np.arange(n) / fs
    x = np.cos(2 * np.pi * f * t + 0.3) * np.hanning(n)
    spectrum = np.abs(np.fft.rfft(x))
    freqs = np.fft.rfftfreq(n, 1.0 / fs)
    peak_hz = freqs[int(np.argmax(spectrum))]
    assert abs(peak_hz - fold(f, float(fs))) <= fs / n * 1.0001


@PROPS
@given(st.floats(0.0, 1e6), st.floats(10.0, 1e5))
def test_folded_frequency_lies_in_0_to_nyquist(f, fs):
    # REFERENCES.md §9: f_app = |f − fs·round(f/fs)| ∈ [0, fs/2]
    out = fold(f, fs)
    assert 0.0 <= out <= fs / 2 + 1e-12 * max(f, fs)


@PROPS
@given(st.lists(st.floats(0.0, 1e6), min_size=1, max_size=20), st.floats(10.0, 1e5))
def test_folded_array_lies_in_0_to_nyquist(freqs, fs):
    out = np.asarray(fold(np.array(freqs), fs))
    assert np.all(out >= 0.0)
    assert np.all(out <= fs / 2 + 1e-12 * np.maximum(np.array(freqs), fs))


@PROPS
@given(st.floats(0.0, 5e3), st.floats(100.0, 1e4), st.integers(1, 20))
def test_fold_is_periodic_and_even(f, fs, k):
    # derived from the definition: a tone at f, k·fs + f and k·fs − f give the same samples
    assert fold(k * fs + f, fs) == pytest.approx(fold(f, fs), abs=1e-9 * k * fs)
    assert fold(k * fs - f, fs) == pytest.approx(fold(f, fs), abs=1e-9 * k * fs)


def test_nyquist_zone():
    # zone k = floor(f / (fs/2)) (excitation.nyquist_zone docstring)
    assert nyquist_zone(300.0, 1000.0) == 0
    assert nyquist_zone(700.0, 1000.0) == 1
    assert nyquist_zone(1400.0, 1000.0) == 2
    assert list(nyquist_zone(np.array([100.0, 2600.0]), 1000.0)) == [0, 5]


@PROPS
@given(
    st.floats(100.0, 1e4),
    st.floats(0.0, 0.5),
    st.floats(0.0, 0.5),
    st.floats(1.0, 8.0),
    st.floats(0.0, 1.0),
)
def test_alias_images_are_exactly_the_folds_into_the_band(fs, a, b, span, probe):
    # derived: f > fs/2 folds into [lo, hi] ⇔ f lies in one of the images; checked at a probe frequency
    lo, hi = sorted((a * fs, b * fs))
    max_hz = span * fs
    images = alias_images(lo, hi, fs, max_hz)
    f = fs / 2 + probe * (max_hz - fs / 2)
    inside_image = any(x <= f <= y for _, x, y in images)
    app = fold(f, fs)
    tol = 1e-9 * fs
    if lo + tol < app < hi - tol:
        assert inside_image
    elif app < lo - tol or app > hi + tol:
        assert not inside_image
    for zone, x, y in images:
        assert x <= max_hz
        if y - x > tol:  # a zero-width band at a zone edge has no single zone
            assert nyquist_zone(0.5 * (x + y), fs) == zone
        assert lo - tol <= fold(0.5 * (x + y), fs) <= hi + tol


def test_alias_images_docstring_case():
    # derived: fs 1 kHz, band 300–400 Hz → zone 1 600–700 Hz, zone 2 1300–1400 Hz
    assert alias_images(300.0, 400.0, 1000.0, 1500.0) == [(1, 600.0, 700.0), (2, 1300.0, 1400.0)]


@pytest.mark.parametrize("order", [1, 2, 4])
@pytest.mark.parametrize("f", [10.0, 500.0, 1000.0, 3000.0, 20000.0])
def test_antialias_gain_against_scipy_butterworth(order, f):
    # reference: scipy.signal.butter (analog) and freqs; |H| = 1/√(1 + (f/fc)^(2n))
    from scipy.signal import butter, freqs

    fc = 1000.0
    b, a = butter(order, 2 * np.pi * fc, analog=True)
    _, h = freqs(b, a, worN=[2 * np.pi * f])
    assert antialias_gain(f, fc, order) == pytest.approx(abs(h[0]), rel=1e-9)


def test_no_filter_has_unit_gain():
    assert antialias_gain(5000.0, None) == 1.0
    assert Sensor(8000.0).gain(12000.0) == 1.0
    assert Sensor(8000.0).nyquist_hz == 4000.0


# --- orders -----------------------------------------------------------------------


def test_build_orders_families():
    # DESIGN.md vocabulary: rotor 1×, 2×; blade B×, 2B×; electrical poles/2; commutation 3·poles;
    # cogging LCM(slots, poles) (REFERENCES.md §4)
    orders = build_orders(Motor(30.0, 14, 12), Propeller(0.127, 3))
    got = {(o.family, o.order) for o in orders}
    assert got == {
        ("rotor", 1.0), ("rotor", 2.0), ("blade", 3.0), ("blade", 6.0),
        ("electrical", 7.0), ("commutation", 42.0), ("cogging", 84.0),
    }
    assert [o.family for o in orders] == sorted((o.family for o in orders), key=FAMILIES.index)
    keys = ("rotor-1", "rotor-2", "blade-1", "blade-2", "electrical-1", "commutation-1", "cogging-1")
    assert [o.weight for o in orders] == [DEFAULT_WEIGHTS[k] for k in keys]
    assert all(o.weight_source == "default" for o in orders)


def test_families_can_be_switched_off_and_custom_orders_added():
    orders = build_orders(Motor(30.0, 12, 9), Propeller(0.127, 2), families=("blade",),
                          custom=[(1.5, "belt", 0.7), (4.0, "", 0.2)])
    assert [(o.family, o.order) for o in orders] == [("blade", 2.0), ("blade", 4.0), ("custom", 1.5),
                                                     ("custom", 4.0)]
    assert orders[2].label == "belt" and orders[2].weight == 0.7 and orders[2].weight_source == "stated"
    assert orders[3].label  # a label is made up when none is given


def test_measured_strength_replaces_default_weight():
    orders = build_orders(Motor(30.0, 14, 12), Propeller(0.127, 3), measured=[(1.0, "rotor", 0.9)])
    first = orders[0]
    assert (first.order, first.weight, first.weight_source) == (1.0, 0.9, "measured")
    assert orders[1].weight_source == "default"


def test_unknown_family_is_refused():
    with pytest.raises(InputError, match="check.families"):
        build_orders(Motor(30.0, 14, 12), Propeller(0.127, 3), families=("rotor", "gearbox"))


@pytest.mark.parametrize("kwargs", [{"order": 0.0}, {"order": math.inf}, {"order": 1.0, "weight": -1.0}])
def test_order_refusals(kwargs):
    with pytest.raises(InputError):
        Order(family="custom", label="x", **kwargs)


@pytest.mark.parametrize(
    "kwargs, field",
    [
        ({"sample_rate_hz": 1.0}, "sensor.sample_rate"),
        ({"sample_rate_hz": 8000.0, "antialias_cutoff_hz": 0.0}, "sensor.antialias_cutoff"),
        ({"sample_rate_hz": 8000.0, "antialias_order": 0}, "sensor.antialias_order"),
        ({"sample_rate_hz": 8000.0, "antialias_order": 9}, "sensor.antialias_order"),
    ],
)
def test_sensor_refusals(kwargs, field):
    with pytest.raises(InputError) as info:
        Sensor(**kwargs)
    assert info.value.field == field
