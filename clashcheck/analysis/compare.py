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

This module is pure: it returns a :class:`CompareResult` and formats nothing
(see :mod:`clashcheck.decide_report`).
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass, field, replace
from typing import Any

from ..model.drive import Hover
from ..model.shift import MassShift, swap_shift
from .clash import VERDICTS, ClashResult, check_build
from .levels import FAIL_LEVELS as _CHECK_FAIL_LEVELS

__all__ = [
    "FAIL_LEVELS",
    "Finding",
    "MarginChange",
    "VerdictChange",
    "CompareResult",
    "findings",
    "compare_results",
    "compare_builds",
]

#: ``--fail-on`` levels: the findings that count at each.
FAIL_LEVELS = tuple(_CHECK_FAIL_LEVELS)


@dataclass(frozen=True, order=True)
class Finding:
    """One order's windows on one mode, at a level."""

    #: Mode name.
    mode: str
    #: Order label, e.g. ``"1× rotor"``.
    label: str
    #: Whether it is seen through the sensor fold.
    aliased: bool
    #: ``"clash"`` (touches the operating band at some pack state) or ``"watch"``.
    level: str

    def describe(self) -> str:
        """``"1× rotor on arm flap"`` (with ``(aliased)`` when it is)."""
        return f"{self.label}{' (aliased)' if self.aliased else ''} on {self.mode}"


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
    #: Findings and assumptions, one sentence each.
    notes: tuple[str, ...] = ()
    #: The builds as checked (B with its shifted modes), for the diagram.
    build_a: Any = field(default=None, repr=False, compare=False)
    build_b: Any = field(default=None, repr=False, compare=False)

    def worse_at(self, level: str) -> bool:
        """Whether B is worse than A at a ``--fail-on`` level.

        At ``clash``: B has a clash A does not have, or a mode that
        clashes in B but not in A, or B cannot hover on an empty pack while A
        can.  At ``watch``: the same, counting windows outside the operating
        band as well.  At ``never``: never.
        """
        if level not in FAIL_LEVELS:
            from ..errors import InputError

            raise InputError("--fail-on", "one of " + ", ".join(FAIL_LEVELS), level)
        if level == "never":
            return False
        if self.empty_hover_a.can_hover and not self.empty_hover_b.can_hover:
            return True
        if self.appeared:
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

    The level is ``"clash"`` when a window of that order on that mode touches
    the operating band at any pack state, else ``"watch"``.
    """
    out: dict[tuple[str, str, bool], str] = {}
    for w in result.windows:
        key = (w.mode, w.label, w.aliased)
        level = "clash" if w.touches_operating_band else "watch"
        if out.get(key) != "clash":
            out[key] = level
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
    if not empty_hover_b.can_hover and empty_hover_b.how != "unknown":
        all_notes.append("B cannot hover on an empty pack")
    return CompareResult(
        a=a,
        b=b,
        shift=shift,
        appeared=select(fb, fa, "clash", absent_only=False),
        disappeared=select(fa, fb, "clash", absent_only=False),
        windows_appeared=select(fb, fa, "watch", absent_only=True),
        windows_disappeared=select(fa, fb, "watch", absent_only=True),
        verdict_changes=tuple(_verdict_changes(a, b)),
        margin_changes=tuple(_margin_changes(a, b)),
        empty_hover_a=empty_hover_a,
        empty_hover_b=empty_hover_b,
        notes=tuple(all_notes),
    )


def _empty_hover(build) -> Hover:
    return build.drive().hover(build.mass_kg, "empty", build.flight.hover)


def compare_builds(a, b, *, shift_modes: bool = True) -> CompareResult:
    """Check the current build ``a`` and the swap ``b``, and compare them.

    Parameters
    ----------
    a, b : Build
        The current build and the proposed swap.
    shift_modes : bool, optional
        Shift B's arm modes from A's figures for the change in tip mass
        (:func:`clashcheck.shift.swap_shift`).  With ``False`` both builds'
        modes are used as written.

    Returns
    -------
    CompareResult
    """
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
    )
    return replace(result, build_a=a, build_b=b_checked)
