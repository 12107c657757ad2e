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
from .motor import Motor, cogging_order, commutation_order, electrical_order
from .propeller import Propeller

__all__ = [
    "FAMILIES",
    "ORDER_FAMILIES",
    "DEFAULT_WEIGHTS",
    "Order",
    "family_orders",
    "build_orders",
    "orders_for",
    "zone_image",
    "fold_in_zone",
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


#: Order families plus ``custom`` (orders a build or a recording names by number).
ORDER_FAMILIES = FAMILIES + ("custom",)

_ORDINALS = {1: "", 2: "2nd ", 3: "3rd "}


@dataclass(frozen=True)
class Order:
    """One excitation order."""

    #: Multiple of the rotor rate (dimensionless, > 0).
    order: float
    #: Family: rotor, blade, electrical, commutation, cogging or custom.
    family: str
    #: Short label for reports, e.g. ``"blade pass (3×)"``.
    label: str
    #: Relative weight for ranking (dimensionless, ≥ 0).
    weight: float = 1.0
    #: Where the weight came from: ``"default"``, ``"measured"`` or ``"stated"``.
    weight_source: str = "default"
    #: Every family that gives this order (more than one when two coincide,
    #: e.g. a two-blade propeller's 2× rotor and blade pass); ``(family,)`` when empty.
    families: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        if not (math.isfinite(self.order) and 0 < self.order <= 10000):
            raise InputError(f"order {self.label!r}", "an order from 0 to 10000", self.order)
        if not (math.isfinite(self.weight) and self.weight >= 0):
            raise InputError(f"order {self.label!r}.weight", "a weight of 0 or more", self.weight)
        if not self.families:
            object.__setattr__(self, "families", (self.family,))


def _fmt(order: float) -> str:
    return f"{order:g}×"


def family_orders(
    blades: int | None, poles: int | None, slots: int | None, families: Iterable[str] = FAMILIES
) -> list[tuple[float, str, str, str]]:
    """The order numbers of each family: the one table every part of the program uses.

    Rotor 1×, 2×; blade B×, 2B×; electrical poles/2 ×; commutation 3·poles ×;
    cogging LCM(slots, poles) × (REFERENCES.md §4).  The numbers themselves
    come from :mod:`clashcheck.model.motor` (the motor's orders) and the blade
    count.

    Parameters
    ----------
    blades : int or None
        Propeller blades; ``None`` leaves the blade family out.
    poles : int or None
        Magnet poles; ``None`` leaves the electrical, commutation and cogging families out.
    slots : int or None
        Stator slots; ``None`` leaves the cogging family out.
    families : iterable of str
        Families to include.

    Returns
    -------
    list of (order, family, weight key, label)
        In :data:`FAMILIES` order.  Labels read without ambiguity: ``"1× rotor"``
        is once the rotor rate; ``"blade pass (3×)"`` is the blade-pass
        fundamental of a 3-blade propeller, ``"2nd blade pass (6×)"`` its
        second harmonic.

    Examples
    --------
    >>> [(n, lab) for n, _f, _k, lab in family_orders(3, 14, 12)][:4]
    [(1.0, '1× rotor'), (2.0, '2× rotor'), (3.0, 'blade pass (3×)'), (6.0, '2nd blade pass (6×)')]
    """
    chosen = set(families)
    table: list[tuple[float, str, str, str]] = []
    if "rotor" in chosen:
        table += [(1.0, "rotor", "rotor-1", "1× rotor"), (2.0, "rotor", "rotor-2", "2× rotor")]
    if "blade" in chosen and blades is not None:
        table += [(float(b * blades), "blade", f"blade-{b}", f"{_ORDINALS[b]}blade pass ({_fmt(b * blades)})")
                  for b in (1, 2)]
    if poles is not None:
        if "electrical" in chosen:
            n = electrical_order(poles)
            table.append((n, "electrical", "electrical-1", f"electrical ({_fmt(n)})"))
        if "commutation" in chosen:
            n = commutation_order(poles)
            table.append((n, "commutation", "commutation-1", f"commutation ({_fmt(n)})"))
        if "cogging" in chosen and slots is not None:
            n = cogging_order(slots, poles)
            table.append((n, "cogging", "cogging-1", f"cogging ({_fmt(n)})"))
    return table


def build_orders(
    motor: Motor,
    prop: Propeller,
    families: Iterable[str] = FAMILIES,
    custom: Sequence[tuple[float, str, float]] = (),
    measured: Sequence[tuple[float, str, float]] = (),
) -> tuple[Order, ...]:
    """The excitation orders of a motor and propeller.

    Orders that two families give alike (a two-blade propeller's 2× rotor and
    blade pass) are one order naming both families, with the larger of their
    weights: the two lines are the same frequency, so they make one window
    (judgement: their phases are unrelated, so the stronger one stands for both).

    Parameters
    ----------
    motor : Motor
        The motor (poles and slots give its orders).
    prop : Propeller
        The propeller (its blade count gives the blade-pass orders).
    families : iterable of str
        Families to include.
    custom : sequence of (order, label, weight)
        Extra orders a build adds.
    measured : sequence of (order, family, relative_strength)
        Measured order strengths; where one matches an order (one of its
        families, same order within 1e-6), its strength replaces the default weight.

    Returns
    -------
    tuple of Order

    Examples
    --------
    >>> from clashcheck.model.motor import Motor
    >>> from clashcheck.model.propeller import Propeller
    >>> [o.order for o in build_orders(Motor(30.0, 14, 12), Propeller(0.127, 3))]
    [1.0, 2.0, 3.0, 6.0, 7.0, 42.0, 84.0]
    >>> [o.label for o in build_orders(Motor(30.0, 14, 12), Propeller(0.127, 2), ["rotor", "blade"])]
    ['1× rotor', '2× rotor = blade pass (2×)', '2nd blade pass (4×)']
    """
    return orders_for(prop.blades, motor.poles, motor.slots, families, custom, measured)


def orders_for(
    blades: int,
    poles: int,
    slots: int,
    families: Iterable[str] = FAMILIES,
    custom: Sequence[tuple[float, str, float]] = (),
    measured: Sequence[tuple[float, str, float]] = (),
) -> tuple[Order, ...]:
    """The orders of :func:`build_orders` from the part counts alone.

    Parameters
    ----------
    blades : int
        Propeller blades.
    poles : int
        Magnet poles.
    slots : int
        Stator slots.
    families, custom, measured
        As in :func:`build_orders`.

    Returns
    -------
    tuple of Order
    """
    chosen = list(families)
    for fam in chosen:
        if fam not in FAMILIES:
            raise InputError("check.families", "families from " + ", ".join(FAMILIES), fam)
    orders: list[Order] = []
    for number, fam, key, label in family_orders(blades, poles, slots, chosen):
        same = next((i for i, o in enumerate(orders) if _same_order(o.order, number)), None)
        if same is None:
            orders.append(Order(number, fam, label, DEFAULT_WEIGHTS[key]))
            continue
        o = orders[same]
        orders[same] = Order(o.order, o.family, f"{o.label} = {label}", max(o.weight, DEFAULT_WEIGHTS[key]),
                             o.weight_source, o.families + (fam,))
    for number, label, weight in custom:
        orders.append(Order(float(number), "custom", label or f"custom ({_fmt(number)})", float(weight), "stated"))
    if measured:
        orders = [_apply_measured(o, measured) for o in orders]
    return tuple(orders)


def _same_order(a: float, b: float) -> bool:
    return abs(a - b) <= 1e-6 * max(1.0, a)


def _apply_measured(order: Order, measured: Sequence[tuple[float, str, float]]) -> Order:
    for number, family, strength in measured:
        if family in order.families and _same_order(order.order, number):
            return Order(order.order, order.family, order.label, float(strength), "measured", order.families)
    return order


def zone_image(low_hz, high_hz, zone: int, sample_rate_hz: float):
    """True-frequency band in Nyquist zone ``zone`` whose fold is [low, high] (arrays broadcast).

    In zone 2m − 1 the band is [m·fs − high, m·fs − low]; in zone 2m it is
    [m·fs + low, m·fs + high].

    Parameters
    ----------
    low_hz, high_hz : float or array_like
        The apparent band [Hz], within [0, fs/2].
    zone : int
        Nyquist zone, 1 or more.
    sample_rate_hz : float
        Sensor sample rate fs [Hz].

    Returns
    -------
    (true_low_hz, true_high_hz)
        Arrays (or floats) of the same shape [Hz].

    Examples
    --------
    >>> zone_image(300.0, 400.0, 1, 1000.0)
    (600.0, 700.0)
    """
    m = (zone + 1) // 2
    if zone % 2:
        return m * sample_rate_hz - high_hz, m * sample_rate_hz - low_hz
    return m * sample_rate_hz + low_hz, m * sample_rate_hz + high_hz


def fold_in_zone(freq_hz, zone, sample_rate_hz: float):
    """Apparent frequency [Hz] of ``freq_hz`` known to lie in Nyquist zone ``zone``.

    The same fold as :func:`fold`, linear inside the zone (no rounding at its
    edges), so an interval maps to an interval.

    Parameters
    ----------
    freq_hz : float or array_like
        True frequency [Hz].
    zone : int or array_like of int
        Its Nyquist zone (1 or more).
    sample_rate_hz : float
        Sensor sample rate fs [Hz].

    Returns
    -------
    float or numpy.ndarray
        Apparent frequency [Hz].

    Examples
    --------
    >>> fold_in_zone(1400.0, 2, 1000.0)
    400.0
    """
    if np.ndim(zone):
        z = np.asarray(zone)
        m_arr = (z + 1) // 2
        return np.where(z % 2 == 1, m_arr * sample_rate_hz - freq_hz, freq_hz - m_arr * sample_rate_hz)
    m = (zone + 1) // 2
    return m * sample_rate_hz - freq_hz if zone % 2 else freq_hz - m * sample_rate_hz


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
    zone = 1
    while True:
        a, b = zone_image(lo, hi, zone, sample_rate_hz)
        if a > max_hz:  # the images' low edges rise from zone to zone
            return out
        out.append((zone, a, b))
        zone += 1


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
