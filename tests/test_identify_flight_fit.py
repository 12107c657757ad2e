"""The SDOF band fit of flight damping and the coverage of its interval.

References: the expected Welch periodogram of an SDOF response to white noise
(``stationary_model``) is checked against scipy elsewhere
(``test_identify_damping.py``); here the fit must return the ζ it was given on
that exact shape, and on recordings from ``tests/flight_gen.py`` (an
independent generator) its 90 % interval must hold the true ζ about as often
as it says.
"""

from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np
import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))
from flight_gen import Flight, write_npy  # noqa: E402

from clashcheck.identify import (  # noqa: E402
    Columns,
    FlightSettings,
    analyse_flight,
    open_recording,
)
from clashcheck.identify.damping import stationary_model  # noqa: E402
from clashcheck.identify.flight_fit import LEVEL, fit_band  # noqa: E402
from clashcheck.identify.spectra import hann_periodic  # noqa: E402

FS, NPER = 2000.0, 2000


def _grid():
    model = stationary_model(FS, hann_periodic(NPER), 2 * NPER)
    freq = np.fft.rfftfreq(2 * NPER, 1 / FS)
    return freq, model


@pytest.mark.parametrize("fn, zeta", [(150.0, 0.01), (330.0, 0.03), (610.0, 0.07)])
def test_exact_shape_gives_its_damping(fn, zeta):
    freq, model = _grid()
    power = 5.0 * model(fn, zeta) / model(fn, zeta).max() + 1e-4  # plus a flat floor
    fit = fit_band(freq, power, fn, zeta * 1.4, model)  # a start 40 % off
    assert fit is not None
    assert fit.damping == pytest.approx(zeta, rel=0.02)
    assert fit.frequency_hz == pytest.approx(fn, rel=0.002)
    assert fit.damping_low < zeta < fit.damping_high


def test_a_slope_across_the_band_is_taken_up():
    # a 2nd-order low-pass at 150 Hz over a mode at 120 Hz: |H|² of a Butterworth
    # (derived: 1/(1 + (f/fc)^4))
    freq, model = _grid()
    lp = 1.0 / (1.0 + (freq / 150.0) ** 4)
    power = model(120.0, 0.02) / model(120.0, 0.02).max() * lp + 1e-5
    fit = fit_band(freq, power, 120.0, 0.02, model)
    assert fit.damping == pytest.approx(0.02, rel=0.05)


def test_too_few_bins_gives_none():
    freq, model = _grid()
    assert fit_band(freq[:8], np.ones(8), freq[4], 0.01, model) is None


def test_interval_widens_with_noise():
    freq, model = _grid()
    rng = np.random.default_rng(1)
    clean = model(300.0, 0.03) / model(300.0, 0.03).max() + 1e-3
    quiet = fit_band(freq, clean * rng.gamma(400, 1 / 400, clean.size), 300.0, 0.03, model)
    noisy = fit_band(freq, clean * rng.gamma(4, 1 / 4, clean.size), 300.0, 0.03, model)
    assert noisy.log_se > quiet.log_se


def test_coverage_on_generated_flights(tmp_path):
    # 6 recordings, 2 modes each (ζ from 0.012 to 0.06), four motors ±1.5 % apart,
    # five order lines; the share of true ζ inside the 90 % interval must be at
    # least 0.9 × 90 % (issue 11 §6); with 12 modes that allows one miss
    orders = [(1, (3.0, 3.0, 1.0)), (2, (1.0, 1.0, 0.3)), (3, (6.0, 5.0, 2.0)),
              (6, (2.0, 2.0, 1.0)), (7, (2.2, 2.2, 1.0))]
    cases = [((140.0, 0.012), (420.0, 0.04)), ((95.0, 0.03), (300.0, 0.015)),
             ((180.0, 0.05), (560.0, 0.02)), ((120.0, 0.02), (380.0, 0.06)),
             ((210.0, 0.025), (650.0, 0.035)), ((160.0, 0.04), (480.0, 0.012))]
    inside = total = 0
    for seed, pair in enumerate(cases):
        modes = [(f, z, (1.0, 0.4, 0.2)) if i == 0 else (f, z, (0.2, 0.4, 1.0))
                 for i, (f, z) in enumerate(pair)]
        spec = Flight(fs=3000.0, duration_s=40.0, curve=lambda u: 30.0 + 150.0 * np.asarray(u),
                      orders=orders, modes=modes, spread=(-0.015, -0.005, 0.005, 0.015),
                      seed=seed)
        path = write_npy(tmp_path / f"c{seed}.npy", spec)
        res = analyse_flight(open_recording(path, Columns(
            signals=("gx", "gy", "gz"), time_column="t",
            rpm_columns=("rpm1", "rpm2", "rpm3", "rpm4"))), FlightSettings(blades=3, poles=14))
        for fn, z, _p in modes:
            got = [m for m in res.modes if abs(m.frequency_hz - fn) / fn < 0.02]
            assert got, (fn, z)
            total += 1
            inside += got[0].damping_low <= z <= got[0].damping_high
    assert inside / total >= 0.9 * LEVEL - 1e-9
    assert math.isclose(LEVEL, 0.9)
