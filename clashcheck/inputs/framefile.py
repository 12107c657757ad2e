"""``[frame.body]`` and ``[frame.layout]`` tables, read into a :class:`~clashcheck.model.frame.FrameModel`.

The keys (DESIGN.md, "Frame model and fleet"; issue 15)::

    [frame.body]                       # the centre body, taken as rigid
    mass = "310 g"                     # everything but the arms, motors and props
    inertia = ["1.9 g*m^2", "3.2 g*m^2", "4.6 g*m^2"]   # roll, pitch, yaw; optional

    [frame.layout]
    arms = 4                           # optional: defaults to [frame] motors
    angles = ["45 deg", "135 deg", "225 deg", "315 deg"]  # from the nose towards the right
    root_radius = "28 mm"              # from the origin to where each arm leaves the body
    # stretch = 1.25                   # only without angles: length/width of a stretched X

- ``inertia`` is about roll (x, to the nose), pitch (y, to the right) and yaw
  (z, down), through the origin.  Without it the body is taken as a uniform
  box spanning the arm roots (as long as the roots' x extent, as wide as their
  y extent) and as tall as the root radius, and the report says so.
- ``angles`` may be left out: the arms then sit symmetrically at
  180°/N + k·360°/N (the X at 45°, 135°, 225°, 315° on four arms), and a bare
  number ``stretch`` (default 1) stretches that layout along the nose: each
  direction's x component is multiplied by it before normalising, so
  ``stretch = 1.25`` gives a frame whose motor spacing front to rear is 1.25 ×
  its spacing side to side.  ``stretch`` with ``angles`` is refused.
- ``[frame.arm]`` keeps its meaning (see :mod:`clashcheck.inputs.armfile`);
  every arm has that geometry.

Units are checked here, once.
"""

from __future__ import annotations

import math
from functools import lru_cache
from pathlib import Path
from typing import Any

from ..errors import MISSING, InputError
from ..model.arm import ArmGeometry
from ..model.frame import (
    DEFAULT_ELEMENTS,
    MAX_ARMS,
    FrameBody,
    FrameLayout,
    FrameModel,
    box_inertia,
    stretched_angles,
)
from . import fields as f
from . import units

__all__ = ["BODY_KEYS", "LAYOUT_KEYS", "parse_frame_model", "load_frame_model",
           "frame_estimate_for_build", "estimate_once"]

#: Keys a ``[frame.body]`` table may hold.
BODY_KEYS = ("mass", "inertia", "description")
#: Keys a ``[frame.layout]`` table may hold.
LAYOUT_KEYS = ("arms", "angles", "root_radius", "stretch")


def _layout(raw: dict[str, Any], motors: int | None) -> FrameLayout:
    where = "frame.layout"
    f.check_keys(raw, LAYOUT_KEYS, where)
    arms = f.count(raw, "arms", where, minimum=2, maximum=MAX_ARMS, what="an arm count")
    root = f.quantity(raw, "root_radius", where, "m", "28 mm", required=True, minimum=0.0,
                      maximum=5.0, range_text="from 0 mm to 5 m")
    assert root is not None
    angles_raw = raw.get("angles")
    if angles_raw is not None:
        if "stretch" in raw:
            raise InputError(f"{where}.stretch", "no stretch when angles are given", raw["stretch"],
                             "stretch shapes the default layout; give one or the other")
        if not isinstance(angles_raw, list) or not angles_raw:
            raise InputError(f"{where}.angles", "a list of angles like [\"45 deg\", \"135 deg\"]",
                             angles_raw)
        angles = tuple(units.parse(a, "deg", f"{where}.angles[{i}]", example="45 deg")
                       for i, a in enumerate(angles_raw))
        if arms is not None and arms != len(angles):
            raise InputError(f"{where}.arms", f"the number of angles ({len(angles)})", arms)
        return FrameLayout(angles, root, None, where)
    n = arms if arms is not None else motors
    if n is None:
        raise InputError(f"{where}.arms", "an arm count", MISSING)
    if not 2 <= n <= MAX_ARMS:
        raise InputError(f"{where}.arms", f"an arm count from 2 to {MAX_ARMS}", n,
                         "taken from frame.motors; give frame.layout.arms")
    stretch = f.ratio(raw, "stretch", where, low=0.2, high=5.0, open_low=False, open_high=False,
                      default=1.0, what="a stretch (length over width) from 0.2 to 5")
    assert stretch is not None
    return FrameLayout(stretched_angles(n, stretch), root, stretch, where)


def _body(raw: dict[str, Any], layout: FrameLayout) -> FrameBody:
    where = "frame.body"
    f.check_keys(raw, BODY_KEYS, where)
    f.text(raw, "description", where)
    mass = f.quantity(raw, "mass", where, "kg", "310 g", required=True, minimum=0.0,
                      exclusive_minimum=True, maximum=1000.0,
                      range_text="above 0 g and up to 1000 kg")
    assert mass is not None
    inertia_raw = raw.get("inertia")
    if inertia_raw is None:
        xs = [abs(math.cos(a)) * layout.root_radius_m for a in layout.angles_rad]
        ys = [abs(math.sin(a)) * layout.root_radius_m for a in layout.angles_rad]
        size = max(layout.root_radius_m, 1e-3)
        inertia = box_inertia(mass, max(2 * max(xs), size), max(2 * max(ys), size), size)
        return FrameBody(mass, inertia, "box", where)
    if not isinstance(inertia_raw, list) or len(inertia_raw) != 3:
        raise InputError(f"{where}.inertia",
                         'three inertias [roll, pitch, yaw] like ["1.9 g*m^2", "3.2 g*m^2", '
                         '"4.6 g*m^2"]', inertia_raw)
    values = tuple(units.parse(v, "kg*m^2", f"{where}.inertia[{i}]", example="3.2 g*m^2")
                   for i, v in enumerate(inertia_raw))
    return FrameBody(mass, (values[0], values[1], values[2]), "given", where)


def parse_frame_model(
    frame: dict[str, Any],
    arm: ArmGeometry | None,
    *,
    motors: int | None = None,
    elements_per_arm: int = DEFAULT_ELEMENTS,
) -> FrameModel | None:
    """The frame model of a build's ``[frame]`` table, or ``None`` without ``[frame.body]``.

    Parameters
    ----------
    frame : dict
        The ``[frame]`` table as read from TOML.
    arm : ArmGeometry or None
        The parsed ``[frame.arm]`` (required when ``[frame.body]`` is given).
    motors : int, optional
        ``[frame] motors``, the default arm count.
    elements_per_arm : int, optional
        Beam elements per arm.

    Returns
    -------
    FrameModel or None

    Raises
    ------
    InputError
        On unknown keys, missing or malformed values, or a body without an arm
        or a layout.

    Examples
    --------
    >>> from clashcheck.inputs.armfile import parse_arm_table
    >>> arm = parse_arm_table({"length": "110 mm", "width": "12 mm", "thickness": "5 mm",
    ...                        "material": "carbon-qi", "tip_mass": "48 g"})
    >>> model = parse_frame_model({"body": {"mass": "310 g"},
    ...                            "layout": {"root_radius": "28 mm"}}, arm, motors=4)
    >>> model.layout.arms, model.body.inertia_origin
    (4, 'box')
    """
    body_raw = f.table(frame, "body", "frame")
    layout_raw = f.table(frame, "layout", "frame")
    if body_raw is None:
        if layout_raw is not None:
            raise InputError("frame.body", "a [frame.body] table with the layout", MISSING,
                             "the frame model needs the centre body's mass")
        return None
    if arm is None:
        raise InputError("frame.arm", "an [frame.arm] table with [frame.body]", MISSING,
                         "the frame model needs the arms' section and material")
    if layout_raw is None:
        raise InputError("frame.layout", "a [frame.layout] table with [frame.body]", MISSING,
                         "at least root_radius")
    layout = _layout(layout_raw, motors)
    return FrameModel(arm, _body(body_raw, layout), layout, elements_per_arm)


def load_frame_model(path: str | Path, *, elements_per_arm: int = DEFAULT_ELEMENTS
                     ) -> tuple[Any, FrameModel]:
    """Read a build file and its frame model.

    Parameters
    ----------
    path : str or Path
        The build file.
    elements_per_arm : int, optional
        Beam elements per arm.

    Returns
    -------
    (Build, FrameModel)

    Raises
    ------
    InputError
        When the build is invalid or has no ``[frame.body]``.
    """
    from .buildfile import load_build_data

    data, build = load_build_data(path)
    raw = data.get("frame")
    frame: dict[str, Any] = raw if isinstance(raw, dict) else {}
    model = parse_frame_model(frame, build.arm, motors=build.motors,
                              elements_per_arm=elements_per_arm)
    if model is None:
        raise InputError("frame.body", "a [frame.body] table (and [frame.layout], [frame.arm])",
                         MISSING, "see README, 'The whole frame's modes'")
    return build, model


def frame_estimate_for_build(frame: dict[str, Any], arm: ArmGeometry | None, motors: int | None
                             ) -> tuple[tuple[Any, ...], tuple[str, ...]] | None:
    """The frame model's estimated modes and notes for ``check``, or ``None`` without a body.

    Parameters
    ----------
    frame : dict
        The build's ``[frame]`` table.
    arm : ArmGeometry or None
        Its parsed ``[frame.arm]``.
    motors : int, optional
        ``[frame] motors``.

    Returns
    -------
    (tuple of Mode, tuple of str) or None
        Modes marked ``estimated`` with their gyro axis (see
        :func:`clashcheck.model.frame.frame_modes`), and the model's notes.
    """
    from ..model.frame import frame_modes

    model = parse_frame_model(frame, arm, motors=motors)
    if model is None:
        return None
    estimate = estimate_once(model)
    return frame_modes(estimate), estimate.notes


@lru_cache(maxsize=4)
def estimate_once(model: FrameModel, max_frequency_hz: float = 2000.0) -> Any:
    """:func:`~clashcheck.model.frame.estimate_frame`, solved once per model and limit.

    Loading a build for ``frame`` already solves its frame for the check's
    modes; this keeps the command from solving it twice.

    Parameters
    ----------
    model : FrameModel
        The frame (hashable: frozen dataclasses throughout).
    max_frequency_hz : float, optional
        Modes whose low figure lies at or above this are left out [Hz].

    Returns
    -------
    FrameEstimate
    """
    from ..model.frame import estimate_frame

    return estimate_frame(model, max_frequency_hz=max_frequency_hz)
