"""Steady-state drive model: rotor rate ↔ throttle, and hover.

With N motors, a lossless speed controller, I = I0 + Q(ω)/Kt and the
propeller's load torque Q = k·ω², the steady state at throttle d is::

    d·V_oc = Ke·ω + I·(R_m + N·d²·R_pack)

It is quadratic in ω for a given d and quadratic in d for a given ω; both are
solved in closed form here (DESIGN.md, physics steps 1–6).  With
R_m = R_pack = I0 = 0 it reduces to the no-load rule ω = Kv·d·V_oc.

The array functions :func:`rotor_rad_s` and :func:`throttle_at_rad_s` take
plain broadcastable float64 arrays, so callers can vectorise over throttle,
pack state and candidate parts at once.  :class:`Drive` binds them to a build.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cached_property

import numpy as np

from ..errors import InputError
from .battery import Pack
from .motor import Motor
from .propeller import Propeller
from .rates import TWO_PI

__all__ = [
    "rotor_rad_s",
    "throttle_at_rad_s",
    "throttle_fall_rad_s",
    "peak_rotor_rad_s",
    "hover_rotor_hz",
    "DriveParameters",
    "Drive",
    "Hover",
    "STANDARD_GRAVITY",
]

#: Standard gravity [m/s²] (ISO 80000-3).
STANDARD_GRAVITY = 9.80665


def rotor_rad_s(throttle, v_oc, ke, r_m=0.0, i0=0.0, kq=0.0, n_motors=1, r_pack=0.0):
    """Steady shaft speed ω [rad/s] at throttle ``d`` (closed form, vectorised).

    Solves a·ω² + Ke·ω + (I0·R − d·V) = 0 with R = R_m + N·d²·R_pack and
    a = k·R/Kt, taking the non-negative root in the cancellation-free form
    ω = 2c/(Ke + √(Ke² + 4a·c)), c = d·V − I0·R.  Where c ≤ 0 the motor
    does not turn and ω = 0.

    Parameters
    ----------
    throttle : array_like
        Duty fraction d in [0, 1].
    v_oc : array_like
        Open-circuit pack voltage [V].
    ke : array_like
        Back-EMF constant [V·s/rad] (equal to Kt [N·m/A]).
    r_m : array_like
        Winding resistance [ohm].
    i0 : array_like
        No-load current [A].
    kq : array_like
        Torque coefficient k in Q = k·ω² [N·m·s²].
    n_motors : array_like
        Motors sharing the pack.
    r_pack : array_like
        Pack internal resistance [ohm].

    Returns
    -------
    numpy.ndarray
        ω [rad/s], broadcast over the inputs.

    Examples
    --------
    >>> ke = 60 / (2 * np.pi * 920)          # Kv 920 rpm/V
    >>> round(float(rotor_rad_s(1.0, 14.8, ke)) / (2 * np.pi), 2)
    226.93
    """
    d = np.asarray(throttle, dtype=float)
    r_eff = r_m + n_motors * d**2 * r_pack
    c = d * v_oc - i0 * r_eff
    a = kq * r_eff / ke
    root = np.sqrt(ke**2 + 4.0 * a * np.maximum(c, 0.0))
    return np.where(c > 0.0, 2.0 * c / (ke + root), 0.0)


def throttle_at_rad_s(omega_rad_s, v_oc, ke, r_m=0.0, i0=0.0, kq=0.0, n_motors=1, r_pack=0.0):
    """Throttle [fraction] at which the steady shaft speed is ``omega_rad_s``.

    For a given ω the current I = I0 + k·ω²/Kt is fixed, and
    N·R_pack·I·d² − V·d + (Ke·ω + I·R_m) = 0.  The physical root is the
    smaller one, d = 2e/(V + √(V² − 4·N·R_pack·I·e)) with e = Ke·ω + I·R_m.
    Where the discriminant is negative the speed cannot be reached at any
    throttle and the result is ``inf``.  Results above 1 mean the speed
    needs more than full throttle.

    Parameters
    ----------
    omega_rad_s : float or array_like
        Shaft speed [rad/s].
    v_oc : float or array_like
        Open-circuit pack voltage [V].
    ke : float
        Back-EMF constant Ke = Kt [V·s/rad].
    r_m : float, optional
        Winding resistance, line to line [ohm]; 0 when not given.
    i0 : float, optional
        No-load current [A]; 0 when not given.
    kq : float, optional
        Propeller torque coefficient k in Q = k·ω² [N·m·s²/rad²]; 0 without a C_P.
    n_motors : int, optional
        Motors sharing the pack.
    r_pack : float, optional
        Pack resistance [ohm]; 0 when not given.

    Returns
    -------
    numpy.ndarray
        Throttle [fraction], broadcast over the inputs; ``inf`` where the speed cannot be reached.

    Examples
    --------
    >>> ke = 60 / (2 * np.pi * 920)
    >>> round(float(throttle_at_rad_s(2 * np.pi * 226.93, 14.8, ke)), 4)
    1.0
    """
    w = np.asarray(omega_rad_s, dtype=float)
    current = i0 + kq * w**2 / ke
    e = ke * w + current * r_m
    disc = v_oc**2 - 4.0 * n_motors * r_pack * current * e
    with np.errstate(invalid="ignore"):
        d = 2.0 * e / (v_oc + np.sqrt(np.maximum(disc, 0.0)))
    return np.where(disc >= 0.0, d, np.inf)


def throttle_fall_rad_s(omega_rad_s, v_oc, ke, r_m=0.0, i0=0.0, kq=0.0, n_motors=1, r_pack=0.0):
    """Throttle [fraction] on the falling side: the larger root of the steady state.

    With pack sag the rotor rate can peak below full throttle and fall after
    it; each rate below the peak is then reached twice.  The larger root of
    N·R_pack·I·d² − V·d + (Ke·ω + I·R_m) = 0 is
    d = (V + √(V² − 4·N·R_pack·I·e)) / (2·N·R_pack·I).  Without pack
    resistance (or current) there is no falling side and the result is
    ``inf``; where the discriminant is negative the rate is above the peak
    and the result is ``inf`` too.

    Parameters
    ----------
    omega_rad_s : array_like
        Shaft speed [rad/s].
    v_oc, ke, r_m, i0, kq, n_motors, r_pack : array_like
        As in :func:`rotor_rad_s`: open-circuit voltage [V], back-EMF
        constant [V·s/rad], winding resistance [ohm], no-load current [A],
        torque coefficient [N·m·s²], motors on the pack, pack resistance [ohm].

    Returns
    -------
    numpy.ndarray
        Throttle [fraction], broadcast over the inputs; ``inf`` where there is
        no falling-side root.

    Examples
    --------
    >>> ke = 60 / (2 * np.pi * 920)
    >>> float(throttle_fall_rad_s(2 * np.pi * 200.0, 14.8, ke))
    inf
    """
    w = np.asarray(omega_rad_s, dtype=float)
    current = i0 + kq * w**2 / ke
    e = ke * w + current * r_m
    quad = n_motors * r_pack * current
    disc = v_oc**2 - 4.0 * quad * e
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        d = (v_oc + np.sqrt(np.maximum(disc, 0.0))) / (2.0 * quad)
    return np.where((disc >= 0.0) & (quad > 0.0), d, np.inf)


def peak_rotor_rad_s(v_oc, ke, r_m=0.0, i0=0.0, kq=0.0, n_motors=1, r_pack=0.0):
    """Highest steady shaft speed over all throttles, and the throttle where it sits.

    With pack resistance the rotor rate peaks where the two throttle roots
    meet: the discriminant V² − 4·N·R_pack·I(ω)·e(ω) is zero, with
    I = I0 + q·ω² (q = k/Kt) and e = Ke·ω + I·R_m.  That is the polynomial

        R_m·q²·ω⁴ + Ke·q·ω³ + 2·R_m·I0·q·ω² + Ke·I0·ω + R_m·I0² − V²/(4·N·R_pack) = 0,

    whose one positive root is found from the eigenvalues of its companion
    matrix (``numpy.linalg.eigvals``, batched); the throttle there is
    d = V/(2·N·R_pack·I).  Without pack resistance there is no peak: both
    results are ``inf``.

    Parameters
    ----------
    v_oc, ke, r_m, i0, kq, n_motors, r_pack : array_like
        As in :func:`rotor_rad_s`: open-circuit voltage [V], back-EMF
        constant [V·s/rad], winding resistance [ohm], no-load current [A],
        torque coefficient [N·m·s²], motors on the pack, pack resistance [ohm].

    Returns
    -------
    (omega_peak_rad_s, throttle_peak)
        Arrays broadcast over the inputs: the peak shaft speed [rad/s] and the
        throttle where it is reached [fraction, may exceed 1].

    Examples
    --------
    >>> ke = 60 / (2 * np.pi * 1950)
    >>> w, d = peak_rotor_rad_s(25.2, ke, 0.1, 1.0, 2.5e-7, 4, 0.072)
    >>> round(float(d), 3)
    0.818
    >>> args = (25.2, ke, 0.1, 1.0, 2.5e-7, 4, 0.072)
    >>> bool(rotor_rad_s(d - 0.01, *args) < w > rotor_rad_s(d + 0.01, *args))
    True
    """
    arrays = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (v_oc, ke, r_m, i0, kq, n_motors, r_pack)))
    v, k_e, rm, cur0, k_q, n, rp = (a.reshape(-1) for a in arrays)
    shape = arrays[0].shape
    q = k_q / k_e
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        c0 = rm * cur0**2 - v**2 / (4.0 * n * rp)
    coeffs = np.stack([rm * q**2, k_e * q, 2.0 * rm * cur0 * q, k_e * cur0, c0], axis=1)   # highest first
    omega = np.full(v.shape, np.inf)
    has_peak = (rp > 0) & (n > 0) & np.isfinite(c0) & (c0 < 0)
    for degree in (4, 3, 2, 1):  # the leading coefficients vanish without R_m, k or I0
        lead = 4 - degree
        rows = has_peak & (coeffs[:, lead] > 0) & np.all(coeffs[:, :lead] == 0, axis=1)
        if not np.any(rows):
            continue
        with np.errstate(over="ignore"):
            c = coeffs[rows, lead:] / coeffs[rows, lead:lead + 1]            # monic, highest first
        sane = np.all(np.isfinite(c), axis=1)          # else the peak lies beyond any float: no peak
        rows[rows] = sane
        c = c[sane]
        if not np.any(rows):
            continue
        comp = np.zeros((c.shape[0], degree, degree))
        comp[:, 0, :] = -c[:, 1:]
        comp[:, np.arange(1, degree), np.arange(degree - 1)] = 1.0
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            roots = np.linalg.eigvals(comp)
        real = np.abs(roots.imag) <= 1e-9 * np.maximum(np.abs(roots.real), 1.0)
        positive = np.where(real & (roots.real > 0), roots.real, -np.inf)
        omega[rows] = np.max(positive, axis=1)
    omega = np.where(np.isfinite(omega) & (omega > 0), omega, np.inf)
    finite = np.isfinite(omega)
    current = cur0 + q * np.where(finite, omega, 0.0) ** 2
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        d = np.where(finite, v / (2.0 * n * rp * current), np.inf)
    return omega.reshape(shape), d.reshape(shape)


def hover_rotor_hz(mass_kg, n_motors, thrust_coefficient, density_kg_m3, diameter_m):
    """Rotor rate [rev/s] at which N rotors carry the weight: N·T = m·g.

    n_hover = √(m·g / (N·C_T·ρ·D⁴)).

    Parameters
    ----------
    mass_kg : float or array_like
        All-up mass [kg].
    n_motors : int or array_like
        Number of rotors.
    thrust_coefficient : float or array_like
        Static thrust coefficient C_T [-].
    density_kg_m3 : float
        Air density [kg/m³].
    diameter_m : float or array_like
        Propeller diameter [m].

    Returns
    -------
    numpy.ndarray
        Hover rotor rate [rev/s].
    """
    return np.sqrt(
        mass_kg * STANDARD_GRAVITY / (n_motors * thrust_coefficient * density_kg_m3 * diameter_m**4)
    )


@dataclass(frozen=True)
class DriveParameters:
    """The plain numbers of the steady-state equation, in SI."""

    #: Back-EMF constant [V·s/rad].
    ke: float
    #: Winding resistance [ohm].
    r_m: float
    #: No-load current [A].
    i0: float
    #: Torque coefficient k in Q = k·ω² [N·m·s²].
    kq: float
    #: Motors on the pack.
    n_motors: int
    #: Pack resistance [ohm].
    r_pack: float

    def as_kwargs(self) -> dict[str, float]:
        return {
            "ke": self.ke,
            "r_m": self.r_m,
            "i0": self.i0,
            "kq": self.kq,
            "n_motors": self.n_motors,
            "r_pack": self.r_pack,
        }


@dataclass(frozen=True)
class Hover:
    """Where the build hovers at one pack state."""

    #: Pack state.
    pack_state: str
    #: Hover throttle [fraction]; above 1 (or inf) when it cannot hover.
    throttle: float
    #: Rotor rate at hover [Hz]; ``nan`` when not known.
    rotor_hz: float
    #: ``"computed"`` (from C_T and mass) or ``"stated"`` (from the build).
    how: str

    @property
    def can_hover(self) -> bool:
        """Whether hover is reachable at or below full throttle."""
        return bool(np.isfinite(self.throttle) and self.throttle <= 1.0)


@dataclass(frozen=True)
class Drive:
    """The drive model of one build: motor, propeller, pack, motor count, air."""

    #: The motor.
    motor: Motor
    #: The propeller.
    prop: Propeller
    #: The pack.
    pack: Pack
    #: Motors sharing the pack.
    n_motors: int
    #: Air density [kg/m³].
    density_kg_m3: float

    def __post_init__(self) -> None:
        if not (math.isfinite(self.density_kg_m3) and 0.1 < self.density_kg_m3 < 2.0):
            raise InputError("flight.altitude", "an air density from 0.1 to 2 kg/m³", self.density_kg_m3)

    @classmethod
    def from_build(cls, build) -> "Drive":
        """The drive model of a :class:`~clashcheck.build.Build`."""
        return build.drive()

    @cached_property
    def parameters(self) -> DriveParameters:
        """The plain numbers of the steady-state equation."""
        return DriveParameters(
            ke=self.motor.ke_v_s_per_rad,
            r_m=self.motor.resistance_ohm,
            i0=self.motor.no_load_current_a,
            kq=self.prop.torque_coefficient(self.density_kg_m3),
            n_motors=self.n_motors,
            r_pack=self.pack.resistance_ohm,
        )

    @property
    def loaded_terms(self) -> tuple[str, ...]:
        """The loss terms the model includes; empty for the no-load rule."""
        p = self.parameters
        if p.r_m <= 0 and p.r_pack <= 0:
            return ()  # without a resistance, load and no-load current change nothing
        terms = []
        if p.r_m > 0:
            terms.append("winding resistance")
        if p.i0 > 0:
            terms.append("no-load current")
        if p.kq > 0:
            terms.append("propeller torque")
        if p.r_pack > 0:
            terms.append("pack sag")
        return tuple(terms)

    @property
    def model(self) -> str:
        """``"loaded"`` or ``"no-load"``."""
        return "loaded" if self.loaded_terms else "no-load"

    def model_description(self) -> str:
        """One line naming the model and its terms."""
        if not self.loaded_terms:
            return "no-load rule (rotor rate = Kv × throttle × pack voltage)"
        return "loaded model (" + ", ".join(self.loaded_terms) + ")"

    def rotor_hz(self, throttle, pack_state: str = "nominal") -> np.ndarray:
        """Steady rotor rate [Hz] at ``throttle`` [fraction] and a pack state.

        Parameters
        ----------
        throttle : float or array_like
            Throttle [fraction, 0–1].
        pack_state : str, optional
            ``full``, ``nominal`` or ``empty``.

        Returns
        -------
        numpy.ndarray
            Steady rotor rate [Hz].
        """
        v = self.pack.voltage(pack_state)
        return rotor_rad_s(throttle, v, **self.parameters.as_kwargs()) / TWO_PI

    def throttle_at(self, rotor_hz, pack_state: str = "nominal") -> np.ndarray:
        """Throttle [fraction] giving the steady rotor rate ``rotor_hz`` [Hz].

        Parameters
        ----------
        rotor_hz : float or array_like
            Rotor rate [Hz].
        pack_state : str, optional
            ``full``, ``nominal`` or ``empty``.

        Returns
        -------
        numpy.ndarray
            Throttle [fraction]; above 1 or ``inf`` when out of reach.
        """
        v = self.pack.voltage(pack_state)
        return throttle_at_rad_s(np.asarray(rotor_hz, dtype=float) * TWO_PI, v, **self.parameters.as_kwargs())

    def hover(self, mass_kg: float, pack_state: str, stated_throttle: float | None = None) -> Hover:
        """Hover point at a pack state, computed from C_T or taken as stated.

        Parameters
        ----------
        mass_kg : float
            All-up mass [kg].
        pack_state : str
            ``full``, ``nominal`` or ``empty``.
        stated_throttle : float, optional
            A hover throttle [fraction] stated by the build; used as it is.

        Returns
        -------
        Hover
            Throttle, rotor rate and how the point was found (``computed``, ``stated`` or ``unknown``).
        """
        if stated_throttle is not None:
            rate = float(self.rotor_hz(stated_throttle, pack_state))
            return Hover(pack_state, float(stated_throttle), rate, "stated")
        if self.prop.thrust_coefficient is None:
            return Hover(pack_state, math.nan, math.nan, "unknown")
        rate = float(
            hover_rotor_hz(
                mass_kg, self.n_motors, self.prop.thrust_coefficient, self.density_kg_m3, self.prop.diameter_m
            )
        )
        return Hover(pack_state, float(self.throttle_at(rate, pack_state)), rate, "computed")
