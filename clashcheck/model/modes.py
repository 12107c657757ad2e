"""Frame modes, amplification and the margin policies.

A :class:`Mode` is one frame resonance.  The margin policies turn its damping
into the *required margin*: the relative distance an excitation must keep from
the mode.

The ``damping`` policy follows the separation-margin rule of the rotordynamics
standards (API 684 tutorial, API 617 ch. 1; the clause numbers are recalled,
the formulas confirmed in REFERENCES.md §1), applied symmetrically about the
mode with the "mode below the operating range" curve.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError

__all__ = [
    "Mode",
    "MODE_ORIGINS",
    "MODE_AXES",
    "MODE_KINDS",
    "POLICIES",
    "MarginPolicy",
    "amplification_factor",
    "api_margin_below",
    "api_margin_above",
    "magnification",
    "transmissibility",
    "relative_margin",
]

MODE_ORIGINS = ("catalog", "measured", "estimated", "manual", "shifted")
MODE_AXES = ("roll", "pitch", "yaw", "any")
MODE_KINDS = ("arm", "plate", "stack", "other")
POLICIES = ("damping", "fixed", "half-power")


@dataclass(frozen=True)
class Mode:
    """One frame resonance.

    A point mode has ``frequency_low_hz == frequency_high_hz == frequency_hz``.
    An estimated mode carries the spread of its material data as a frequency
    range; the clash engine then treats the mode's band as the union of the
    margin bands over that range.
    """

    #: Mode name, unique within a build, e.g. ``"arm flap"``.
    name: str
    #: Nominal natural frequency [Hz].
    frequency_hz: float
    #: Damping ratio ζ (dimensionless, 0 < ζ < 1); ``None`` when not known.
    damping: float | None = None
    #: Axis the mode shows on: roll, pitch, yaw or any.
    axis: str = "any"
    #: What flexes: arm, plate, stack or other.
    kind: str = "other"
    #: Where the figure came from: catalog, measured, estimated, manual, shifted.
    origin: str = "manual"
    #: Free text about the source, e.g. ``"tap test, 2026-11-20"``.
    source: str = ""
    #: Lowest plausible natural frequency [Hz]; defaults to ``frequency_hz``.
    frequency_low_hz: float | None = None
    #: Highest plausible natural frequency [Hz]; defaults to ``frequency_hz``.
    frequency_high_hz: float | None = None
    #: Extra facts to carry to the report (e.g. old and new figures of a shift).
    details: dict[str, object] = field(default_factory=dict, compare=False, hash=False)

    def __post_init__(self) -> None:
        where = f"mode {self.name!r}"
        if not self.name or not isinstance(self.name, str):
            raise InputError(f"{where}.name", "a non-empty name", self.name)
        if not (math.isfinite(self.frequency_hz) and self.frequency_hz > 0):
            raise InputError(f"{where}.frequency", "a frequency above 0 Hz", self.frequency_hz)
        if self.damping is not None and not (0.0 < self.damping < 1.0):
            raise InputError(f"{where}.damping", "a damping ratio between 0 and 1", self.damping)
        if self.axis not in MODE_AXES:
            raise InputError(f"{where}.axis", "one of " + ", ".join(MODE_AXES), self.axis)
        if self.kind not in MODE_KINDS:
            raise InputError(f"{where}.kind", "one of " + ", ".join(MODE_KINDS), self.kind)
        if self.origin not in MODE_ORIGINS:
            raise InputError(f"{where}.origin", "one of " + ", ".join(MODE_ORIGINS), self.origin)
        low = self.frequency_hz if self.frequency_low_hz is None else self.frequency_low_hz
        high = self.frequency_hz if self.frequency_high_hz is None else self.frequency_high_hz
        if not (0 < low <= self.frequency_hz <= high and math.isfinite(high)):
            raise InputError(
                f"{where}.frequency range",
                "low ≤ nominal ≤ high, all above 0 Hz",
                (low, self.frequency_hz, high),
            )
        object.__setattr__(self, "frequency_low_hz", float(low))
        object.__setattr__(self, "frequency_high_hz", float(high))

    @property
    def is_range(self) -> bool:
        """True when the mode's frequency is a range rather than a point."""
        return self.frequency_low_hz != self.frequency_high_hz


def amplification_factor(damping: float) -> float:
    """Amplification factor AF = 1/(2ζ) of a single mode.

    Parameters
    ----------
    damping : float
        Damping ratio ζ of the mode (dimensionless, 0 < ζ < 1).

    Returns
    -------
    float
        Amplification factor AF (dimensionless).

    Examples
    --------
    >>> amplification_factor(0.05)
    10.0
    """
    return 1.0 / (2.0 * damping)


def api_margin_below(af):
    """Required separation margin for a mode below the operating range.

    SM = 0 when AF < 2.5, else min(16 %, 17 %·(1 − 1/(AF − 1.5))), as a
    fraction.  Takes a float or an array.

    Parameters
    ----------
    af : float or numpy.ndarray
        Amplification factor(s) AF of the mode (dimensionless).

    Returns
    -------
    float or numpy.ndarray
        Required separation margin [fraction], a float for a scalar ``af``,
        else an array of the same shape.

    Examples
    --------
    >>> round(api_margin_below(5.0), 6)
    0.121429
    """
    return _api_curve(af, 0.0, 0.16)


def _api_curve(af, offset: float, cap: float):
    x = np.asarray(af, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        curve = np.minimum(cap, offset + 0.17 * (1.0 - 1.0 / (x - 1.5)))
    out = np.where(x < 2.5, 0.0, curve)
    return float(out) if out.ndim == 0 else out


def api_margin_above(af):
    """Required separation margin for a mode above the operating range.

    SM = 0 when AF < 2.5, else min(26 %, 10 % + 17 %·(1 − 1/(AF − 1.5))).

    Parameters
    ----------
    af : float or numpy.ndarray
        Amplification factor(s) AF of the mode (dimensionless).

    Returns
    -------
    float or numpy.ndarray
        Required separation margin [fraction], a float for a scalar ``af``,
        else an array of the same shape.

    Examples
    --------
    >>> round(api_margin_above(5.0), 6)
    0.221429
    """
    return _api_curve(af, 0.10, 0.26)


@dataclass(frozen=True)
class MarginPolicy:
    """How the required margin of a mode is set."""

    #: ``damping`` (API rule on AF), ``fixed`` or ``half-power`` (±ζ).
    name: str = "damping"
    #: Margin for the ``fixed`` policy, as a fraction (0.10 = 10 %).
    fixed_margin: float | None = None
    #: Damping ratio assumed for modes without one (dimensionless).
    default_damping: float = 0.03

    def __post_init__(self) -> None:
        if self.name not in POLICIES:
            raise InputError("check.policy", "one of " + ", ".join(POLICIES), self.name)
        if self.name == "fixed":
            if self.fixed_margin is None:
                raise InputError(
                    "check.margin", "a margin like '10 %' with policy = 'fixed'", None
                )
            if not (0.0 < self.fixed_margin < 1.0):
                raise InputError("check.margin", "a margin between 0 % and 100 %", self.fixed_margin)
        if not (0.0 < self.default_damping < 1.0):
            raise InputError(
                "check.default_damping", "a damping ratio between 0 and 1", self.default_damping
            )

    def damping_of(self, mode: Mode) -> tuple[float, bool]:
        """The damping ratio used for ``mode`` and whether it was assumed.

        A mode without a damping figure takes the default; when a measurement
        gave only an upper bound (``details["damping_high"]``, e.g. a peak
        narrower than the resolution), the smaller of the two is used, since
        less damping asks for more margin.

        Parameters
        ----------
        mode : Mode
            The frame mode whose damping ratio is wanted.

        Returns
        -------
        tuple of (float, bool)
            Damping ratio ζ used (dimensionless) and ``True`` when it was assumed
            (default or upper bound) rather than given by the mode.
        """
        if mode.damping is None:
            bound = mode.details.get("damping_high")
            if isinstance(bound, float) and bound < self.default_damping:
                return bound, True
            return self.default_damping, True
        return mode.damping, False

    def required_margin(self, mode: Mode) -> float:
        """Required relative margin for ``mode``, as a fraction.

        Parameters
        ----------
        mode : Mode
            The frame mode; its damping (or the assumed one) sets the margin.

        Returns
        -------
        float
            Required relative margin [fraction] (0.10 = 10 %).
        """
        return float(self.margin_for_damping(self.damping_of(mode)[0]))

    def margin_for_damping(self, damping):
        """Required margin [fraction] for damping ratio(s) ``damping`` (float or array).

        Parameters
        ----------
        damping : float or numpy.ndarray
            Damping ratio(s) ζ (dimensionless, 0 < ζ < 1).

        Returns
        -------
        float or numpy.ndarray
            Required margin(s) [fraction] under this policy, a float for a scalar
            ``damping``, else an array of the same shape.
        """
        z = np.asarray(damping, dtype=float)
        if self.name == "fixed":
            assert self.fixed_margin is not None
            out = np.full_like(z, self.fixed_margin)
        elif self.name == "half-power":
            out = z.copy()
        else:
            out = np.asarray(api_margin_below(1.0 / (2.0 * z)))
        return float(out) if out.ndim == 0 else out


def magnification(r: np.ndarray | float, damping: float) -> np.ndarray | float:
    """Single-degree-of-freedom dynamic magnification M(r).

    M(r) = 1/√((1 − r²)² + (2ζr)²), with r = f/f_n (Rao, *Mechanical
    Vibrations* 5th ed. §3.4).

    Parameters
    ----------
    r : float or numpy.ndarray
        Frequency ratio(s) f/f_n of excitation to natural frequency
        (dimensionless).
    damping : float
        Damping ratio ζ (dimensionless).

    Returns
    -------
    float or numpy.ndarray
        Dynamic magnification M (dimensionless), a float for a scalar ``r``,
        else an array of the same shape.

    Examples
    --------
    >>> round(float(magnification(1.0, 0.05)), 6)
    10.0
    """
    r = np.asarray(r, dtype=float)
    out = 1.0 / np.sqrt((1.0 - r**2) ** 2 + (2.0 * damping * r) ** 2)
    return float(out) if out.ndim == 0 else out


def transmissibility(r: np.ndarray | float, damping: float) -> np.ndarray | float:
    """Single-degree-of-freedom transmissibility TR(r).

    TR(r) = √((1 + (2ζr)²)/((1 − r²)² + (2ζr)²)) (Rao §3.6).

    Parameters
    ----------
    r : float or numpy.ndarray
        Frequency ratio(s) f/f_n of excitation to natural frequency
        (dimensionless).
    damping : float
        Damping ratio ζ (dimensionless).

    Returns
    -------
    float or numpy.ndarray
        Transmissibility TR (dimensionless), a float for a scalar ``r``, else
        an array of the same shape.
    """
    r = np.asarray(r, dtype=float)
    two_zr = (2.0 * damping * r) ** 2
    out = np.sqrt((1.0 + two_zr) / ((1.0 - r**2) ** 2 + two_zr))
    return float(out) if out.ndim == 0 else out


def relative_margin(freq_hz: np.ndarray | float, mode: Mode) -> np.ndarray | float:
    """Relative distance of an excitation from a mode's frequency (range).

    For a point mode this is |f − f_m|/f_m.  For a mode with a range it is 0
    inside the range and the distance to the nearer edge, relative to that
    edge, outside it.

    Parameters
    ----------
    freq_hz : float or numpy.ndarray
        Excitation frequency (or frequencies) [Hz].
    mode : Mode
        The frame mode; its ``frequency_low_hz`` .. ``frequency_high_hz``
        range is the reference.

    Returns
    -------
    float or numpy.ndarray
        Relative margin [fraction] (0 inside the mode's range), a float for a
        scalar ``freq_hz``, else an array of the same shape.
    """
    f = np.asarray(freq_hz, dtype=float)
    lo, hi = mode.frequency_low_hz, mode.frequency_high_hz
    assert lo is not None and hi is not None
    below = (lo - f) / lo
    above = (f - hi) / hi
    out = np.maximum(np.maximum(below, above), 0.0)
    return float(out) if out.ndim == 0 else out
