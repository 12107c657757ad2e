"""Tests of 'clashcheck frame' (cli/frame.py) and its report (report/frame.py), end to end.

The model's numbers are held against outside references in
tests/test_model_frame.py; here the command's contract is checked: keys,
formats, the stretched-frame split, calibration through a modes file, the
shape pictures' content, and failing well.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from clashcheck.cli import main
from clashcheck.inputs.framefile import load_frame_model
from clashcheck.model.frame import estimate_frame

REPO = Path(__file__).resolve().parent.parent
X5 = REPO / "examples" / "frame" / "kestrel-x5.toml"
S5 = REPO / "examples" / "frame" / "heron-s5.toml"


def _json(runner, *args):
    result = runner.invoke(main, ["frame", *map(str, args), "--format", "json"])
    assert result.exit_code == 0, result.output
    return json.loads(result.stdout)


def test_table_has_modes_axes_close_modes_and_cautions(runner):
    result = runner.invoke(main, ["frame", str(X5)])
    assert result.exit_code == 0, result.output
    out = result.stdout
    for words in ("flap, all arms", "flap, left against right", "flap, front against rear",
                  "flap, diagonals alternating", "lead-lag, all arms", "roll", "pitch", "yaw",
                  "these two can exchange energy", "propellers removed"):
        assert words in out


def test_json_contract(runner):
    data = _json(runner, X5)
    assert data["schema_version"] == 1
    mode = data["modes"][0]
    assert set(mode) >= {"frequency_hz", "pattern", "gyro_signature", "axis", "effective_mass_kg"}
    assert all(m["frequency_low_hz"] < 2000.0 for m in data["modes"])
    assert {m["axis"] for m in data["modes"]} <= {"roll", "pitch", "yaw", "none"}
    assert len(mode["gyro_signature"]) == 3
    assert data["close_modes"] and "advice" in data["close_modes"][0]


def test_stretched_frame_splits_roll_and_pitch(runner):
    def flap(data, pattern):
        return next(m for m in data["modes"] if m["pattern"] == f"flap, {pattern}")

    x, s = _json(runner, X5), _json(runner, S5)
    # the X with a near-round body: roll and pitch flap within 3 %
    assert abs(flap(x, "left against right")["frequency_hz"]
               / flap(x, "front against rear")["frequency_hz"] - 1) < 0.03
    # the stretched frame with a long body: pitch flap clearly below roll flap
    assert flap(s, "front against rear")["frequency_hz"] < 0.97 * flap(s, "left against right")[
        "frequency_hz"]
    assert flap(s, "front against rear")["axis"] == "pitch"


def test_max_frequency_and_elements_options(runner):
    data = _json(runner, X5, "--max-frequency", "500 Hz", "--elements", "4")
    assert data["max_frequency_hz"] == 500.0 and data["frame"]["elements_per_arm"] == 4
    assert all(m["frequency_low_hz"] < 500.0 for m in data["modes"])


def test_calibration_through_a_modes_file(runner, tmp_path):
    # modes from the demo frame with a known root spring, written as a tap test would,
    # rounded to 0.5 Hz, with the gyro axis where the tap showed one; the fit starts from
    # the build's own 400 N·m/rad.  (Modes 3 and 4 lie 0.04 Hz apart at this stiffness:
    # a tap test cannot tell them apart, so only mode 4, which shows on pitch, is listed.)
    _, model = load_frame_model(S5)
    truth = estimate_frame(model.with_clamp(250.0))
    lines = []
    for m in (truth.modes[0], truth.modes[1], truth.modes[3], truth.modes[5]):
        lines += ["[[frame.modes]]", f'name = "peak {m.index}"',
                  f'frequency = "{round(m.frequency_hz * 2) / 2} Hz"']
        if m.axis != "none":
            lines.append(f'axis = "{m.axis}"')
        lines.append("")
    tap = tmp_path / "tap.toml"
    tap.write_text("\n".join(lines), encoding="utf-8")
    data = _json(runner, S5, "--calibrate", tap)
    cal = data["calibration"]
    assert cal["clamp_stiffness_n_m_per_rad"] == pytest.approx(250.0, rel=0.02)
    assert [p["model_index"] for p in cal["pairs"]] == [1, 2, 4, 6]
    assert data["frame"]["clamp_stiffness_n_m_per_rad"] == pytest.approx(250.0, rel=0.02)
    table = runner.invoke(main, ["frame", str(S5), "--calibrate", str(tap)]).stdout
    assert "residual" in table and "clamp_stiffness" in table


def test_plot_content(runner, tmp_path):
    pytest.importorskip("matplotlib")
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    from clashcheck.report.frame import draw_frame_modes

    _, model = load_frame_model(S5)
    est = estimate_frame(model)
    fig = Figure()
    FigureCanvasAgg(fig)
    draw_frame_modes(fig, est, count=3)
    axes = fig.axes
    assert len(axes) == 6                                    # plan and side view per mode
    plan = {line.get_gid(): line for line in axes[0].get_lines()}
    mode = est.modes[0]
    # the deformed plan line of arm 0 is the rest position plus the scaled shape
    rest = plan["rest:1:0"].get_xydata()
    moved = plan["plan:1:0"].get_xydata()
    ids = list(est.arm_nodes[0])
    span = model.span_m
    scale = 0.15 * span / abs(mode.shape[:, :3]).max()
    assert moved[:, 0] == pytest.approx(rest[:, 0] + scale * mode.shape[ids, 1])  # y
    side = {line.get_gid(): line for line in axes[1].get_lines()}
    drawn_up = side["side:1:0"].get_xydata()[:, 1]
    assert drawn_up == pytest.approx(-(est.nodes[ids, 2] + scale * mode.shape[ids, 2]))
    assert "flap, diagonals alternating" in axes[0].get_title()
    out = tmp_path / "shapes.png"
    result = runner.invoke(main, ["frame", str(S5), "--plot", str(out)])
    assert result.exit_code == 0 and out.read_bytes()[:4] == b"\x89PNG"


@pytest.mark.parametrize("args, match", [
    (["--max-frequency", "3 m"], "max-frequency"),
    (["--plot", "shapes.txt"], "plot"),
    (["--fit-modulus"], "--fit-modulus needs --calibrate"),
])
def test_bad_options_one_line_exit_2(runner, args, match, tmp_path):
    result = runner.invoke(main, ["frame", str(X5), *args])
    assert result.exit_code == 2
    assert match in result.output and "Traceback" not in result.output
    assert len(result.output.strip().splitlines()) == 1


def test_malformed_build_one_line_exit_2(runner, tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text(X5.read_text(encoding="utf-8").replace('mass = "505 g"', 'mass = "505 mm"'),
                   encoding="utf-8")
    result = runner.invoke(main, ["frame", str(bad)])
    assert result.exit_code == 2 and "frame.body.mass" in result.output
    assert len(result.output.strip().splitlines()) == 1
    plain = tmp_path / "plain.toml"
    plain.write_text((REPO / "examples" / "freestyle-5in.toml").read_text(encoding="utf-8"),
                     encoding="utf-8")
    result = runner.invoke(main, ["frame", str(plain)])
    assert result.exit_code == 2 and "frame.body" in result.output


def test_check_runs_on_frame_examples(runner):
    for path in (X5, S5):
        result = runner.invoke(main, ["check", str(path), "--format", "json"])
        assert result.exit_code in (0, 1), result.output
        modes = json.loads(result.stdout)["modes"]
        assert any(m["name"].startswith("frame ") for m in modes)
