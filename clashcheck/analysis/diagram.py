"""The curves a Campbell diagram draws, computed once here (the figure computes nothing).

:func:`diagram_curves` evaluates the drive model of a checked build on a
throttle grid per pack state (the rotor rate, which gives the throttle scales
under a rotor-speed axis) and the sensor's view of each order above Nyquist
(the fold), keeping only the aliased traces whose weight after the anti-alias
filter reaches the build's weight floor (:func:`~.windows.above_floor`) and
that come near a mode's margin band; the others are counted, so the figure can
say how many it left out.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .windows import above_floor, seen_weight

__all__ = ["AliasCurve", "DiagramCurves", "diagram_curves"]


@dataclass(frozen=True)
class AliasCurve:
    """An order's fold at one pack state, where it reaches the weight floor."""

    #: Order label, e.g. ``"7× electrical"``.
    label: str
    #: Family.
    family: str
    #: Order number.
    order: float
    #: Pack state.
    pack_state: str
    #: Apparent frequency over :attr:`DiagramCurves.throttle` [Hz]; ``nan`` where not shown.
    apparent_hz: np.ndarray


@dataclass(frozen=True)
class DiagramCurves:
    """Throttle grid, rotor rate per pack state and the aliased traces kept."""

    #: Throttle grid from idle to max [fraction].
    throttle: np.ndarray
    #: Rotor rate over the grid per pack state [Hz].
    rotor_hz: dict[str, np.ndarray]
    #: Aliased traces drawn.
    aliases: tuple[AliasCurve, ...]
    #: Aliased traces (order × pack state) above Nyquist that were left out:
    #: below the weight floor after the filter, or never near a mode's margin band.
    aliases_left_out: int


def diagram_curves(build, result, *, points: int = 600) -> DiagramCurves:
    """The curves of the Campbell diagram of ``build`` checked as ``result``.

    Parameters
    ----------
    build : Build
        The build that was checked.
    result : ClashResult
        Its check (pack states, orders, sensor, modes and margins).
    points : int, optional
        Throttle grid points from idle to max (50 to 20000).

    Returns
    -------
    DiagramCurves

    Raises
    ------
    InputError
        If ``points`` is out of range.
    """
    from ..model.excitation import fold

    if isinstance(points, bool) or not isinstance(points, int) or not 50 <= points <= 20000:
        raise InputError("points", "a whole number from 50 to 20000", points)
    drive = build.drive()
    states = tuple(b.pack_state for b in result.bands)
    throttle = np.linspace(result.idle, result.throttle_max, points)
    rotor = {s: np.asarray(drive.rotor_hz(throttle, s), dtype=float) for s in states}
    aliases: list[AliasCurve] = []
    left_out = 0
    sensor = result.sensor
    if sensor is not None:
        nyq = sensor.nyquist_hz
        floor = build.check.weight_floor
        bands = [(mr.mode.frequency_low_hz * (1 - mr.required_margin),
                  mr.mode.frequency_high_hz * (1 + mr.required_margin)) for mr in result.modes]
        near_lo = min((lo for lo, _ in bands), default=0.0) * 0.85
        near_hi = max((hi for _, hi in bands), default=math.inf) * 1.15
        for o in result.orders:
            for s in states:
                true_hz = o.order * rotor[s]
                above = true_hz > nyq
                if not np.any(above):
                    continue
                visible = above & above_floor(seen_weight(o.weight, np.asarray(sensor.gain(true_hz))), floor)
                apparent = np.where(visible, fold(true_hz, sensor.sample_rate_hz), math.nan)
                with np.errstate(invalid="ignore"):
                    near = np.any([(apparent >= lo * 0.85) & (apparent <= hi * 1.15) for lo, hi in bands], axis=0) \
                        if bands else np.isfinite(apparent)
                    shown = bool(np.any(visible & near & (apparent >= near_lo) & (apparent <= near_hi)))
                if shown:
                    aliases.append(AliasCurve(o.label, o.family, o.order, s, apparent))
                else:
                    left_out += 1
    return DiagramCurves(throttle=throttle, rotor_hz=rotor, aliases=tuple(aliases), aliases_left_out=left_out)
