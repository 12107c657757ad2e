"""Tests of clashcheck.analysis.close_modes: pairs of modes close enough to exchange energy.

Reference values are derived by hand from the stated frequencies and damping
(gap = (f2 − f1)/f1; half-power bands f(1 ± ζ) overlap when the gap is below
ζ1 + ζ2, to first order).
"""

from __future__ import annotations

import pytest

from clashcheck.analysis.close_modes import DEFAULT_SEPARATION, close_modes
from clashcheck.errors import InputError
from clashcheck.model.modes import Mode


def test_default_separation_finds_near_pairs_of_any_origin():
    modes = [Mode("plate", 300.0, origin="measured", kind="plate"),
             Mode("arm", 290.0, origin="catalog"), Mode("stack", 420.0)]
    pairs = close_modes(modes)
    assert [(p.lower, p.upper) for p in pairs] == [("arm", "plate")]
    assert pairs[0].gap == pytest.approx(10 / 290)                    # derived
    assert pairs[0].separation == DEFAULT_SEPARATION and pairs[0].basis == "default"
    assert pairs[0].levers == ("detune_one",)


def test_damping_widens_the_separation():
    # derived: ζ1 + ζ2 = 0.08 > 5 %, and the gap 6.5 % is below it
    modes = [Mode("a", 200.0, damping=0.04), Mode("b", 213.0, damping=0.04)]
    (pair,) = close_modes(modes)
    assert pair.basis == "damping" and pair.separation == pytest.approx(0.08)
    assert close_modes([Mode("a", 200.0), Mode("b", 213.0)]) == ()


def test_neighbours_only_and_edges():
    modes = [Mode("a", 100.0), Mode("b", 101.0), Mode("c", 102.0)]
    assert [(p.lower, p.upper) for p in close_modes(modes)] == [("a", "b"), ("b", "c")]
    assert close_modes([]) == () and close_modes([Mode("a", 100.0)]) == ()
    # exactly at the separation is not close
    assert close_modes([Mode("a", 100.0), Mode("b", 105.0)], 0.05) == ()


def test_levers_from_frame_model_details():
    def frame_mode(name, f, plane, axis, pattern):
        return Mode(name, f, origin="estimated",
                    details={"plane": plane, "gyro_axis": axis, "pattern": f"{plane}, {pattern}"})

    roll = frame_mode("r", 160.0, "flap", "roll", "left against right")
    pitch = frame_mode("p", 163.0, "flap", "pitch", "front against rear")
    lag = frame_mode("l", 165.0, "lead-lag", "none", "diagonals alternating")
    assert close_modes([roll, pitch])[0].levers == ("body_inertia",)
    assert close_modes([pitch, lag])[0].levers == ("section_aspect",)
    heave = frame_mode("h", 150.0, "flap", "none", "all arms")
    alt = frame_mode("a", 148.0, "flap", "none", "diagonals alternating")
    assert close_modes([heave, alt])[0].levers == ("body_mass", "root_stiffness")


@pytest.mark.parametrize("bad", [0.0, 1.0, -0.1, float("nan"), True, "5 %"])
def test_bad_separation(bad):
    with pytest.raises(InputError, match="separation"):
        close_modes([Mode("a", 100.0)], bad)
