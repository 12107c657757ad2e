"""Excitation orders, their families, and the sensor fold.

An *order* is an excitation frequency as a multiple of the rotor rate.  Each
family names where orders come from (DESIGN.md vocabulary):

- ``rotor``: 1× and 2× (unbalance, misalignment);
- ``blade``: B× and 2B× (blade pass);
- ``electrical``: poles/2 ×;
- ``commutation``: 3·poles × (six events per electrical cycle);
- ``cogging``: LCM(slots, poles) ×.

The *fold* is the apparent frequency of an excitation sampled at fs:
f_app = |f − fs·round(f/fs)| (Oppenheim & Schafer 3rd ed. §4.2, recalled;
REFERENCES.md §9).
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .motor import Motor
from .propeller import Propeller

__all__ = [
    "FAMILIES",
    "DEFAULT_WEIGHTS",
    "Order",
    "build_orders",
    "fold",
    "nyquist_zone",
    "alias_images",
    "antialias_gain",
    "Sensor",
]

#: Order families, in the order reports list them.
FAMILIES = ("rotor", "blade", "electrical", "commutation", "cogging")

#: Default relative weights, for the severity ranking only.  These are
#: judgement (common practice: unbalance and blade pass dominate the frame's
#: response; the electrical, commutation and cogging lines are weaker), not
#: measured figures; a flight recording's measured strengths replace them.
DEFAULT_WEIGHTS: Mapping[str, float] = {
    "rotor-1": 1.0,
    "rotor-2": 0.5,
    "blade-1": 0.8,
    "blade-2": 0.4,
    "electrical-1": 0.3,
    "commutation-1": 0.15,
    "cogging-1": 0.1,
    "custom-1": 0.5,
}


@dataclass(frozen=True)
class Order:
    """One excitation order."""

    #: Multiple of the rotor rate (dimensionless, > 0).
    order: float
    #: Family: rotor, blade, electrical, commutation, cogging or custom.
    family: str
    #: Short label for reports, e.g. ``"3× blade pass"``.
    label: str
    #: Relative weight for ranking (dimensionless, ≥ 0).
    weight: float = 1.0
    #: Where the weight came from: ``"default"``, ``"measured"`` or ``"stated"``.
    weight_source: str = "default"

    def __post_init__(self) -> None:
        if not (math.isfinite(self.order) and 0 < self.order <= 10000):
            raise InputError(f"order {self.label!r}", "an order from 0 to 10000", self.order)
        if not (math.isfinite(self.weight) and self.weight >= 0):
            raise InputError(f"order {self.label!r}.weight", "a weight of 0 or more", self.weight)


def _fmt(order: float) -> str:
    return f"{order:g}×"


def build_orders(
    motor: Motor,
    prop: Propeller,
    families: Iterable[str] = FAMILIES,
    custom: Sequence[tuple[float, str, float]] = (),
    measured: Sequence[tuple[float, str, float]] = (),
) -> tuple[Order, ...]:
    """The excitation orders of a motor and propeller.

    Parameters
    ----------
    motor, prop
        The parts.
    families : iterable of str
        Families to include.
    custom : sequence of (order, label, weight)
        Extra orders a build adds.
    measured : sequence of (order, family, relative_strength)
        Measured order strengths; where one matches an order (same family,
        same order within 1e-6), its strength replaces the default weight.

    Returns
    -------
    tuple of Order

    Examples
    --------
    >>> from clashcheck.model.motor import Motor
    >>> from clashcheck.model.propeller import Propeller
    >>> [o.order for o in build_orders(Motor(30.0, 14, 12), Propeller(0.127, 3))]
    [1.0, 2.0, 3.0, 6.0, 7.0, 42.0, 84.0]
    """
    chosen = list(families)
    for fam in chosen:
        if fam not in FAMILIES:
            raise InputError("check.families", "families from " + ", ".join(FAMILIES), fam)
    b = prop.blades
    table = {
        "rotor": [(1.0, "1× rotor", "rotor-1"), (2.0, "2× rotor", "rotor-2")],
        "blade": [
            (float(b), f"{b}× blade pass", "blade-1"),
            (2.0 * b, f"{2 * b}× blade pass", "blade-2"),
        ],
        "electrical": [(motor.electrical_order, f"{_fmt(motor.electrical_order)} electrical", "electrical-1")],
        "commutation": [
            (motor.commutation_order, f"{_fmt(motor.commutation_order)} commutation", "commutation-1")
        ],
        "cogging": [(motor.cogging_order, f"{_fmt(motor.cogging_order)} cogging", "cogging-1")],
    }
    orders: list[Order] = []
    for fam in FAMILIES:
        if fam in chosen:
            for number, label, key in table[fam]:
                orders.append(Order(number, fam, label, DEFAULT_WEIGHTS[key]))
    for number, label, weight in custom:
        orders.append(Order(float(number), "custom", label or f"{_fmt(number)} custom", float(weight), "stated"))
    if measured:
        orders = [_apply_measured(o, measured) for o in orders]
    return tuple(orders)


def _apply_measured(order: Order, measured: Sequence[tuple[float, str, float]]) -> Order:
    for number, family, strength in measured:
        if family == order.family and abs(number - order.order) <= 1e-6 * max(1.0, order.order):
            return Order(order.order, order.family, order.label, float(strength), "measured")
    return order


def fold(freq_hz, sample_rate_hz: float):
    """Apparent frequency [Hz] of ``freq_hz`` sampled at ``sample_rate_hz``.

    f_app = |f − fs·round(f/fs)|, which lies in [0, fs/2].

    Examples
    --------
    >>> float(fold(1400.0, 1000.0))
    400.0
    """
    if isinstance(freq_hz, (float, int)):  # scalar fast path, same rounding as numpy (half to even)
        return abs(freq_hz - sample_rate_hz * round(freq_hz / sample_rate_hz))
    f = np.asarray(freq_hz, dtype=float)
    out = np.abs(f - sample_rate_hz * np.round(f / sample_rate_hz))
    return float(out) if out.ndim == 0 else out


def nyquist_zone(freq_hz, sample_rate_hz: float):
    """Nyquist zone k = floor(f / (fs/2)); zone 0 is the sensor's own band."""
    f = np.asarray(freq_hz, dtype=float)
    out = np.floor(f / (0.5 * sample_rate_hz)).astype(int)
    return int(out) if out.ndim == 0 else out


def alias_images(
    low_hz: float, high_hz: float, sample_rate_hz: float, max_hz: float
) -> list[tuple[int, float, float]]:
    """True-frequency bands above Nyquist whose fold lands in [low, high].

    Parameters
    ----------
    low_hz, high_hz : float
        The apparent band [Hz]; clipped to [0, fs/2].
    sample_rate_hz : float
        Sensor sample rate fs [Hz].
    max_hz : float
        Highest true frequency of interest [Hz].

    Returns
    -------
    list of (zone, true_low_hz, true_high_hz)
        In Nyquist zone 2m − 1 the band is [m·fs − high, m·fs − low]; in zone
        2m it is [m·fs + low, m·fs + high].

    Examples
    --------
    >>> alias_images(300.0, 400.0, 1000.0, 1500.0)
    [(1, 600.0, 700.0), (2, 1300.0, 1400.0)]
    """
    nyq = 0.5 * sample_rate_hz
    lo, hi = max(low_hz, 0.0), min(high_hz, nyq)
    out: list[tuple[int, float, float]] = []
    if lo > hi:
        return out
    m = 1
    while m * sample_rate_hz - hi <= max_hz:
        for zone, a, b in (
            (2 * m - 1, m * sample_rate_hz - hi, m * sample_rate_hz - lo),
            (2 * m, m * sample_rate_hz + lo, m * sample_rate_hz + hi),
        ):
            if a <= max_hz:
                out.append((zone, a, b))
        m += 1
    return out


def antialias_gain(freq_hz, cutoff_hz: float | None, order: int = 2):
    """Magnitude of a Butterworth low-pass of ``order`` at ``freq_hz``.

    |H(f)| = 1/√(1 + (f/fc)^(2n)); 1 when there is no filter.
    """
    f = np.asarray(freq_hz, dtype=float)
    if cutoff_hz is None:
        out = np.ones_like(f)
    else:
        out = 1.0 / np.sqrt(1.0 + (f / cutoff_hz) ** (2 * order))
    return float(out) if out.ndim == 0 else out


@dataclass(frozen=True)
class Sensor:
    """The flight sensor that samples the vibration."""

    #: Sample rate fs [Hz].
    sample_rate_hz: float
    #: Anti-alias low-pass cutoff [Hz]; ``None`` when there is none.
    antialias_cutoff_hz: float | None = None
    #: Anti-alias low-pass order (Butterworth-like roll-off, 20·n dB/decade).
    antialias_order: int = 2

    def __post_init__(self) -> None:
        if not (math.isfinite(self.sample_rate_hz) and 10.0 <= self.sample_rate_hz <= 1e6):
            raise InputError("sensor.sample_rate", "a sample rate from 10 Hz to 1 MHz", self.sample_rate_hz)
        if self.antialias_cutoff_hz is not None and not (
            math.isfinite(self.antialias_cutoff_hz) and 0 < self.antialias_cutoff_hz
        ):
            raise InputError("sensor.antialias_cutoff", "a cutoff above 0 Hz", self.antialias_cutoff_hz)
        if (
            not isinstance(self.antialias_order, int)
            or isinstance(self.antialias_order, bool)
            or not 1 <= self.antialias_order <= 8
        ):
            raise InputError("sensor.antialias_order", "a filter order from 1 to 8", self.antialias_order)

    @property
    def nyquist_hz(self) -> float:
        """Nyquist limit fs/2 [Hz]."""
        return 0.5 * self.sample_rate_hz

    def gain(self, freq_hz):
        """Anti-alias filter gain at ``freq_hz`` (1 without a filter)."""
        return antialias_gain(freq_hz, self.antialias_cutoff_hz, self.antialias_order)
