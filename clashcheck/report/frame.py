"""Presentation of the frame model: a text table, a JSON-ready dict, close-mode findings and shape pictures.

The numbers come from :func:`clashcheck.model.frame.estimate_frame`,
:func:`clashcheck.model.frame.calibrate_frame` and
:func:`clashcheck.analysis.close_modes.close_modes`; this module only formats
and draws them.  JSON keys carry SI units in their names.

For ``check``: :func:`close_modes_lines` and :func:`close_modes_json` turn the
close pairs of any build's modes into report lines and JSON entries.
"""

from __future__ import annotations

import io
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from ..analysis.close_modes import ClosePair
from ..errors import InputError
from ..model.frame import Calibration, FrameEstimate, FrameMode
from .common import CAUTIONS, JSON_SCHEMA_VERSION, cautions_block, text_block

__all__ = [
    "LEVER_TEXT",
    "frame_table",
    "frame_json",
    "calibration_lines",
    "calibration_json",
    "close_modes_lines",
    "close_modes_json",
    "draw_frame_modes",
    "save_frame_plot",
]

#: What each lever code means, in words.
LEVER_TEXT = {
    "body_inertia": "change the body's inertia about one of the two axes, or stretch the layout",
    "section_aspect": "change the arm's width-to-thickness ratio, which moves flap and lead-lag apart",
    "torsion": "change the arm's torsional stiffness (a tube, or a thicker section) or the motor's "
               "rotary inertia",
    "body_mass": "change the body mass, which moves the heaving mode and not the other",
    "root_stiffness": "change the arm-to-body joint (clamp stiffness) or the arm length",
    "detune_one": "stiffen, or add mass to, the part that carries only one of the two",
}


def _sig(mode: FrameMode) -> str:
    return " ".join(" 0.00" if abs(x) < 0.005 else f"{x:+.2f}" for x in mode.gyro_signature)


def _body_text(est: FrameEstimate) -> list[str]:
    model = est.model
    body, lay, arm = model.body, model.layout, model.arm
    angles = ", ".join(f"{np.degrees(a):.1f}°" for a in lay.angles_rad)
    inertia = " / ".join(f"{x * 1e3:.3g}" for x in body.inertia_kg_m2)
    lines = [
        f"Frame: {lay.arms} arms at {angles}, root radius {lay.root_radius_m * 1e3:.4g} mm"
        + (f" (stretch {lay.stretch:g})" if lay.stretch not in (None, 1.0) else ""),
        f"Body: {body.mass_kg * 1e3:.4g} g, inertia roll/pitch/yaw {inertia} g·m²"
        + (" (estimated from a box)" if body.inertia_origin == "box" else ""),
        f"Arm: {arm.length_m * 1e3:.4g} mm, {arm.material.id}, tip {arm.tip_mass_kg * 1e3:.4g} g; "
        + ("root spring {:.4g} N·m/rad".format(arm.clamp_stiffness_n_m_per_rad)
           if arm.clamp_stiffness_n_m_per_rad is not None else "rigid root"),
    ]
    return lines


def close_modes_lines(pairs: Sequence[ClosePair]) -> list[str]:
    """Close pairs as report lines (empty when there are none).

    Parameters
    ----------
    pairs : sequence of ClosePair
        From :func:`clashcheck.analysis.close_modes.close_modes`.

    Returns
    -------
    list of str
        A heading line and one finding per pair, each saying that the two
        can exchange energy and what would separate them.
    """
    if not pairs:
        return []
    lines = ["Close modes (these can exchange energy):"]
    for p in pairs:
        why = ("their half-power bands overlap" if p.basis == "damping"
               else f"closer than {p.separation * 100:.0f} %")
        same = "at the same frequency" if p.gap < 1e-6 else f"{p.gap * 100:.1f} % apart"
        levers = "; or ".join(LEVER_TEXT[code] for code in p.levers)
        lines.append(
            f"- {p.lower} ({p.lower_hz:.1f} Hz) and {p.upper} ({p.upper_hz:.1f} Hz) are {same} "
            f"({why}): these two can exchange energy. To separate them: {levers}."
        )
    return lines


def close_modes_json(pairs: Sequence[ClosePair]) -> list[dict[str, Any]]:
    """Close pairs as JSON entries.

    Parameters
    ----------
    pairs : sequence of ClosePair
        From :func:`clashcheck.analysis.close_modes.close_modes`.

    Returns
    -------
    list of dict
        ``lower``, ``upper``, ``lower_hz``, ``upper_hz``, ``gap`` and
        ``separation`` (fractions), ``basis``, ``levers`` (codes) and
        ``advice`` (words).
    """
    return [
        {"lower": p.lower, "upper": p.upper, "lower_hz": p.lower_hz, "upper_hz": p.upper_hz,
         "gap": p.gap, "separation": p.separation, "basis": p.basis, "levers": list(p.levers),
         "advice": [LEVER_TEXT[c] for c in p.levers]}
        for p in pairs
    ]


def calibration_lines(cal: Calibration) -> list[str]:
    """The fit as report lines: fitted values, then the pairing and residual per mode.

    Parameters
    ----------
    cal : Calibration
        From :func:`clashcheck.model.frame.calibrate_frame`.

    Returns
    -------
    list of str
    """
    from tabulate import tabulate

    lines = [f"Calibration against {len(cal.pairs)} measured mode(s):",
             f"- root spring (clamp_stiffness): {cal.clamp_stiffness_n_m_per_rad:.4g} N·m/rad"]
    if cal.modulus_fitted:
        mat = cal.initial.arm.material
        lines.append(f"- modulus: {cal.modulus_pa * 1e-9:.4g} GPa (range "
                     f"{mat.modulus_low_pa * 1e-9:.4g}–{mat.modulus_high_pa * 1e-9:.4g} GPa)")
    lines.append(f"- rms residual: {cal.rms_residual * 100:.2f} %")
    rows = [[p.measured_name, f"{p.measured_hz:.1f}", f"{p.model_index}", p.model_pattern,
             f"{p.model_before_hz:.1f}", f"{p.model_after_hz:.1f}", f"{p.residual * 100:+.2f} %"]
            for p in cal.pairs]
    lines += ["", tabulate(rows, headers=["measured", "Hz", "model mode", "pattern", "before Hz",
                                          "after Hz", "residual"],
                           disable_numparse=True,
                           colalign=("left", "right", "right", "left", "right", "right", "right"))]
    lines += ["", "To predict a change with the calibrated model, put "
              f"clamp_stiffness = \"{cal.clamp_stiffness_n_m_per_rad:.4g} N*m/rad\""
              + (f" and modulus = \"{cal.modulus_pa * 1e-9:.4g} GPa\"" if cal.modulus_fitted else "")
              + " in [frame.arm], then change the build and run 'clashcheck frame' again."]
    lines += [f"- {n}" for n in cal.notes]
    return lines


def calibration_json(cal: Calibration) -> dict[str, Any]:
    """The fit as a JSON-ready dict.

    Parameters
    ----------
    cal : Calibration
        From :func:`clashcheck.model.frame.calibrate_frame`.

    Returns
    -------
    dict
        ``clamp_stiffness_n_m_per_rad``, ``modulus_pa``, ``modulus_fitted``,
        ``rms_residual`` (fraction), ``pairs`` (each ``measured``,
        ``measured_hz``, ``model_index``, ``model_pattern``,
        ``model_before_hz``, ``model_after_hz``, ``residual``) and ``notes``.
    """
    return {
        "clamp_stiffness_n_m_per_rad": cal.clamp_stiffness_n_m_per_rad,
        "modulus_pa": cal.modulus_pa,
        "modulus_fitted": cal.modulus_fitted,
        "rms_residual": cal.rms_residual,
        "pairs": [{"measured": p.measured_name, "measured_hz": p.measured_hz,
                   "model_index": p.model_index, "model_pattern": p.model_pattern,
                   "model_before_hz": p.model_before_hz, "model_after_hz": p.model_after_hz,
                   "residual": p.residual} for p in cal.pairs],
        "notes": list(cal.notes),
    }


def frame_table(est: FrameEstimate, pairs: Sequence[ClosePair] = (),
                calibration: Calibration | None = None) -> str:
    """The frame's modes as a plain-text report, ending with the cautions.

    Parameters
    ----------
    est : FrameEstimate
        From :func:`clashcheck.model.frame.estimate_frame` (the calibrated
        model's, when there is a calibration).
    pairs : sequence of ClosePair, optional
        Close pairs among the estimate's modes.
    calibration : Calibration, optional
        A fit against measured modes.

    Returns
    -------
    str
        Several lines of text, with a trailing newline.
    """
    from tabulate import tabulate

    lines = _body_text(est) + [""]
    if calibration is not None:
        lines += calibration_lines(calibration) + [""]
    rows = [[f"{m.index}", f"{m.frequency_hz:.1f}",
             f"{m.frequency_low_hz:.0f}–{m.frequency_high_hz:.0f}", m.pattern, m.axis, _sig(m),
             f"{m.effective_mass_kg * 1e3:.4g}"] for m in est.modes]
    if rows:
        lines.append(tabulate(rows, headers=["mode", "Hz", "range Hz", "pattern", "axis",
                                             "gyro roll pitch yaw", "eff. mass g"],
                              disable_numparse=True,
                              colalign=("right", "right", "right", "left", "left", "right",
                                        "right")))
    else:
        lines.append(f"No elastic mode below {est.max_frequency_hz:.0f} Hz.")
    lines += ["", "gyro: body rotation about roll, pitch, yaw per unit modal motion, normalised "
              "(squares = share of the mode's energy in the body's turning); axis none: the "
              "gyro does not see the mode."]
    found = close_modes_lines(pairs)
    if found:
        lines += [""] + found
    lines += text_block("Notes", est.notes) + cautions_block()
    return "\n".join(lines) + "\n"


def frame_json(est: FrameEstimate, pairs: Sequence[ClosePair] = (),
               calibration: Calibration | None = None) -> dict[str, Any]:
    """The frame's modes as a JSON-ready dict.

    Parameters
    ----------
    est : FrameEstimate
        From :func:`clashcheck.model.frame.estimate_frame`.
    pairs : sequence of ClosePair, optional
        Close pairs among the estimate's modes.
    calibration : Calibration, optional
        A fit against measured modes.

    Returns
    -------
    dict
        ``schema_version``, ``frame`` (``arms``, ``angles_deg``,
        ``root_radius_m``, ``stretch``, ``body_mass_kg``,
        ``body_inertia_kg_m2``, ``body_inertia_origin``, ``arm_length_m``,
        ``material``, ``tip_mass_kg``, ``clamp_stiffness_n_m_per_rad``,
        ``elements_per_arm``), ``max_frequency_hz``, ``modes`` (each
        ``index``, ``frequency_hz``, ``frequency_low_hz``,
        ``frequency_high_hz``, ``pattern``, ``plane``, ``gyro_signature``
        [roll, pitch, yaw], ``axis``, ``effective_mass_kg``,
        ``arm_amplitudes``, ``origin``), ``close_modes``, ``calibration``
        (or null), ``rigid_body_hz``, ``notes`` and ``cautions``.
    """
    model = est.model
    body, lay, arm = model.body, model.layout, model.arm
    return {
        "schema_version": JSON_SCHEMA_VERSION,
        "frame": {
            "arms": lay.arms,
            "angles_deg": [float(np.degrees(a)) for a in lay.angles_rad],
            "root_radius_m": lay.root_radius_m,
            "stretch": lay.stretch,
            "body_mass_kg": body.mass_kg,
            "body_inertia_kg_m2": list(body.inertia_kg_m2),
            "body_inertia_origin": body.inertia_origin,
            "arm_length_m": arm.length_m,
            "material": arm.material.id,
            "tip_mass_kg": arm.tip_mass_kg,
            "clamp_stiffness_n_m_per_rad": arm.clamp_stiffness_n_m_per_rad,
            "elements_per_arm": model.elements_per_arm,
        },
        "max_frequency_hz": est.max_frequency_hz,
        "modes": [
            {"index": m.index, "frequency_hz": m.frequency_hz,
             "frequency_low_hz": m.frequency_low_hz, "frequency_high_hz": m.frequency_high_hz,
             "pattern": m.pattern, "plane": m.plane, "gyro_signature": list(m.gyro_signature),
             "axis": m.axis, "effective_mass_kg": m.effective_mass_kg,
             "arm_amplitudes": list(m.arm_amplitudes), "origin": "estimated"}
            for m in est.modes
        ],
        "close_modes": close_modes_json(pairs),
        "calibration": None if calibration is None else calibration_json(calibration),
        "rigid_body_hz": list(est.rigid_body_hz),
        "notes": list(est.notes),
        "cautions": list(CAUTIONS),
    }


# ---------------------------------------------------------------------------
# shape pictures


def _deformed(est: FrameEstimate, mode: FrameMode) -> tuple[list[np.ndarray], list[np.ndarray], float]:
    """Undeformed and deformed arm polylines, root to tip, and the exaggeration factor."""
    nodes = est.nodes
    span = est.model.span_m
    largest = float(np.max(np.abs(mode.shape[:, :3])))
    scale = 0.15 * span / largest if largest > 0 else 0.0
    rest, moved = [], []
    for ids in est.arm_nodes:
        rest.append(nodes[list(ids)])
        moved.append(nodes[list(ids)] + scale * mode.shape[list(ids), :3])
    return rest, moved, scale


def draw_frame_modes(fig: Any, est: FrameEstimate, count: int = 8) -> None:
    """Draw plan and side views of the first ``count`` modes onto a matplotlib figure.

    Each mode gets a row: plan view (x to the nose up the page, y to the
    right) and side view from the right (x to the right, z up the page is
    −z, as the frame flies).  Undeformed arms are grey, deformed ones
    coloured, the body black (centre to each root), deformation exaggerated
    so the largest motion is 15 % of the span (root radius plus arm length).
    Artists carry a ``gid``: ``rest:<mode>:<arm>``, ``plan:<mode>:<arm>``,
    ``side:<mode>:<arm>``, ``body:<mode>:<arm>`` and ``body:<mode>``.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        An empty figure.
    est : FrameEstimate
        From :func:`clashcheck.model.frame.estimate_frame`.
    count : int, optional
        How many modes to draw (at most the estimate's).

    Returns
    -------
    None
    """
    modes = est.modes[:count]
    if not modes:
        ax = fig.add_subplot(1, 1, 1)
        ax.text(0.5, 0.5, "no elastic mode below the limit", ha="center")
        return
    axes = fig.subplots(len(modes), 2, squeeze=False)
    for row, mode in enumerate(modes):
        rest, moved, scale = _deformed(est, mode)
        plan, side = axes[row]
        body_move = mode.shape[0, :3] * scale
        for a, (r, m) in enumerate(zip(rest, moved, strict=True)):
            plan.plot(r[:, 1], r[:, 0], color="0.75", lw=1, gid=f"rest:{mode.index}:{a}")
            plan.plot(m[:, 1], m[:, 0], color="C0", lw=2, gid=f"plan:{mode.index}:{a}")
            side.plot(r[:, 0], -r[:, 2], color="0.75", lw=1, gid=f"rest:{mode.index}:{a}:side")
            side.plot(m[:, 0], -m[:, 2], color="C3", lw=2, gid=f"side:{mode.index}:{a}")
        for a, m in enumerate(moved):      # the rigid body: centre to each (moved) root
            plan.plot([body_move[1], m[0, 1]], [body_move[0], m[0, 0]], color="k", lw=1,
                      gid=f"body:{mode.index}:{a}")
            side.plot([body_move[0], m[0, 0]], [-body_move[2], -m[0, 2]], color="k", lw=1,
                      gid=f"body:{mode.index}:{a}:side")
        plan.plot([body_move[1]], [body_move[0]], "ks", ms=4, gid=f"body:{mode.index}")
        plan.set_title(f"{mode.index}: {mode.frequency_hz:.0f} Hz, {mode.pattern}\n"
                       "plan; largest motion drawn at 15 % of span", fontsize=8)
        side.set_title(f"gyro axis {mode.axis}\nside view from the right", fontsize=8)
        plan.set_aspect("equal")
        side.set_aspect("equal", adjustable="datalim")
        for ax in (plan, side):
            ax.tick_params(labelsize=6)
        plan.set_xlabel("y [m], right", fontsize=7)
        plan.set_ylabel("x [m], nose", fontsize=7)
        side.set_xlabel("x [m], nose", fontsize=7)
        side.set_ylabel("up [m]", fontsize=7)


def save_frame_plot(path: str | Path, est: FrameEstimate, *, count: int = 8,
                    inputs: Sequence[str | Path] = (), provenance: str | None = None) -> None:
    """Write the shape pictures to ``path`` (PNG, SVG or PDF by suffix), atomically.

    Parameters
    ----------
    path : str or Path
        The picture file.
    est : FrameEstimate
        From :func:`clashcheck.model.frame.estimate_frame`.
    count : int, optional
        How many modes to draw.
    inputs : sequence of paths, optional
        Files never to overwrite.
    provenance : str, optional
        Provenance line printed in small type (:mod:`clashcheck.report.provenance`).

    Returns
    -------
    None

    Raises
    ------
    InputError
        For an unknown suffix, or when matplotlib is missing.
    """
    from ..files import check_target, write_output
    from .campbell import PLOT_FORMATS, require_matplotlib

    suffix = Path(path).suffix.lower().lstrip(".")
    if suffix not in PLOT_FORMATS:
        raise InputError("plot", "a file name ending in " + ", ".join("." + s for s in PLOT_FORMATS),
                         str(path))
    check_target(Path(path), inputs)
    figure_cls, canvas_cls = require_matplotlib()
    n = max(1, min(count, len(est.modes)))
    fig = figure_cls(figsize=(8.0, 2.6 * n), layout="constrained")
    canvas_cls(fig)
    if provenance:  # as a suptitle, so the constrained layout keeps room for it
        fig.suptitle(provenance, fontsize=6, x=0.005, ha="left", color="#666666", gid="label:provenance")
    draw_frame_modes(fig, est, count)
    buffer = io.BytesIO()
    fig.savefig(buffer, format=suffix, dpi=110, metadata={"Date": None} if suffix == "svg" else None)
    write_output(path, buffer.getvalue(), inputs=inputs)
