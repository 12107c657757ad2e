"""Presentation of arm estimates: a text table and a JSON-ready dict.

The numbers come from :func:`clashcheck.arm.estimate_arm`; this module only
formats them.  Frequencies in JSON are ``*_hz``, masses ``*_kg``, lengths
``*_m``, moduli ``*_pa`` and densities ``*_kg_m3`` (SI throughout); the table
shows everyday units.
"""

from __future__ import annotations

from typing import Any

from ..model.arm import ArmEstimate, ArmGeometry, Material
from .common import CAUTIONS, JSON_SCHEMA_VERSION, cautions_block, text_block

__all__ = ["CAUTIONS", "arm_table", "arm_json"]



def _mm(value_m: float | None) -> str:
    return "-" if value_m is None else f"{value_m * 1e3:.4g} mm"


def _range(low: float, mid: float, high: float, scale: float, unit: str) -> str:
    if low == high:
        return f"{mid * scale:.4g} {unit}"
    return f"{mid * scale:.4g} {unit} ({low * scale:.4g}–{high * scale:.4g})"


def _section_text(geometry: ArmGeometry) -> str:
    if geometry.section == "tube":
        return (f"round tube {_mm(geometry.outer_diameter_m)} outer, "
                f"{_mm(geometry.wall_m)} wall")
    return (f"rectangular {_mm(geometry.width_m)} wide × "
            f"{_mm(geometry.thickness_m)} thick")


def _clamp_text(geometry: ArmGeometry) -> str:
    if geometry.clamp_stiffness_n_m_per_rad is not None:
        return f"clamp: rotational spring {geometry.clamp_stiffness_n_m_per_rad:.4g} N·m/rad"
    if geometry.effective_length_factor is not None:
        return f"clamp: effective length × {geometry.effective_length_factor:g}"
    return "clamp taken as rigid"


def arm_table(estimate: ArmEstimate) -> str:
    """The estimate as a plain-text report, ending with the cautions.

    Parameters
    ----------
    estimate : ArmEstimate
        Result of :func:`clashcheck.arm.estimate_arm`.

    Returns
    -------
    str
        Several lines of text, no trailing newline.
    """
    from tabulate import tabulate

    geo, mat = estimate.geometry, estimate.material
    modulus = _range(mat.modulus_low_pa, mat.modulus_pa, mat.modulus_high_pa, 1e-9, "GPa")
    density = _range(mat.density_low_kg_m3, mat.density_kg_m3, mat.density_high_kg_m3, 1e-3,
                     "g/cm³")
    lines = [
        f"Arm: {_mm(geo.length_m)} free length, {_section_text(geo)}",
        f"Material: {mat.id} — E {modulus}, density {density}",
        f"Tip mass {estimate.tip_mass_kg * 1e3:.4g} g, arm mass "
        f"{estimate.beam_mass_kg * 1e3:.4g} g (ratio {estimate.mass_ratio:.3g}); "
        f"{_clamp_text(geo)}.",
        "",
    ]
    rows = []
    for est in estimate.estimates:
        diff = "" if est.rayleigh_difference is None else f"{est.rayleigh_difference * 100:+.3f} %"
        rows.append([
            est.name,
            est.plane,
            f"{est.frequency_low_hz:.1f}",
            f"{est.frequency_hz:.1f}",
            f"{est.frequency_high_hz:.1f}",
            "" if est.rayleigh_hz is None else f"{est.rayleigh_hz:.1f}",
            diff,
        ])
    if rows:
        lines.append(tabulate(
            rows,
            headers=["mode", "plane", "low Hz", "nominal Hz", "high Hz", "Rayleigh Hz",
                     "Rayleigh − exact"],
            disable_numparse=True,
            colalign=("left", "left", "right", "right", "right", "right", "right"),
        ))
    else:
        lines.append(f"No bending mode below {estimate.max_frequency_hz:.0f} Hz.")
    methods = sorted({est.method for est in estimate.estimates})
    if methods:
        lines += ["", "Method: " + "; ".join(methods) + "."]
    lines += text_block("Notes", estimate.notes) + cautions_block()
    return "\n".join(lines)


def _material_json(mat: Material) -> dict[str, Any]:
    return {
        "id": mat.id,
        "description": mat.description,
        "modulus_pa": mat.modulus_pa,
        "modulus_low_pa": mat.modulus_low_pa,
        "modulus_high_pa": mat.modulus_high_pa,
        "density_kg_m3": mat.density_kg_m3,
        "density_low_kg_m3": mat.density_low_kg_m3,
        "density_high_kg_m3": mat.density_high_kg_m3,
        "source": mat.source,
    }


def arm_json(estimate: ArmEstimate) -> dict[str, Any]:
    """The estimate as a JSON-ready dict (SI units, names ending in the unit).

    Top-level keys: ``arm``, ``material``, ``max_frequency_hz``, ``modes``,
    ``notes`` and ``cautions``.  Each entry of ``modes`` has ``name``,
    ``plane``, ``mode_index``, ``frequency_hz``, ``frequency_low_hz``,
    ``frequency_high_hz``, ``frequency_parameter``, ``rayleigh_hz`` and
    ``rayleigh_difference`` (first mode of a plane only, else null; a
    fraction), ``method`` and ``origin`` (always ``"estimated"``).

    Parameters
    ----------
    estimate : ArmEstimate
        Result of :func:`clashcheck.arm.estimate_arm`.

    Returns
    -------
    dict
    """
    geo = estimate.geometry
    return {
        "schema_version": JSON_SCHEMA_VERSION,
        "arm": {
            "length_m": geo.length_m,
            "model_length_m": geo.model_length_m,
            "section": geo.section,
            "width_m": geo.width_m,
            "thickness_m": geo.thickness_m,
            "outer_diameter_m": geo.outer_diameter_m,
            "wall_m": geo.wall_m,
            "tip_mass_kg": geo.tip_mass_kg,
            "tip_mass_origin": geo.tip_mass_origin,
            "tip_inertia_kg_m2": geo.tip_inertia_kg_m2,
            "beam_mass_kg": estimate.beam_mass_kg,
            "mass_ratio": estimate.mass_ratio,
            "clamp": {
                "rigid": geo.clamp_rigid,
                "stiffness_n_m_per_rad": geo.clamp_stiffness_n_m_per_rad,
                "effective_length_factor": geo.effective_length_factor,
            },
        },
        "material": _material_json(estimate.material),
        "max_frequency_hz": estimate.max_frequency_hz,
        "modes": [
            {
                "name": est.name,
                "plane": est.plane,
                "mode_index": est.mode_index,
                "frequency_hz": est.frequency_hz,
                "frequency_low_hz": est.frequency_low_hz,
                "frequency_high_hz": est.frequency_high_hz,
                "frequency_parameter": est.frequency_parameter,
                "rayleigh_hz": est.rayleigh_hz,
                "rayleigh_difference": est.rayleigh_difference,
                "method": est.method,
                "origin": "estimated",
            }
            for est in estimate.estimates
        ],
        "notes": list(estimate.notes),
        "cautions": list(CAUTIONS),
    }
