"""Tests of clashcheck.inputs.framefile and the build-file hook: the contract keys of issue 15.

Reference values here are derived (box inertia, stretched angles) or come from
the same model under a different input path; the physics is held against
published and independent references in tests/test_model_frame.py.
"""

from __future__ import annotations

import math

import pytest

from clashcheck.errors import InputError
from clashcheck.inputs.armfile import parse_arm_table
from clashcheck.inputs.buildfile import parse_build
from clashcheck.inputs.framefile import parse_frame_model

ARM = {"length": "83 mm", "width": "13 mm", "thickness": "5.5 mm", "material": "carbon-qi",
       "tip_mass": "41 g"}
# the keys exactly as issue 15 writes them
BODY = {"mass": "310 g", "inertia": ["1.9 g*m^2", "3.2 g*m^2", "4.6 g*m^2"]}
LAYOUT = {"arms": 4, "angles": ["45 deg", "135 deg", "225 deg", "315 deg"], "root_radius": "28 mm"}


def _arm():
    return parse_arm_table(dict(ARM))


def test_contract_keys_as_written():
    model = parse_frame_model({"body": dict(BODY), "layout": dict(LAYOUT)}, _arm(), motors=4)
    assert model.body.mass_kg == pytest.approx(0.310)
    assert model.body.inertia_kg_m2 == pytest.approx((1.9e-3, 3.2e-3, 4.6e-3))
    assert model.body.inertia_origin == "given"
    assert [math.degrees(a) for a in model.layout.angles_rad] == pytest.approx([45, 135, 225, 315])
    assert model.layout.root_radius_m == pytest.approx(0.028)


def test_defaults_box_inertia_and_stretch():
    # derived: roots of a 1.25 stretch at 28 mm; box as long and wide as the roots span,
    # as tall as the root radius: I = m/12 (w² + h², l² + h², l² + w²)
    layout = {"root_radius": "28 mm", "stretch": 1.25}
    model = parse_frame_model({"body": {"mass": "300 g"}, "layout": layout}, _arm(), motors=4)
    a = math.atan2(1.0, 1.25)
    assert model.layout.angles_rad[0] == pytest.approx(a)
    length, width, height = 2 * 0.028 * math.cos(a), 2 * 0.028 * math.sin(a), 0.028
    m = 0.3 / 12
    assert model.body.inertia_kg_m2 == pytest.approx(
        (m * (width**2 + height**2), m * (length**2 + height**2), m * (length**2 + width**2)))
    assert model.body.inertia_origin == "box"
    assert model.layout.arms == 4          # from [frame] motors


def test_no_body_means_no_frame_model():
    assert parse_frame_model({"arm": ARM}, _arm(), motors=4) is None


@pytest.mark.parametrize("frame, match", [
    ({"body": {"mass": "310 g"}}, "frame.layout"),
    ({"layout": {"root_radius": "28 mm"}}, "frame.body"),
    ({"body": {"mass": "310 g", "inertia": ["1 g*m^2", "2 g*m^2"]}, "layout": LAYOUT},
     "frame.body.inertia"),
    ({"body": {"mass": "310 g", "inertia": ["1 g*m^2", "2 g*m^2", "2 m"]}, "layout": LAYOUT},
     r"frame.body.inertia\[2\]"),
    ({"body": {"mass": "310 g", "intertia": []}, "layout": LAYOUT}, "did you mean 'inertia'"),
    ({"body": {"mass": "310 g"}, "layout": {**LAYOUT, "stretch": 1.2}}, "no stretch when angles"),
    ({"body": {"mass": "310 g"}, "layout": {**LAYOUT, "arms": 6}}, "number of angles"),
    ({"body": {"mass": "310 g"}, "layout": {"root_radius": "28 mm", "stretch": 9}}, "stretch"),
    ({"body": {"mass": "310 g"}, "layout": {"angles": ["45 deg", "90 mm"],
                                            "root_radius": "28 mm"}}, r"angles\[1\]"),
    ({"body": {"mass": "-3 g"}, "layout": LAYOUT}, "frame.body.mass"),
    ({"body": {"mass": "310 g"}, "layout": {"arms": 4}}, "frame.layout.root_radius"),
])
def test_errors_name_the_field(frame, match):
    with pytest.raises(InputError, match=match):
        parse_frame_model(frame, _arm(), motors=4)


def test_body_needs_an_arm():
    with pytest.raises(InputError, match="frame.arm"):
        parse_frame_model({"body": BODY, "layout": LAYOUT}, None, motors=4)


def test_shear_modulus_override_and_catalog():
    arm = parse_arm_table({**ARM, "shear_modulus": "12 GPa"})
    assert arm.material.shear_modulus_pa == pytest.approx(12e9)
    assert _arm().material.shear_modulus_pa == pytest.approx(19.2e9)   # catalog carbon-qi
    scaled = parse_arm_table({**ARM, "modulus": "40 GPa"})             # same Poisson ratio
    assert scaled.material.shear_modulus_pa == pytest.approx(19.2e9 * 40 / 50)
    with pytest.raises(InputError, match="frame.arm.shear_modulus"):
        parse_arm_table({**ARM, "shear_modulus": "12 mm"})


def _build(base_build, **frame):
    data = {**base_build, "frame": {"motors": 4, "mass": "690 g", **frame}}
    return parse_build(data)


def test_build_with_body_takes_frame_model_modes(base_build):
    build = _build(base_build, arm=dict(ARM), body=dict(BODY), layout=dict(LAYOUT))
    estimated = [m for m in build.modes if m.origin == "estimated"]
    assert estimated and all(m.name.startswith("frame ") for m in estimated)
    assert {"roll", "pitch", "yaw"} <= {m.axis for m in estimated}
    assert any(n.startswith("frame model:") for n in build.notes)
    assert not any(n.startswith("arm estimate:") for n in build.notes)


def test_build_without_body_keeps_single_arm_estimate(base_build):
    build = _build(base_build, arm=dict(ARM))
    assert any(m.name.startswith("arm flap") for m in build.modes)
    assert not any(m.name.startswith("frame ") for m in build.modes)


def test_measured_mode_replaces_estimated_of_same_name(base_build):
    build = _build(base_build, arm=dict(ARM), body=dict(BODY), layout=dict(LAYOUT))
    first = next(m for m in build.modes if m.origin == "estimated")
    from clashcheck.model.build import MeasuredModes
    from clashcheck.model.modes import Mode

    merged = build.with_measured(MeasuredModes((Mode(first.name, 150.0, origin="measured"),), (),
                                               "tap.toml"))
    same = [m for m in merged.modes if m.name == first.name]
    assert len(same) == 1 and same[0].origin == "measured"


def test_build_body_without_arm_is_refused(base_build):
    with pytest.raises(InputError, match="frame.arm"):
        _build(base_build, body=dict(BODY), layout=dict(LAYOUT))
