"""Fleet report sentences, and the verdict comparison they report."""

from __future__ import annotations

import copy
import datetime as dt

from clashcheck.analysis.drift import Finding, ModeFeatures, Observation, drift
from clashcheck.fleet.pipeline import VerdictChange, _verdicts
from clashcheck.report.fleet import finding_sentence, verdict_sentence

DAY = dt.datetime(2026, 11, 14)


def test_a_frequency_finding_reads_as_the_issue_asks():
    fd = Finding(mode="arm flap", axis="roll", feature="frequency_hz", baseline_value=171.0, latest_value=160.0,
                 change_fraction=160 / 171 - 1, limit_fraction=-0.011, since_recording="a.wav", since=DAY,
                 recordings_outside=3)
    text = finding_sentence(fd)
    assert text.startswith("arm flap, roll: 171 → 160 Hz (−6.4 %) since 2026-11-14")
    assert text.endswith("the baseline's limit is −1.1 %")


def test_a_damping_finding_names_the_feature_and_a_single_recording_says_at():
    fd = Finding(mode="arm torsion", axis="any", feature="damping", baseline_value=0.025, latest_value=0.045,
                 change_fraction=0.8, limit_fraction=0.3, since_recording="b.wav", since=DAY,
                 recordings_outside=1)
    text = finding_sentence(fd)
    assert "damping ratio 0.025 → 0.045 (+80.0 %) at 2026-11-14 (1 recording outside)" in text


def test_verdict_sentence():
    v = VerdictChange("watch", "clash", (("arm flap", "watch", "clash"),))
    assert v.worse and not VerdictChange("clash", "watch").worse
    assert verdict_sentence(v) == ("build verdict under the latest modes: clash (baseline modes: watch); "
                                   "worse for arm flap (watch → clash)")


def test_a_mode_moving_into_the_operating_band_makes_the_verdict_worse(base_build):
    """Behaviour check with the shared test build: its arm flap alone at 285 Hz gives 'watch' and at
    255 Hz 'clash' (found by running check on it), so a stiffness loss from 285 to 255 Hz worsens it."""
    from clashcheck.inputs.buildfile import parse_build

    raw = copy.deepcopy(base_build)
    raw["frame"]["modes"] = raw["frame"]["modes"][:1]
    raw["frame"]["modes"][0]["frequency"] = "285 Hz"
    build = parse_build(raw)
    obs = [Observation(f"r{i}", DAY + dt.timedelta(days=i),
                       (ModeFeatures(285.0 * (1 + 0.002 * (-1) ** i), 0.03, "roll"),)) for i in range(8)]
    obs.append(Observation("late", DAY + dt.timedelta(days=9), (ModeFeatures(255.0, 0.03, "roll"),)))
    result = drift(obs, reference_modes=[(m.name, m.frequency_hz, m.axis) for m in build.modes])
    assert result.tracks[0].label == "arm flap"
    v = _verdicts(build, result)
    assert (v.baseline, v.latest, v.worse) == ("watch", "clash", True)
    assert v.modes == (("arm flap", "watch", "clash"),)
