"""The fleet manifest: aircraft, their builds, recordings and events (TOML).

::

    [[aircraft]]
    id = "HX-04"                             # unique
    build = "builds/survey-quad.toml"        # relative to the manifest

    [[aircraft.recordings]]
    path = "logs/hx04/2026-10-02-tap.wav"    # relative to the manifest
    date = 2026-10-02                        # TOML date or datetime
    kind = "tap"                             # tap | flight
    rate = "8 kHz"                           # any 'clashcheck modes' option, long name without dashes

    [[aircraft.events]]                      # optional
    date = 2026-10-20
    what = "arm 2 replaced"                  # starts a new baseline for this aircraft

Everything is checked here, once: unknown keys, missing files, duplicate ids,
recording dates out of order, quantities with units (parsed to SI), and each
aircraft's build (loaded).  An error names the aircraft and the field, e.g.
``aircraft "HX-04".recordings[2].date``.  Paths are resolved to absolute paths
relative to the manifest's folder.
"""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..errors import InputError
from ..model.build import Build
from . import fields as f
from .buildfile import _read_toml, load_build

__all__ = [
    "RECORDING_OPTION_KEYS",
    "RecordingEntry",
    "Event",
    "AircraftEntry",
    "Manifest",
    "load_manifest",
    "parse_manifest",
    "MAX_AIRCRAFT",
    "MAX_RECORDINGS",
]

#: Most aircraft and most recordings in one manifest (bounds the work before it starts).
MAX_AIRCRAFT = 100_000
MAX_RECORDINGS = 1_000_000

#: Recording options (the ``clashcheck modes`` long option names without dashes) and how
#: each is read: ``("Hz", example)`` is a quantity parsed to SI, ``int`` a bare whole
#: number (least value), ``str`` free text, a tuple of words a choice.
_OPTION_TYPES: dict[str, Any] = {
    "signal": str, "time_column": str, "time_unit": str, "throttle_column": str,
    "rpm_columns": str, "axes": str, "build": "path",
    "rate": ("Hz", "8 kHz"), "min_frequency": ("Hz", "20 Hz"), "max_frequency": ("Hz", "1 kHz"),
    "resolution": ("Hz", "1 Hz"),
    "rpm_unit": ("rpm", "Hz", "erpm"),
    "poles": (int, 2, 200), "blades": (int, 1, 12), "slots": (int, 3, 300),
    "throttle_unit": ("fraction", "percent", "us"), "include_candidates": bool,
}
#: The recording option keys a manifest accepts.
RECORDING_OPTION_KEYS = tuple(_OPTION_TYPES)
_AIRCRAFT_KEYS = ("id", "build", "recordings", "events")
_RECORDING_KEYS = ("path", "date", "kind") + RECORDING_OPTION_KEYS
_EVENT_KEYS = ("date", "what")


@dataclass(frozen=True)
class RecordingEntry:
    """One recording of an aircraft, as the manifest gives it."""

    #: Absolute path of the recording file.
    path: str
    #: The path as written in the manifest (for reports).
    name: str
    #: When it was recorded (a date is taken as midnight, no time zone).
    date: _dt.datetime
    #: tap or flight.
    kind: str
    #: Recording options, in SI (Hz); ``build`` is an absolute path.
    options: dict[str, Any] = field(default_factory=dict)


@dataclass(frozen=True)
class Event:
    """Something done to an aircraft that starts a new baseline."""

    #: When.
    date: _dt.datetime
    #: What, in words.
    what: str


@dataclass(frozen=True)
class AircraftEntry:
    """One aircraft of the fleet."""

    #: Unique id.
    id: str
    #: Absolute path of the build file.
    build_path: str
    #: The loaded build.
    build: Build
    #: Recordings, oldest first.
    recordings: tuple[RecordingEntry, ...]
    #: Events, oldest first.
    events: tuple[Event, ...] = ()


@dataclass(frozen=True)
class Manifest:
    """A whole fleet manifest."""

    #: Absolute path of the manifest file.
    path: str
    #: The aircraft, in manifest order.
    aircraft: tuple[AircraftEntry, ...]


def _when(raw: dict[str, Any], where: str) -> _dt.datetime:
    value = raw.get("date", None)
    if isinstance(value, _dt.datetime):
        return value.replace(tzinfo=None) if value.tzinfo is None else \
            value.astimezone(_dt.timezone.utc).replace(tzinfo=None)
    if isinstance(value, _dt.date):
        return _dt.datetime(value.year, value.month, value.day)
    raise InputError(f"{where}.date", "a TOML date or date-time, like 2026-10-02 (no quotes)", value)


def _existing_file(base: Path, value: object, field_name: str, what: str) -> Path:
    if not isinstance(value, str) or not value.strip():
        raise InputError(field_name, f"the path of {what}, relative to the manifest", value)
    p = Path(value)
    p = (p if p.is_absolute() else base / p).resolve()
    if not p.is_file():
        raise InputError(field_name, f"an existing file ({what})",
                         value, "a folder" if p.is_dir() else "no such file")
    return p


def _options(raw: dict[str, Any], where: str, base: Path) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for key, kind in _OPTION_TYPES.items():
        if key not in raw:
            continue
        if kind is str:
            out[key] = f.text(raw, key, where)
        elif kind is bool:
            if not isinstance(raw[key], bool):
                raise InputError(f"{where}.{key}", "true or false", raw[key])
            out[key] = raw[key]
        elif kind == "path":
            out[key] = str(_existing_file(base, raw[key], f"{where}.{key}", "a build file"))
        elif isinstance(kind, tuple) and kind[0] is int:
            out[key] = f.count(raw, key, where, minimum=kind[1], maximum=kind[2])
        elif isinstance(kind, tuple) and len(kind) == 2 and kind[0] == "Hz":
            out[key] = f.quantity(raw, key, where, "Hz", kind[1], minimum=0.0, exclusive_minimum=True,
                                  maximum=1e7, range_text="above 0 Hz and up to 10 MHz")
        else:
            out[key] = f.choice(raw, key, where, kind)
    return out


def _recording(raw: dict[str, Any], where: str, base: Path) -> RecordingEntry:
    f.check_keys(raw, _RECORDING_KEYS, where)
    path = _existing_file(base, raw.get("path"), f"{where}.path", "a recording")
    kind = f.choice(raw, "kind", where, ("tap", "flight"), required=True)
    assert kind is not None
    return RecordingEntry(path=str(path), name=str(raw["path"]), date=_when(raw, where), kind=kind,
                          options=_options(raw, where, base))


def _aircraft(raw: dict[str, Any], where: str, base: Path) -> AircraftEntry:
    f.check_keys(raw, _AIRCRAFT_KEYS, where)
    build_path = _existing_file(base, raw.get("build"), f"{where}.build", "a build file")
    try:
        build = load_build(build_path)
    except InputError as exc:
        raise InputError(f"{where}.build: {exc.field}", exc.expected, exc.got, exc.hint) from None
    recordings: list[RecordingEntry] = []
    raws = f.tables(raw, "recordings", where)
    if not raws:
        raise InputError(f"{where}.recordings", "at least one [[aircraft.recordings]] entry", [])
    for i, rec in enumerate(raws):
        entry = _recording(rec, f"{where}.recordings[{i}]", base)
        if recordings and entry.date < recordings[-1].date:
            raise InputError(f"{where}.recordings[{i}].date",
                             f"a date on or after the previous recording's ({recordings[-1].date:%Y-%m-%d})",
                             entry.date.strftime("%Y-%m-%d %H:%M"), "list recordings oldest first")
        recordings.append(entry)
    events: list[Event] = []
    for i, ev in enumerate(f.tables(raw, "events", where)):
        ewhere = f"{where}.events[{i}]"
        f.check_keys(ev, _EVENT_KEYS, ewhere)
        event = Event(_when(ev, ewhere), f.text(ev, "what", ewhere, required=True) or "")
        if events and event.date < events[-1].date:
            raise InputError(f"{ewhere}.date", "a date on or after the previous event's",
                             event.date.strftime("%Y-%m-%d %H:%M"), "list events oldest first")
        events.append(event)
    return AircraftEntry(id=str(raw["id"]), build_path=str(build_path), build=build,
                         recordings=tuple(recordings), events=tuple(events))


def parse_manifest(data: dict[str, Any], path: str | Path) -> Manifest:
    """Validate a parsed manifest.

    Parameters
    ----------
    data : dict
        The TOML document, as :mod:`tomllib` returns it.
    path : str or Path
        The manifest file; relative paths inside are relative to its folder.

    Returns
    -------
    Manifest
        Aircraft with loaded builds and absolute recording paths.

    Raises
    ------
    InputError
        One per problem found first, naming the aircraft and the field,
        e.g. ``aircraft "HX-04".recordings[2].path``.
    """
    mpath = Path(path).resolve()
    base = mpath.parent
    f.check_keys(data, ("aircraft",), "")
    raws = f.tables(data, "aircraft", "")
    if not raws:
        raise InputError("aircraft", "at least one [[aircraft]] entry", [])
    if len(raws) > MAX_AIRCRAFT:
        raise InputError("aircraft", f"at most {MAX_AIRCRAFT} aircraft", len(raws))
    total = sum(len(r.get("recordings", ())) if isinstance(r.get("recordings"), list) else 0 for r in raws)
    if total > MAX_RECORDINGS:
        raise InputError("aircraft.recordings", f"at most {MAX_RECORDINGS} recordings in all", total)
    seen: dict[str, int] = {}
    out = []
    for i, raw in enumerate(raws):
        ident = raw.get("id")
        if not isinstance(ident, str) or not ident.strip():
            raise InputError(f"aircraft[{i}].id", "a non-empty text id", ident)
        where = f"aircraft {ident!r}"
        if ident in seen:
            raise InputError(f"{where}.id", "an id not used before",
                             ident, f"aircraft[{seen[ident]}] and aircraft[{i}] share it")
        seen[ident] = i
        out.append(_aircraft(raw, where, base))
    return Manifest(path=str(mpath), aircraft=tuple(out))


def load_manifest(path: str | Path) -> Manifest:
    """Read and validate a fleet manifest file.

    Parameters
    ----------
    path : str or Path
        The manifest (TOML).

    Returns
    -------
    Manifest
        See :func:`parse_manifest`.
    """
    return parse_manifest(_read_toml(path, "fleet manifest"), path)
