"""Build files: load, validate and resolve catalog references.

A build file is TOML with tables ``[frame]`` (with ``[[frame.modes]]``),
``[motor]``, ``[prop]``, ``[battery]`` and optional ``[sensor]``,
``[flight]``, ``[check]`` (DESIGN.md, interface contract).  Physical values
are strings with units; counts and ratios are bare numbers.  A part may name
a catalog entry with ``catalog = "id"`` and override any of its fields.

Units are checked here, once; everything this module returns holds plain SI
floats.  Unknown keys are refused with a "did you mean" hint.  Nothing in a
build file is evaluated as code.
"""

from __future__ import annotations

import math
import tomllib
from pathlib import Path
from typing import Any

from ..errors import MISSING, InputError
from ..model.battery import PACK_STATES, Chemistry, Pack
from ..model.build import (
    DEFAULT_DWELL_SPREAD,
    Build,
    CheckSettings,
    Flight,
    MeasuredModes,
    ThrottleOccupancy,
)
from ..model.excitation import FAMILIES, ORDER_FAMILIES, Sensor
from ..model.modes import MODE_AXES, MODE_KINDS, POLICIES, MarginPolicy, Mode
from ..model.motor import Motor
from ..model.propeller import Propeller
from . import fields as f
from .catalog import entry

__all__ = [
    "load_build",
    "load_build_data",
    "parse_build",
    "load_modes_file",
    "parse_mode",
    "parse_motor",
    "parse_prop",
    "parse_pack_chemistry",
    "MAX_FILE_BYTES",
]

#: Largest build or modes file read [bytes].
MAX_FILE_BYTES = 1_000_000
#: Most modes in a build (its own and its catalog frame's) or in a modes file.
MAX_MODES = 200

_TOP_KEYS = ("name", "description", "frame", "motor", "prop", "battery", "sensor", "flight", "check")
_FRAME_KEYS = ("catalog", "motors", "mass", "modes", "arm", "wheelbase", "description", "body", "layout")
_MODE_KEYS = (
    "name", "frequency", "damping", "axis", "kind", "source",
    "damping_low", "damping_high", "confidence", "method", "frequency_low", "frequency_high",
)
#: Damping against amplitude in a modes file (issue 14; see :func:`_amplitude_damping`).
_AMPLITUDE_KEYS = (
    "decay", "damping_model", "viscous_damping", "viscous_damping_low", "viscous_damping_high",
    "friction_drop_per_cycle", "friction_drop_per_cycle_low", "friction_drop_per_cycle_high",
    "amplitude_low_rec", "amplitude_high_rec", "damping_at_amplitude_low",
    "damping_at_amplitude_high", "damping_exponent", "taps_combined", "taps_alike",
    "operating_amplitude_rec",
)
_MOTOR_KEYS = ("catalog", "kv", "poles", "slots", "resistance", "no_load_current", "mass", "stator", "description")
_PROP_KEYS = (
    "catalog", "diameter", "pitch", "blades", "thrust_coefficient", "power_coefficient", "mass", "description",
)
_BATTERY_KEYS = ("cells", "chemistry", "cell_resistance", "cell_full", "cell_nominal", "cell_empty")
_CHEMISTRY_KEYS = ("description", "full", "nominal", "empty", "typical_cell_resistance", "source")
_SENSOR_KEYS = ("sample_rate", "antialias_cutoff", "antialias_order")
_FLIGHT_KEYS = ("idle", "max", "cruise", "hover", "altitude", "temperature_offset", "dwell_spread", "cruise_dwell")
_CHECK_KEYS = (
    "policy", "margin", "default_damping", "pack_states", "families", "orders", "order_strengths", "weight_floor",
    "significance_floor",
)
_ORDER_KEYS = ("order", "label", "weight")
_STRENGTH_KEYS = ("order", "family", "relative_strength")
_FRACTION = {"minimum": 0.0, "maximum": 1.0, "range_text": "from 0 % to 100 %"}


def _read_toml(path: str | Path, what: str) -> dict[str, Any]:
    p = Path(path)
    try:
        size = p.stat().st_size
    except OSError as exc:
        raise InputError(str(path), f"a readable {what}", exc.strerror or str(exc)) from None
    if not p.is_file():
        raise InputError(str(path), f"a {what} (a file)", "a folder" if p.is_dir() else "not a file")
    if size > MAX_FILE_BYTES:
        raise InputError(str(path), f"a {what} of at most {MAX_FILE_BYTES} bytes", f"{size} bytes")
    data = p.read_bytes()
    return _decode(data, str(path))


def _decode(data: bytes, name: str) -> dict[str, Any]:
    try:
        textual = data.decode("utf-8").removeprefix("\ufeff")  # a byte-order mark is no content
    except UnicodeDecodeError as exc:
        raise InputError(name, "UTF-8 text", f"byte 0x{data[exc.start]:02x} at offset {exc.start}") from None
    try:
        return tomllib.loads(textual)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(name, "valid TOML", str(exc)) from None
    except RecursionError:
        raise InputError(name, "valid TOML", "nesting too deep") from None


def _merge_catalog(raw: dict[str, Any], kind: str, where: str, keys: tuple[str, ...]) -> dict[str, Any]:
    f.check_keys(raw, keys, where)
    if "catalog" not in raw:
        return raw
    base = entry(kind, raw["catalog"], f"{where}.catalog")
    merged = {k: v for k, v in base.items() if k in keys}
    merged.update({k: v for k, v in raw.items() if k != "catalog"})
    return merged


def parse_mode(raw: dict[str, Any], where: str, origin: str) -> Mode:
    """One ``[[frame.modes]]`` table → :class:`~clashcheck.modes.Mode`.

    Parameters
    ----------
    raw : dict
        The table as read from TOML: ``name``, ``frequency`` (a quantity
        string such as ``"212 Hz"``), optional ``damping`` (ratio), ``axis``,
        ``kind``, ``source``, ``frequency_low``/``frequency_high`` [Hz] and the
        measurement keys.
    where : str
        Field path of the table (e.g. ``"frame.modes[0]"``), for error messages.
    origin : str
        Origin stamped on the mode: catalog, measured, estimated, manual or
        shifted.

    Returns
    -------
    Mode
        The mode, frequencies in Hz, damping as a ratio.

    Raises
    ------
    InputError
        On an unknown key, a missing name or frequency, or a value of the
        wrong unit or out of range.
    """
    f.check_keys(raw, _MODE_KEYS + _AMPLITUDE_KEYS, where)
    name = f.text(raw, "name", where, required=True)
    assert name is not None
    if not name.strip():
        raise InputError(f"{where}.name", "a non-empty name", name)
    freq = f.quantity(
        raw, "frequency", where, "Hz", "212 Hz", required=True, minimum=0.1,
        maximum=1e5, range_text="from 0.1 Hz to 100 kHz",
    )
    assert freq is not None
    spread = {}
    for key in ("frequency_low", "frequency_high"):  # an estimate's plausible range (written by pick)
        spread[key] = f.quantity(raw, key, where, "Hz", "200 Hz", minimum=0.0, exclusive_minimum=True,
                                 maximum=1e5, range_text="above 0 Hz and up to 100 kHz")
    f_low, f_high = spread["frequency_low"], spread["frequency_high"]
    if (f_low is not None and f_low > freq) or (f_high is not None and f_high < freq):
        raise InputError(f"{where}.frequency_low", "frequency_low ≤ frequency ≤ frequency_high",
                         f"{f_low} / {freq} / {f_high} Hz")
    damping = f.ratio(raw, "damping", where, low=0.0, high=1.0, what="a damping ratio")
    details: dict[str, object] = {}
    for key in ("damping_low", "damping_high"):
        value = f.ratio(raw, key, where, low=0.0, high=1.0, what="a damping ratio")
        if value is not None:
            details[key] = value
    low = f.ratio(raw, "damping_low", where, low=0.0, high=1.0, what="a damping ratio")
    high = f.ratio(raw, "damping_high", where, low=0.0, high=1.0, what="a damping ratio")
    if low is not None and high is not None and low > high:
        raise InputError(f"{where}.damping_high", f"a damping ratio not below damping_low ({low:g})",
                         raw["damping_high"])
    if damping is not None and ((low is not None and damping < low) or (high is not None and damping > high)):
        span = f"from {low if low is not None else 0:g} to {high if high is not None else 1:g}"
        raise InputError(f"{where}.damping", f"a damping ratio within its own stated range ({span})",
                         raw["damping"])
    confidence = f.ratio(raw, "confidence", where, low=0.0, high=1.0, open_low=False, open_high=False,
                         what="a confidence")
    if confidence is not None:
        details["confidence"] = confidence
    method = f.text(raw, "method", where)
    if method is not None:
        details["method"] = method
    damping = _amplitude_damping(raw, where, details, damping)
    return Mode(
        name=name,
        frequency_hz=freq,
        damping=damping,
        axis=f.choice(raw, "axis", where, MODE_AXES, default="any") or "any",
        kind=f.choice(raw, "kind", where, MODE_KINDS, default="other") or "other",
        origin=origin,
        source=f.text(raw, "source", where, default="") or "",
        frequency_low_hz=f_low,
        frequency_high_hz=f_high,
        details=details,
    )


def _amplitude_damping(raw: dict[str, Any], where: str, details: dict[str, object],
                       damping: float | None) -> float | None:
    """The ζ ``check`` uses for a mode whose damping depends on amplitude.

    With ``operating_amplitude_rec`` (recording units, the same as the
    measured range), ζ at that amplitude; without it, the lowest ζ over the
    measured range.  Facts for the report go into ``details``: the single
    figure (``damping_single``), the basis, the amplitude used and the range.
    Without the amplitude keys, ``damping`` is returned unchanged.
    """
    if "decay" not in raw:
        if "operating_amplitude_rec" in raw:
            raise InputError(f"{where}.operating_amplitude_rec", "a mode measured with damping against "
                             "amplitude (decay, damping_at_amplitude_low, ...)", raw["operating_amplitude_rec"])
        return damping
    from ..model.amplitude import AmplitudeDependence

    decay = f.choice(raw, "decay", where, ("viscous", "friction", "mixed"), default="viscous")
    model = f.choice(raw, "damping_model", where, ("viscous", "friction-viscous", "power-law"),
                     default="friction-viscous")
    zeta = {k: f.ratio(raw, k, where, low=0.0, high=1.0, open_low=False, what="a damping ratio",
                       required=True)
            for k in ("viscous_damping", "damping_at_amplitude_low", "damping_at_amplitude_high")}
    amp = {k: f.ratio(raw, k, where, low=0.0, high=math.inf, what="an amplitude in the recording's units",
                      required=True)
           for k in ("amplitude_low_rec", "amplitude_high_rec")}
    drop = f.ratio(raw, "friction_drop_per_cycle", where, low=0.0, high=math.inf, open_low=False,
                   what="an amplitude drop in the recording's units", default=0.0)
    op = f.ratio(raw, "operating_amplitude_rec", where, low=0.0, high=math.inf,
                 what="an amplitude in the recording's units")
    if amp["amplitude_low_rec"] > amp["amplitude_high_rec"]:  # type: ignore[operator]
        raise InputError(f"{where}.amplitude_low_rec", "at most amplitude_high_rec",
                         amp["amplitude_low_rec"])
    dep = AmplitudeDependence(decay or "viscous", model or "friction-viscous", zeta["viscous_damping"] or 0.0,
                              drop or 0.0, amp["amplitude_low_rec"] or 0.0, amp["amplitude_high_rec"] or 0.0,
                              zeta["damping_at_amplitude_low"] or 0.0, zeta["damping_at_amplitude_high"] or 0.0)
    details.update(amplitude=dep, damping_single=damping)
    for key in ("viscous_damping_low", "viscous_damping_high"):
        details[key] = f.ratio(raw, key, where, low=0.0, high=1.0, open_low=False, what="a damping ratio")
    for key in ("friction_drop_per_cycle_low", "friction_drop_per_cycle_high"):
        details[key] = f.ratio(raw, key, where, low=0.0, high=math.inf, open_low=False,
                               what="an amplitude drop in the recording's units")
    if op is not None:
        used, basis, at = dep.damping(op), "operating amplitude", op
    else:
        (used, at), basis = dep.lowest(), "lowest over the measured range"
    if not 0.0 < used < 1.0:
        raise InputError(f"{where}.operating_amplitude_rec", "an amplitude where the measured damping "
                         "lies between 0 and 1", op)
    details.update(damping_basis=basis, damping_amplitude_rec=at)
    return used


def _parse_modes(raws: list[dict[str, Any]], where: str, origin: str) -> list[Mode]:
    if len(raws) > MAX_MODES:
        raise InputError(where, f"at most {MAX_MODES} modes", f"{len(raws)} modes",
                         "keep the modes in the analysed band; the rest cannot clash")
    modes = []
    seen: set[str] = set()
    for i, raw in enumerate(raws):
        mode = parse_mode(raw, f"{where}[{i}]", origin)
        if mode.name in seen:
            raise InputError(f"{where}[{i}].name", "a mode name not used before", mode.name)
        seen.add(mode.name)
        modes.append(mode)
    return modes


def _parse_frame(raw: dict[str, Any]) -> tuple[int, float, list[Mode], dict[str, Any] | None]:
    where = "frame"
    f.check_keys(raw, _FRAME_KEYS, where)
    catalog_modes: list[Mode] = []
    merged = dict(raw)
    if "catalog" in raw:
        base = entry("frames", raw["catalog"], "frame.catalog")
        catalog_modes = _parse_modes(f.tables(base, "modes", "frame"), f"frames[{raw['catalog']}].modes", "catalog")
        for key in ("motors", "arm", "wheelbase"):
            if key in base and key not in raw:
                merged[key] = base[key]
    motors = f.count(merged, "motors", where, minimum=1, maximum=16, required=True, what="a motor count")
    mass = f.quantity(
        merged, "mass", where, "kg", "720 g", required=True, minimum=0.0, exclusive_minimum=True,
        maximum=1000.0, range_text="above 0 g and up to 1000 kg",
    )
    f.quantity(merged, "wheelbase", where, "m", "225 mm", minimum=0.0, exclusive_minimum=True, maximum=10.0,
               range_text="above 0 mm and up to 10 m")
    f.text(merged, "description", where)
    own = _parse_modes(f.tables(merged, "modes", where), "frame.modes", "manual")
    names = {m.name for m in own}
    modes = [m for m in catalog_modes if m.name not in names] + own
    arm = f.table(merged, "arm", where)
    assert motors is not None and mass is not None
    return motors, mass, modes, arm


def parse_motor(raw: dict[str, Any]) -> Motor:
    """A ``[motor]`` table (or ``{"catalog": id}`` plus overrides) → :class:`~clashcheck.motor.Motor`.

    Parameters
    ----------
    raw : dict
        The table as read from TOML: ``kv`` (e.g. ``"1750 rpm/V"``),
        ``poles``, ``slots``, optional ``resistance``, ``no_load_current``,
        ``mass``, ``stator``, ``description``; or ``catalog = id`` plus any of
        these as overrides.

    Returns
    -------
    Motor
        The motor in SI: Kv [Hz/V], resistance [Ω], no-load current [A],
        mass [kg].

    Raises
    ------
    InputError
        On an unknown key or catalog id, a missing required key, an odd pole
        count, a slot count not a multiple of 3, or a value of the wrong unit
        or out of range.
    """
    where = "motor"
    raw = _merge_catalog(raw, "motors", where, _MOTOR_KEYS)
    kv = f.quantity(raw, "kv", where, "rpm/V", "1750 rpm/V", required=True, minimum=1 / 60,
                    maximum=100000 / 60, range_text="from 1 rpm/V to 100000 rpm/V")
    poles = f.count(raw, "poles", where, minimum=2, maximum=120, required=True, what="an even pole count")
    if poles is not None and poles % 2:
        raise InputError("motor.poles", "an even pole count", poles)
    slots = f.count(raw, "slots", where, minimum=3, maximum=360, required=True, what="a slot count")
    if slots is not None and slots % 3:
        raise InputError("motor.slots", "a slot count that is a multiple of 3", slots)
    resistance = f.quantity(raw, "resistance", where, "ohm", "45 mohm", default=0.0, minimum=0.0,
                            maximum=100.0, range_text="from 0 ohm to 100 ohm")
    current = f.quantity(raw, "no_load_current", where, "A", "1.1 A", default=0.0, minimum=0.0, maximum=100.0,
                         range_text="from 0 A to 100 A")
    mass = f.quantity(raw, "mass", where, "kg", "33 g", minimum=0.0, exclusive_minimum=True, maximum=100.0,
                      range_text="above 0 g and up to 100 kg")
    f.text(raw, "stator", where)
    f.text(raw, "description", where)
    assert kv is not None and poles is not None and slots is not None
    return Motor(kv, poles, slots, resistance or 0.0, current or 0.0, mass)


def parse_prop(raw: dict[str, Any]) -> Propeller:
    """A ``[prop]`` table (or ``{"catalog": id}`` plus overrides) → :class:`~clashcheck.propeller.Propeller`.

    Parameters
    ----------
    raw : dict
        The table as read from TOML: ``diameter`` (e.g. ``"5.1 in"``),
        ``blades``, optional ``pitch``, ``thrust_coefficient``,
        ``power_coefficient``, ``mass``, ``description``; or ``catalog = id``
        plus any of these as overrides.

    Returns
    -------
    Propeller
        The propeller in SI: diameter and pitch [m], mass [kg], C_T and C_P
        dimensionless.

    Raises
    ------
    InputError
        On an unknown key or catalog id, a missing required key, or a value
        of the wrong unit or out of range.
    """
    where = "prop"
    raw = _merge_catalog(raw, "props", where, _PROP_KEYS)
    diameter = f.quantity(raw, "diameter", where, "m", "5.1 in", required=True, minimum=0.01, maximum=2.0,
                          range_text="from 10 mm to 2 m")
    pitch = f.quantity(raw, "pitch", where, "m", "4.0 in", minimum=0.0, exclusive_minimum=True, maximum=5.0,
                       range_text="above 0 in and up to 5 m")
    blades = f.count(raw, "blades", where, minimum=1, maximum=12, required=True, what="a blade count")
    ct = f.ratio(raw, "thrust_coefficient", where, low=0.0, high=1.0, what="a static thrust coefficient")
    cp = f.ratio(raw, "power_coefficient", where, low=0.0, high=1.0, what="a static power coefficient")
    mass = f.quantity(raw, "mass", where, "kg", "4.6 g", minimum=0.0, exclusive_minimum=True, maximum=10.0,
                      range_text="above 0 g and up to 10 kg")
    f.text(raw, "description", where)
    assert diameter is not None and blades is not None
    return Propeller(diameter, blades, ct, cp, pitch, mass)


def parse_pack_chemistry(chem_id: str, raw: dict[str, Any] | None = None,
                         where: str = "battery") -> tuple[Chemistry, float | None]:
    """A catalog chemistry, with any per-cell voltages the build overrides.

    Parameters
    ----------
    chem_id : str
        Chemistry id in the batteries catalog, e.g. ``lipo``.
    raw : dict, optional
        The build's ``[battery]`` table; its ``cell_full``, ``cell_nominal``
        and ``cell_empty`` override the catalog's voltages.
    where : str, optional
        Field path of ``raw``, for error messages.

    Returns
    -------
    tuple of (Chemistry, float or None)
        The chemistry, and the catalog's typical cell resistance [ohm] when it gives one.
    """
    raw = raw or {}
    base = entry("batteries", chem_id, f"{where}.chemistry")
    at_base = f"batteries[{chem_id}]"
    f.check_keys(base, _CHEMISTRY_KEYS, at_base)
    volts: dict[str, float] = {}
    for state in PACK_STATES:
        own_key = f"cell_{state}"
        src, key, at = (raw, own_key, where) if own_key in raw else (base, state, at_base)
        value = f.quantity(src, key, at, "V", "3.7 V", required=True, minimum=0.5, maximum=10.0,
                           range_text="from 0.5 V to 10 V")
        assert value is not None  # required=True
        volts[state] = value
    if not volts["empty"] < volts["nominal"] < volts["full"]:
        raise InputError(where, "cell voltages with empty < nominal < full",
                         f"{volts['empty']:g} / {volts['nominal']:g} / {volts['full']:g} V")
    typical = f.quantity(base, "typical_cell_resistance", at_base, "ohm", "3 mohm", minimum=0.0,
                         maximum=10.0, range_text="from 0 ohm to 10 ohm")
    chemistry = Chemistry(chem_id, volts["full"], volts["nominal"], volts["empty"], str(base.get("source", "")))
    return chemistry, typical


def _parse_battery(raw: dict[str, Any]) -> Pack:
    where = "battery"
    f.check_keys(raw, _BATTERY_KEYS, where)
    cells = f.count(raw, "cells", where, minimum=1, maximum=24, required=True, what="a cell count")
    chem_id = f.text(raw, "chemistry", where, default="lipo")
    assert cells is not None and chem_id is not None
    chemistry, _ = parse_pack_chemistry(chem_id, raw, where)
    resistance = f.quantity(raw, "cell_resistance", where, "ohm", "3 mohm", default=0.0, minimum=0.0,
                            maximum=10.0, range_text="from 0 ohm to 10 ohm")
    return Pack(cells, chemistry, resistance or 0.0)


def _parse_sensor(raw: dict[str, Any] | None) -> Sensor | None:
    if raw is None:
        return None
    where = "sensor"
    f.check_keys(raw, _SENSOR_KEYS, where)
    rate = f.quantity(raw, "sample_rate", where, "Hz", "8 kHz", required=True, minimum=100.0, maximum=1e6,
                      range_text="from 100 Hz to 1 MHz")
    cutoff = f.quantity(raw, "antialias_cutoff", where, "Hz", "1 kHz", minimum=0.0, exclusive_minimum=True,
                        maximum=1e6, range_text="above 0 Hz and up to 1 MHz")
    order = f.count(raw, "antialias_order", where, minimum=1, maximum=8, default=2, what="a filter order")
    assert rate is not None and order is not None
    return Sensor(rate, cutoff, order)


def _parse_flight(raw: dict[str, Any] | None) -> tuple[Flight, list[str]]:
    raw = raw or {}
    where = "flight"
    f.check_keys(raw, _FLIGHT_KEYS, where)
    notes = []
    defaults = Flight()
    values: dict[str, Any] = {}
    for key, default_value in (("idle", defaults.idle), ("max", defaults.max), ("cruise", defaults.cruise)):
        value = f.quantity(raw, key, where, "%", "35 %", **_FRACTION)  # type: ignore[arg-type]
        if value is None:
            value = default_value
            if key != "max":
                notes.append(f"flight.{key} not given: {100 * default_value:g} % assumed")
        values[key] = value
    hover = f.quantity(raw, "hover", where, "%", "35 %", minimum=0.0, exclusive_minimum=True, maximum=1.0,
                       range_text="above 0 % and up to 100 %")
    altitude = f.quantity(raw, "altitude", where, "m", "350 m", default=0.0, minimum=-500.0, maximum=11000.0,
                          range_text="from -500 m to 11000 m")
    offset = f.quantity(raw, "temperature_offset", where, "K", "10 K", default=0.0, minimum=-80.0, maximum=60.0,
                        range_text="from -80 K to 60 K")
    spread = f.quantity(raw, "dwell_spread", where, "%", "5 %", default=DEFAULT_DWELL_SPREAD, minimum=0.0,
                        maximum=0.5, range_text="from 0 % to 50 %")
    cruise_dwell = _flag(raw, "cruise_dwell", where, default=False)
    return Flight(values["idle"], values["max"], values["cruise"], hover, altitude or 0.0, offset or 0.0,
                  DEFAULT_DWELL_SPREAD if spread is None else spread, cruise_dwell), notes


def _flag(raw: dict[str, Any], key: str, where: str, *, default: bool) -> bool:
    value = raw.get(key, MISSING)
    if value is MISSING:
        return default
    if not isinstance(value, bool):
        raise InputError(f"{where}.{key}", "true or false (a TOML boolean)", value)
    return value


def _numbers(raw: dict[str, Any], key: str, where: str, *, max_items: int = 1000) -> tuple[float, ...]:
    value = raw.get(key, MISSING)
    expected = "a list of bare numbers, like [0.0, 0.25, 0.5]"
    if value is MISSING:
        raise InputError(f"{where}.{key}", expected, MISSING)
    if not isinstance(value, list) or len(value) > max_items or any(
        isinstance(x, bool) or not isinstance(x, (int, float)) for x in value
    ):
        raise InputError(f"{where}.{key}", expected, value if not isinstance(value, list) else value[:8])
    return tuple(float(x) for x in value)


def _parse_strengths(raws: list[dict[str, Any]], where: str) -> tuple[tuple[float, str, float], ...]:
    out = []
    for i, raw in enumerate(raws):
        at = f"{where}[{i}]"
        f.check_keys(raw, _STRENGTH_KEYS, at)
        order = f.ratio(raw, "order", at, low=0.0, high=10000.0, open_high=False, required=True, what="an order")
        family = f.choice(raw, "family", at, ORDER_FAMILIES, required=True)
        strength = f.ratio(raw, "relative_strength", at, low=0.0, high=1e6, open_low=False, required=True,
                           what="a relative strength")
        assert order is not None and family is not None and strength is not None
        out.append((order, family, strength))
    return tuple(out)


def _parse_check(raw: dict[str, Any] | None) -> CheckSettings:
    raw = raw or {}
    where = "check"
    f.check_keys(raw, _CHECK_KEYS, where)
    policy_name = f.choice(raw, "policy", where, POLICIES, default="damping")
    margin = f.quantity(raw, "margin", where, "%", "10 %", minimum=0.0, exclusive_minimum=True, maximum=0.99,
                        range_text="above 0 % and below 100 %")
    if margin is not None and policy_name != "fixed":
        raise InputError("check.margin", "no margin unless policy = 'fixed'", raw["margin"])
    damping = f.ratio(raw, "default_damping", where, low=0.0, high=1.0, default=0.03, what="a damping ratio")
    assert policy_name is not None and damping is not None
    policy = MarginPolicy(policy_name, margin, damping)
    states = f.choices(raw, "pack_states", where, PACK_STATES, default=PACK_STATES)
    if not states:
        raise InputError("check.pack_states", "at least one of " + ", ".join(PACK_STATES), [])
    families = f.choices(raw, "families", where, FAMILIES, default=FAMILIES)
    custom = []
    for i, order_raw in enumerate(f.tables(raw, "orders", where)):
        at = f"check.orders[{i}]"
        f.check_keys(order_raw, _ORDER_KEYS, at)
        number = f.ratio(order_raw, "order", at, low=0.0, high=10000.0, open_high=False, required=True,
                         what="an order (multiple of rotor rate)")
        label = f.text(order_raw, "label", at, default="", max_length=60) or ""
        weight = f.ratio(order_raw, "weight", at, low=0.0, high=1e6, open_low=False, default=0.5, what="a weight")
        assert number is not None and weight is not None
        custom.append((number, label, weight))
    if not families and not custom:
        raise InputError("check.families", "at least one family or a [[check.orders]] entry", [])
    strengths = _parse_strengths(f.tables(raw, "order_strengths", where), "check.order_strengths")
    floor = f.ratio(raw, "weight_floor", where, low=0.0, high=1.0, open_low=False, default=0.02,
                    what="a weight floor")
    significance = f.ratio(raw, "significance_floor", where, low=0.0, high=1e6, open_low=False, default=1.0,
                           what="a significance floor")
    assert floor is not None and significance is not None
    return CheckSettings(policy, states, families, tuple(custom), strengths, floor, significance)


def parse_build(data: dict[str, Any], *, path: str | None = None) -> Build:
    """Validate a decoded build file and resolve its catalog references.

    Parameters
    ----------
    data : dict
        The decoded TOML document.
    path : str, optional
        Where it came from, for the report and the default name.

    Returns
    -------
    Build

    Raises
    ------
    InputError
        For any missing, malformed, unknown or out-of-range value.
    """
    f.check_keys(data, _TOP_KEYS, "")
    default_name = Path(path).stem if path else "build"
    name = f.text(data, "name", "", default=default_name) or default_name
    f.text(data, "description", "", max_length=2000)
    frame = f.table(data, "frame", "", required=True)
    motors, mass, modes, arm_raw = _parse_frame(frame)  # type: ignore[arg-type]
    motor = parse_motor(f.table(data, "motor", "", required=True))  # type: ignore[arg-type]
    prop = parse_prop(f.table(data, "prop", "", required=True))  # type: ignore[arg-type]
    pack = _parse_battery(f.table(data, "battery", "", required=True))  # type: ignore[arg-type]
    sensor = _parse_sensor(f.table(data, "sensor", ""))
    flight, notes = _parse_flight(f.table(data, "flight", ""))
    check = _parse_check(f.table(data, "check", ""))
    arm = None
    if arm_raw is not None:
        from ..model import arm as arm_module
        from .armfile import parse_arm_table

        arm = parse_arm_table(
            arm_raw, field="frame.arm", motor_mass_kg=motor.mass_kg, prop_mass_kg=prop.mass_kg
        )
        measured_names = {m.name for m in modes}
        # --- frame model (issue 15): [frame.body] replaces the single-arm estimate
        from .framefile import frame_estimate_for_build

        frame_found = frame_estimate_for_build(frame, arm, motors)  # type: ignore[arg-type]
        if frame_found is not None:
            estimated, estimate_notes = frame_found
            notes += [f"frame model: {n}" for n in estimate_notes]
        else:
            estimate = arm_module.estimate_arm(arm)
            estimated = arm_module.estimated_modes(estimate)
            notes += [f"arm estimate: {n}" for n in estimate.notes]
        # --- end frame model
        modes = modes + [m for m in estimated if m.name not in measured_names]
    elif "body" in frame or "layout" in frame:  # type: ignore[operator]
        raise InputError("frame.arm", "an [frame.arm] table with [frame.body] and [frame.layout]",
                         "nothing", "the frame model needs the arms' section and material")
    if not modes:
        raise InputError("frame.modes", "at least one [[frame.modes]] entry, a frame catalog or [frame.arm]", [])
    return Build(
        name=name,
        motors=motors,
        mass_kg=mass,
        modes=tuple(modes),
        motor=motor,
        prop=prop,
        pack=pack,
        flight=flight,
        check=check,
        sensor=sensor,
        arm=arm,
        path=path,
        notes=tuple(notes),
    )


def load_build(path: str | Path) -> Build:
    """Read and validate a build file.

    Parameters
    ----------
    path : str or pathlib.Path
        The build file (TOML, UTF-8); it is only read.

    Returns
    -------
    Build
        The validated build, in SI units.

    Raises
    ------
    InputError
        When the file cannot be read, is not a UTF-8 TOML file of bounded
        size, or a field is missing, unknown or out of range.

    Examples
    --------
    >>> import pathlib, tempfile
    >>> text = '''
    ... [frame]
    ... motors = 4
    ... mass = "720 g"
    ... [[frame.modes]]
    ... name = "arm flap"
    ... frequency = "212 Hz"
    ... [motor]
    ... kv = "1750 rpm/V"
    ... poles = 14
    ... slots = 12
    ... [prop]
    ... diameter = "5.1 in"
    ... blades = 3
    ... [battery]
    ... cells = 6
    ... '''
    >>> with tempfile.TemporaryDirectory() as d:
    ...     p = pathlib.Path(d, "quad.toml"); _ = p.write_text(text)
    ...     build = load_build(p)
    >>> round(build.motor.kv_hz_per_v, 4), build.pack.voltage("full")
    (29.1667, 25.200000000000003)
    """
    return load_build_data(path)[1]


def load_build_data(path: str | Path) -> tuple[dict[str, Any], Build]:
    """Read a build file: its raw tables and the :class:`Build` made from them.

    Errors name the file, so a command that reads two builds says which one.

    Parameters
    ----------
    path : str or pathlib.Path
        The build file.

    Returns
    -------
    tuple of (dict, Build)
        The parsed TOML tables, and the validated build.

    Raises
    ------
    InputError
        When the file is not valid TOML or the build is invalid.
    """
    data = _read_toml(path, "build file")
    try:
        return data, parse_build(data, path=str(path))
    except InputError as exc:
        raise InputError(f"{path}: {exc.field}", exc.expected, exc.got, exc.hint) from None


def load_modes_file(path: str | Path) -> MeasuredModes:
    """Read a modes file: ``[[frame.modes]]``, optional ``[[order_strengths]]`` and ``[dwell]``.

    Modes from such a file are marked ``measured``.  ``[dwell]`` holds a
    flight's throttle occupancy: ``throttle = [band edges as fractions]`` (or
    ``rotor_hz = [band edges in Hz]`` when the log had no throttle) and
    ``share = [time fraction per band]`` (summing to 1); ``check`` then takes
    its dwell zones from it.

    Parameters
    ----------
    path : str or Path
        The modes file.

    Returns
    -------
    MeasuredModes
    """
    data = _read_toml(path, "modes file")
    try:
        f.check_keys(data, ("frame", "order_strengths", "name", "dwell"), "")
        frame = f.table(data, "frame", "", required=True)
        assert frame is not None
        f.check_keys(frame, ("modes",), "frame")
        modes = _parse_modes(f.tables(frame, "modes", "frame"), "frame.modes", "measured")
        if not modes:
            raise InputError("frame.modes", "at least one [[frame.modes]] entry", [])
        strengths = _parse_strengths(f.tables(data, "order_strengths", ""), "order_strengths")
        occupancy = None
        dwell = f.table(data, "dwell", "")
        if dwell is not None:
            f.check_keys(dwell, ("throttle", "rotor_hz", "share", "source"), "dwell")
            f.text(dwell, "source", "dwell")
            if ("throttle" in dwell) == ("rotor_hz" in dwell):
                raise InputError("dwell", "band edges as either throttle = [...] or rotor_hz = [...]",
                                 "both" if "throttle" in dwell else "neither")
            quantity = "throttle" if "throttle" in dwell else "rotor_hz"
            occupancy = ThrottleOccupancy(_numbers(dwell, quantity, "dwell"), _numbers(dwell, "share", "dwell"),
                                          str(path), quantity)
    except InputError as exc:  # name the modes file, not only the field
        raise InputError(f"{path}: {exc.field}", exc.expected, exc.got, exc.hint) from None
    return MeasuredModes(tuple(modes), strengths, str(path), occupancy)
