"""Tests of clashcheck.analysis.windows: one window rule for check, pick and the figures.

- the scalar and array forms are the same code (checked on the same numbers);
- every place that names the order families agrees with the one list
  (``clashcheck.model.excitation``);
- a property test: for random builds, ``pick``'s vectorised scores equal what
  ``check`` finds, one build at a time (``tests/_reference_scorer.py``).
"""

from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np
import pytest
from hypothesis import event, given, settings
from hypothesis import strategies as st

from clashcheck.analysis.clash import check_build
from clashcheck.analysis.pick import (
    MotorOption,
    PropOption,
    SearchSpace,
    score_candidates,
)
from clashcheck.analysis.windows import (
    above_floor,
    interval_margin,
    margin_band,
    overlaps,
    peak_magnification,
    seen_weight,
    throttle_window,
)
from clashcheck.inputs.buildfile import parse_build
from clashcheck.model.excitation import (
    DEFAULT_WEIGHTS,
    FAMILIES,
    ORDER_FAMILIES,
    alias_images,
    family_orders,
    fold,
    fold_in_zone,
    orders_for,
    zone_image,
)
from clashcheck.model.modes import magnification
from clashcheck.report.check import note_texts

sys.path.insert(0, str(Path(__file__).resolve().parent))
from _reference_scorer import reference_score  # noqa: E402

REPO = Path(__file__).resolve().parent.parent


# --- scalar and array forms -------------------------------------------------------


def test_scalar_and_array_forms_agree():
    rng = np.random.default_rng(7)
    x_lo = rng.uniform(50, 400, 50)
    x_hi = x_lo + rng.uniform(0, 200, 50)
    f = rng.uniform(100, 300, 50)
    z = rng.uniform(0.01, 0.2, 50)
    arr_m = peak_magnification(x_lo, x_hi, f, f, z)
    arr_g = interval_margin(x_lo, x_hi, f, f)
    for i in range(50):
        assert float(peak_magnification(x_lo[i], x_hi[i], f[i], f[i], z[i])) == arr_m[i]
        assert float(interval_margin(x_lo[i], x_hi[i], f[i], f[i])) == arr_g[i]
    drive = {"ke": 1 / (2 * math.pi * 30.0), "r_m": 0.05, "i0": 1.0, "kq": 2e-7, "n_motors": 4, "r_pack": 0.018}
    lo, hi = throttle_window(np.array([150.0, 900.0]), np.array([220.0, 1100.0]), 3.0, 25.2, 0.04, 1.0, drive)
    for i, (a, b) in enumerate([(150.0, 220.0), (900.0, 1100.0)]):
        s_lo, s_hi = throttle_window(a, b, 3.0, 25.2, 0.04, 1.0, drive)
        assert (float(s_lo), float(s_hi)) == (lo[i], hi[i])


def test_peak_magnification_is_the_maximum_on_a_dense_grid():
    # M has one maximum at r = √(1 − 2ζ²) (Rao, Mechanical Vibrations 5th ed. §3.4)
    for x_lo, x_hi, zeta in [(150.0, 190.0, 0.03), (190.0, 260.0, 0.05), (205.0, 300.0, 0.1)]:
        dense = np.max(magnification(np.linspace(x_lo, x_hi, 20001) / 200.0, zeta))
        assert float(peak_magnification(x_lo, x_hi, 200.0, 200.0, zeta)) == pytest.approx(dense, rel=1e-6)


def test_margin_band_and_interval_margin():
    lo, hi = margin_band(200.0, 210.0, 0.1)
    assert (lo, hi) == pytest.approx((180.0, 231.0))
    assert float(interval_margin(150.0, 160.0, 200.0, 210.0)) == pytest.approx(0.2)   # (200 − 160)/200
    assert float(interval_margin(231.0, 250.0, 200.0, 210.0)) == pytest.approx(0.1)   # (231 − 210)/210
    assert float(interval_margin(190.0, 205.0, 200.0, 210.0)) == 0.0


def test_weight_floor_rule():
    assert above_floor(seen_weight(0.3, 0.1), 0.02)
    assert not above_floor(seen_weight(0.3, 0.05), 0.02)
    assert above_floor(seen_weight(0.4, 0.05), 0.02)          # exactly the floor counts
    np.testing.assert_array_equal(above_floor(seen_weight(np.array([1.0, 0.01]), 1.0), 0.02), [True, False])


def test_overlaps_is_closed():
    assert overlaps(0.1, 0.2, 0.2, 0.3) and not overlaps(0.1, 0.2, 0.21, 0.3)


def test_zone_image_inverts_the_fold():
    # the fold of each image lands back on the band (Oppenheim & Schafer §4.2; REFERENCES.md §9)
    fs = 8000.0
    for zone in range(1, 7):
        a, b = zone_image(300.0, 400.0, zone, fs)
        assert sorted((fold(a, fs), fold(b, fs))) == pytest.approx([300.0, 400.0])
        assert fold_in_zone(a, zone, fs) == pytest.approx(400.0 if zone % 2 else 300.0)
    assert alias_images(300.0, 400.0, fs, 20000.0) == [
        (z, *zone_image(300.0, 400.0, z, fs)) for z in range(1, 5)
    ]


# --- one family list ---------------------------------------------------------------


def test_families_are_named_alike_everywhere():
    from clashcheck.identify import flight, result
    from clashcheck.inputs import buildfile
    from clashcheck.report.campbell import FAMILY_COLOURS

    assert ORDER_FAMILIES == FAMILIES + ("custom",)
    assert result.ORDER_FAMILIES == ORDER_FAMILIES
    assert set(FAMILY_COLOURS) == set(ORDER_FAMILIES)
    assert buildfile.FAMILIES is FAMILIES and buildfile.ORDER_FAMILIES is ORDER_FAMILIES
    # every weight key the table uses has a default weight, and nothing else does
    keys = {k for blades in (2, 3) for _n, _f, k, _l in family_orders(blades, 14, 12)} | {"custom-1"}
    assert keys == set(DEFAULT_WEIGHTS)
    # the flight analysis measures the same orders with the same families
    for blades, poles, slots in [(3, 14, 12), (2, 12, 9), (4, 14, 12)]:
        ours = {}
        for n, fam, _k, _l in family_orders(blades, poles, slots):
            ours[n] = fam          # the later family names a shared order there too
        assert flight.order_families(blades, poles, slots)[0] == dict(sorted(ours.items()))
    # the README's order list names each family
    readme = (REPO / "README.md").read_text(encoding="utf-8")
    for fam in FAMILIES:
        assert fam in readme


def test_coinciding_orders_are_one_order_with_both_names():
    orders = orders_for(2, 14, 12, ("rotor", "blade"))
    assert [o.order for o in orders] == [1.0, 2.0, 4.0]
    two = orders[1]
    assert two.families == ("rotor", "blade") and two.weight == max(DEFAULT_WEIGHTS["rotor-2"],
                                                                     DEFAULT_WEIGHTS["blade-1"])
    assert two.label == "2× rotor = blade pass (2×)"
    measured = orders_for(2, 14, 12, ("rotor", "blade"), measured=[(2.0, "blade", 0.25)])
    assert measured[1].weight == 0.25 and measured[1].weight_source == "measured"


# --- pick's vectorised scores equal check's windows (property test) ------------------


@st.composite
def builds(draw):
    kv = draw(st.integers(1200, 2800))
    poles = draw(st.sampled_from([12, 14]))
    blades = draw(st.sampled_from([2, 3, 4]))
    cells = draw(st.integers(3, 6))
    r_cell = draw(st.sampled_from([0.0, 0.003, 0.012]))
    modes = []
    for i in range(draw(st.integers(1, 3))):
        freq = draw(st.floats(60.0, 900.0))
        damping = draw(st.sampled_from([None, 0.02, 0.04, 0.08]))
        kind = draw(st.sampled_from(["arm", "plate"]))
        mode = f'[[frame.modes]]\nname = "m{i}"\nfrequency = "{freq:.2f} Hz"\nkind = "{kind}"\n'
        if damping is not None:
            mode += f"damping = {damping}\n"
        modes.append(mode)
    sensor = draw(st.sampled_from(["", '[sensor]\nsample_rate = "1 kHz"\n',
                                   '[sensor]\nsample_rate = "8 kHz"\nantialias_cutoff = "1 kHz"\n']))
    cruise = draw(st.integers(40, 75))
    # a 10-inch prop on a 12 mΩ pack makes the rotor rate peak below full throttle (both window sides)
    sag = draw(st.booleans())
    diameter = 10 if sag else 5
    if sag:
        r_cell, cells = 0.012, 6
    occupancy = draw(st.sampled_from(["", "cruise_dwell = true", 'dwell_spread = "8 %"']))
    text = f"""
name = "random"
[frame]
motors = 4
mass = "{draw(st.integers(450, 900)) * (2 if diameter == 10 else 1)} g"
{''.join(modes)}
[motor]
kv = "{kv} rpm/V"
poles = {poles}
slots = 12
resistance = "50 mohm"
no_load_current = "1 A"
[prop]
diameter = "{diameter} in"
blades = {blades}
thrust_coefficient = 0.11
power_coefficient = 0.06
[battery]
cells = {cells}
cell_resistance = "{1000 * r_cell:g} mohm"
{sensor}
[flight]
cruise = "{cruise} %"
{occupancy}
"""
    import tomllib

    return parse_build(tomllib.loads(text), path="random.toml")


@settings(max_examples=60, deadline=None, derandomize=True)
@given(builds())
def test_pick_scores_equal_check_for_random_builds(build):
    space = SearchSpace((MotorOption("m", build.motor, "build"),), (PropOption("p", build.prop, "build"),),
                        (build.pack.cells,))
    scores = score_candidates(build, space)
    ref = reference_score(build)
    result = check_build(build)
    event(f"rate peaks below max: {any('peaks at' in n for n in note_texts(result))}; verdict {result.verdict}")
    assert bool(scores.flies[0]) == ref["flies"]
    if ref["flies"]:
        assert bool(scores.band_clear[0]) == ref["band_clear"], ref["verdict"]
        assert float(scores.response[0]) == pytest.approx(ref["response"], rel=1e-9)
    np.testing.assert_allclose(scores.hover_throttle[0], ref["hover"], rtol=1e-12)
