"""Campbell diagram: excitation frequency against rotor speed, with the frame modes.

:func:`campbell_data` assembles what the diagram shows from a check result and
the curves of :func:`clashcheck.analysis.diagram.diagram_curves` (it computes
nothing new; throttles become rotor speeds through the drive model's curve):

- each order as a straight line f = k × rotor rate (pack states collapse onto
  one line once the x axis is rotor speed);
- aliased orders as the sensor sees them, only those above the weight floor
  (with the count of those left out);
- each mode as a horizontal line with its required-margin band;
- the crossings, hover points, operating band, dwell zones and danger ranges
  (solid where they lie in a dwell zone, dashed where they are only passed);
- under the rotor-speed axis, one throttle scale per pack state.

:func:`draw_campbell` draws one diagram on a matplotlib ``Axes``, with a
placement pass that keeps the labels apart; :func:`make_figure` lays out one
diagram, or two stacked for ``compare`` (A4 portrait); :func:`save_campbell`
writes PNG, SVG or PDF atomically.  matplotlib is imported only inside these
functions, on the Agg canvas.

Colours: Okabe–Ito per order family (Okabe & Ito, "Color Universal Design",
2008); each fill has one meaning (margin band grey, operating band yellow,
dwell zone hatched) and every colour and fill drawn has a legend entry.
"""

from __future__ import annotations

import io
import math
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from ..errors import InputError

__all__ = [
    "FAMILY_COLOURS",
    "PLOT_FORMATS",
    "OrderLine",
    "AliasTrace",
    "ModeLine",
    "Crossing",
    "RangeBar",
    "CampbellData",
    "campbell_data",
    "draw_campbell",
    "make_figure",
    "save_campbell",
    "require_matplotlib",
    "spread_labels",
    "place_labels",
    "figure_bytes",
]

#: Okabe–Ito colours per order family (Okabe & Ito, "Color Universal Design", 2008).
FAMILY_COLOURS = {
    "rotor": "#0072B2",        # blue
    "blade": "#009E73",        # bluish green
    "electrical": "#E69F00",   # orange
    "commutation": "#CC79A7",  # reddish purple
    "cogging": "#56B4E9",      # sky blue
    "custom": "#000000",       # black
}
_MODE_COLOUR = "#3A3A3A"
_RANGE_COLOUR = "#D55E00"      # vermillion: danger ranges only
_MARGIN_FILL = "#9A9A9A"       # grey: margin bands only
_BAND_FILL = "#F0E442"         # yellow: the operating band only
_DWELL_HATCH = "#555555"       # hatched: dwell zones only
_STATES = ("full", "nominal", "empty")

#: File suffixes the diagram can be written as.
PLOT_FORMATS = ("png", "svg", "pdf")


@dataclass(frozen=True)
class OrderLine:
    """One order: f = order × rotor rate."""

    #: Order label, e.g. ``"3× blade pass"``.
    label: str
    #: Family.
    family: str
    #: Order number.
    order: float


@dataclass(frozen=True)
class AliasTrace:
    """An order's fold as the sensor sees it, over rotor speed."""

    #: Order label.
    label: str
    #: Family.
    family: str
    #: Rotor speed [rpm], ascending.
    rpm: np.ndarray
    #: Apparent frequency [Hz]; ``nan`` where not shown.
    apparent_hz: np.ndarray


@dataclass(frozen=True)
class ModeLine:
    """A frame mode and its required-margin band."""

    #: Mode name.
    name: str
    #: Nominal frequency [Hz].
    frequency_hz: float
    #: Lowest and highest plausible frequency [Hz] (equal for a point mode).
    low_hz: float
    high_hz: float
    #: Required margin [fraction].
    required_margin: float
    #: Where the figure came from.
    origin: str

    @property
    def band_low_hz(self) -> float:
        """Bottom of the margin band, low × (1 − SM) [Hz]."""
        return self.low_hz * (1.0 - self.required_margin)

    @property
    def band_high_hz(self) -> float:
        """Top of the margin band, high × (1 + SM) [Hz]."""
        return self.high_hz * (1.0 + self.required_margin)


@dataclass(frozen=True)
class Crossing:
    """Where an order (or its fold) meets a mode's nominal frequency."""

    #: Mode name.
    mode: str
    #: Order label.
    label: str
    #: Pack state.
    pack_state: str
    #: Throttle [fraction].
    throttle: float
    #: Rotor speed [rpm].
    rpm: float
    #: The mode's frequency [Hz].
    frequency_hz: float
    #: Whether it is a crossing of the fold.
    aliased: bool


@dataclass(frozen=True)
class RangeBar:
    """A danger range of one mode, over rotor speed (all pack states together)."""

    #: Mode name.
    mode: str
    #: Rotor speed range [rpm].
    rpm_low: float
    rpm_high: float
    #: ``"dwell"`` or ``"passage"``.
    lies_in: str
    #: ``"clash"``, ``"watch"`` or ``"clear"``.
    level: str
    #: Orders responsible.
    orders: tuple[str, ...]


@dataclass(frozen=True)
class CampbellData:
    """Everything one diagram shows, in plain arrays."""

    #: Build name.
    name: str
    #: Verdict of the check.
    verdict: str
    #: Rotor speed range of the x axis [rpm].
    rpm_low: float
    rpm_high: float
    #: Per pack state: (throttle [fraction], rotor speed [rpm]) along the drive curve.
    throttle_scales: dict[str, tuple[np.ndarray, np.ndarray]]
    #: Direct orders.
    orders: tuple[OrderLine, ...]
    #: Aliased orders drawn.
    aliases: tuple[AliasTrace, ...]
    #: Aliased traces above Nyquist left out (below the weight floor or never near a mode).
    aliases_left_out: int
    #: Modes.
    modes: tuple[ModeLine, ...]
    #: Crossings.
    crossings: tuple[Crossing, ...]
    #: Hover rotor speed per pack state [rpm] (only where reachable).
    hover_rpm: dict[str, float]
    #: Operating band over rotor speed, all pack states [rpm]; ``None`` if it cannot fly.
    operating_band_rpm: tuple[float, float] | None
    #: Dwell zones: (what, pack state, rpm low, rpm high).
    dwell_rpm: tuple[tuple[str, str, float, float], ...] = ()
    #: Danger ranges.
    ranges: tuple[RangeBar, ...] = ()
    #: Top of the frequency axis [Hz].
    y_max_hz: float = 1000.0
    #: Sensor Nyquist limit [Hz], when there is a sensor.
    nyquist_hz: float | None = None
    #: Weight floor of aliased orders.
    weight_floor: float = 0.0
    #: Provenance line printed in small type, if any.
    provenance: str | None = field(default=None, compare=False)

    @property
    def title(self) -> str:
        """Title line: build name and verdict."""
        return f"{self.name}: {self.verdict.upper()}"


def _to_rpm(scale: tuple[np.ndarray, np.ndarray], throttle):
    """Rotor speed at ``throttle`` along a pack state's drive curve [rpm]."""
    thr, rpm = scale
    return np.interp(throttle, thr, rpm)


def campbell_data(build, result=None, curves=None, *, points: int = 600,
                  provenance: str | None = None) -> CampbellData:
    """Assemble the diagram of ``build`` from its check and the computed curves.

    Parameters
    ----------
    build : Build
        The build that was checked (its weight floor is shown).
    result : ClashResult, optional
        Its check; computed (by :func:`clashcheck.analysis.clash.check_build`) when not given.
    curves : DiagramCurves, optional
        From :func:`clashcheck.analysis.diagram.diagram_curves`; computed when not given.
    points : int, optional
        Throttle grid points when the curves are computed here (50 to 20000).
    provenance : str, optional
        Provenance line printed under the figure.

    Returns
    -------
    CampbellData
    """
    if result is None:
        from ..analysis.clash import check_build

        result = check_build(build)
    if curves is None:
        from ..analysis.diagram import diagram_curves

        curves = diagram_curves(build, result, points=points)
    states = [s for s in _STATES if s in curves.rotor_hz] + [s for s in curves.rotor_hz if s not in _STATES]
    scales = {}
    for s in states:
        rpm = 60.0 * curves.rotor_hz[s]
        # the throttle scale needs rotor speed rising with throttle; stop at a rotor-rate peak
        rising = np.maximum.accumulate(rpm)
        keep = np.r_[True, np.diff(rising) > 0]
        scales[s] = (curves.throttle[keep], rising[keep])
    rpm_low = min(float(v[1][0]) for v in scales.values())
    rpm_high = max(float(v[1][-1]) for v in scales.values())
    orders = tuple(OrderLine(o.label, o.family, float(o.order)) for o in result.orders)
    aliases = []
    for label in dict.fromkeys(a.label for a in curves.aliases):
        parts = [a for a in curves.aliases if a.label == label]
        rpm = np.concatenate([60.0 * curves.rotor_hz[a.pack_state] for a in parts])
        app = np.concatenate([a.apparent_hz for a in parts])
        order = np.argsort(rpm, kind="stable")
        aliases.append(AliasTrace(label, parts[0].family, rpm[order], app[order]))
    modes = tuple(
        ModeLine(mr.mode.name, mr.mode.frequency_hz, mr.mode.frequency_low_hz, mr.mode.frequency_high_hz,
                 mr.required_margin, mr.mode.origin)
        for mr in result.modes
    )
    freq_of = {m.name: m.frequency_hz for m in modes}
    crossings = []
    seen = set()
    for w in result.windows:
        if w.crossing_throttle is None or w.pack_state not in scales:
            continue
        key = (w.mode, w.label, w.pack_state, w.aliased, round(w.crossing_throttle, 9))
        if key not in seen:
            seen.add(key)
            crossings.append(Crossing(w.mode, w.label, w.pack_state, w.crossing_throttle,
                                      float(_to_rpm(scales[w.pack_state], w.crossing_throttle)),
                                      freq_of[w.mode], w.aliased))
    hover = {b.pack_state: float(_to_rpm(scales[b.pack_state], b.hover.throttle)) for b in result.bands
             if b.hover.how != "unknown" and b.hover.can_hover and b.pack_state in scales}
    flying = [b for b in result.bands if b.flies and b.pack_state in scales]
    band = None
    if flying:
        band = (min(float(_to_rpm(scales[b.pack_state], b.throttle_low)) for b in flying),
                max(float(_to_rpm(scales[b.pack_state], b.throttle_high)) for b in flying))
    dwell = tuple((what, b.pack_state, float(_to_rpm(scales[b.pack_state], lo)),
                   float(_to_rpm(scales[b.pack_state], hi)))
                  for b in result.bands if b.pack_state in scales for what, lo, hi in getattr(b, "dwell", ()))
    ranges = []
    for mr in result.modes:
        for r in mr.danger_ranges:
            per_state = getattr(r, "per_state", ()) or tuple((s, r.throttle_low, r.throttle_high)
                                                             for s in r.pack_states)
            lows = [float(_to_rpm(scales[s], lo)) for s, lo, _hi in per_state if s in scales]
            highs = [float(_to_rpm(scales[s], hi)) for s, _lo, hi in per_state if s in scales]
            if lows:
                ranges.append(RangeBar(r.mode, min(lows), max(highs), getattr(r, "lies_in", "passage"),
                                       getattr(r, "level", "watch"), tuple(r.orders)))
    y_max = 1.3 * max((m.band_high_hz for m in modes), default=500.0)
    sensor = result.sensor
    return CampbellData(
        name=result.name, verdict=result.verdict, rpm_low=rpm_low, rpm_high=rpm_high,
        throttle_scales=scales, orders=orders, aliases=tuple(aliases),
        aliases_left_out=curves.aliases_left_out, modes=modes, crossings=tuple(crossings),
        hover_rpm=hover, operating_band_rpm=band, dwell_rpm=dwell, ranges=tuple(ranges),
        y_max_hz=float(y_max), nyquist_hz=None if sensor is None else sensor.nyquist_hz,
        weight_floor=float(build.check.weight_floor), provenance=provenance,
    )


def require_matplotlib():
    """Import matplotlib's Figure and Agg canvas, or raise an :class:`InputError` saying how to install it.

    Returns
    -------
    tuple
        ``(Figure, FigureCanvasAgg)``.
    """
    try:
        import matplotlib  # noqa: F401
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure
    except ImportError:
        raise InputError(
            "--plot", "matplotlib for the diagram (install the plot extra: pip install 'clashcheck[plot]')",
            "not installed",
        ) from None
    return Figure, FigureCanvasAgg


def spread_labels(texts, renderer, axis: str = "y", pad_px: float = 1.5, lo_px: float | None = None,
                  hi_px: float | None = None) -> list:
    """Move annotations apart along one direction until their boxes no longer overlap.

    A one-dimensional placement pass: labels are sorted by position and each
    one is pushed past the previous one (in display pixels, through the
    annotation's offset).  Labels pushed past ``hi_px`` are hidden (the legend
    still names what they label).

    Parameters
    ----------
    texts : list of matplotlib Annotation
        Labels placed with ``textcoords="offset points"``.
    renderer : RendererBase
        The canvas renderer (for the text extents).
    axis : {"x", "y"}
        Direction to move along.
    pad_px : float
        Gap kept between labels [pixels].
    lo_px, hi_px : float, optional
        Lowest start and highest end allowed [pixels].

    Returns
    -------
    list
        The labels hidden for lack of room.
    """
    if not texts:
        return []
    dpi = texts[0].figure.dpi
    i0, i1 = (0, 2) if axis == "x" else (1, 3)
    from matplotlib.text import Text

    # the text's own box: an annotation's extent also holds its leader line
    boxes = sorted(((Text.get_window_extent(t, renderer).extents, t) for t in texts), key=lambda bt: bt[0][i0])
    end = -math.inf if lo_px is None else lo_px - pad_px
    hidden = []
    for ext, t in boxes:
        start, stop = ext[i0], ext[i1]
        shift = max(0.0, end + pad_px - start)
        if hi_px is not None and stop + shift > hi_px:
            t.set_visible(False)
            hidden.append(t)
            continue
        if shift > 0:
            dx, dy = t.xyann
            pts = shift * 72.0 / dpi
            t.xyann = (dx + pts, dy) if axis == "x" else (dx, dy + pts)
        end = stop + shift
    return hidden


def draw_campbell(data: CampbellData, ax, *, note_aliases: bool = True, place: bool = True) -> None:
    """Draw one diagram onto a matplotlib ``Axes`` (of a figure with a canvas).

    Artists carry a ``gid`` naming what they show: ``order:<label>``,
    ``alias:<label>``, ``mode:<name>``, ``margin:<name>``, ``range:<mode>:<i>``,
    ``crossings``, ``hover:<pack state>``, ``operating-band``,
    ``dwell:<pack state>:<i>``, ``nyquist``; labels ``label:order:<label>``,
    ``label:mode:<name>``; throttle scales ``throttle:<pack state>``.

    Parameters
    ----------
    data : CampbellData
        The diagram.
    ax : matplotlib.axes.Axes
        Where to draw.
    note_aliases : bool
        Say (top right) how many aliased traces were drawn and left out.
    place : bool
        Run the label placement pass now (:func:`place_labels`); ``False`` when the
        layout will still change.
    """
    from matplotlib.transforms import blended_transform_factory

    x0, x1 = data.rpm_low, data.rpm_high
    pad = 0.02 * (x1 - x0)
    x0, x1 = max(0.0, x0 - pad), x1 + pad
    y_max = data.y_max_hz
    right = blended_transform_factory(ax.transAxes, ax.transData)
    top = blended_transform_factory(ax.transData, ax.transAxes)
    if data.operating_band_rpm is not None:
        lo, hi = data.operating_band_rpm
        ax.axvspan(lo, hi, color=_BAND_FILL, alpha=0.30, lw=0, zorder=0, gid="operating-band",
                   label="operating band (hover to cruise, all pack states)")
    for i, (what, state, lo, hi) in enumerate(data.dwell_rpm):
        ax.axvspan(lo, hi, facecolor="none", edgecolor=_DWELL_HATCH, hatch="////", lw=0, alpha=0.45,
                   zorder=0.5, gid=f"dwell:{state}:{i}",
                   label="dwell zone (hover ± spread, cruise; per pack state)" if i == 0 else None)
    mode_labels = []
    for i, m in enumerate(sorted(data.modes, key=lambda m: m.frequency_hz)):
        ax.axhspan(m.band_low_hz, m.band_high_hz, color=_MARGIN_FILL, alpha=0.16, lw=0, zorder=1,
                   gid=f"margin:{m.name}", label="required-margin band of a mode" if i == 0 else None)
        ax.plot([x0, x1], [m.frequency_hz, m.frequency_hz], color=_MODE_COLOUR, lw=1.1, zorder=3,
                gid=f"mode:{m.name}", ls="-" if m.origin not in ("estimated", "shifted") else (0, (6, 2)),
                label=None)
        if m.frequency_hz < y_max:
            tag = f"{m.name} {m.frequency_hz:.0f} Hz ±{100 * m.required_margin:.0f} %"
            if m.origin in ("estimated", "shifted"):
                tag += f" ({m.origin})"
            mode_labels.append(ax.annotate(
                tag, xy=(x0, m.frequency_hz), xytext=(3, 1.5), textcoords="offset points", fontsize=6.5,
                color=_MODE_COLOUR, va="bottom", ha="left", zorder=9, gid=f"label:mode:{m.name}",
                bbox={"boxstyle": "square,pad=0.05", "fc": "white", "ec": "none", "alpha": 0.8},
                arrowprops={"arrowstyle": "-", "lw": 0.4, "color": _MODE_COLOUR, "shrinkA": 0, "shrinkB": 0}))
    if any(m.origin not in ("estimated", "shifted") for m in data.modes):
        ax.plot([], [], color=_MODE_COLOUR, lw=1.1, label="frame mode (measured, catalog or stated)")
    if any(m.origin in ("estimated", "shifted") for m in data.modes):
        ax.plot([], [], color=_MODE_COLOUR, lw=1.1, ls=(0, (6, 2)), label="frame mode (estimated or shifted)")
    families_shown: set[str] = set()
    right_labels, top_labels = [], []
    for o in data.orders:
        colour = FAMILY_COLOURS.get(o.family, "#000000")
        f0, f1 = o.order * x0 / 60.0, o.order * x1 / 60.0
        if f0 > y_max:
            continue
        legend = f"{o.family} orders" if o.family not in families_shown else None
        families_shown.add(o.family)
        ax.plot([x0, x1], [f0, f1], color=colour, lw=1.1, zorder=4, gid=f"order:{o.label}", label=legend)
        short = f"{o.order:g}×"
        if f1 <= y_max:
            right_labels.append(ax.annotate(
                o.label, xy=(1.0, f1), xycoords=right, xytext=(3, 0), textcoords="offset points",
                fontsize=6.5, color=colour, ha="left", va="center", annotation_clip=False,
                gid=f"label:order:{o.label}",
                arrowprops={"arrowstyle": "-", "lw": 0.4, "color": colour, "shrinkA": 0, "shrinkB": 0}))
        else:
            top_labels.append(ax.annotate(
                short, xy=(60.0 * y_max / o.order, 1.0), xycoords=top, xytext=(0, 3),
                textcoords="offset points", fontsize=6.5, color=colour, ha="center", va="bottom",
                annotation_clip=False, gid=f"label:order:{o.label}",
                arrowprops={"arrowstyle": "-", "lw": 0.4, "color": colour, "shrinkA": 0, "shrinkB": 0}))
    for a in data.aliases:
        colour = FAMILY_COLOURS.get(a.family, "#000000")
        ax.plot(a.rpm, a.apparent_hz, color=colour, lw=0.8, ls=(0, (3, 2)), zorder=4, gid=f"alias:{a.label}")
    if data.aliases:
        ax.plot([], [], color="#666666", lw=0.8, ls=(0, (3, 2)),
                label="aliased order as the sensor sees it (dashed, in its family's colour)")
    if data.nyquist_hz is not None:
        if note_aliases:
            ax.set_title(f"aliased orders: {len(data.aliases)} drawn,\n{data.aliases_left_out} left out "
                         f"(weight floor {data.weight_floor:g})", loc="right", fontsize=6, color="#555555",
                         pad=14 if any(60.0 * y_max / o.order < x1 for o in data.orders) else 6)
    dwell_shown = passage_shown = False
    count: dict[str, int] = {}
    freq_of = {m.name: m.frequency_hz for m in data.modes}
    # close modes: stack their range bars a few points apart so both stay readable
    close_offset = _close_offsets(data.modes, y_max, ax)
    for r in data.ranges:
        f = freq_of.get(r.mode)
        if f is None:
            continue
        i = count[r.mode] = count.get(r.mode, -1) + 1
        dwell = r.lies_in == "dwell"
        label = None
        if dwell and not dwell_shown:
            label, dwell_shown = "danger range in a dwell zone", True
        elif not dwell and not passage_shown:
            label, passage_shown = "danger range crossed in passage", True
        from matplotlib.transforms import offset_copy

        trans = offset_copy(ax.transData, fig=ax.figure, y=close_offset.get(r.mode, 0.0), units="points")
        ax.plot([r.rpm_low, r.rpm_high], [f, f], color=_RANGE_COLOUR, transform=trans,
                lw=3.2 if dwell else 1.8, alpha=0.9, solid_capstyle="butt",
                ls="-" if dwell else (0, (2.5, 1.2)), zorder=5, gid=f"range:{r.mode}:{i}", label=label)
    states = [s for s in _STATES if any(c.pack_state == s for c in data.crossings)]
    if states:
        middle = states[len(states) // 2]
        marks = [c for c in data.crossings if c.pack_state == middle]
        ax.plot([c.rpm for c in marks], [c.frequency_hz for c in marks], ls="none", marker="o", ms=3.0,
                mfc="white", mec="#000000", mew=0.7, zorder=7, gid="crossings",
                label="crossing of an order and a mode")
    for i, (state, rpm) in enumerate(data.hover_rpm.items()):
        ax.axvline(rpm, color="#000000", lw=0.8, ls=(0, (1, 1.5)), zorder=6, gid=f"hover:{state}",
                   label="hover (one line per pack state)" if i == 0 else None)
    if data.nyquist_hz is not None and data.nyquist_hz < y_max:
        ax.axhline(data.nyquist_hz, color="#000000", lw=0.6, ls=(0, (8, 3, 1, 3)), gid="nyquist",
                   label="sensor Nyquist limit")
    ax.set_xlim(x0, x1)
    ax.set_ylim(0.0, y_max)
    ax.set_xlabel("rotor speed (rpm)", fontsize=8, labelpad=2)
    ax.set_ylabel("frequency (Hz)", fontsize=8)
    ax.tick_params(labelsize=7)
    ax.set_title(data.title, fontsize=9.5, loc="left", pad=14 if top_labels else 6)
    ax.grid(True, color="#E6E6E6", lw=0.6)
    ax.set_axisbelow(True)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    _throttle_axes(data, ax)
    labels = {"mode": mode_labels, "right": right_labels, "top": top_labels}
    ax._clashcheck_labels = labels  # for the placement pass once the layout is final
    if place:
        place_labels(ax)


def place_labels(ax, draw: bool = True) -> None:
    """The placement pass of one diagram: mode labels up the left edge, order labels up the
    right edge and along the top, moved apart on the canvas (call once the layout is final).

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        An axes drawn by :func:`draw_campbell`.
    draw : bool
        Draw the canvas first (not needed right after a draw with the final layout).
    """
    labels = getattr(ax, "_clashcheck_labels", None)
    if not labels:
        return
    if draw:
        ax.figure.canvas.draw()
    renderer = ax.figure.canvas.get_renderer()
    box = ax.get_window_extent(renderer)
    spread_labels(labels["mode"], renderer, "y", hi_px=box.y1)
    spread_labels(labels["right"], renderer, "y", hi_px=box.y1 + 4)
    spread_labels(labels["top"], renderer, "x", lo_px=box.x0, hi_px=box.x1 + 30)


def _close_offsets(modes, y_max: float, ax) -> dict[str, float]:
    """Vertical offsets [points] for range bars of modes closer than a bar's width."""
    height_pt = ax.get_position().height * ax.figure.get_figheight() * 72.0
    per_hz = height_pt / y_max
    out: dict[str, float] = {}
    group: list = []
    for m in sorted(modes, key=lambda m: m.frequency_hz) + [None]:
        if m is not None and group and (m.frequency_hz - group[-1].frequency_hz) * per_hz < 5.0:
            group.append(m)
            continue
        if len(group) > 1:
            mid = (len(group) - 1) / 2
            for j, g in enumerate(group):
                want = (j - mid) * 3.6
                out[g.name] = want - (g.frequency_hz - group[0].frequency_hz) * per_hz + \
                    (group[-1].frequency_hz - group[0].frequency_hz) * per_hz / 2
        group = [m] if m is not None else []
    return out


def _throttle_axes(data: CampbellData, ax) -> None:
    """One throttle scale per pack state under the rotor-speed axis."""
    for i, (state, (thr, rpm)) in enumerate(data.throttle_scales.items()):
        if len(thr) < 2:
            continue

        def fwd(x, thr=thr, rpm=rpm):
            return 100.0 * _interp_lin(x, rpm, thr)

        def inv(p, thr=thr, rpm=rpm):
            return _interp_lin(np.asarray(p, dtype=float) / 100.0, thr, rpm)

        h_in = ax.get_position().height * ax.figure.get_figheight()
        sec = ax.secondary_xaxis(-(0.50 + 0.36 * i) / h_in, functions=(fwd, inv))
        sec.set_gid(f"throttle:{state}")
        ticks = [t for t in range(0, 101, 10) if thr[0] * 100 - 1e-9 <= t <= thr[-1] * 100 + 1e-9]
        sec.set_xticks(ticks)
        sec.tick_params(labelsize=6.5, pad=1, length=2.5)
        sec.set_xlabel(f"throttle, {state} pack (%)", fontsize=7, labelpad=1)


def _interp_lin(x, xp: np.ndarray, fp: np.ndarray):
    """``np.interp`` continued linearly past both ends (axis limits must stay finite)."""
    x = np.asarray(x, dtype=float)
    y = np.interp(x, xp, fp)
    lo_slope = (fp[1] - fp[0]) / (xp[1] - xp[0])
    hi_slope = (fp[-1] - fp[-2]) / (xp[-1] - xp[-2])
    y = np.where(x < xp[0], fp[0] + (x - xp[0]) * lo_slope, y)
    return np.where(x > xp[-1], fp[-1] + (x - xp[-1]) * hi_slope, y)


def _legend_entries(axes, width: int = 33) -> tuple[list, list]:
    """Unique legend entries of ``axes``, labels wrapped to ``width`` characters."""
    import textwrap

    handles: dict[str, object] = {}
    for ax in axes:
        for h, lab in zip(*ax.get_legend_handles_labels()):
            handles.setdefault(lab, h)
    return list(handles.values()), [textwrap.fill(lab, width) for lab in handles]


def make_figure(datas, provenance: str | None = None) -> object:
    """A matplotlib ``Figure`` (Agg canvas): one diagram, or two stacked on an A4 page.

    Parameters
    ----------
    datas : sequence of CampbellData
        One or two diagrams (two: ``compare``, A above B, sharing the frequency axis).
    provenance : str, optional
        Provenance line; by default the first diagram's.

    Returns
    -------
    matplotlib.figure.Figure
    """
    Figure, FigureCanvasAgg = require_matplotlib()
    datas = list(datas)
    if not 1 <= len(datas) <= 2:
        raise InputError("plot", "one or two diagrams", len(datas))
    n_states = max(len(d.throttle_scales) for d in datas)
    if len(datas) == 1:
        fig = Figure(figsize=(8.6, 5.4 + 0.3 * n_states), layout="constrained")
    else:
        fig = Figure(figsize=(8.27, 11.69), layout="constrained")       # A4 portrait
    FigureCanvasAgg(fig)
    fig.get_layout_engine().set(h_pad=0.06, w_pad=0.06)
    axes = list(fig.subplots(len(datas), 1, squeeze=False)[:, 0])
    top = max(d.y_max_hz for d in datas)
    # one frequency scale, and one rotor-speed scale, for both builds of a compare
    lo, hi = min(d.rpm_low for d in datas), max(d.rpm_high for d in datas)
    for ax, d in zip(axes, datas):
        draw_campbell(replace(d, y_max_hz=top, rpm_low=lo, rpm_high=hi), ax, place=False)
    handles, labels = _legend_entries(axes)
    if len(datas) == 1:
        fig.legend(handles, labels, loc="outside right upper", fontsize=7, frameon=False, handlelength=2.4)
    else:
        fig.legend(handles, labels, loc="outside lower center", fontsize=7, frameon=False, ncol=2,
                   handlelength=2.4)
    prov = provenance if provenance is not None else datas[0].provenance
    foot = "Design advice only. Tap and bench tests with the propellers off."
    fig.text(0.995, 0.002, foot, fontsize=6, ha="right", va="bottom", color="#666666", gid="label:caution")
    if prov:
        fig.text(0.005, 0.998, prov, fontsize=6, ha="left", va="top", color="#666666", gid="label:provenance")
    fig.canvas.draw()               # the constrained layout settles here ...
    fig.set_layout_engine("none")   # ... and is frozen, so the placement pass sees final positions
    for ax in axes:
        place_labels(ax, draw=False)
    return fig


def save_campbell(path, datas, *, inputs=(), provenance: str | None = None) -> None:
    """Write one or two diagrams to ``path`` (PNG, SVG or PDF by suffix), atomically.

    Parameters
    ----------
    path : path-like
        Target file.
    datas : sequence of CampbellData
        One or two diagrams.
    inputs : sequence of path-like
        Input files (never overwritten).
    provenance : str, optional
        Provenance line (default: the first diagram's).

    Raises
    ------
    InputError
        For an unknown suffix, or when matplotlib is missing.
    OutputError
        When the path cannot be written or is one of ``inputs``.
    """
    from ..files import write_output

    suffix = Path(path).suffix.lower().lstrip(".")
    if suffix not in PLOT_FORMATS:
        raise InputError("--plot", "a file name ending in " + ", ".join("." + s for s in PLOT_FORMATS),
                         str(path))
    _check_target(Path(path), inputs)
    fig = make_figure(datas, provenance)
    write_output(path, figure_bytes(fig, suffix), inputs=inputs)


def figure_bytes(fig, suffix: str, dpi: int = 110) -> bytes:
    """The figure encoded as PNG, SVG or PDF (no date stamped in SVG/PDF metadata).

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        The figure.
    suffix : str
        ``png``, ``svg`` or ``pdf``.
    dpi : int
        Resolution of a PNG [dots per inch].

    Returns
    -------
    bytes
    """
    buffer = io.BytesIO()
    meta = {"Date": None} if suffix == "svg" else ({"CreationDate": None} if suffix == "pdf" else None)
    fig.savefig(buffer, format=suffix, dpi=dpi, metadata=meta)
    return buffer.getvalue()


def _check_target(target: Path, inputs) -> None:
    """Refuse an unwritable target before the (slow) drawing; write_output checks again when writing."""
    from ..files import check_target

    check_target(target, inputs)
