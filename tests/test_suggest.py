"""Tests for clashcheck.analysis.suggest: each suggestion against a hand computation.

No-load fixtures (no resistances, no C_P) make the drive exact and linear:
f_rotor = Kv·d·V (REFERENCES.md §4); hover n = √(m·g/(N·C_T·ρ·D⁴)) (§5,
ρ = 1.225 kg/m³ at 0 m, §6); required margin from the API rule (§1: ζ = 0.05
→ AF 10 → 15 %).  Each expected value below is derived from these by hand.
"""

from __future__ import annotations

import math
import tomllib

import pytest

from clashcheck.analysis.clash import check_build
from clashcheck.analysis.suggest import suggest
from clashcheck.inputs.buildfile import parse_build

SM = 0.15                  # ζ = 0.05 → AF = 10 → 17 %·(1 − 1/8.5) = 15.0 % (REFERENCES.md §1 check value)
KV = 2000 / 60             # Hz/V
V_FULL, V_EMPTY = 4 * 4.2, 4 * 3.5
N_HOVER = math.sqrt(0.5 * 9.80665 / (4 * 0.12 * 1.225 * 0.127**4))   # ≈ 179 Hz

TEMPLATE = """
name = "suggest quad"
[frame]
motors = 4
mass = "500 g"
[[frame.modes]]
name = "plate"
frequency = "{mode_hz} Hz"
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
[flight]
idle = "4 %"
cruise = "60 %"
cruise_dwell = true     # a cruiser: the window at cruise lies in a dwell zone (issue 10's verdict)
dwell_spread = "0 %"    # dwell exactly at hover and cruise, so the derived edges below hold
[check]
families = ["rotor"]
"""


def _build(mode_hz: float):
    return parse_build(tomllib.loads(TEMPLATE.format(mode_hz=mode_hz)), path="s.toml")


def _by_kind(suggestions):
    return {s.kind: s for s in suggestions}


def test_window_above_hover_cruise_kv_and_cells():
    # mode 300 Hz: margin band 255–345 Hz; 1× at hover (≈179 Hz) is below it, 1× at cruise on a full
    # pack (Kv·0.6·16.8 ≈ 336 Hz) is inside it → the 1× window touches the band from above hover
    build = _build(300.0)
    assert check_build(build).verdict == "clash"
    found = _by_kind(suggest(build))
    assert set(found) == {"cruise", "kv", "cells"}
    edge = 300.0 * (1 - SM)
    # the window starts where Kv·d·V_full = 255 Hz (derived)
    cruise = found["cruise"]
    assert cruise.details["window_starts_throttle"] == pytest.approx(edge / (KV * V_FULL), rel=1e-9)
    assert cruise.value < edge / (KV * V_FULL) and cruise.clears
    # the Kv that puts 1× at cruise on a full pack at 255 Hz: Kv = 255/(0.6·16.8) (derived)
    kv = found["kv"]
    assert kv.value == pytest.approx(edge / (0.6 * V_FULL) * (1 - 1e-3), rel=1e-6)
    assert kv.change == pytest.approx(edge / (0.6 * V_FULL) / KV * (1 - 1e-3) - 1, rel=1e-6)
    assert kv.clears and kv.verdict_after != "clash"
    assert f"{60 * kv.value:.0f} rpm/V" in kv.text
    # cells: 1× at cruise, full pack = Kv·0.6·4.2·c = 84·c Hz < 255 → at most 3 cells (derived)
    assert found["cells"].value == 3 and found["cells"].clears


def test_hover_inside_the_margin_mode_and_mass():
    # mode 180 Hz: 1× at hover (≈179 Hz) sits inside its ±15 % margin at every pack state
    build = _build(180.0)
    found = _by_kind(suggest(build))
    assert set(found) == {"mode-frequency", "mass"}
    mode = found["mode-frequency"]
    # hover keeps the margin if f_m ≤ n/(1 + SM) or f_m ≥ n/(1 − SM) (derived from |n − f|/f ≥ SM)
    assert mode.details["at_or_below_hz"] == pytest.approx(N_HOVER / (1 + SM) * (1 - 1e-3), rel=1e-6)
    assert mode.details["at_or_above_hz"] == pytest.approx(N_HOVER / (1 - SM) * (1 + 1e-3), rel=1e-6)
    assert "cannot clear it" in mode.text
    # hover rotor rate ∝ √m: n' = f_m(1 ∓ SM) → m' = m·(f_m(1 ∓ SM)/n)² (derived)
    mass = found["mass"]
    assert mass.details["at_most_kg"] == pytest.approx(0.5 * (180 * (1 - SM) * (1 - 1e-3) / N_HOVER) ** 2, rel=1e-6)
    assert mass.details["at_least_kg"] == pytest.approx(0.5 * (180 * (1 + SM) * (1 + 1e-3) / N_HOVER) ** 2, rel=1e-6)
    # a heavier craft lifts 1× above the mode for the whole band: that clash goes
    assert mass.clears and mass.value == pytest.approx(mass.details["at_least_kg"])


def test_no_suggestion_without_a_clash():
    # mode 1000 Hz: only 2× reaches it, above cruise → watch, nothing to suggest
    build = _build(1000.0)
    assert check_build(build).verdict == "watch"
    assert suggest(build) == ()


def test_suggestions_follow_the_numbers():
    # the texts are computed: another mode frequency gives other figures
    a = _by_kind(suggest(_build(300.0)))["kv"]
    b = _by_kind(suggest(_build(320.0)))["kv"]
    assert a.value != b.value and a.text != b.text
    assert b.value == pytest.approx(320.0 * (1 - SM) / (0.6 * V_FULL) * (1 - 1e-3), rel=1e-6)
