"""Campbell-style diagram: excitation frequency against throttle, with the frame modes.

:func:`campbell_data` collects what the diagram shows from a build and its
check result (pure NumPy, no plotting library):

- each order as a band spanning the pack states checked (full to empty);
- aliased orders as the sensor sees them (the fold), where their weight
  after the anti-alias filter reaches the build's floor;
- each mode as a horizontal line with its required-margin band;
- the crossings, the hover points, the operating band and the clash windows.

:func:`draw_campbell` draws that onto a matplotlib ``Axes``;
:func:`save_campbell` writes one or two diagrams (side by side, for
``compare``) to a PNG, SVG or PDF file atomically.  matplotlib is an optional
extra and is imported only inside these functions, with the Agg canvas.

Colours follow the Okabe–Ito palette, which stays distinguishable with the
common forms of colour-vision deficiency; line styles repeat the distinction
(solid band edges for direct orders, dashed for aliased ones).
"""

from __future__ import annotations

import io
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import InputError

__all__ = [
    "FAMILY_COLOURS",
    "PLOT_FORMATS",
    "OrderTrace",
    "AliasTrace",
    "ModeLine",
    "Crossing",
    "CampbellData",
    "campbell_data",
    "draw_campbell",
    "make_figure",
    "save_campbell",
    "require_matplotlib",
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
_CLASH_COLOUR = "#D55E00"      # vermillion
_BAND_COLOUR = "#BBBBBB"

#: File suffixes the diagram can be written as.
PLOT_FORMATS = ("png", "svg", "pdf")


@dataclass(frozen=True)
class OrderTrace:
    """One order's frequency over throttle, per pack state."""

    #: Order label, e.g. ``"3× blade pass"``.
    label: str
    #: Family.
    family: str
    #: Order number.
    order: float
    #: Frequency per pack state [Hz], each over :attr:`CampbellData.throttle`.
    per_state_hz: dict[str, np.ndarray]

    @property
    def low_hz(self) -> np.ndarray:
        """Lower edge of the band over the pack states [Hz]."""
        return np.min(np.stack(list(self.per_state_hz.values())), axis=0)

    @property
    def high_hz(self) -> np.ndarray:
        """Upper edge of the band over the pack states [Hz]."""
        return np.max(np.stack(list(self.per_state_hz.values())), axis=0)


@dataclass(frozen=True)
class AliasTrace:
    """An order's fold as the sensor sees it, at one pack state."""

    #: Order label.
    label: str
    #: Family.
    family: str
    #: Pack state.
    pack_state: str
    #: Apparent frequency [Hz]; ``nan`` where the true frequency is below
    #: Nyquist (the order is then seen directly) or too faint after the filter.
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
    #: The mode's frequency [Hz].
    frequency_hz: float
    #: Whether it is a crossing of the fold.
    aliased: bool


@dataclass(frozen=True)
class CampbellData:
    """Everything one diagram shows, in plain arrays."""

    #: Title line.
    title: str
    #: Verdict of the check.
    verdict: str
    #: Throttle grid from idle to max [fraction].
    throttle: np.ndarray
    #: Direct orders.
    orders: tuple[OrderTrace, ...]
    #: Aliased orders.
    aliases: tuple[AliasTrace, ...]
    #: Modes.
    modes: tuple[ModeLine, ...]
    #: Crossings.
    crossings: tuple[Crossing, ...]
    #: Hover throttle per pack state [fraction] (only where known and reachable).
    hover: dict[str, float]
    #: Operating band across the pack states [fraction]: lowest hover to cruise; ``None`` if it cannot fly.
    operating_band: tuple[float, float] | None
    #: Clash windows (touching the operating band) and other windows.
    windows: tuple = field(default=())
    #: Merged danger ranges per mode (:class:`~clashcheck.clash.DangerRange`).
    danger_ranges: tuple = field(default=())
    #: Top of the frequency axis [Hz].
    y_max_hz: float = 1000.0
    #: Sensor Nyquist limit [Hz], when there is a sensor.
    nyquist_hz: float | None = None


def campbell_data(build, result=None, *, points: int = 600) -> CampbellData:
    """Collect the diagram's content for ``build`` (checked with the core engine).

    Parameters
    ----------
    build : Build
        The build, with the modes that were checked (e.g. shifted for a swap).
    result : ClashResult, optional
        Its check; computed when not given.
    points : int, optional
        Throttle grid points from idle to max (50 to 20000).

    Returns
    -------
    CampbellData
    """
    from ..analysis.clash import check_build
    from ..analysis.windows import above_floor, seen_weight
    from ..model.excitation import fold

    if isinstance(points, bool) or not isinstance(points, int) or not 50 <= points <= 20000:
        raise InputError("points", "a whole number from 50 to 20000", points)
    if result is None:
        result = check_build(build)
    drive = build.drive()
    states = tuple(b.pack_state for b in result.bands)
    throttle = np.linspace(result.idle, result.throttle_max, points)
    rotor = {s: drive.rotor_hz(throttle, s) for s in states}
    orders = tuple(
        OrderTrace(o.label, o.family, o.order, {s: o.order * rotor[s] for s in states}) for o in result.orders
    )
    aliases = []
    sensor = result.sensor
    floor = build.check.weight_floor
    if sensor is not None:
        nyq = sensor.nyquist_hz
        for o in result.orders:
            for s in states:
                true_hz = o.order * rotor[s]
                visible = (true_hz > nyq) & above_floor(seen_weight(o.weight, np.asarray(sensor.gain(true_hz))), floor)
                if np.any(visible):
                    apparent = np.where(visible, fold(true_hz, sensor.sample_rate_hz), math.nan)
                    aliases.append(AliasTrace(o.label, o.family, s, apparent))
    modes = tuple(
        ModeLine(mr.mode.name, mr.mode.frequency_hz, mr.mode.frequency_low_hz, mr.mode.frequency_high_hz,
                 mr.required_margin, mr.mode.origin)
        for mr in result.modes
    )
    freq_of = {m.name: m.frequency_hz for m in modes}
    crossings = []
    seen = set()
    for w in result.windows:
        if w.crossing_throttle is None:
            continue
        key = (w.mode, w.label, w.pack_state, w.aliased, round(w.crossing_throttle, 9))
        if key not in seen:
            seen.add(key)
            crossings.append(Crossing(w.mode, w.label, w.pack_state, w.crossing_throttle, freq_of[w.mode], w.aliased))
    hover = {b.pack_state: b.hover.throttle for b in result.bands
             if b.hover.how != "unknown" and b.hover.can_hover}
    flying = [b for b in result.bands if b.flies]
    band = (min(b.throttle_low for b in flying), max(b.throttle_high for b in flying)) if flying else None
    y_max = 1.3 * max(m.band_high_hz for m in modes)
    verdict = result.verdict
    return CampbellData(
        title=f"{result.name}: {verdict.upper()}",
        verdict=verdict,
        throttle=throttle,
        orders=orders,
        aliases=tuple(aliases),
        modes=modes,
        crossings=tuple(crossings),
        hover=hover,
        operating_band=band,
        windows=tuple(result.windows),
        danger_ranges=tuple(r for mr in result.modes for r in mr.danger_ranges),
        y_max_hz=float(y_max),
        nyquist_hz=None if sensor is None else sensor.nyquist_hz,
    )


def require_matplotlib():
    """Import matplotlib, or raise an :class:`InputError` saying how to install it."""
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


def draw_campbell(data: CampbellData, ax) -> None:
    """Draw one diagram onto a matplotlib ``Axes``.

    Artists carry a ``gid`` naming what they show, so a caller (or a test)
    can find them: ``order:<label>:low`` / ``:high`` for the edges of an
    order's band, ``alias:<label>:<pack state>`` for a fold,
    ``mode:<name>`` for a mode line, ``margin:<name>`` for its band,
    ``range:<mode>:<i>`` for a danger range, ``crossings``,
    ``hover:<pack state>`` and ``operating-band``.

    Crossings are marked for the middle pack state checked (the others sit
    close by); danger ranges merge the windows of every order and pack state.
    """
    x = data.throttle * 100.0
    y_max = data.y_max_hz
    if data.operating_band is not None:
        lo, hi = data.operating_band
        ax.axvspan(100 * lo, 100 * hi, color=_BAND_COLOUR, alpha=0.28, lw=0, zorder=0,
                   gid="operating-band", label="operating band (hover to cruise)")
    label_at: list[float] = []
    for m in sorted(data.modes, key=lambda m: m.frequency_hz):
        ax.axhspan(m.band_low_hz, m.band_high_hz, color=_MODE_COLOUR, alpha=0.08, lw=0, zorder=1,
                   gid=f"margin:{m.name}")
        if m.high_hz > m.low_hz:
            ax.axhspan(m.low_hz, m.high_hz, color=_MODE_COLOUR, alpha=0.12, lw=0, zorder=1,
                       gid=f"spread:{m.name}")
        ax.axhline(m.frequency_hz, color=_MODE_COLOUR, lw=1.2, zorder=3, gid=f"mode:{m.name}",
                   ls="-" if m.origin not in ("estimated", "shifted") else (0, (6, 2)))
        if m.frequency_hz < y_max:
            crowded = any(abs(m.frequency_hz - y) < 0.035 * y_max for y in label_at)
            label_at.append(m.frequency_hz)
            tag = f"{m.name} {m.frequency_hz:.0f} Hz ±{100 * m.required_margin:.0f} %"
            if m.origin == "shifted":
                tag += " (shifted)"
            ax.annotate(tag, xy=(x[-1] if crowded else x[0], m.frequency_hz), xytext=(-3 if crowded else 3, 2),
                        textcoords="offset points", fontsize=6.5, color=_MODE_COLOUR, va="bottom",
                        ha="right" if crowded else "left", zorder=8,
                        bbox={"boxstyle": "square,pad=0.1", "fc": "white", "ec": "none", "alpha": 0.7})
    families_shown = set()
    for o in data.orders:
        colour = FAMILY_COLOURS.get(o.family, "#000000")
        low, high = o.low_hz, o.high_hz
        if np.min(low) > y_max:
            continue
        legend = o.family if o.family not in families_shown else None
        families_shown.add(o.family)
        ax.fill_between(x, low, high, color=colour, alpha=0.25, lw=0, zorder=2)
        ax.plot(x, low, color=colour, lw=0.9, zorder=4, gid=f"order:{o.label}:low", label=legend)
        ax.plot(x, high, color=colour, lw=0.9, zorder=4, gid=f"order:{o.label}:high")
        inside = np.nonzero(high <= 0.96 * y_max)[0]
        if inside.size:
            i = inside[-1]
            ax.annotate(o.label, xy=(x[i], high[i]), xytext=(-3, 0), textcoords="offset points",
                        fontsize=6.5, color=colour, ha="right", va="bottom", zorder=8)
    aliased_legend = False
    for a in data.aliases:
        colour = FAMILY_COLOURS.get(a.family, "#000000")
        ax.plot(x, a.apparent_hz, color=colour, lw=0.8, ls=(0, (3, 2)), zorder=4,
                gid=f"alias:{a.label}:{a.pack_state}",
                label=None if aliased_legend else "aliased order (as the sensor sees it)")
        aliased_legend = True
    freq_of = {m.name: m.frequency_hz for m in data.modes}
    shown = {"clash": False, "watch": False}
    count: dict[str, int] = {}
    for r in data.danger_ranges:
        f = freq_of.get(r.mode)
        if f is None:
            continue
        kind = "clash" if r.touches_operating_band else "watch"
        i = count[r.mode] = count.get(r.mode, -1) + 1
        ax.plot([100 * r.throttle_low, 100 * r.throttle_high], [f, f], color=_CLASH_COLOUR,
                lw=5.0 if kind == "clash" else 2.2, alpha=0.75 if kind == "clash" else 0.9,
                solid_capstyle="butt", ls="-" if kind == "clash" else (0, (2, 1)), zorder=5,
                gid=f"range:{r.mode}:{i}",
                label=None if shown[kind] else
                ("clash window (touches the band)" if kind == "clash" else "window outside the band"))
        shown[kind] = True
    states = sorted({c.pack_state for c in data.crossings}, key=("full", "nominal", "empty").index)
    if states:
        middle = states[len(states) // 2]
        marks = [c for c in data.crossings if c.pack_state == middle]
        ax.plot([100 * c.throttle for c in marks], [c.frequency_hz for c in marks], ls="none", marker="o",
                ms=3.2, mfc="white", mec="#000000", mew=0.8, zorder=7, gid="crossings",
                label=f"crossing ({middle} pack)")
    for i, (state, throttle) in enumerate(data.hover.items()):
        ax.axvline(100 * throttle, color="#000000", lw=0.8, ls=(0, (1, 1.5)), zorder=6, gid=f"hover:{state}",
                   label="hover (full to empty pack)" if i == 0 else None)
    if data.nyquist_hz is not None and data.nyquist_hz < y_max:
        ax.axhline(data.nyquist_hz, color="#000000", lw=0.6, ls=(0, (8, 3, 1, 3)), gid="nyquist",
                   label="sensor Nyquist limit")
    ax.set_xlim(x[0], x[-1])
    ax.set_ylim(0.0, y_max)
    ax.set_xlabel("throttle (%)")
    ax.set_ylabel("frequency (Hz)")
    ax.set_title(data.title, fontsize=10, loc="left")
    ax.grid(True, color="#E6E6E6", lw=0.6)
    ax.set_axisbelow(True)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)


def make_figure(datas) -> object:
    """A matplotlib ``Figure`` (Agg canvas) with one diagram per item, side by side."""
    Figure, FigureCanvasAgg = require_matplotlib()
    datas = list(datas)
    if not 1 <= len(datas) <= 2:
        raise InputError("plot", "one or two diagrams", len(datas))
    fig = Figure(figsize=(6.8 * len(datas) + 2.4, 5.2), layout="constrained")
    FigureCanvasAgg(fig)
    axes = fig.subplots(1, len(datas), sharey=True, squeeze=False)[0]
    top = max(d.y_max_hz for d in datas)
    for ax, d in zip(axes, datas):
        draw_campbell(replace_y(d, top), ax)
    handles, labels = {}, {}
    for ax in axes:
        for h, lab in zip(*ax.get_legend_handles_labels()):
            handles.setdefault(lab, h)
    fig.legend(list(handles.values()), list(handles), loc="outside right upper", fontsize=7, frameon=False)
    fig.text(0.995, 0.005, "Design advice only. Tap and bench tests with the propellers off.",
             fontsize=6, ha="right", va="bottom", color="#666666")
    return fig


def replace_y(data: CampbellData, y_max_hz: float) -> CampbellData:
    """The same diagram with another top of the frequency axis."""
    from dataclasses import replace

    return replace(data, y_max_hz=y_max_hz)


def save_campbell(path, datas, *, inputs=()) -> None:
    """Write one or two diagrams to ``path`` (PNG, SVG or PDF by suffix), atomically.

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
    fig = make_figure(datas)
    buffer = io.BytesIO()
    fig.savefig(buffer, format=suffix, dpi=150, metadata={"Date": None} if suffix == "svg" else None)
    write_output(path, buffer.getvalue(), inputs=inputs)


def _check_target(target: Path, inputs) -> None:
    """Refuse an unwritable target before the (slow) drawing; write_output checks again when writing."""
    from ..files import check_target

    check_target(target, inputs)