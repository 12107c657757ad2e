"""Compare the current build with a proposed swap.

:func:`compare_builds` checks both builds with the core engine (B with its
arm modes shifted for the change in tip mass, see :mod:`clashcheck.shift`)
and lists what changed:

- clashes (an order's window touching the operating band) that appear in B
  and those that disappear;
- windows outside the operating band that appear or disappear;
- per-mode verdicts that change;
- the margin of the nearest order at hover and at cruise, per pack state,
  as a change in percentage points;
- whether each build can still hover on an empty pack.

**All-up mass.**  ``pick`` adds the change in motor and propeller mass
(× the motor count) to the base build's all-up mass.  ``compare`` does the
same when B states the very same all-up mass as A while its parts weigh
differently (B was written by copying A and swapping parts, so its stated
mass is A's); when B states a mass of its own, that mass is used as given.
``mass="stated"`` or ``mass="parts"`` forces either rule.  What was done is
in :attr:`CompareResult.mass` (a :class:`MassRule`).

**Worse within a clash.**  A mode that clashes in both A and B can still get
much worse: a dwell point (hover; cruise where both builds cruise) already
inside the required margin moves closer to the mode.  Such a point is a :class:`Deepened`
finding when B's single-degree-of-freedom magnification there is at least
:data:`DEEPENED_FACTOR` times A's (twice the response amplitude, +6 dB) and B
keeps less than its required margin.  It counts as "B is worse" at the
``clash`` level: a checklist that refuses new clashes should refuse a clash
that doubles.

**Cannot hover.**  A pack state at which B cannot hover while A can is worse
at the ``clash`` level, as ``check`` counts it.

This module is pure: it returns a :class:`CompareResult` and formats nothing
(see :mod:`clashcheck.report.decide`).
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field, replace
from typing import Any

from ..errors import InputError
from ..model.drive import Hover
from ..model.modes import magnification
from ..model.shift import MassShift, swap_shift
from .clash import VERDICTS, ClashResult, DangerRange, check_build, merge_windows
from .levels import FAIL_LEVELS as _CHECK_FAIL_LEVELS

__all__ = [
    "FAIL_LEVELS",
    "MASS_RULES",
    "DEEPENED_FACTOR",
    "Finding",
    "MassRule",
    "Deepened",
    "ranges_by_state",
    "MarginChange",
    "VerdictChange",
    "CompareResult",
    "findings",
    "compare_results",
    "mass_rule",
    "compare_builds",
]

#: ``--fail-on`` levels: the findings that count at each.
FAIL_LEVELS = tuple(_CHECK_FAIL_LEVELS)
#: How B's all-up mass is found: ``auto`` (see the module notes), ``stated``, ``parts``.
MASS_RULES = ("auto", "stated", "parts")
#: A dwell point inside the margin "deepens" when B's magnification is this many times A's (+6 dB).
DEEPENED_FACTOR = 2.0


@dataclass(frozen=True, order=True)
class Finding:
    """One order's windows on one mode, at a level."""

    #: Mode name.
    mode: str
    #: Order label, e.g. ``"1× rotor"``.
    label: str
    #: Whether it is seen through the sensor fold.
    aliased: bool
    #: ``"clash"`` (a significant order in a dwell zone at some pack state) or ``"watch"``.
    level: str


@dataclass(frozen=True)
class MassRule:
    """How B's all-up mass was found."""

    #: ``"stated"`` (B's own figure) or ``"parts"`` (A's mass plus the change in part mass).
    rule: str
    #: Why: ``"b-states-own-mass"``, ``"same-mass-parts-differ"``, ``"parts-unchanged"``,
    #: ``"part-mass-unknown"``, ``"asked"``.
    reason: str
    #: A's all-up mass [kg].
    a_kg: float
    #: B's stated all-up mass [kg].
    b_stated_kg: float
    #: B's all-up mass as checked [kg].
    b_used_kg: float
    #: B's motors × (motor + propeller mass) minus A's [kg]; ``nan`` when a part mass is unknown.
    parts_change_kg: float


@dataclass(frozen=True)
class Deepened:
    """A dwell point of a mode that clashes in A and B, much worse in B."""

    #: Mode name.
    mode: str
    #: ``"hover"`` or ``"cruise"``.
    point: str
    #: Pack state.
    pack_state: str
    #: Margin of the nearest order in A and in B [fraction].
    margin_a: float
    margin_b: float
    #: Nearest order in A and in B.
    order_a: str
    order_b: str
    #: B's required margin [fraction].
    required_b: float
    #: Single-degree-of-freedom magnification at that margin in A and in B.
    magnification_a: float
    magnification_b: float


@dataclass(frozen=True)
class MarginChange:
    """The nearest order's margin to a mode at one operating point, A vs B."""

    #: Mode name.
    mode: str
    #: ``"hover"`` or ``"cruise"``.
    point: str
    #: Pack state.
    pack_state: str
    #: Margin in A [fraction].
    margin_a: float
    #: Margin in B [fraction].
    margin_b: float
    #: Nearest order in A and in B.
    order_a: str
    order_b: str
    #: Required margin in A and in B [fraction].
    required_a: float
    required_b: float

    @property
    def change(self) -> float:
        """B − A [fraction]; × 100 gives percentage points."""
        return self.margin_b - self.margin_a


@dataclass(frozen=True)
class VerdictChange:
    """A mode whose verdict differs between A and B."""

    #: Mode name.
    mode: str
    #: Verdict in A, or ``None`` when A has no such mode.
    verdict_a: str | None
    #: Verdict in B, or ``None`` when B has no such mode.
    verdict_b: str | None


@dataclass(frozen=True)
class CompareResult:
    """Two check results side by side and what changed from A to B."""

    #: The check of A.
    a: ClashResult
    #: The check of B (arm modes shifted when the masses are known).
    b: ClashResult
    #: What the mass shift did.
    shift: MassShift
    #: Clashes in B that A does not have.
    appeared: tuple[Finding, ...]
    #: Clashes in A that B does not have.
    disappeared: tuple[Finding, ...]
    #: Windows outside the operating band in B, not in A (at any level in A).
    windows_appeared: tuple[Finding, ...]
    #: Windows outside the operating band in A that B has at no level.
    windows_disappeared: tuple[Finding, ...]
    #: Modes whose verdict changed.
    verdict_changes: tuple[VerdictChange, ...]
    #: Margin changes at hover and cruise, largest loss first.
    margin_changes: tuple[MarginChange, ...]
    #: Hover of A and B on an empty pack.
    empty_hover_a: Hover
    empty_hover_b: Hover
    #: Dwell points of modes clashing in both, much worse in B.
    deepened: tuple[Deepened, ...] = ()
    #: Pack states (checked in B) where B cannot hover but A can (or A does not check).
    lost_hover: tuple[str, ...] = ()
    #: How B's all-up mass was found; ``None`` when :func:`compare_results` was called directly.
    mass: MassRule | None = None
    #: Danger ranges per mode and pack state, in A and in B (:func:`ranges_by_state`).
    ranges_a: dict[str, dict[str, tuple[DangerRange, ...]]] = field(default_factory=dict)
    ranges_b: dict[str, dict[str, tuple[DangerRange, ...]]] = field(default_factory=dict)
    #: Assumptions of the mode shift (from :mod:`clashcheck.model.shift`), one sentence each.
    notes: tuple[str, ...] = ()
    #: The builds as checked (B with its shifted modes), for the diagram.
    build_a: Any = field(default=None, repr=False, compare=False)
    build_b: Any = field(default=None, repr=False, compare=False)

    def worse_at(self, level: str) -> bool:
        """Whether B is worse than A at a ``--fail-on`` level.

        At ``clash``: B has a clash A does not have, or a mode that
        clashes in B but not in A, or a clash that deepened (see
        :class:`Deepened`), or B cannot hover at a pack state (the empty pack
        among them) where A can.  At ``watch``: the same, counting windows
        outside the operating band as well.  At ``never``: never.

        Parameters
        ----------
        level : {"clash", "watch", "never"}
            The fail level.

        Returns
        -------
        bool
        """
        if level not in FAIL_LEVELS:
            raise InputError("level", "one of " + ", ".join(FAIL_LEVELS), level)
        if level == "never":
            return False
        if self.empty_hover_a.can_hover and not self.empty_hover_b.can_hover:
            return True
        if self.lost_hover or self.appeared or self.deepened:
            return True
        threshold = VERDICTS.index(level)
        for change in self.verdict_changes:
            rank_b = -1 if change.verdict_b is None else VERDICTS.index(change.verdict_b)
            rank_a = -1 if change.verdict_a is None else VERDICTS.index(change.verdict_a)
            if rank_b >= threshold and rank_b > rank_a:
                return True
        if level == "watch":
            return bool(self.windows_appeared)
        return False


def findings(result: ClashResult) -> dict[tuple[str, str, bool], str]:
    """Every (mode, order label, aliased) with a window, and its worst level.

    The level is the worst of the check's own window levels (``"clash"``: a
    significant order in a dwell zone at some pack state; ``"watch"``: passage,
    or a weak order in a dwell zone).  Windows of a weak order in passage
    (level ``"clear"``) are not findings.

    Parameters
    ----------
    result : ClashResult
        A check.

    Returns
    -------
    dict
        ``{(mode, order label, aliased): level}``.
    """
    out: dict[tuple[str, str, bool], str] = {}
    for w in result.windows:
        if w.level not in ("clash", "watch"):
            continue
        key = (w.mode, w.label, w.aliased)
        if out.get(key) != "clash":
            out[key] = w.level
    return out


def _margin_changes(a: ClashResult, b: ClashResult) -> list[MarginChange]:
    b_modes = {mr.mode.name: mr for mr in b.modes}
    changes = []
    for mr_a in a.modes:
        mr_b = b_modes.get(mr_a.mode.name)
        if mr_b is None:
            continue
        at_b = {(x.point, x.pack_state): x for x in mr_b.margins}
        for x in mr_a.margins:
            y = at_b.get((x.point, x.pack_state))
            if y is None:
                continue
            changes.append(
                MarginChange(mr_a.mode.name, x.point, x.pack_state, x.margin, y.margin,
                             x.label + (" (aliased)" if x.aliased else ""),
                             y.label + (" (aliased)" if y.aliased else ""),
                             mr_a.required_margin, mr_b.required_margin)
            )
    changes.sort(key=lambda c: (c.change, c.mode, c.point, c.pack_state))
    return changes


def ranges_by_state(result: ClashResult) -> dict[str, dict[str, tuple[DangerRange, ...]]]:
    """Danger ranges of each mode at each pack state, merged within that state only.

    A check's danger ranges merge all pack states, which can hide that one
    state's window ends just below hover.  These keep them apart.

    Parameters
    ----------
    result : ClashResult
        A check.

    Returns
    -------
    dict
        ``{mode name: {pack state: danger ranges}}``; states without a window are left out.
    """
    out: dict[str, dict[str, tuple[DangerRange, ...]]] = {}
    states = [b.pack_state for b in result.bands]
    for mr in result.modes:
        name = mr.mode.name
        per: dict[str, tuple[DangerRange, ...]] = {}
        for state in states:
            ws = [w for w in result.windows if w.mode == name and w.pack_state == state]
            if ws:
                per[state] = merge_windows(name, ws)
        out[name] = per
    return out


def _worst_magnification(margin: float, zeta: float) -> float:
    """M(r) of an excitation ``margin`` from the mode, on the side nearer resonance (r = 1 − margin)."""
    return float(magnification(max(1.0 - margin, 0.0), zeta))


def _deepened(a: ClashResult, b: ClashResult, changes: Sequence[MarginChange]) -> list[Deepened]:
    va = {mr.mode.name: mr for mr in a.modes}
    vb = {mr.mode.name: mr for mr in b.modes}
    out = []
    for c in changes:
        if c.point == "cruise" and not (a.cruise_dwell and b.cruise_dwell):
            continue  # cruise is passage unless both builds cruise there
        mr_a, mr_b = va.get(c.mode), vb.get(c.mode)
        if mr_a is None or mr_b is None or mr_a.verdict != "clash" or mr_b.verdict != "clash":
            continue
        if c.margin_b >= c.required_b or c.margin_b >= c.margin_a:
            continue
        m_a = _worst_magnification(c.margin_a, mr_a.damping)
        m_b = _worst_magnification(c.margin_b, mr_b.damping)
        if m_b >= DEEPENED_FACTOR * m_a:
            out.append(Deepened(c.mode, c.point, c.pack_state, c.margin_a, c.margin_b, c.order_a, c.order_b,
                                c.required_b, m_a, m_b))
    return out


def _lost_hover(a: ClashResult, b: ClashResult) -> list[str]:
    bands_a = {x.pack_state: x for x in a.bands}
    out = []
    for band in b.bands:
        h = band.hover
        if h.how == "unknown" or h.can_hover:
            continue
        other = bands_a.get(band.pack_state)
        if other is None or other.hover.how == "unknown" or other.hover.can_hover:
            out.append(band.pack_state)
    return out


def _verdict_changes(a: ClashResult, b: ClashResult) -> list[VerdictChange]:
    va = {mr.mode.name: mr.verdict for mr in a.modes}
    vb = {mr.mode.name: mr.verdict for mr in b.modes}
    names = list(va) + [n for n in vb if n not in va]
    return [VerdictChange(n, va.get(n), vb.get(n)) for n in names if va.get(n) != vb.get(n)]


def compare_results(
    a: ClashResult,
    b: ClashResult,
    *,
    shift: MassShift,
    empty_hover_a: Hover,
    empty_hover_b: Hover,
    notes: Iterable[str] = (),
    mass: MassRule | None = None,
) -> CompareResult:
    """Compare two check results already computed.

    Parameters
    ----------
    a, b : ClashResult
        The checks of the current build and of the swap.
    shift : MassShift
        What was done to B's arm modes.
    empty_hover_a, empty_hover_b : Hover
        Hover of each build on an empty pack.
    notes : iterable of str, optional
        Extra notes to carry.
    mass : MassRule, optional
        How B's all-up mass was found.

    Returns
    -------
    CompareResult
    """
    fa, fb = findings(a), findings(b)

    def select(source: dict, other: dict, level: str, absent_only: bool) -> tuple[Finding, ...]:
        out = []
        for key, lvl in source.items():
            if lvl != level:
                continue
            if absent_only:
                gone = key not in other
            else:
                gone = other.get(key) != "clash"
            if gone:
                out.append(Finding(key[0], key[1], key[2], level))
        return tuple(sorted(out))

    all_notes = list(notes) + list(shift.notes)
    margin_changes = _margin_changes(a, b)
    return CompareResult(
        a=a,
        b=b,
        shift=shift,
        appeared=select(fb, fa, "clash", absent_only=False),
        disappeared=select(fa, fb, "clash", absent_only=False),
        windows_appeared=select(fb, fa, "watch", absent_only=True),
        windows_disappeared=select(fa, fb, "watch", absent_only=True),
        verdict_changes=tuple(_verdict_changes(a, b)),
        margin_changes=tuple(margin_changes),
        empty_hover_a=empty_hover_a,
        empty_hover_b=empty_hover_b,
        deepened=tuple(_deepened(a, b, margin_changes)),
        lost_hover=tuple(_lost_hover(a, b)),
        mass=mass,
        ranges_a=ranges_by_state(a),
        ranges_b=ranges_by_state(b),
        notes=tuple(all_notes),
    )


def _empty_hover(build) -> Hover:
    return build.drive().hover(build.mass_kg, "empty", build.flight.hover)


def _parts_kg(build) -> float | None:
    if build.motor.mass_kg is None or build.prop.mass_kg is None:
        return None
    return build.motors * (build.motor.mass_kg + build.prop.mass_kg)


def mass_rule(a, b, how: str = "auto") -> MassRule:
    """How B's all-up mass is found (the rule in the module notes).

    Parameters
    ----------
    a, b : Build
        The current build and the proposed swap.
    how : {"auto", "stated", "parts"}, optional
        ``auto`` adds the change in part mass only when B states A's very
        mass; ``stated`` keeps B's figure; ``parts`` always adds the change
        (when every part mass is known).

    Returns
    -------
    MassRule
    """
    if how not in MASS_RULES:
        raise InputError("mass", "one of " + ", ".join(MASS_RULES), how)
    pa, pb = _parts_kg(a), _parts_kg(b)
    change = math.nan if pa is None or pb is None else pb - pa
    stated = b.mass_kg
    if how == "stated":
        return MassRule("stated", "asked", a.mass_kg, stated, stated, change)
    if math.isnan(change):
        return MassRule("stated", "part-mass-unknown", a.mass_kg, stated, stated, change)
    if how == "parts":
        return MassRule("parts", "asked", a.mass_kg, stated, a.mass_kg + change, change)
    if not math.isclose(stated, a.mass_kg, rel_tol=1e-9):
        return MassRule("stated", "b-states-own-mass", a.mass_kg, stated, stated, change)
    if abs(change) <= 1e-12:
        return MassRule("stated", "parts-unchanged", a.mass_kg, stated, stated, change)
    return MassRule("parts", "same-mass-parts-differ", a.mass_kg, stated, a.mass_kg + change, change)


def compare_builds(a, b, *, shift_modes: bool = True, mass: str = "auto") -> CompareResult:
    """Check the current build ``a`` and the swap ``b``, and compare them.

    Parameters
    ----------
    a, b : Build
        The current build and the proposed swap.
    shift_modes : bool, optional
        Shift B's arm modes from A's figures for the change in tip mass
        (:func:`clashcheck.model.shift.swap_shift`).  With ``False`` both builds'
        modes are used as written.
    mass : {"auto", "stated", "parts"}, optional
        How B's all-up mass is found (:func:`mass_rule`).

    Returns
    -------
    CompareResult
    """
    rule = mass_rule(a, b, mass)
    if rule.b_used_kg != b.mass_kg:
        if not rule.b_used_kg > 0:
            raise InputError("frame.mass", "a positive all-up mass for B after the change in part mass",
                             f"{1e3 * rule.b_used_kg:.1f} g")
        b = replace(b, mass_kg=rule.b_used_kg)
    if shift_modes:
        b_checked, shift = swap_shift(a, b)
    else:
        b_checked = b
        shift = MassShift(False, None, None, 0.0, "assumed 0", math.nan, (),
                          ("modes not shifted for the swap (turned off)",))
    result = compare_results(
        check_build(a),
        check_build(b_checked),
        shift=shift,
        empty_hover_a=_empty_hover(a),
        empty_hover_b=_empty_hover(b_checked),
        mass=rule,
    )
    return replace(result, build_a=a, build_b=b_checked)
