"""``[frame.arm]`` tables and the material catalog, read into :mod:`clashcheck.model.arm` objects.

Units are checked here, once.
"""

from __future__ import annotations

from functools import cache

from ..errors import MISSING, InputError
from ..model.arm import ARM_KEYS, ArmGeometry, Material
from . import units
from .fields import check_keys

__all__ = ["materials", "material", "parse_arm_table"]

# --------------------------------------------------------------------------
# Material catalog and [frame.arm] parsing


_MATERIAL_KEYS = ("description", "modulus_low", "modulus", "modulus_high",
                  "density_low", "density", "density_high", "source",
                  "shear_modulus", "shear_source")


@cache
def _material_catalog() -> dict[str, Material]:
    """The shipped material catalog, validated into :class:`Material` objects."""
    from .catalog import load_catalog

    out: dict[str, Material] = {}
    for ident, entry in load_catalog("materials").items():
        where = f"materials.toml: {ident}"
        extra = sorted(set(entry) - set(_MATERIAL_KEYS))
        if extra:
            raise InputError(f"{where}.{extra[0]}", "a known material key", extra[0])

        def value(key: str, unit: str) -> float:
            return units.parse(entry.get(key, MISSING), unit, f"{where}.{key}")

        out[ident] = Material(
            id=ident,
            description=str(entry.get("description", "")),
            modulus_pa=value("modulus", "GPa"),
            modulus_low_pa=value("modulus_low", "GPa"),
            modulus_high_pa=value("modulus_high", "GPa"),
            density_kg_m3=value("density", "g/cm^3"),
            density_low_kg_m3=value("density_low", "g/cm^3"),
            density_high_kg_m3=value("density_high", "g/cm^3"),
            source=str(entry.get("source", "")),
            shear_modulus_pa=units.parse_optional(entry.get("shear_modulus"), "GPa",
                                                  f"{where}.shear_modulus"),
        )
    return out


def materials() -> dict[str, Material]:
    """The material catalog, by id.

    Examples
    --------
    >>> "carbon-qi" in materials()
    True
    """
    return dict(_material_catalog())


def material(material_id: object, field: str = "material") -> Material:
    """Look up a catalog material, with a "did you mean" hint for near misses.

    Parameters
    ----------
    material_id : str
        Catalog id, e.g. ``"carbon-qi"``.
    field : str, optional
        Dotted path for error messages.

    Raises
    ------
    InputError
        If the id is not a string or not in the catalog.
    """
    from .catalog import entry

    entry("materials", material_id, field)  # raises with a "did you mean" hint
    assert isinstance(material_id, str)
    return _material_catalog()[material_id]


def _parse_clamp_stiffness(text: object, field_name: str) -> float:
    """Rotational stiffness in N·m per radian (a radian counts as 1, as in SI)."""
    return units.parse(text, "N*m/rad", field_name, example="150 N*m/rad")


def _parse_factor(value: object, field_name: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(field_name, "a bare number from 1 to 2, like 1.1", value)
    return float(value)


def parse_arm_table(
    table: dict,
    *,
    field: str = "frame.arm",
    motor_mass_kg: float | None = None,
    prop_mass_kg: float | None = None,
) -> ArmGeometry:
    """Validate a raw ``[frame.arm]`` table into an :class:`ArmGeometry`.

    Parameters
    ----------
    table : dict
        The table as read from TOML.  Keys (values are strings with units
        unless noted):

        - ``length``: free length from the clamp to the motor centre;
        - ``width`` and ``thickness`` (rectangle; width in the frame's plane),
          or ``outer_diameter`` and ``wall`` (round tube);
        - ``material``: a catalog id; ``modulus`` and/or ``density`` override
          it (and are then exact), or replace it when both are given;
          ``shear_modulus`` (optional) overrides the catalog's shear modulus,
          used for the arms' torsion by the frame model;
        - ``tip_mass``: motor + propeller + hardware; defaults to
          ``motor_mass_kg + prop_mass_kg`` when both are known;
        - ``tip_inertia`` (optional): rotary inertia of the tip body, e.g.
          ``"12 g*cm^2"``;
        - ``clamp_stiffness`` (optional): rotational stiffness of the clamp,
          e.g. ``"150 N*m/rad"``;
        - ``effective_length_factor`` (optional, a bare number from 1 to 2).
    field : str, optional
        Dotted path of the table, for error messages.
    motor_mass_kg, prop_mass_kg : float, optional
        Motor and propeller masses [kg], for the default tip mass.

    Returns
    -------
    ArmGeometry

    Raises
    ------
    InputError
        On unknown keys (with a "did you mean" hint), missing or malformed
        values, wrong units, bad geometry or an unknown material.

    Examples
    --------
    >>> arm = parse_arm_table({"length": "110 mm", "width": "12 mm", "thickness": "5 mm",
    ...                        "material": "carbon-qi", "tip_mass": "48 g"})
    >>> arm.section, round(arm.tip_mass_kg, 3)
    ('rectangular', 0.048)
    """
    if not isinstance(table, dict):
        raise InputError(field, "a table of arm dimensions", table)
    check_keys(table, ARM_KEYS, field)

    def get(key: str, unit: str, example: str) -> float | None:
        return units.parse_optional(table.get(key), unit, f"{field}.{key}", example=example)

    length = units.parse(table.get("length", MISSING), "mm", f"{field}.length",
                         example="110 mm")
    rect = [k for k in ("width", "thickness") if k in table]
    tube = [k for k in ("outer_diameter", "wall") if k in table]
    if rect and tube:
        raise InputError(
            f"{field}.{tube[0]}", "either width and thickness, or outer_diameter and wall",
            table[tube[0]], f"{rect[0]} is also given",
        )
    if not rect and not tube:
        raise InputError(
            f"{field}.width", "a cross-section: width and thickness, or outer_diameter and wall",
            MISSING,
        )
    section = "rectangular" if rect else "tube"
    tip_mass_kg, tip_mass_origin = _tip_mass(table, field, motor_mass_kg, prop_mass_kg)
    return ArmGeometry(
        length_m=length,
        material=_resolve_material(table, field),
        tip_mass_kg=tip_mass_kg,
        section=section,
        width_m=get("width", "mm", "12 mm"),
        thickness_m=get("thickness", "mm", "5 mm"),
        outer_diameter_m=get("outer_diameter", "mm", "16 mm"),
        wall_m=get("wall", "mm", "1 mm"),
        tip_inertia_kg_m2=get("tip_inertia", "kg*m^2", "12 g*cm^2") or 0.0,
        clamp_stiffness_n_m_per_rad=(
            None if table.get("clamp_stiffness") is None
            else _parse_clamp_stiffness(table["clamp_stiffness"], f"{field}.clamp_stiffness")
        ),
        effective_length_factor=(
            None if table.get("effective_length_factor") is None
            else _parse_factor(table["effective_length_factor"],
                               f"{field}.effective_length_factor")
        ),
        tip_mass_origin=tip_mass_origin,
        where=field,
    )


def _tip_mass(
    table: dict, field: str, motor_mass_kg: float | None, prop_mass_kg: float | None
) -> tuple[float, str]:
    if table.get("tip_mass") is not None:
        return units.parse(table["tip_mass"], "g", f"{field}.tip_mass", example="48 g"), "given"
    if motor_mass_kg is not None and prop_mass_kg is not None:
        return float(motor_mass_kg) + float(prop_mass_kg), "motor + prop"
    known = [n for n, v in (("motor", motor_mass_kg), ("propeller", prop_mass_kg)) if v is not None]
    hint = (f"only the {known[0]} mass is known; " if known else "") + (
        "give the motor + propeller + hardware mass"
    )
    raise InputError(f"{field}.tip_mass", "a tip mass like '48 g'", MISSING, hint)


def _resolve_material(table: dict, field: str) -> Material:
    base_material = _resolve_material_moduli(table, field)
    shear = units.parse_optional(table.get("shear_modulus"), "GPa", f"{field}.shear_modulus",
                                 example="19 GPa")
    if shear is None:
        return base_material
    from dataclasses import replace

    return replace(base_material, shear_modulus_pa=shear,
                   source=f"{base_material.source}; shear modulus given explicitly")


def _resolve_material_moduli(table: dict, field: str) -> Material:
    modulus = units.parse_optional(table.get("modulus"), "GPa", f"{field}.modulus",
                                   example="50 GPa")
    density = units.parse_optional(table.get("density"), "g/cm^3", f"{field}.density",
                                   example="1.55 g/cm^3")
    name = table.get("material")
    if name is None:
        for key, value, example in (("modulus", modulus, "50 GPa"),
                                    ("density", density, "1.55 g/cm^3")):
            if value is None:
                raise InputError(
                    f"{field}.{key}", f"a {key} like {example!r}", MISSING,
                    "or name a catalog material: " + ", ".join(sorted(_material_catalog())),
                )
        assert modulus is not None and density is not None
        return Material("custom", "explicit modulus and density", modulus, modulus, modulus,
                        density, density, density, "given", None)
    base = material(name, f"{field}.material")
    e = (base.modulus_low_pa, base.modulus_pa, base.modulus_high_pa)
    r = (base.density_low_kg_m3, base.density_kg_m3, base.density_high_kg_m3)
    if modulus is None and density is None:
        return base
    if modulus is not None:
        e = (modulus, modulus, modulus)
    if density is not None:
        r = (density, density, density)
    given = " and ".join(
        k for k, v in (("modulus", modulus), ("density", density)) if v is not None
    )
    # an explicit modulus scales the catalog's shear modulus in proportion (same Poisson ratio)
    shear = base.shear_modulus_pa if modulus is None else (
        None if base.shear_modulus_pa is None else base.shear_modulus_pa * modulus / base.modulus_pa)
    return Material(base.id, base.description, e[1], e[0], e[2], r[1], r[0], r[2],
                    f"{base.source}; {given} given explicitly", shear)
