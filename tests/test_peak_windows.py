"""Windows where the rotor rate peaks below full throttle (issue 10 item 6), against scipy root finders.

The reference solves the steady state of DESIGN.md step 5,

    d·V = Ke·ω + I(ω)·(R_m + N·d²·R_pack),   I = I0 + k·ω²/Kt,

with ``scipy.optimize.brentq`` and ``minimize_scalar`` directly on that
equation (not on the closed forms under test): for a given throttle, ω is the
root of the residual in ω; for a given ω, the two throttles are the roots of
the residual in d on either side of the parabola's vertex
d* = V/(2·N·R_pack·I) (derived); the peak is the maximum of ω(d).

Build (as the issue asks): 6 lipo cells of 12 mΩ, 4 motors of 0.1 Ω, a
10-inch propeller, so the rate peaks near 82 % throttle on a full pack
(158.4 Hz) and falls to 156.5 Hz at full throttle.
"""

from __future__ import annotations

import math
import tomllib

import numpy as np
import pytest

from clashcheck.analysis.clash import check_build
from clashcheck.inputs.buildfile import parse_build
from clashcheck.report.check import note_texts

scipy_optimize = pytest.importorskip("scipy.optimize")

TEXT = """
name = "sagging pack"
[frame]
motors = 4
mass = "1200 g"
[[frame.modes]]
name = "holds the peak"
frequency = "187 Hz"
damping = 0.03
[[frame.modes]]
name = "below the peak"
frequency = "136 Hz"
damping = 0.03
[[frame.modes]]
name = "seen by its fold"
frequency = "290 Hz"
damping = 0.03
[motor]
kv = "1950 rpm/V"
poles = 14
slots = 12
resistance = "100 mohm"
no_load_current = "1 A"
[prop]
diameter = "10 in"
blades = 2
thrust_coefficient = 0.11
power_coefficient = 0.05
[battery]
cells = 6
cell_resistance = "12 mohm"
[sensor]
sample_rate = "600 Hz"
[flight]
idle = "4 %"
cruise = "60 %"
[check]
pack_states = ["full"]
families = ["rotor"]
"""


@pytest.fixture(scope="module")
def case():
    build = parse_build(tomllib.loads(TEXT), path="sag.toml")
    p = build.drive().parameters
    v = build.pack.voltage("full")
    return build, p, v


def _omega_at(d, p, v):
    """ω [rad/s] at throttle d: brentq on the steady-state residual (derived from DESIGN.md step 5)."""
    def residual(w):
        current = p.i0 + p.kq * w * w / p.ke
        return d * v - p.ke * w - current * (p.r_m + p.n_motors * d * d * p.r_pack)
    top = d * v / p.ke
    if residual(0.0) <= 0:
        return 0.0
    return scipy_optimize.brentq(residual, 0.0, top, xtol=1e-13, rtol=1e-15)


def _throttles_at(rotor_hz, p, v):
    """Both throttles giving rotor rate ``rotor_hz``: brentq on the residual in d, either side of its vertex."""
    w = 2 * math.pi * rotor_hz
    current = p.i0 + p.kq * w * w / p.ke

    def residual(d):
        return p.n_motors * p.r_pack * current * d * d - v * d + p.ke * w + current * p.r_m
    vertex = v / (2 * p.n_motors * p.r_pack * current)
    if residual(vertex) > 0:
        return math.inf, math.inf            # above the peak: no throttle reaches it
    rise = scipy_optimize.brentq(residual, 0.0, vertex, xtol=1e-14)
    fall = scipy_optimize.brentq(residual, vertex, 1e3 * vertex + 10, xtol=1e-14)
    return rise, fall


def _peak(p, v):
    res = scipy_optimize.minimize_scalar(lambda d: -_omega_at(d, p, v), bounds=(0.3, 1.0), method="bounded",
                                         options={"xatol": 1e-12})
    return res.x, -res.fun / (2 * math.pi)


def test_the_rate_peaks_below_full_throttle(case):
    from clashcheck.model.drive import peak_rotor_rad_s

    _build, p, v = case
    d_peak, f_peak = _peak(p, v)
    assert 0.7 < d_peak < 0.95
    omega, d = peak_rotor_rad_s(v, **p.as_kwargs())
    assert float(omega) / (2 * math.pi) == pytest.approx(f_peak, rel=1e-9)
    assert float(d) == pytest.approx(d_peak, abs=1e-6)


def test_windows_on_both_sides_of_the_peak_match_a_root_finder(case):
    build, p, v = case
    result = check_build(build)
    d_peak, f_peak = _peak(p, v)
    sm = result.modes[0].required_margin
    # mode 187 Hz: band 157.3–216.7 Hz holds the 158.4 Hz peak, and its low edge lies above the rate
    # at full throttle → one 1× window from d↑(157.3) to d↓(157.3), ending below full throttle
    w150 = [w for w in result.windows if w.mode == "holds the peak" and w.order == 1.0 and not w.aliased]
    assert len(w150) == 1
    lo_hz = 187.0 * (1 - sm)
    rise, fall = _throttles_at(lo_hz, p, v)
    assert lo_hz < f_peak < 187.0 * (1 + sm)
    assert w150[0].throttle_low == pytest.approx(rise, abs=1e-6)
    assert w150[0].throttle_high == pytest.approx(fall, abs=1e-6) and fall < 1.0
    assert w150[0].excitation_high_hz == pytest.approx(f_peak, rel=1e-6)     # not below the low edge
    assert w150[0].excitation_low_hz == pytest.approx(lo_hz, rel=1e-6)
    # mode 136 Hz: band 114–157.6 Hz tops out between the rate at full throttle (156.5 Hz) and the
    # peak → a rising 1× window and a falling one from d↓(157.6) to full throttle
    w136 = sorted((w for w in result.windows if w.mode == "below the peak" and w.order == 1.0 and not w.aliased),
                  key=lambda w: w.throttle_low)
    assert [w.side for w in w136] == ["rising", "falling"]
    r_lo, f_lo = _throttles_at(136.0 * (1 - sm), p, v)
    r_hi, f_hi = _throttles_at(136.0 * (1 + sm), p, v)
    assert f_lo > 1.0 and d_peak < f_hi < 1.0
    assert (w136[0].throttle_low, w136[0].throttle_high) == pytest.approx((r_lo, r_hi), abs=1e-6)
    assert (w136[1].throttle_low, w136[1].throttle_high) == pytest.approx((f_hi, 1.0), abs=1e-6)


def test_alias_images_are_sought_up_to_the_peak_rate(case):
    # every aliased 2× window the check finds sits where the fold of 2 × ω(d)/2π is within the margin;
    # and images whose true band lies between the rate at full throttle and the peak are found
    build, p, v = case
    result = check_build(build)
    fs = build.sensor.sample_rate_hz
    top_at_max = _omega_at(1.0, p, v) / (2 * math.pi)
    _d, f_peak = _peak(p, v)
    assert f_peak > top_at_max
    aliased = [w for w in result.windows if w.aliased and w.order == 2.0]
    assert aliased
    for w in aliased:
        for d in np.linspace(w.throttle_low, w.throttle_high, 7):
            f = 2.0 * _omega_at(float(d), p, v) / (2 * math.pi)
            seen = abs(f - fs * round(f / fs))     # REFERENCES.md §9
            mode = next(m for m in result.modes if m.mode.name == w.mode)
            assert abs(seen - mode.mode.frequency_hz) / mode.mode.frequency_hz <= mode.required_margin + 1e-6
    assert any(w.excitation_high_hz > 2.0 * top_at_max for w in aliased)


def test_note_names_the_peak(case):
    build, _p, _v = case
    assert any("peaks at" in n and "both sides" in n for n in note_texts(check_build(build)))
