"""Measured modes take their place in the build (clashcheck.model.reconcile, Build.with_measured)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from clashcheck.cli import main
from clashcheck.inputs.buildfile import load_build, load_modes_file
from clashcheck.model.modes import Mode
from clashcheck.model.reconcile import FREQUENCY_TOLERANCE, axes_compatible, reconcile

REPO = Path(__file__).resolve().parent.parent


def _cat(name, f, axis="any", **kw):
    return Mode(name, f, kw.pop("damping", 0.03), axis=axis, origin=kw.pop("origin", "catalog"), **kw)


def _meas(name, f, axis="any", damping=0.02):
    return Mode(name, f, damping, axis=axis, origin="measured")


def test_close_modes_pair_closest_first():
    # derived: 172 and 186 Hz are 8 % apart, both inside the 10 % tolerance of each other
    build = [_cat("arm flap, roll", 186.0, "roll"), _cat("arm flap, pitch", 172.0, "pitch")]
    r = reconcile(build, [_meas("mode 1", 172.3), _meas("mode 2", 185.6)])
    names = {m.name: m for m in r.modes}
    assert set(names) == {"arm flap, roll", "arm flap, pitch"}
    assert names["arm flap, pitch"].frequency_hz == 172.3
    assert names["arm flap, pitch"].axis == "pitch" and names["arm flap, pitch"].origin == "measured"
    assert names["arm flap, pitch"].details["measured_as"] == "mode 1"
    assert r.added == () and r.ambiguous == ()


def test_name_match_wins_over_frequency():
    build = [_cat("plate", 420.0), _cat("arm", 200.0)]
    r = reconcile(build, [_meas("arm", 415.0)])  # the user renamed it: trust the name
    assert r.matches[0].replaced == "arm" and r.matches[0].how == "name"
    assert {m.name for m in r.modes} == {"plate", "arm"}


def test_axis_must_agree():
    r = reconcile([_cat("flap roll", 200.0, "roll")], [_meas("mode 1", 201.0, "pitch")])
    assert r.matches == () and r.added == ("mode 1",) and r.kept == ("flap roll",)
    assert axes_compatible("yaw", "any") and not axes_compatible("yaw", "roll")


def test_outside_tolerance_is_added():
    f = 300.0 * (1 + FREQUENCY_TOLERANCE) * 1.01
    r = reconcile([_cat("sway", 300.0)], [_meas("mode 1", f)])
    assert r.added == ("mode 1",) and len(r.modes) == 2


def test_ambiguous_match_is_warned():
    # derived: a measured mode half-way between two catalog modes
    r = reconcile([_cat("a", 200.0), _cat("b", 220.0)], [_meas("mode 1", 209.5)])
    assert len(r.matches) == 1
    assert r.ambiguous == (("mode 1", "a", "b"),)


def test_estimate_range_and_misses():
    est = Mode("arm flap (est.)", 69.0, None, axis="any", kind="arm", origin="estimated",
               frequency_low_hz=60.0, frequency_high_hz=80.0)
    # issue 11: an estimated 69 Hz arm mode beside measured 118 and 124 Hz modes, 40 % off
    r = reconcile([est], [_meas("mode 1", 118.0), _meas("mode 2", 124.0)])
    assert r.missed and r.missed[0][0] == "arm flap (est.)" and r.missed[0][4] == "mode 1"
    # inside the range widened by the tolerance: replaced
    r = reconcile([est], [_meas("mode 1", 84.0)])
    assert r.matches[0].how == "range" and r.modes[0].origin == "measured"
    assert r.missed[0][5] == 84.0  # matched, but outside the estimate's own range: still warned
    r = reconcile([est], [_meas("mode 1", 75.0)])
    assert r.missed == ()


def test_added_mode_never_duplicates_a_name():
    r = reconcile([_cat("mode 1", 500.0, "roll")], [_meas("mode 1", 100.0, "roll"), _meas("x", 501.0, "pitch")])
    names = [m.name for m in r.modes]
    assert len(names) == len(set(names))


def test_readme_example_has_no_duplicates(runner, tmp_path):
    # issue 11: `check --modes` on the README's example listed 11 modes, each physical mode twice
    modes = tmp_path / "measured.toml"
    res = runner.invoke(main, ["modes", str(REPO / "examples" / "recordings" / "tap.wav"), "--kind", "tap",
                               "--output", str(modes)])
    assert res.exit_code == 0, res.output
    res = runner.invoke(main, ["check", str(REPO / "examples" / "freestyle-5in.toml"), "--modes", str(modes),
                               "--format", "json"])
    data = json.loads(res.stdout)
    names = [m["name"] for m in data["modes"]]
    assert len(names) == 6, names  # 5 catalog modes measured + the camera mount
    assert len(names) == len(set(names))
    freqs = sorted(m["frequency_hz"] for m in data["modes"])
    assert all(b / a - 1 > 0.02 for a, b in zip(freqs, freqs[1:]))  # no physical mode twice
    measured = [m for m in data["modes"] if m["origin"] == "measured"]
    assert len(measured) == 5 and not any(m["damping_assumed"] for m in measured)
    assert any("replaces catalog mode 'arm flap, pitch'" in n for n in data["notes"])


def test_with_measured_amplitude_note(base_build, write_build):
    build = load_build(write_build(base_build))
    path = write_build({"frame": {"modes": [{
        "name": "mode 1", "frequency": "187 Hz", "damping": 0.03, "axis": "any",
        "decay": "friction", "damping_model": "friction-viscous", "viscous_damping": 0.002,
        "friction_drop_per_cycle": 0.05, "amplitude_low_rec": 0.4, "amplitude_high_rec": 4.0,
        "damping_at_amplitude_low": 0.0219, "damping_at_amplitude_high": 0.00399}]}}, "m.toml")
    merged = build.with_measured(load_modes_file(path))
    flap = next(m for m in merged.modes if m.name == "arm flap")
    # derived: ζ(A) = ζ_v + D/(2πA) is lowest at the top of the range: 0.002 + 0.05/(2π·4) = 0.00399
    assert flap.damping == pytest.approx(0.00399)
    note = next(n for n in merged.notes if "depends on amplitude" in n)
    assert "lowest over the measured amplitude range" in note and "required margin grows" in note


def test_operating_amplitude_used(base_build, write_build):
    raw = {"name": "m", "frequency": "187 Hz", "damping": 0.03, "decay": "mixed",
           "damping_model": "friction-viscous", "viscous_damping": 0.002, "friction_drop_per_cycle": 0.05,
           "amplitude_low_rec": 0.4, "amplitude_high_rec": 4.0, "damping_at_amplitude_low": 0.0219,
           "damping_at_amplitude_high": 0.00399, "operating_amplitude_rec": 1.0}
    m = load_modes_file(write_build({"frame": {"modes": [raw]}}, "m.toml")).modes[0]
    assert m.damping == pytest.approx(0.002 + 0.05 / (2 * 3.141592653589793 * 1.0))  # derived
    assert m.details["damping_basis"] == "operating amplitude"


def test_operating_amplitude_without_measurement_refused(write_build):
    from clashcheck.errors import InputError

    with pytest.raises(InputError, match="operating_amplitude_rec"):
        load_modes_file(write_build({"frame": {"modes": [
            {"name": "m", "frequency": "187 Hz", "operating_amplitude_rec": 1.0}]}}, "m.toml"))
    with pytest.raises(InputError, match="amplitude_low_rec"):
        load_modes_file(write_build({"frame": {"modes": [
            {"name": "m", "frequency": "187 Hz", "decay": "viscous", "viscous_damping": 0.01,
             "damping_at_amplitude_low": 0.01, "damping_at_amplitude_high": 0.01,
             "amplitude_high_rec": 1.0}]}}, "m.toml"))
