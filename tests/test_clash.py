"""Tests of clashcheck.analysis.clash: exact windows, danger ranges, margins and the verdict.

The window property tests check the engine against the definitions it implements
(DESIGN.md physics steps 8–10): a window is the throttle set where an order's
frequency (or its fold at the sensor) lies within the required margin of a mode.
They recompute that set on a dense throttle grid, independently of the closed
forms, and check the edges sit at exactly the required margin.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import assume, event, given, settings
from hypothesis import strategies as st

from clashcheck.analysis.clash import (
    VERDICTS,
    analyse,
    check_build,
    find_windows,
    merge_windows,
    operating_bands,
    worse_verdict,
)
from clashcheck.inputs.buildfile import parse_build
from clashcheck.inputs.catalog import load_catalog
from clashcheck.model.battery import PACK_STATES, Chemistry, Pack
from clashcheck.model.drive import Drive
from clashcheck.model.excitation import Sensor, build_orders, fold
from clashcheck.model.modes import MarginPolicy, Mode, relative_margin
from clashcheck.model.motor import Motor
from clashcheck.model.propeller import Propeller
from clashcheck.report.check import note_texts

PROPS = settings(max_examples=80, deadline=None, derandomize=True)
LIPO = Chemistry("lipo", 4.20, 3.70, 3.50)
INCH = 0.0254


def make_drive(kv_rpm=1950.0, cells=6, r_m=0.045, i0=1.1, cp=0.06, ct=0.12, d_in=5.1, r_cell=0.003,
               poles=14, slots=12, blades=3, n=4):
    motor = Motor(kv_rpm / 60, poles, slots, r_m, i0)
    prop = Propeller(d_in * INCH, blades, ct, cp)
    return Drive(motor, prop, Pack(cells, LIPO, r_cell), n, 1.225)


@st.composite
def scenarios(draw):
    """A drive, a mode, an order, a pack state and limits; realistic, monotonic drives only."""
    drive = make_drive(
        kv_rpm=draw(st.floats(800.0, 9000.0)),
        cells=draw(st.integers(1, 8)),
        r_m=draw(st.floats(0.005, 0.3)),
        i0=draw(st.floats(0.0, 2.0)),
        cp=draw(st.floats(0.02, 0.12)),
        d_in=draw(st.floats(2.0, 10.0)),
        r_cell=draw(st.floats(0.0, 0.01)),
        poles=draw(st.sampled_from([12, 14])),
        slots=draw(st.sampled_from([9, 12])),
        blades=draw(st.integers(2, 5)),
    )
    state = draw(st.sampled_from(PACK_STATES))
    top = float(drive.rotor_hz(1.0, state))
    orders = build_orders(drive.motor, drive.prop)
    order = draw(st.sampled_from(orders))
    sensor = None
    if draw(st.booleans()):
        # a sample rate the order's sweep passes well beyond, so its folds come into play
        sensor = Sensor(max(100.0, order.order * top / draw(st.floats(0.6, 6.0))))
    if sensor is not None and draw(st.booleans()):
        f_m = sensor.nyquist_hz * draw(st.floats(0.05, 0.9))  # a mode the fold can reach
    else:
        f_m = order.order * top * draw(st.floats(0.02, 1.3))  # a mode near the order's own sweep
    mode = Mode("m", f_m, damping=draw(st.floats(0.005, 0.3)))
    if draw(st.booleans()):
        width = draw(st.floats(0.0, 0.2))
        mode = Mode("m", f_m, damping=mode.damping, frequency_low_hz=f_m * (1 - width),
                    frequency_high_hz=f_m * (1 + width / 2), origin="estimated")
    policy = draw(st.sampled_from([MarginPolicy(), MarginPolicy("fixed", 0.1), MarginPolicy("half-power")]))
    idle = draw(st.floats(0.0, 0.1))
    throttle_max = draw(st.floats(0.7, 1.0))
    return drive, mode, order, state, policy, idle, throttle_max, sensor


def _band(drive, state, idle, cruise=0.55, mass=0.69):
    return operating_bands(drive, mass, [state], idle, cruise)[0]


def _monotonic(drive, state, idle, throttle_max, grid):
    rate = drive.rotor_hz(grid, state)
    return bool(np.all(np.diff(rate) > 0)) and float(drive.rotor_hz(idle, state)) > 0


@PROPS
@given(scenarios())
def test_window_edges_sit_at_the_required_margin(case):
    # DESIGN.md step 10: the band f_m(1 ± SM) maps to exact throttle edges
    drive, mode, order, state, policy, idle, throttle_max, sensor = case
    band = _band(drive, state, idle)
    sm = policy.required_margin(mode)
    windows = find_windows(drive, mode, order, band, policy, idle, throttle_max, sensor)
    event(f"windows found: {bool(windows)}; aliased: {any(w.aliased for w in windows)}")
    for w in windows:
        assert idle <= w.throttle_low < w.throttle_high <= throttle_max
        assert w.required_margin == sm
        for edge in (w.throttle_low, w.throttle_high):
            if min(abs(edge - idle), abs(edge - throttle_max)) < 1e-12:
                continue  # clipped by idle or max
            f = order.order * float(drive.rotor_hz(edge, state))
            if w.aliased:
                f = fold(f, sensor.sample_rate_hz)
                if min(f, sensor.nyquist_hz - f) < 1e-6 * sensor.nyquist_hz:
                    continue  # the band was clipped at 0 or at Nyquist
            assert float(relative_margin(f, mode)) == pytest.approx(sm, rel=1e-9, abs=1e-12)


@PROPS
@given(scenarios())
def test_windows_are_exactly_the_throttles_within_the_margin(case):
    # DESIGN.md steps 8–10 by brute force: on a dense throttle grid, the points whose order
    # frequency (or fold above Nyquist) lies inside the margin are exactly the windowed points
    drive, mode, order, state, policy, idle, throttle_max, sensor = case
    grid = np.linspace(idle, throttle_max, 1201)
    assume(_monotonic(drive, state, idle, throttle_max, grid))
    band = _band(drive, state, idle)
    sm = policy.required_margin(mode)
    windows = find_windows(drive, mode, order, band, policy, idle, throttle_max, sensor)
    event(f"windows found: {bool(windows)}; aliased: {any(w.aliased for w in windows)}")
    f = order.order * drive.rotor_hz(grid, state)
    direct = np.asarray(relative_margin(f, mode))
    in_direct = np.zeros(grid.shape, bool)
    in_alias = np.zeros(grid.shape, bool)
    for w in windows:
        inside = (grid >= w.throttle_low) & (grid <= w.throttle_high)
        if w.aliased:
            in_alias |= inside
        else:
            in_direct |= inside
    tol = 1e-7
    assert np.all(in_direct[direct < sm - tol])
    assert not np.any(in_direct[direct > sm + tol])
    if sensor is not None:
        above = f > sensor.nyquist_hz * (1 + 1e-9)
        seen = np.asarray(relative_margin(fold(f, sensor.sample_rate_hz), mode))
        assert np.all(in_alias[above & (seen < sm - tol)])
        assert not np.any(in_alias[(seen > sm + tol) | (f < sensor.nyquist_hz * (1 - 1e-9))])
    else:
        assert not in_alias.any()


@PROPS
@given(scenarios())
def test_window_figures(case):
    drive, mode, order, state, policy, idle, throttle_max, sensor = case
    band = _band(drive, state, idle)
    zeta, _ = policy.damping_of(mode)
    for w in find_windows(drive, mode, order, band, policy, idle, throttle_max, sensor):
        # crossing: the order (or its fold) meets the mode's nominal frequency (DESIGN.md vocabulary)
        if w.crossing_throttle is not None:
            f = order.order * float(drive.rotor_hz(w.crossing_throttle, state))
            if w.aliased:
                f = fold(f, sensor.sample_rate_hz)
            assert f == pytest.approx(mode.frequency_hz, rel=1e-9)
            assert idle <= w.crossing_throttle <= throttle_max
        # margin and SDOF magnification at hover, r = f/f_m (REFERENCES.md §2, Rao §3.4)
        if band.hover.can_hover:
            f_hover = order.order * band.hover.rotor_hz
            if w.aliased:
                f_hover = fold(f_hover, sensor.sample_rate_hz)
            assert w.margin_at_hover == pytest.approx(float(relative_margin(f_hover, mode)), rel=1e-12,
                                                      abs=1e-15)
            r = f_hover / mode.frequency_hz
            assert w.magnification_at_hover == pytest.approx(1 / math.sqrt((1 - r**2) ** 2 + (2 * zeta * r) ** 2),
                                                             rel=1e-9)
        # touching the operating band means overlapping [hover, cruise]
        if band.flies:
            overlaps = w.throttle_low <= band.throttle_high and band.throttle_low <= w.throttle_high
            assert w.touches_operating_band == overlaps
        assert w.aliased == (w.nyquist_zone > 0)


@PROPS
@given(scenarios())
def test_worst_margin_in_band_by_brute_force(case):
    drive, mode, order, state, policy, idle, throttle_max, sensor = case
    band = _band(drive, state, idle)
    assume(band.flies)
    grid = np.linspace(band.throttle_low, band.throttle_high, 2001)
    assume(_monotonic(drive, state, idle, throttle_max, grid))
    f = order.order * drive.rotor_hz(grid, state)
    for w in find_windows(drive, mode, order, band, policy, idle, throttle_max, sensor):
        seen = fold(f, sensor.sample_rate_hz) if w.aliased else f
        brute = float(np.min(relative_margin(seen, mode)))
        # the exact minimum is ≤ any grid value and close to the smallest one
        assert w.worst_margin_in_band <= brute + 1e-12
        step = float(np.max(np.abs(np.diff(seen)))) / mode.frequency_low_hz
        assert w.worst_margin_in_band >= brute - step - 1e-12


def test_no_margin_means_no_window():
    # REFERENCES.md §1: AF < 2.5 (ζ > 0.2) needs no margin, so the band f_m(1 ± 0) is empty
    drive = make_drive()
    mode = Mode("soft", 180.0, damping=0.3)
    band = _band(drive, "nominal", 0.04)
    order = build_orders(drive.motor, drive.prop)[0]
    assert find_windows(drive, mode, order, band, MarginPolicy(), 0.04, 1.0) == []


# --- merging ------------------------------------------------------------------------


def _result(modes, cruise=0.55, mass=0.69, families=("rotor", "blade"), sensor=None, drive=None, only=None,
            **kw):
    drive = drive or make_drive()
    orders = build_orders(drive.motor, drive.prop, families)
    if only is not None:
        orders = tuple(o for o in orders if o.order in only)
    return analyse(drive, modes, orders, MarginPolicy(), mass_kg=mass, pack_states=PACK_STATES, idle=0.04,
                   throttle_max=1.0, cruise=cruise, sensor=sensor, **kw)


def test_merged_ranges_cover_every_window_and_do_not_overlap():
    result = _result([Mode("a", 186.0, damping=0.03), Mode("b", 420.0, damping=0.04)],
                     families=("rotor", "blade", "electrical"))
    for mr in result.modes:
        ranges = mr.danger_ranges
        windows = [w for w in result.windows if w.mode == mr.mode.name]
        assert ranges and windows
        for a, b in zip(ranges, ranges[1:]):
            assert a.throttle_high < b.throttle_low
        for w in windows:
            home = [r for r in ranges if r.throttle_low <= w.throttle_low and w.throttle_high <= r.throttle_high]
            assert len(home) == 1
            assert w.label in home[0].orders
            assert w.pack_state in home[0].pack_states
        assert merge_windows(mr.mode.name, windows) == ranges


def test_merge_windows_of_nothing():
    assert merge_windows("m", []) == ()


# --- verdict ------------------------------------------------------------------------


def test_verdict_order():
    # DESIGN.md vocabulary: clear < watch < clash
    assert VERDICTS == ("clear", "watch", "clash")
    assert worse_verdict("clear", "watch") == "watch"
    assert worse_verdict("clash", "watch") == "clash"
    assert worse_verdict("clear", "clear") == "clear"


def test_clear_when_no_window_between_idle_and_max():
    drive = make_drive()
    top = float(drive.rotor_hz(1.0, "full"))
    result = _result([Mode("high", 4 * top, damping=0.03)], families=("rotor",), drive=drive)
    assert result.windows == ()
    assert result.verdict == "clear"
    assert result.modes[0].verdict == "clear"


def test_watch_when_windows_stay_outside_the_operating_band():
    drive = make_drive()
    # a mode met by 1× only near full throttle, far above cruise (55 %) in every pack state
    f_m = float(drive.rotor_hz(0.95, "empty"))
    result = _result([Mode("high", f_m, damping=0.05)], families=("rotor",), drive=drive, only=(1.0,))
    assert result.windows
    assert not any(w.touches_operating_band for w in result.windows)
    assert result.verdict == "watch"


def test_clash_when_hover_sits_inside_a_margin():
    drive = make_drive()
    hover = drive.hover(0.69, "nominal")
    result = _result([Mode("on hover", hover.rotor_hz, damping=0.03)], families=("rotor",), drive=drive)
    assert result.verdict == "clash"
    w = next(w for w in result.windows if w.pack_state == "nominal" and w.order == 1.0)
    assert w.throttle_low < hover.throttle < w.throttle_high
    assert w.margin_at_hover == pytest.approx(0.0, abs=1e-9)
    assert w.magnification_at_hover == pytest.approx(1 / (2 * 0.03), rel=1e-6)  # M(1) = 1/(2ζ), Rao §3.4
    hover_margin = next(m for m in result.modes[0].margins if m.point == "hover" and m.pack_state == "nominal")
    assert not hover_margin.enough


def test_touching_windows_come_first():
    result = _result([Mode("a", 186.0, damping=0.03), Mode("b", 900.0, damping=0.03)])
    touches = [w.touches_operating_band for w in result.windows]
    assert touches == sorted(touches, reverse=True)


def test_margins_at_hover_and_cruise_are_the_nearest_order():
    # the nearest order at an operating point: min over orders of |f − f_m|/f_m (DESIGN.md §9)
    drive = make_drive()
    mode = Mode("a", 300.0, damping=0.03)
    result = _result([mode], drive=drive)
    orders = result.orders
    for m in result.modes[0].margins:
        rate = float(drive.rotor_hz(m.throttle, m.pack_state))
        margins = [float(relative_margin(o.order * rate, mode)) for o in orders]
        assert m.margin == pytest.approx(min(margins), rel=1e-12)
        assert m.enough == (m.margin >= result.modes[0].required_margin)
    points = {(m.point, m.pack_state) for m in result.modes[0].margins}
    assert points == {(p, s) for p in ("hover", "cruise") for s in PACK_STATES}


# --- findings -----------------------------------------------------------------------


def test_cannot_hover_at_the_empty_pack_is_a_finding():
    # a heavy craft on a weak pack: hover needs more than full throttle once the pack sags
    drive = make_drive(kv_rpm=1300.0, cells=4)
    full_need = drive.hover(1.0, "full").throttle
    empty_need = drive.hover(1.0, "empty").throttle
    # pick a mass between the two: flies on a full pack, not on an empty one
    lo, hi = 0.2, 5.0
    for _ in range(60):
        mass = 0.5 * (lo + hi)
        if drive.hover(mass, "empty").can_hover:
            lo = mass
        else:
            hi = mass
    mass = hi * 1.001
    assert drive.hover(mass, "full").can_hover and not drive.hover(mass, "empty").can_hover
    assert full_need < empty_need
    result = _result([Mode("a", 186.0, damping=0.03)], mass=mass, drive=drive)
    empty = next(b for b in result.bands if b.pack_state == "empty")
    assert not empty.flies and empty.dwell == ()
    # a finding of its own, at clash level (issue 10): the verdict is clash whatever the windows say
    assert [(f.kind, f.level, f.pack_state) for f in result.findings] == [("cannot_hover", "clash", "empty")]
    assert result.findings[0].hover_throttle > 1.0
    assert result.verdict == "clash"
    assert not any(m.pack_state == "empty" for m in result.modes[0].margins)


def test_unknown_hover_starts_the_band_at_idle():
    drive = make_drive(ct=None)
    result = _result([Mode("a", 186.0, damping=0.03)], drive=drive)
    assert all(b.throttle_low == 0.04 for b in result.bands)
    assert any("hover is unknown" in n for n in note_texts(result))


def test_assumed_damping_is_reported():
    result = _result([Mode("a", 186.0)])
    assert result.modes[0].damping_assumed
    assert any("damping assumed" in n and "a" in n for n in note_texts(result))


def test_a_damping_upper_bound_is_named_with_the_value_used():
    """The notes never contradict the table (issue 11): a measured bound is not 'assumed at the default'."""
    bounded = Mode("narrow", 300.0, details={"damping_high": 0.004})
    result = _result([Mode("a", 186.0), bounded])
    used = {m.mode.name: m.damping for m in result.modes}
    assert used["narrow"] == 0.004
    assert not any("damping assumed" in n and "narrow" in n for n in note_texts(result))
    assert any("narrow" in n and "0.004" in n for n in note_texts(result))


def test_weak_aliased_windows_fall_below_the_floor():
    # a steep anti-alias filter leaves the commutation and cogging folds almost no weight
    sensor = Sensor(2000.0, antialias_cutoff_hz=300.0, antialias_order=4)
    result = _result([Mode("a", 186.0, damping=0.03)], families=("commutation", "cogging"), sensor=sensor,
                     weight_floor=0.02)
    assert all(w.weight >= 0.02 for w in result.windows if w.aliased)
    assert any("aliased window(s) left out" in n for n in note_texts(result))
    unfiltered = _result([Mode("a", 186.0, damping=0.03)], families=("commutation", "cogging"),
                         sensor=Sensor(2000.0))
    assert any(w.aliased for w in unfiltered.windows)


def test_check_build_from_a_parsed_build(base_build):
    build = parse_build(base_build)
    result = check_build(build)
    assert result.name == "test quad"
    assert result.verdict in VERDICTS
    assert result.model.startswith("loaded model")
    assert set(result.pack_voltages) == set(PACK_STATES)
    assert result.pack_voltages["full"] == pytest.approx(6 * 4.2)  # REFERENCES.md §7 lipo
    assert {w.mode for w in result.windows} <= {m.name for m in build.modes}


@pytest.mark.parametrize("frame_id", sorted(load_catalog("frames")))
def test_catalog_frames_run(base_build, frame_id):
    base_build["frame"] = {"catalog": frame_id, "motors": 4, "mass": "690 g"}
    result = check_build(parse_build(base_build))
    assert len(result.modes) == len(load_catalog("frames")[frame_id]["modes"])


def test_note_when_rotor_rate_peaks_before_max_throttle():
    # derived: with pack sag the steady state d·V = Ke·ω + I·(R_m + N·d²·R_pack)
    # has dω/dd = (V − 2·N·d·R_pack·I)/(...), which turns negative once
    # 2·N·d·R_pack·I exceeds V; a soft pack on a big prop gets there.
    from clashcheck.analysis.clash import check_build
    from clashcheck.inputs.buildfile import parse_build

    data = {
        "frame": {"motors": 4, "mass": "900 g",
                  "modes": [{"name": "arm", "frequency": "150 Hz", "damping": 0.03}]},
        "motor": {"kv": "2500 rpm/V", "poles": 14, "slots": 12, "resistance": "30 mohm"},
        "prop": {"diameter": "10 in", "blades": 2, "thrust_coefficient": 0.11, "power_coefficient": 0.045},
        "battery": {"cells": 8, "chemistry": "lipo", "cell_resistance": "40 mohm"},
    }
    build = parse_build(data)
    drive = build.drive()
    grid = np.linspace(build.flight.idle, build.flight.max, 200)
    rate = drive.rotor_hz(grid, "full")
    assert np.any(np.diff(rate) < 0)  # the premise: the rate does fall somewhere
    notes = note_texts(check_build(build))
    assert any("peaks at" in n and "full pack" in n and "both sides" in n for n in notes)


def test_close_modes_reach_the_check_report():
    """Two modes 3 % apart are a close pair in check's result, JSON and table (issue 15, item 3)."""
    from clashcheck.report.check import render_table, result_to_dict

    result = _result([Mode("a", 200.0, damping=0.01), Mode("b", 206.0, damping=0.01)])
    assert [(p.lower, p.upper) for p in result.close_pairs] == [("a", "b")]
    assert result_to_dict(result)["close_modes"][0]["lower_hz"] == 200.0
    assert "exchange energy" in render_table(result)
