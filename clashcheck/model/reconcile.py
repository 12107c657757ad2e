"""Measured modes take their place in the build: the matching rule.

A build's modes come from a catalog, from the build file, or from an arm
estimate; a tap test or a flight measures some of the same physical modes
again.  :func:`reconcile` pairs each measured mode with the build mode it
measures, so that the measurement *replaces* that mode instead of standing
beside it.

The rule, in order:

1. **By name.** A measured mode named like a build mode replaces it (the
   user renamed it in the modes file).
2. **By frequency and axis.** Otherwise a measured mode may replace a build
   mode whose axis is compatible (equal, or either is ``any``) and whose
   frequency is within :data:`FREQUENCY_TOLERANCE` of the measured one
   (relative to the build mode's figure), or, for an estimate with a range,
   inside that range widened by the same tolerance.  Pairs are taken
   closest first (relative difference), each mode at most once, so no
   physical mode appears twice.
3. A match is **ambiguous** when the runner-up candidate (another build mode
   for the same measured mode, or another measured mode for the same build
   mode) lies within :data:`AMBIGUITY_RATIO` × the chosen distance (and
   inside the tolerance): the closest is still taken, with a warning.
4. An **estimate that misses** its measurement by more than its own range
   gives a warning: a matched estimate whose range does not hold the
   measured frequency, or an unmatched estimate whose nearest compatible
   measured mode lies within a factor of two (probably the same mode,
   badly estimated).
5. Measured modes with no match are **added**; build modes with no match are
   kept.

The merged mode keeps the build mode's name and kind (and its axis when the
measurement says ``any``), with the measured frequency and damping, origin
``measured``; ``details["measured_as"]`` keeps the measured name.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

from .modes import Mode

__all__ = ["FREQUENCY_TOLERANCE", "AMBIGUITY_RATIO", "Match", "Reconciliation", "reconcile",
           "axes_compatible"]

#: Largest relative frequency difference between a measured mode and the build mode it
#: replaces (judgement: catalog figures of generic frames and tap tests on a real frame
#: differ by a few per cent; neighbouring modes of small frames are usually more than 10 % apart).
FREQUENCY_TOLERANCE = 0.10
#: A runner-up this close (relative to the chosen distance) makes a match ambiguous.
AMBIGUITY_RATIO = 1.5


@dataclass(frozen=True)
class Match:
    """One measured mode replacing one build mode."""

    #: Name of the measured mode (as in the modes file).
    measured: str
    #: Name of the build mode it replaces.
    replaced: str
    #: ``name``, ``frequency`` or ``range`` (inside an estimate's range).
    how: str
    #: Relative frequency difference (measured − build) / build.
    difference: float
    #: Origin of the replaced mode (catalog, manual, estimated, shifted).
    replaced_origin: str


@dataclass(frozen=True)
class Reconciliation:
    """The merged modes and what was done to get them."""

    #: Build modes with measured modes in place of those they measure, then added ones.
    modes: tuple[Mode, ...]
    #: Each replacement.
    matches: tuple[Match, ...]
    #: Names of measured modes added beside the build's (no match).
    added: tuple[str, ...]
    #: Names of build modes kept with their own figures (no measurement).
    kept: tuple[str, ...]
    #: Ambiguous matches: (measured name, chosen build name, runner-up name).
    ambiguous: tuple[tuple[str, str, str], ...]
    #: Estimates that miss a measurement by more than their own range:
    #: (estimate name, estimate Hz, low Hz, high Hz, measured name, measured Hz).
    missed: tuple[tuple[str, float, float, float, str, float], ...]


def axes_compatible(a: str, b: str) -> bool:
    """True when two mode axes can be the same physical mode (equal, or either ``any``).

    Parameters
    ----------
    a, b : str
        Mode axes: roll, pitch, yaw or any.

    Returns
    -------
    bool
        ``True`` when the axes are equal or either is ``any``.

    Examples
    --------
    >>> axes_compatible("roll", "any"), axes_compatible("roll", "pitch")
    (True, False)
    """
    return a == b or "any" in (a, b)


def _distance(build: Mode, measured: Mode, tolerance: float) -> tuple[float, str] | None:
    """Relative distance of a candidate pair and how it matches, or ``None``."""
    if not axes_compatible(build.axis, measured.axis):
        return None
    rel = abs(measured.frequency_hz - build.frequency_hz) / build.frequency_hz
    if rel <= tolerance:
        return rel, "frequency"
    if build.is_range:
        assert build.frequency_low_hz is not None and build.frequency_high_hz is not None
        lo = build.frequency_low_hz * (1 - tolerance)
        hi = build.frequency_high_hz * (1 + tolerance)
        if lo <= measured.frequency_hz <= hi:
            return rel, "range"
    return None


def _merged(build: Mode, measured: Mode) -> Mode:
    details = dict(build.details)
    details.update(measured.details)
    details["measured_as"] = measured.name
    details["replaced_figure_hz"] = build.frequency_hz
    return replace(
        measured,
        name=build.name,
        kind=build.kind if measured.kind == "other" else measured.kind,
        axis=build.axis if measured.axis == "any" else measured.axis,
        details=details,
    )


def reconcile(build_modes: tuple[Mode, ...] | list[Mode], measured_modes: tuple[Mode, ...] | list[Mode],
              tolerance: float = FREQUENCY_TOLERANCE, by_name: bool = True) -> Reconciliation:
    """Put measured modes in the place of the build modes they measure.

    Parameters
    ----------
    build_modes : sequence of Mode
        The build's modes (catalog, manual, estimated, shifted).
    measured_modes : sequence of Mode
        Modes from a modes file.
    tolerance : float
        Largest relative frequency difference for a match [fraction].
    by_name : bool
        Match equal names first (step 1); off when both lists are measured and
        named only by their rank (``mode 1``, ``mode 2``, ...).

    Returns
    -------
    Reconciliation

    Examples
    --------
    >>> cat = [Mode("arm flap", 186.0, 0.03, axis="roll", origin="catalog")]
    >>> r = reconcile(cat, [Mode("mode 1", 183.0, 0.02, origin="measured")])
    >>> [(m.name, m.frequency_hz, m.origin) for m in r.modes]
    [('arm flap', 183.0, 'measured')]
    """
    build = list(build_modes)
    meas = list(measured_modes)
    names = {m.name: i for i, m in enumerate(build)}
    pair: dict[int, int] = {}  # measured index → build index
    how: dict[int, tuple[str, float]] = {}
    for j, m in enumerate(meas):
        i = names.get(m.name) if by_name else None
        if i is not None:
            pair[j] = i
            how[j] = ("name", (m.frequency_hz - build[i].frequency_hz) / build[i].frequency_hz)
    candidates = []
    for j, m in enumerate(meas):
        for i, b in enumerate(build):
            d = _distance(b, m, tolerance)
            if d is not None:
                candidates.append((d[0], j, i, d[1]))
    candidates.sort()
    used = set(pair.values())
    ambiguous = []
    for rel, j, i, kind in candidates:
        if j in pair or i in used:
            continue
        pair[j] = i
        used.add(i)
        how[j] = (kind, (meas[j].frequency_hz - build[i].frequency_hz) / build[i].frequency_hz)
        bar = max(rel * AMBIGUITY_RATIO, 0.01 * tolerance)
        rivals = [(r2, j2, i2) for r2, j2, i2, _k in candidates
                  if (j2 == j) != (i2 == i) and r2 <= bar and r2 >= rel]
        if rivals:
            _r2, j2, i2 = min(rivals)
            other = build[i2].name if j2 == j else meas[j2].name
            ambiguous.append((meas[j].name, build[i].name, other))
    replaced = {i: j for j, i in pair.items()}
    modes: list[Mode] = []
    matches = []
    missed = []
    for i, b in enumerate(build):
        if i in replaced:
            m = meas[replaced[i]]
            modes.append(_merged(b, m))
            kind, diff = how[replaced[i]]
            matches.append(Match(m.name, b.name, kind, diff, b.origin))
            if b.origin == "estimated" and b.is_range:
                assert b.frequency_low_hz is not None and b.frequency_high_hz is not None
                if not b.frequency_low_hz <= m.frequency_hz <= b.frequency_high_hz:
                    missed.append((b.name, b.frequency_hz, b.frequency_low_hz, b.frequency_high_hz,
                                   m.name, m.frequency_hz))
        else:
            modes.append(b)
            if b.origin == "estimated":
                near = [m for m in meas if axes_compatible(b.axis, m.axis)
                        and 0.5 <= m.frequency_hz / b.frequency_hz <= 2.0]
                if near:
                    m = min(near, key=lambda m: abs(m.frequency_hz / b.frequency_hz - 1))
                    assert b.frequency_low_hz is not None and b.frequency_high_hz is not None
                    missed.append((b.name, b.frequency_hz, b.frequency_low_hz, b.frequency_high_hz,
                                   m.name, m.frequency_hz))
    added = [m for j, m in enumerate(meas) if j not in pair]
    taken = {m.name for m in modes}
    for m in added:  # an added mode must not take a name the build already uses
        name, k = m.name, 2
        while name in taken:
            name, k = f"{m.name} ({k})", k + 1
        taken.add(name)
        modes.append(m if name == m.name else replace(m, name=name))
    kept = tuple(b.name for i, b in enumerate(build) if i not in replaced)
    return Reconciliation(tuple(modes), tuple(matches), tuple(m.name for m in added), kept,
                          tuple(ambiguous), tuple(missed))
