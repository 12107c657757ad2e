"""Close modes: pairs of frame modes near enough in frequency to exchange energy.

Two lightly damped modes whose frequencies nearly coincide can trade energy
through any small coupling (an uneven arm, a stack mass off centre, the
motor's own inertia): one mode excited by a rotor order then rings in the
other, the two beat, and the response can exceed what either mode alone
predicts.  Designers space such modes apart on purpose.

**Separation.**  A pair is *close* when its relative gap
(f_high − f_low)/f_low is below the larger of

- :data:`DEFAULT_SEPARATION` (5 %): the spread of a beam estimate's material
  data and of a tap test's reading is a few per cent, so two figures closer
  than this cannot be told apart, and
- ζ₁ + ζ₂ (for modes with a damping figure): the half-power bands
  f(1 ± ζ) of the two modes then overlap (modal overlap; Ewins, *Modal
  Testing*, on closely spaced modes, from memory), so one excitation drives
  both.

Modes at exactly the same frequency by symmetry (the roll and pitch flap of a
square X) are reported too: they are the extreme case, and a stretched layout
or unequal body inertias separate them.

**What would separate them** is given as levers (codes), turned into words
only by the report:

- ``body_inertia``: the two turn the body about different axes (roll and
  pitch): change the body's inertia about one of them, or stretch the layout;
- ``section_aspect``: one is a flap mode and the other lead-lag: change the
  arm's width-to-thickness ratio, which moves the two planes apart;
- ``torsion``: one is a torsion mode: change the arm section's torsional
  stiffness (a tube or a wider, thicker section) or the tip's rotary inertia;
- ``body_mass``: one leaves the body level but heaves it and the other does
  not: change the body mass;
- ``root_stiffness``: both are arm modes of the same plane: change the
  arm-to-body joint (clamp stiffness) or the arm length, which moves the
  modes that turn the body differently from those that do not;
- ``detune_one``: modes of other origins (plates, stacks, measured peaks
  without a shape): stiffen or add mass to the part that carries only one of
  them.

This module is pure: it works on any sequence of
:class:`~clashcheck.model.modes.Mode`, whatever their origin, and reads the
``plane`` and ``gyro_axis`` details the frame model puts on its modes.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

from ..errors import InputError
from ..model.modes import Mode

__all__ = ["DEFAULT_SEPARATION", "LEVERS", "ClosePair", "close_modes"]

#: Relative gap below which two modes are close, whatever their damping.
DEFAULT_SEPARATION = 0.05
#: Lever codes, in the order a report lists them.
LEVERS = ("body_inertia", "section_aspect", "torsion", "body_mass", "root_stiffness",
          "detune_one")


@dataclass(frozen=True)
class ClosePair:
    """Two modes close enough to exchange energy."""

    #: Name of the lower mode.
    lower: str
    #: Name of the upper mode.
    upper: str
    #: Lower mode's frequency [Hz].
    lower_hz: float
    #: Upper mode's frequency [Hz].
    upper_hz: float
    #: (upper − lower)/lower (fraction).
    gap: float
    #: The separation it was held against (fraction).
    separation: float
    #: Why that separation: ``"default"`` or ``"damping"`` (half-power bands overlap).
    basis: str
    #: What would separate them: codes from :data:`LEVERS`.
    levers: tuple[str, ...]


def _levers(a: Mode, b: Mode) -> tuple[str, ...]:
    plane_a, plane_b = a.details.get("plane"), b.details.get("plane")
    axis_a, axis_b = a.details.get("gyro_axis"), b.details.get("gyro_axis")
    if plane_a is None or plane_b is None:
        return ("detune_one",)
    out = []
    turning = {"roll", "pitch", "yaw"}
    if axis_a in turning and axis_b in turning and axis_a != axis_b:
        out.append("body_inertia")
    planes = {plane_a, plane_b}
    if planes == {"flap", "lead-lag"}:
        out.append("section_aspect")
    if "torsion" in planes and len(planes) == 2:
        out.append("torsion")
    heave = [str(m.details.get("pattern", "")).endswith("all arms") and m.details.get("plane") == "flap"
             for m in (a, b)]
    if any(heave) and not all(heave):
        out.append("body_mass")
    if plane_a == plane_b and "body_inertia" not in out:
        out.append("root_stiffness")
    return tuple(out) or ("detune_one",)


def close_modes(modes: Sequence[Mode], separation: float = DEFAULT_SEPARATION
                ) -> tuple[ClosePair, ...]:
    """Pairs of modes closer than the separation, lowest first.

    Parameters
    ----------
    modes : sequence of Mode
        Modes of any origin.
    separation : float, optional
        Relative gap below which a pair is close, whatever the damping
        (fraction, 0 to 1); the pair's ζ₁ + ζ₂ raises it when larger.

    Returns
    -------
    tuple of ClosePair
        Each pair of neighbours in frequency that is close, ordered by the
        lower frequency (a cluster of three close modes gives two pairs).

    Raises
    ------
    InputError
        For a separation outside (0, 1).

    Examples
    --------
    >>> pairs = close_modes([Mode("a", 200.0), Mode("b", 206.0), Mode("c", 300.0)])
    >>> [(p.lower, p.upper, round(p.gap, 3)) for p in pairs]
    [('a', 'b', 0.03)]
    """
    if isinstance(separation, bool) or not isinstance(separation, (int, float)) or not (
        math.isfinite(separation) and 0.0 < separation < 1.0
    ):
        raise InputError("separation", "a fraction between 0 and 1, like 0.05", separation)
    ordered = sorted(modes, key=lambda m: m.frequency_hz)
    out: list[ClosePair] = []
    for low, high in zip(ordered, ordered[1:]):
        gap = (high.frequency_hz - low.frequency_hz) / low.frequency_hz
        damping = (low.damping or 0.0) + (high.damping or 0.0)
        limit = max(separation, damping)
        if gap < limit:
            out.append(ClosePair(low.name, high.name, low.frequency_hz, high.frequency_hz,
                                 gap, limit, "damping" if damping > separation else "default",
                                 _levers(low, high)))
    return tuple(out)
