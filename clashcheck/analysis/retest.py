"""Before and after: two tap analyses of the same frame, mode by mode.

A designer changes a joint (a press nut instead of a through-bolt, a washer,
a torque) and tap-tests again.  :func:`retest` pairs the modes of the two
modes files by frequency and axis (the rule of :mod:`clashcheck.model.reconcile`,
without the name step: both files name their modes by rank) and gives, per
pair, the change of frequency, viscous damping, friction drop per cycle and
the damping ``check`` would use, each with the 95 % uncertainty of the
difference: U = 1.96 √(σ_before² + σ_after²), σ = (high − low)/(2 × 1.96)
from each file's 95 % interval, the two tests taken as independent.

**Damping got worse** (the rule behind the exit code): for at least one
matched mode, the damping fell by more than U.  The damping compared is

- with damping against amplitude in both files: ζ(A) of each file's model at
  both ends of the amplitude range both taps covered, at the end where the
  fall is largest (its σ from ζ_v and D: σ² = σ_v² + (σ_D/(2πA))²); when the
  ranges do not overlap, each file's lowest ζ over its own range;
- otherwise each file's single damping figure with its interval.

A mode of BEFORE with no match in AFTER is listed (it may simply not have
been excited) and does not count as worse.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..model.amplitude import AmplitudeDependence
from ..model.build import MeasuredModes
from ..model.modes import Mode
from ..model.reconcile import FREQUENCY_TOLERANCE, reconcile

__all__ = ["Change", "ModeRetest", "RetestResult", "retest", "Z95"]

#: Two-sided 95 % normal quantile.
Z95 = 1.959963984540054


@dataclass(frozen=True)
class Change:
    """One figure before and after, with the 95 % uncertainty of the difference."""

    #: Value in BEFORE.
    before: float
    #: Value in AFTER.
    after: float
    #: 95 % uncertainty of ``after − before`` (``None`` when a file gives no interval).
    uncertainty: float | None

    @property
    def change(self) -> float:
        """after − before."""
        return self.after - self.before

    @property
    def significant(self) -> bool:
        """True when the change exceeds its uncertainty (False when that is unknown)."""
        return self.uncertainty is not None and abs(self.change) > self.uncertainty


@dataclass(frozen=True)
class ModeRetest:
    """A mode found in both tap tests."""

    #: Mode name in BEFORE and in AFTER.
    before_name: str
    after_name: str
    #: Axis (from AFTER, else BEFORE).
    axis: str
    #: Frequency [Hz] (no interval in a modes file: uncertainty ``None``).
    frequency_hz: Change
    #: Viscous damping ζ_v, when both files have damping against amplitude.
    viscous_damping: Change | None
    #: Friction drop per cycle [recording units], when both files have it.
    friction_drop_per_cycle: Change | None
    #: The damping compared for the verdict (see the module text).
    damping: Change
    #: How ``damping`` was compared, in words (e.g. ``"at amplitude 0.8 (common range)"``).
    basis: str
    #: The amplitude it was compared at [recording units], if any.
    amplitude_rec: float | None
    #: Decay class before and after (``None`` without damping against amplitude).
    decay_before: str | None
    decay_after: str | None

    @property
    def worse(self) -> bool:
        """The damping fell by more than its uncertainty."""
        return self.damping.significant and self.damping.change < 0


@dataclass(frozen=True)
class RetestResult:
    """The comparison of two tap analyses."""

    #: The two modes files.
    before_path: str
    after_path: str
    #: Matched modes, by frequency.
    modes: tuple[ModeRetest, ...]
    #: Modes of BEFORE not found in AFTER, and the other way round.
    only_before: tuple[str, ...]
    only_after: tuple[str, ...]
    #: Frequency tolerance of the matching [fraction].
    tolerance: float

    @property
    def worse(self) -> bool:
        """True when damping got worse for at least one matched mode."""
        return any(m.worse for m in self.modes)


def _sigma(low: object, high: object) -> float | None:
    if isinstance(low, float) and isinstance(high, float) and high >= low:
        return (high - low) / (2 * Z95)
    return None


def _u(sa: float | None, sb: float | None) -> float | None:
    if sa is None or sb is None:
        return None
    return Z95 * math.hypot(sa, sb)


def _zeta_sigma(m: Mode, amplitude: float) -> float | None:
    sv = _sigma(m.details.get("viscous_damping_low"), m.details.get("viscous_damping_high"))
    sd = _sigma(m.details.get("friction_drop_per_cycle_low"), m.details.get("friction_drop_per_cycle_high"))
    if sv is None:
        return None
    return math.hypot(sv, (sd or 0.0) / (2 * math.pi * amplitude))


def _single(m: Mode) -> tuple[float, float | None]:
    """The single damping figure and its σ."""
    single = m.details.get("damping_single", m.damping)
    z = float(single) if isinstance(single, float) else float(m.damping or 0.0)
    return z, _sigma(m.details.get("damping_low"), m.details.get("damping_high"))


def _compare(a: Mode, b: Mode) -> tuple[Change, str, float | None]:
    da, db = a.details.get("amplitude"), b.details.get("amplitude")
    if isinstance(da, AmplitudeDependence) and isinstance(db, AmplitudeDependence):
        lo = max(da.amplitude_low, db.amplitude_low)
        hi = min(da.amplitude_high, db.amplitude_high)
        if lo <= hi:
            best = None
            for amp in (lo, hi):
                c = Change(da.damping(amp), db.damping(amp), _u(_zeta_sigma(a, amp), _zeta_sigma(b, amp)))
                if best is None or c.change < best[0].change:
                    best = (c, amp)
            assert best is not None
            return best[0], "at the same amplitude (common range)", best[1]
        (za, aa), (zb, ab) = da.lowest(), db.lowest()
        c = Change(za, zb, _u(_zeta_sigma(a, aa), _zeta_sigma(b, ab)))
        return c, "lowest over each range (the ranges do not overlap)", None
    (za, sa), (zb, sb) = _single(a), _single(b)
    return Change(za, zb, _u(sa, sb)), "single figure", None


def _pair_change(a: Mode, b: Mode, key: str, low: str, high: str) -> Change | None:
    da, db = a.details.get("amplitude"), b.details.get("amplitude")
    if not (isinstance(da, AmplitudeDependence) and isinstance(db, AmplitudeDependence)):
        return None
    va, vb = getattr(da, key), getattr(db, key)
    sa = _sigma(a.details.get(low), a.details.get(high))
    sb = _sigma(b.details.get(low), b.details.get(high))
    return Change(float(va), float(vb), _u(sa, sb))


def retest(before: MeasuredModes, after: MeasuredModes,
           tolerance: float = FREQUENCY_TOLERANCE) -> RetestResult:
    """Compare two tap analyses of the same frame, mode by mode.

    Parameters
    ----------
    before, after : MeasuredModes
        The modes files of the tap test before and after the change.
    tolerance : float
        Largest relative frequency difference for two modes to be the same [fraction].

    Returns
    -------
    RetestResult

    Examples
    --------
    >>> a = MeasuredModes((Mode("mode 1", 200.0, 0.02, origin="measured"),), (), "a.toml")
    >>> b = MeasuredModes((Mode("mode 1", 204.0, 0.01, origin="measured"),), (), "b.toml")
    >>> r = retest(a, b)
    >>> round(r.modes[0].damping.change, 3), r.worse
    (-0.01, False)
    """
    rec = reconcile(before.modes, after.modes, tolerance, by_name=False)
    by_before = {m.name: m for m in before.modes}
    by_after = {m.name: m for m in after.modes}
    out = []
    for match in rec.matches:
        a, b = by_before[match.replaced], by_after[match.measured]
        damping, basis, amp = _compare(a, b)
        da, db = a.details.get("amplitude"), b.details.get("amplitude")
        out.append(ModeRetest(
            before_name=a.name, after_name=b.name, axis=b.axis if b.axis != "any" else a.axis,
            frequency_hz=Change(a.frequency_hz, b.frequency_hz, None),
            viscous_damping=_pair_change(a, b, "viscous_damping", "viscous_damping_low",
                                         "viscous_damping_high"),
            friction_drop_per_cycle=_pair_change(a, b, "friction_drop_per_cycle",
                                                 "friction_drop_per_cycle_low",
                                                 "friction_drop_per_cycle_high"),
            damping=damping, basis=basis, amplitude_rec=amp,
            decay_before=getattr(da, "decay", None), decay_after=getattr(db, "decay", None),
        ))
    out.sort(key=lambda m: m.frequency_hz.before)
    only_after = tuple(rec.added)
    return RetestResult(before.path, after.path, tuple(out), rec.kept, only_after, tolerance)
