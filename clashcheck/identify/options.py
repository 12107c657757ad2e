"""Recording options → the reader's column plan and the analysis settings.

``clashcheck modes`` and ``clashcheck fleet`` take the same recording options
(the command's long option names, without dashes, are the fleet manifest's
keys).  :func:`recording_plan` turns those options, already in SI, into a
:class:`~clashcheck.identify.readers.Columns` and a
:class:`~clashcheck.identify.tap.TapSettings` or
:class:`~clashcheck.identify.flight.FlightSettings`, so both commands build
them the same way.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from ..errors import InputError

if TYPE_CHECKING:
    from ..model.build import Build
    from .flight import FlightSettings
    from .readers import Columns
    from .tap import TapSettings

__all__ = ["RECORDING_OPTIONS", "RecordingPlan", "recording_plan"]

#: Option names (``clashcheck modes`` long options without dashes, ``-`` → ``_``)
#: that shape how a recording is read and analysed.
RECORDING_OPTIONS = (
    "signal", "time_column", "time_unit", "rate", "throttle_column", "rpm_columns", "rpm_unit",
    "poles", "blades", "slots", "build", "axes", "min_frequency", "max_frequency", "resolution",
    "throttle_unit", "include_candidates",
)

#: Rotor-rate units a recording may use and their scale to rotor rate [Hz per unit]
#: (``erpm`` also needs the pole count).
_RPM_SCALE = {"rpm": 1.0 / 60.0, "Hz": 1.0}


@dataclass(frozen=True)
class RecordingPlan:
    """How to read and analyse one recording."""

    #: tap or flight.
    kind: str
    #: The reader's column plan.
    columns: "Columns"
    #: The analysis settings (:class:`TapSettings` for tap, :class:`FlightSettings` for flight).
    settings: "TapSettings | FlightSettings"


def _split(text: str | None) -> tuple[str, ...] | None:
    if not text:
        return None
    parts = tuple(p.strip() for p in text.split(",") if p.strip())
    return parts or None


def recording_plan(
    kind: str,
    *,
    signal: str | None = None,
    time_column: str | None = None,
    time_unit: str = "s",
    rate: float | None = None,
    throttle_column: str | None = None,
    rpm_columns: str | None = None,
    rpm_unit: str = "rpm",
    poles: int | None = None,
    blades: int | None = None,
    slots: int | None = None,
    build: "Build | None" = None,
    axes: str | None = None,
    min_frequency: float | None = 20.0,
    max_frequency: float | None = None,
    resolution: float | None = None,
    throttle_unit: str | None = None,
    include_candidates: bool = False,
    keep_timeline: bool = True,
) -> RecordingPlan:
    """The column plan and settings for one recording, from the recording options.

    Parameters
    ----------
    kind : str
        ``"tap"`` or ``"flight"``.
    signal : str, optional
        Signal columns, comma-separated (WAV/.npy: channel numbers); ``None`` = all.
    time_column : str, optional
        Column holding the sample time.
    time_unit : str
        Unit of the time column, e.g. ``"ms"`` (checked with the unit parser).
    rate : float, optional
        Sample rate [Hz], when there is no time column.
    throttle_column : str, optional
        Throttle column (fraction 0–1 or percent).
    rpm_columns : str, optional
        Rotor-rate columns, comma-separated, one per motor.
    rpm_unit : str
        ``"rpm"``, ``"Hz"`` or ``"erpm"`` (electrical rpm; needs ``poles``).
    poles, blades, slots : int, optional
        Magnet poles, propeller blades, stator slots (flight order names).
    build : Build, optional
        The aircraft's build: blades, poles and slots when not given, and the
        drive model (throttle → rotor rate [Hz]) for flight recordings.
    axes : str, optional
        Axis of each signal, comma-separated (flight), e.g. ``"roll,pitch,yaw"``.
    min_frequency : float, optional
        Lowest mode frequency looked for [Hz] (``None`` = 20 Hz).
    max_frequency : float, optional
        Highest mode frequency looked for [Hz].
    resolution : float, optional
        Frequency resolution of the spectra [Hz].
    throttle_unit : str, optional
        Unit of the throttle column (``fraction``, ``percent`` or ``us`` pulse
        width); ``None`` = told from the values.
    include_candidates : bool, optional
        Keep peaks below the confidence floor among the modes (tap tests).
    keep_timeline : bool, optional
        Keep the spectrogram against time that a flight's time figure draws
        (``FlightSettings.keep_timeline``); the numbers are the same without it.

    Returns
    -------
    RecordingPlan
        The kind, the column plan and the settings.

    Raises
    ------
    InputError
        Naming the library field (``kind``, ``rpm_unit``, ``poles``, ``time_unit``...).
    """
    from ..inputs.units import parse
    from .readers import Columns

    if kind not in ("tap", "flight"):
        raise InputError("kind", "tap or flight", kind)
    time_scale = 1.0 if time_unit == "s" else parse(f"1 {time_unit}", "s", "time_unit", example="1 ms")
    if rpm_unit == "erpm":
        if poles is None and build is not None:
            poles = build.motor.poles
        if poles is None:
            raise InputError("poles", "the magnet pole count, to turn electrical rpm into rotor rate", None)
        rpm_scale = 1.0 / 60.0 / (poles / 2.0)
    elif rpm_unit in _RPM_SCALE:
        rpm_scale = _RPM_SCALE[rpm_unit]
    else:
        raise InputError("rpm_unit", "rpm, Hz or erpm", rpm_unit)
    columns = Columns(signals=_split(signal), time_column=time_column, time_scale_s=time_scale,
                      sample_rate_hz=rate, throttle_column=throttle_column, throttle_unit=throttle_unit,
                      rpm_columns=_split(rpm_columns) or (), rpm_scale_hz=rpm_scale)
    band: dict[str, Any] = dict(min_frequency_hz=20.0 if min_frequency is None else min_frequency,
                max_frequency_hz=max_frequency)
    if kind == "tap":
        from .tap import TapSettings

        return RecordingPlan(kind, columns, TapSettings(resolution_hz=resolution,
                                                        include_candidates=include_candidates, **band))
    from .flight import FlightSettings

    extra: dict[str, Any] = {"blades": blades, "poles": poles, "slots": slots,
                             "keep_timeline": keep_timeline}
    if resolution is not None:
        extra.update(resolution_hz=resolution, resolution_given=True)
    if axes:
        extra["axes"] = _split(axes)
    if build is not None:
        from ..model.drive import Drive

        drive = Drive.from_build(build)
        extra["blades"] = extra["blades"] or build.prop.blades
        extra["poles"] = extra["poles"] or build.motor.poles
        extra["slots"] = extra["slots"] or build.motor.slots
        extra["rotor_of_throttle"] = drive.rotor_hz  # nominal pack; a bound method pickles
    return RecordingPlan(kind, columns, FlightSettings(**band, **extra))
