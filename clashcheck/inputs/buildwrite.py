"""Build files out: a :class:`~clashcheck.model.build.Build` as build-file TOML.

The inverse of :func:`clashcheck.inputs.buildfile.parse_build`: every part is
written out in full (no catalog references, so the file does not change when
the catalog does), every mode as its own ``[[frame.modes]]`` table with the
figures the build holds (a shifted arm mode keeps its shifted frequency and
damping), and every physical value as a string with units (SI, so the build loader
reads it back to the same float; throttles in %).  TOML is written by ``tomli_w``.

``pick --write-build`` uses it, so ``check`` and ``compare`` can be run on
exactly what ``pick`` scored.  ``[frame.arm]`` is not written: its modes are
already written as figures (a second estimate would not add anything), and
the arm geometry is not a figure the build holds as text.
"""

from __future__ import annotations

from typing import Any

from ..model.build import Build, CheckSettings, Flight
from ..model.modes import Mode

__all__ = ["build_document", "dump_build"]


def _q(value: float, unit: str, scale: float = 1.0) -> str:
    """A value string the unit parser reads back to ``value`` (shortest round-trip repr)."""
    return f"{float(value) * scale!r} {unit}"


def _mode_table(mode: Mode) -> dict[str, Any]:
    table: dict[str, Any] = {"name": mode.name, "frequency": _q(mode.frequency_hz, "Hz")}
    if mode.is_range:
        assert mode.frequency_low_hz is not None and mode.frequency_high_hz is not None
        table["frequency_low"] = _q(mode.frequency_low_hz, "Hz")
        table["frequency_high"] = _q(mode.frequency_high_hz, "Hz")
    if mode.damping is not None:
        table["damping"] = float(mode.damping)
    table["axis"] = mode.axis
    table["kind"] = mode.kind
    source = mode.source
    if mode.origin != "manual":
        source = f"{mode.origin}" + (f": {source}" if source else "")
    if source:
        table["source"] = source
    for key in ("damping_low", "damping_high", "confidence"):
        value = mode.details.get(key)
        if isinstance(value, float):
            table[key] = value
    method = mode.details.get("method")
    if isinstance(method, str):
        table["method"] = method
    return table


def _flight_table(fl: Flight) -> dict[str, Any]:
    table = {"idle": _q(fl.idle, "%", 100), "max": _q(fl.max, "%", 100), "cruise": _q(fl.cruise, "%", 100)}
    if fl.hover is not None:
        table["hover"] = _q(fl.hover, "%", 100)
    table["altitude"] = _q(fl.altitude_m, "m")
    table["temperature_offset"] = _q(fl.temperature_offset_k, "K")
    return table


def _check_table(ck: CheckSettings) -> dict[str, Any]:
    policy = ck.policy
    table: dict[str, Any] = {"policy": policy.name}
    if policy.fixed_margin is not None:
        table["margin"] = _q(policy.fixed_margin, "%", 100)
    table["default_damping"] = float(policy.default_damping)
    table["pack_states"] = list(ck.pack_states)
    table["families"] = list(ck.families)
    table["weight_floor"] = float(ck.weight_floor)
    if ck.custom_orders:
        table["orders"] = [{"order": float(n), "label": label, "weight": float(w)} for n, label, w in ck.custom_orders]
    if ck.order_strengths:
        table["order_strengths"] = [{"order": float(n), "family": fam, "relative_strength": float(s)}
                                    for n, fam, s in ck.order_strengths]
    return table


def build_document(build: Build, *, description: str | None = None) -> dict[str, Any]:
    """The build-file document (a dict for ``tomli_w``) of ``build``.

    Parameters
    ----------
    build : Build
        The build to write out.
    description : str, optional
        Free text for the file's ``description`` key (where it came from).

    Returns
    -------
    dict
        Tables ``frame``, ``motor``, ``prop``, ``battery`` and, as the build
        has them, ``sensor``, ``flight``, ``check``; values as strings with
        units, counts and ratios bare.
    """
    m, p, pack = build.motor, build.prop, build.pack
    doc: dict[str, Any] = {"name": build.name}
    if description:
        doc["description"] = description
    doc["frame"] = {"motors": build.motors, "mass": _q(build.mass_kg, "kg"),
                    "modes": [_mode_table(mode) for mode in build.modes]}
    motor: dict[str, Any] = {"kv": _q(m.kv_hz_per_v, "rpm/V", 60), "poles": m.poles, "slots": m.slots,
                             "resistance": _q(m.resistance_ohm, "ohm"),
                             "no_load_current": _q(m.no_load_current_a, "A")}
    if m.mass_kg is not None:
        motor["mass"] = _q(m.mass_kg, "kg")
    doc["motor"] = motor
    prop: dict[str, Any] = {"diameter": _q(p.diameter_m, "m"), "blades": p.blades}
    if p.pitch_m is not None:
        prop["pitch"] = _q(p.pitch_m, "m")
    if p.thrust_coefficient is not None:
        prop["thrust_coefficient"] = float(p.thrust_coefficient)
    if p.power_coefficient is not None:
        prop["power_coefficient"] = float(p.power_coefficient)
    if p.mass_kg is not None:
        prop["mass"] = _q(p.mass_kg, "kg")
    doc["prop"] = prop
    chem = pack.chemistry
    doc["battery"] = {"cells": pack.cells, "chemistry": chem.id,
                      "cell_resistance": _q(pack.cell_resistance_ohm, "ohm"),
                      "cell_full": _q(chem.full_v, "V"), "cell_nominal": _q(chem.nominal_v, "V"),
                      "cell_empty": _q(chem.empty_v, "V")}
    if build.sensor is not None:
        s = build.sensor
        sensor: dict[str, Any] = {"sample_rate": _q(s.sample_rate_hz, "Hz"), "antialias_order": s.antialias_order}
        if s.antialias_cutoff_hz is not None:
            sensor["antialias_cutoff"] = _q(s.antialias_cutoff_hz, "Hz")
        doc["sensor"] = sensor
    doc["flight"] = _flight_table(build.flight)
    doc["check"] = _check_table(build.check)
    return doc


def dump_build(build: Build, *, description: str | None = None, header: str = "") -> str:
    """``build`` as build-file TOML text.

    Parameters
    ----------
    build : Build
        The build to write out.
    description : str, optional
        Free text for the file's ``description`` key.
    header : str, optional
        Comment lines put before the document (each gets a ``#``).

    Returns
    -------
    str
        TOML text that :func:`clashcheck.inputs.buildfile.parse_build` reads
        back to the same parts, modes and settings.
    """
    import tomli_w

    comment = "".join(f"# {line}".rstrip() + "\n" for line in header.splitlines())
    return comment + tomli_w.dumps(build_document(build, description=description))
