"""How a heavier or lighter motor and propeller move the arm modes.

An arm bending mode behaves, to first order, as a single-degree-of-freedom
spring and mass: the arm's stiffness k carries the tip mass plus a share of
the arm's own mass, m_eff = M_tip + (33/140)·m_arm (Rayleigh's quotient on the
static-deflection shape; REFERENCES.md §3, derived).  Swapping parts changes
M_tip but not k, so (REFERENCES.md §2, §3)::

    f_new / f_old = √(m_eff,old / m_eff,new)

and, for the same damping coefficient c, ζ = c/(2√(k·m_eff)) gives the same
ratio for the damping ratio::

    ζ_new / ζ_old = √(m_eff,old / m_eff,new)

A mode counts as arm-related when its ``kind`` is ``"arm"`` (set in the
build file, or by the beam estimate of ``[frame.arm]``).  The arm's own mass
comes from ``[frame.arm]`` when the build has one; otherwise the tip mass is
taken to dominate (m_eff = M_tip), which overstates the shift slightly, and
the notes say so.

This module is pure: it returns new :class:`~clashcheck.modes.Mode` objects
(``origin = "shifted"``, old and new figures in ``details``) and a
:class:`MassShift` record, and formats nothing.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from ..errors import InputError
from .modes import Mode

__all__ = [
    "RAYLEIGH_SHARE",
    "MassShift",
    "effective_mass_kg",
    "frequency_ratio",
    "shift_mode",
    "is_arm_mode",
    "tip_masses",
    "shift_modes",
    "swap_shift",
]

#: Share of a cantilever's own mass that moves with the tip in the first
#: bending mode, from the static-deflection shape (REFERENCES.md §3, derived).
RAYLEIGH_SHARE = 33.0 / 140.0


def effective_mass_kg(tip_mass_kg, arm_mass_kg=0.0):
    """Effective mass m_eff = M_tip + (33/140)·m_arm [kg] (broadcasts).

    Parameters
    ----------
    tip_mass_kg : array_like
        Mass at the arm's tip: motor, propeller and hardware [kg].
    arm_mass_kg : array_like, optional
        Mass of the arm's free length [kg]; 0 when the tip dominates.

    Examples
    --------
    >>> round(effective_mass_kg(0.040, 0.014), 6)
    0.0433
    """
    out = np.asarray(tip_mass_kg, dtype=float) + RAYLEIGH_SHARE * np.asarray(arm_mass_kg, dtype=float)
    return float(out) if out.ndim == 0 else out


def frequency_ratio(old_tip_kg, new_tip_kg, arm_mass_kg=0.0):
    """f_new/f_old = ζ_new/ζ_old = √(m_eff,old/m_eff,new) (broadcasts).

    Parameters
    ----------
    old_tip_kg, new_tip_kg : array_like
        Tip masses before and after the swap [kg].
    arm_mass_kg : array_like, optional
        Mass of the arm's free length [kg].

    Examples
    --------
    >>> round(frequency_ratio(0.040, 0.050), 6)     # 25 % heavier tip, no arm mass
    0.894427
    """
    out = np.sqrt(effective_mass_kg(old_tip_kg, arm_mass_kg) / effective_mass_kg(new_tip_kg, arm_mass_kg))
    return float(out) if np.ndim(out) == 0 else out


@dataclass(frozen=True)
class MassShift:
    """What a parts swap does to the arm modes, and how that was worked out."""

    #: Whether any mode was shifted.
    applied: bool
    #: Tip mass before the swap [kg]; ``None`` when unknown.
    old_tip_kg: float | None
    #: Tip mass after the swap [kg]; ``None`` when unknown.
    new_tip_kg: float | None
    #: Arm mass used in m_eff [kg] (0 when the tip is taken to dominate).
    arm_mass_kg: float
    #: Where the arm mass came from: ``"frame.arm"`` or ``"assumed 0"``.
    arm_mass_source: str
    #: f_new/f_old = ζ_new/ζ_old; ``nan`` when not applied.
    ratio: float
    #: Names of the modes that were shifted.
    shifted: tuple[str, ...]
    #: One sentence per assumption or reason, for the report.
    notes: tuple[str, ...]

    def __post_init__(self) -> None:
        if not (math.isfinite(self.arm_mass_kg) and self.arm_mass_kg >= 0):
            raise InputError("frame.arm mass", "an arm mass of 0 kg or more", self.arm_mass_kg)


def is_arm_mode(mode: Mode) -> bool:
    """Whether a swap of tip mass moves this mode (``kind == "arm"``).

    Parameters
    ----------
    mode : Mode
        A frame mode.
    """
    return mode.kind == "arm"


def shift_mode(mode: Mode, ratio: float, *, old_tip_kg: float, new_tip_kg: float) -> Mode:
    """``mode`` with frequency (range) and damping scaled by ``ratio``.

    Parameters
    ----------
    mode : Mode
        The mode as figured for the old tip mass.
    ratio : float
        f_new/f_old from :func:`frequency_ratio` (dimensionless, > 0).
    old_tip_kg, new_tip_kg : float
        Tip masses, kept in the mode's ``details`` [kg].

    Returns
    -------
    Mode
        ``origin = "shifted"``; ``details`` holds the old and new frequency
        and damping.  A mode without a damping figure keeps none: the build's
        default damping is then used, unshifted, and marked as assumed.

    Examples
    --------
    >>> m = shift_mode(Mode("arm flap", 200.0, 0.03, kind="arm"), 0.9, old_tip_kg=0.04, new_tip_kg=0.05)
    >>> round(m.frequency_hz, 6), round(m.damping, 6), m.origin
    (180.0, 0.027, 'shifted')
    """
    if not (math.isfinite(ratio) and ratio > 0):
        raise InputError(f"mode {mode.name!r} shift", "a frequency ratio above 0", ratio)
    damping = None if mode.damping is None else mode.damping * ratio
    details = dict(mode.details)
    details.update(
        {
            "old_frequency_hz": mode.frequency_hz,
            "new_frequency_hz": mode.frequency_hz * ratio,
            "old_damping": mode.damping if mode.damping is not None else "assumed",
            "new_damping": damping if damping is not None else "assumed",
            "old_origin": mode.origin,
            "old_tip_mass_kg": old_tip_kg,
            "new_tip_mass_kg": new_tip_kg,
            "frequency_ratio": ratio,
        }
    )
    assert mode.frequency_low_hz is not None and mode.frequency_high_hz is not None
    return replace(
        mode,
        frequency_hz=mode.frequency_hz * ratio,
        frequency_low_hz=mode.frequency_low_hz * ratio,
        frequency_high_hz=mode.frequency_high_hz * ratio,
        damping=damping,
        origin="shifted",
        source=(mode.source + "; " if mode.source else "")
        + f"shifted ×{ratio:.4f} for tip mass {1e3 * old_tip_kg:.1f} g → {1e3 * new_tip_kg:.1f} g",
        details=details,
    )


def _part_masses(build) -> float | None:
    """Motor + propeller mass of a build [kg], or ``None`` when either is unknown."""
    if build.motor.mass_kg is None or build.prop.mass_kg is None:
        return None
    return build.motor.mass_kg + build.prop.mass_kg


def tip_masses(a, motor_mass_kg, prop_mass_kg):
    """Tip mass before the swap and after it, and the arm mass, for build ``a``.

    With ``[frame.arm]`` in ``a`` the tip mass is the arm's (which may
    include hardware) and the swap adds the change in motor + propeller mass;
    the arm mass is the arm's free length.  Without it the tip mass is
    motor + propeller and the arm mass is taken as 0.

    Parameters
    ----------
    a : Build
        The build the mode figures belong to.
    motor_mass_kg, prop_mass_kg : array_like
        The new motor and propeller masses [kg] (broadcast, for ``pick``).

    Returns
    -------
    old_tip_kg, new_tip_kg, arm_mass_kg, arm_mass_source
        ``old_tip_kg`` is ``None`` when ``a``'s motor or propeller mass is unknown.
    """
    parts = _part_masses(a)
    if parts is None:
        return None, None, 0.0, "assumed 0"
    new_parts = np.asarray(motor_mass_kg, dtype=float) + np.asarray(prop_mass_kg, dtype=float)
    if a.arm is not None:
        old_tip = float(a.arm.tip_mass_kg)
        arm_mass = float(a.arm.beam_mass_kg())
        source = "frame.arm"
    else:
        old_tip = parts
        arm_mass = 0.0
        source = "assumed 0"
    new_tip = old_tip + (new_parts - parts)
    if np.ndim(new_tip) == 0:
        new_tip = float(new_tip)
    return old_tip, new_tip, arm_mass, source


def _arm_mass_note(source: str, arm_mass_kg: float) -> str:
    if source == "frame.arm":
        return (
            f"arm mass {1e3 * arm_mass_kg:.1f} g from [frame.arm]: m_eff = tip mass + 33/140 × arm mass"
        )
    return (
        "no [frame.arm]: the tip mass (motor + propeller, hardware left out) is taken to dominate, "
        "m_eff = tip mass, which overstates the shift a little"
    )


def shift_modes(a, motor_mass_kg: float | None, prop_mass_kg: float | None):
    """All arm modes of build ``a``, shifted for a new motor and propeller mass.

    Used by ``pick``: the candidate keeps ``a``'s frame, so every arm mode of
    ``a`` (catalog, stated, measured or estimated) moves with the tip mass.

    Parameters
    ----------
    a : Build
        The build whose mode figures are known.
    motor_mass_kg, prop_mass_kg : float or None
        The new motor and propeller masses [kg]; ``None`` when unknown.

    Returns
    -------
    (tuple of Mode, MassShift)
        ``a``'s modes unchanged (and ``applied = False``) when any of the
        four masses is unknown or no mode is arm-related.
    """
    if _part_masses(a) is None or motor_mass_kg is None or prop_mass_kg is None:
        note = "modes not shifted: motor or propeller mass not known"
        return a.modes, MassShift(False, None, None, 0.0, "assumed 0", math.nan, (), (note,))
    old_tip, new_tip, arm_mass, source = tip_masses(a, motor_mass_kg, prop_mass_kg)
    assert old_tip is not None
    if new_tip <= 0:
        raise InputError("motor.mass", "parts that leave a positive tip mass", f"{1e3 * new_tip:.1f} g")
    ratio = frequency_ratio(old_tip, new_tip, arm_mass)
    out, shifted = [], []
    for mode in a.modes:
        if is_arm_mode(mode):
            out.append(shift_mode(mode, ratio, old_tip_kg=old_tip, new_tip_kg=float(new_tip)))
            shifted.append(mode.name)
        else:
            out.append(mode)
    notes = [_arm_mass_note(source, arm_mass)] if shifted else ["no arm-related mode to shift"]
    return tuple(out), MassShift(bool(shifted), old_tip, float(new_tip), arm_mass, source,
                                 ratio if shifted else math.nan, tuple(shifted), tuple(notes))


def _same_figure(x: Mode, y: Mode) -> bool:
    return (x.frequency_hz, x.frequency_low_hz, x.frequency_high_hz, x.damping) == (
        y.frequency_hz, y.frequency_low_hz, y.frequency_high_hz, y.damping
    )


def swap_shift(a, b) -> tuple[object, MassShift]:
    """Build ``b`` with its arm modes shifted from ``a``'s figures.

    An arm-related mode of ``b`` is shifted when ``b`` carries it with the
    same figure as ``a`` (same name, frequency and damping): the swap kept
    ``a``'s frame and its figures, which belong to ``a``'s tip mass.  A mode
    ``b`` states with its own figure, one ``b`` estimated from its own
    ``[frame.arm]`` (the beam model already used ``b``'s tip mass), and one
    ``a`` does not have, stay as they are.

    Parameters
    ----------
    a, b : Build
        The current build and the proposed swap.

    Returns
    -------
    (Build, MassShift)
        ``b`` with the shifted modes, and what was done.

    Raises
    ------
    InputError
        If the swap would leave a tip mass of 0 g or less.
    """
    notes: list[str] = []
    if _part_masses(a) is None or _part_masses(b) is None:
        missing = [
            f"{which}'s {part}"
            for which, build in (("A", a), ("B", b))
            for part, value in (("[motor] mass", build.motor.mass_kg), ("[prop] mass", build.prop.mass_kg))
            if value is None
        ]
        notes.append("modes not shifted for the swap: " + ", ".join(missing) + " not known")
        return b, MassShift(False, None, None, 0.0, "assumed 0", math.nan, (), tuple(notes))
    assert b.motor.mass_kg is not None and b.prop.mass_kg is not None
    old_tip, new_tip, arm_mass, source = tip_masses(a, b.motor.mass_kg, b.prop.mass_kg)
    assert old_tip is not None
    if new_tip <= 0:
        raise InputError("motor.mass", "a swap that leaves a positive tip mass", f"{1e3 * new_tip:.1f} g")
    ratio = frequency_ratio(old_tip, new_tip, arm_mass)
    a_modes = {m.name: m for m in a.modes}
    out, shifted, kept = [], [], []
    for mode in b.modes:
        if not is_arm_mode(mode):
            out.append(mode)
        elif mode.origin == "estimated":
            out.append(mode)
            kept.append(f"{mode.name} (estimated for B's own arm and tip mass)")
        elif mode.name not in a_modes:
            out.append(mode)
            kept.append(f"{mode.name} (not in A)")
        elif not _same_figure(mode, a_modes[mode.name]):
            out.append(mode)
            kept.append(f"{mode.name} (B gives its own figure)")
        else:
            out.append(shift_mode(mode, ratio, old_tip_kg=old_tip, new_tip_kg=float(new_tip)))
            shifted.append(mode.name)
    if shifted:
        notes.append(
            f"arm modes shifted for tip mass {1e3 * old_tip:.1f} g → {1e3 * new_tip:.1f} g: "
            f"frequency and damping ×{ratio:.4f} (f ∝ √(k/m_eff), ζ ∝ 1/√(k·m_eff))"
        )
        notes.append(_arm_mass_note(source, arm_mass))
        if any(a_modes[n].damping is None for n in shifted):
            notes.append("modes with assumed damping keep the build's default damping, unshifted")
    else:
        notes.append("no arm-related mode of B could be shifted from A's figures")
    if kept:
        notes.append("arm modes not shifted: " + ", ".join(kept))
    shift = MassShift(bool(shifted), old_tip, float(new_tip), arm_mass, source,
                      ratio if shifted else math.nan, tuple(shifted), tuple(notes))
    return replace(b, modes=tuple(out)), shift
