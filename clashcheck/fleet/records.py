"""The small records a recording analysis returns (no arrays: they travel between processes)."""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["ModeRecord", "AnalysisRecord"]


@dataclass(frozen=True)
class ModeRecord:
    """One mode found in a recording, as stored."""

    #: Name in the recording's result, e.g. ``"mode 2"``.
    name: str
    #: Natural frequency [Hz].
    frequency_hz: float
    #: Damping ratio ζ, or ``None`` when only a bound is known.
    damping: float | None
    #: Lower end of the ζ interval.
    damping_low: float
    #: Upper end of the ζ interval.
    damping_high: float
    #: roll, pitch, yaw or any.
    axis: str
    #: Confidence, 0–1.
    confidence: float
    #: Viscous part of ζ, when the analysis gives it.
    viscous_damping: float | None = None
    #: Amplitude lost per cycle to friction (signal units), when the analysis gives it.
    friction_drop_per_cycle: float | None = None


@dataclass(frozen=True)
class AnalysisRecord:
    """The outcome of analysing one recording: its modes, or its one-line error."""

    #: SHA-256 of the recording's bytes (hex).
    content_sha256: str
    #: SHA-256 of the analysis settings (hex); see :func:`clashcheck.fleet.pipeline.settings_key`.
    settings_key: str
    #: The recording's absolute path when it was analysed.
    path: str
    #: tap or flight.
    kind: str
    #: True when the analysis succeeded.
    ok: bool
    #: The one-line error when it did not.
    error: str | None = None
    #: Modes, by frequency.
    modes: tuple[ModeRecord, ...] = ()
    #: Main method, in words.
    method: str = ""
    #: Sample rate [Hz].
    sample_rate_hz: float | None = None
    #: Usable duration [s].
    duration_s: float | None = None
    #: Frequency resolution [Hz].
    resolution_hz: float | None = None
    #: Warnings of the analysis, one sentence each.
    warnings: tuple[str, ...] = ()
    #: Wall time of the analysis [s].
    elapsed_s: float = 0.0
    #: True when the worker failed rather than the recording (reported, never stored).
    transient: bool = False
