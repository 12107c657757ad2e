"""Before and after a joint change: clashcheck.analysis.retest, report.retest and `clashcheck retest`."""

from __future__ import annotations

import json
import math

import pytest

from clashcheck.analysis.retest import Z95, retest
from clashcheck.cli import main
from clashcheck.inputs.buildfile import load_modes_file
from clashcheck.model.build import MeasuredModes
from clashcheck.model.modes import Mode
from clashcheck.report.retest import render_retest, retest_to_dict


def _entry(name, f_hz, zv, drop, lo=0.01, hi=0.25, zv_u=0.0004, d_u=0.0003, axis="any"):
    """A modes-file entry with damping against amplitude; ζ(A) = ζ_v + D/(2πA) (REFERENCES.md §13)."""
    z = lambda a: zv + drop / (2 * math.pi * a)  # noqa: E731
    return {
        "name": name, "frequency": f"{f_hz} Hz", "damping": round(z(math.sqrt(lo * hi)), 6), "axis": axis,
        "damping_low": 0.9 * z(hi), "damping_high": 1.1 * z(lo),
        "decay": "mixed" if drop else "viscous", "damping_model": "friction-viscous" if drop else "viscous",
        "viscous_damping": zv, "viscous_damping_low": zv - zv_u, "viscous_damping_high": zv + zv_u,
        "friction_drop_per_cycle": drop, "friction_drop_per_cycle_low": max(0.0, drop - d_u),
        "friction_drop_per_cycle_high": drop + d_u, "amplitude_low_rec": lo, "amplitude_high_rec": hi,
        "damping_at_amplitude_low": z(lo), "damping_at_amplitude_high": z(hi),
    }


@pytest.fixture
def files(write_build):
    before = write_build({"frame": {"modes": [_entry("mode 1", 150.0, 0.004, 0.0034),
                                              _entry("mode 2", 310.0, 0.01, 0.0)]}}, "before.toml")
    after = write_build({"frame": {"modes": [_entry("mode 1", 158.0, 0.004, 0.0007),
                                             _entry("mode 2", 312.0, 0.01, 0.0),
                                             _entry("mode 3", 700.0, 0.02, 0.0)]}}, "after.toml")
    return before, after


def test_less_friction_is_worse(files):
    before, after = files
    r = retest(load_modes_file(before), load_modes_file(after))
    assert [(m.before_name, m.after_name) for m in r.modes] == [("mode 1", "mode 1"), ("mode 2", "mode 2")]
    assert r.only_after == ("mode 3",) and r.only_before == ()
    flap = r.modes[0]
    assert flap.frequency_hz.change == pytest.approx(8.0)
    assert flap.friction_drop_per_cycle.change == pytest.approx(-0.0027)
    # derived: σ from each 95 % interval, U = 1.96 √(σa² + σb²)
    assert flap.friction_drop_per_cycle.uncertainty == pytest.approx(Z95 * math.hypot(0.0003 / Z95, 0.0003 / Z95))
    # compared at the bottom of the common range (0.01), where the friction term is largest
    assert flap.amplitude_rec == pytest.approx(0.01)
    assert flap.damping.change == pytest.approx(-0.0027 / (2 * math.pi * 0.01))
    assert flap.worse and not r.modes[1].worse and r.worse


def test_same_file_not_worse(files):
    before, _after = files
    r = retest(load_modes_file(before), load_modes_file(before))
    assert not r.worse and all(abs(m.damping.change) < 1e-12 for m in r.modes)


def test_single_figures_within_uncertainty():
    a = MeasuredModes((Mode("mode 1", 200.0, 0.020, origin="measured",
                            details={"damping_low": 0.018, "damping_high": 0.022}),), (), "a")
    b = MeasuredModes((Mode("mode 1", 201.0, 0.019, origin="measured",
                            details={"damping_low": 0.017, "damping_high": 0.021}),), (), "b")
    r = retest(a, b)
    assert r.modes[0].basis == "single figure" and not r.worse
    assert r.modes[0].viscous_damping is None
    b2 = MeasuredModes((Mode("mode 1", 201.0, 0.010, origin="measured",
                             details={"damping_low": 0.009, "damping_high": 0.011}),), (), "b")
    assert retest(a, b2).worse


def test_mode_lost_is_listed_not_worse():
    a = MeasuredModes((Mode("mode 1", 200.0, 0.02, origin="measured"), Mode("mode 2", 400.0, 0.02,
                                                                            origin="measured")), (), "a")
    b = MeasuredModes((Mode("mode 1", 200.0, 0.02, origin="measured"),), (), "b")
    r = retest(a, b)
    assert r.only_before == ("mode 2",) and not r.worse
    text = render_retest(r)
    assert "only before" in text and "propellers removed" in text


def test_json_document(files):
    before, after = files
    data = retest_to_dict(retest(load_modes_file(before), load_modes_file(after)))
    assert data["schema_version"] >= 1 and data["worse"] is True
    m = data["modes"][0]
    assert set(m["friction_drop_per_cycle"]) == {"before", "after", "change", "uncertainty", "significant"}
    assert m["frequency_hz"]["uncertainty"] is None
    json.dumps(data, allow_nan=False)


def test_cli_exit_codes(runner, files, tmp_path):
    before, after = files
    res = runner.invoke(main, ["retest", str(before), str(after)])
    assert res.exit_code == 1, res.output
    assert "WORSE" in res.stdout
    res = runner.invoke(main, ["retest", str(before), str(before), "--format", "json"])
    assert res.exit_code == 0, res.output
    assert json.loads(res.stdout)["worse"] is False
    bad = tmp_path / "bad.toml"
    bad.write_text('[[frame.modes]]\nname = "mode 1"\nfrequency = "150 Hz"\ndecay = "sticky"\n', encoding="utf-8")
    res = runner.invoke(main, ["retest", str(before), str(bad)])
    assert res.exit_code == 2
    assert res.stderr.count("\n") == 1 and "decay" in res.stderr and "Traceback" not in res.stderr
