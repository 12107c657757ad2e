"""Figures of a flight analysis: spectra against rotor speed, and against time.

:func:`flight_figure` draws, per axis, a map of spectral density against
frequency (y) and rotor speed (x; throttle when no rotor rate is known) from
the binned spectra the analysis made (:class:`~clashcheck.identify.views.FlightView`),
on the viridis colour map with a dB scale, with the identified modes
(horizontal lines, named), the order lines k × rotor rate (labelled by
family), and the measured dwell (time share per bin) along the bottom; beside
each map, the stationary (median) spectrum with the mode peaks, their
half-power bands, and the candidates below the confidence floor muted.

:func:`time_figure` draws the spectrogram against time with the rotor-rate
(or throttle) trace under it; ``modes --plot FILE`` writes it as
``FILE``'s stem + ``-time``.

Nothing is computed here beyond unit changes (Hz → rpm, power → dB).
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from .campbell import FAMILY_COLOURS, figure_bytes, require_matplotlib, spread_labels

__all__ = ["flight_figure", "time_figure", "time_path", "save_flight_figures", "MODE_COLOUR", "ORDER_COLOUR"]

#: Mode lines on the maps (vermillion-red, apart from the colour map's hues).
MODE_COLOUR = "#FF4B33"
#: Order lines on the maps.
ORDER_COLOUR = "#FFFFFF"
_CANDIDATE = "#9A9A9A"
_DB_FLOOR = 1e-30


def _db(x):
    return 10.0 * np.log10(np.maximum(np.asarray(x, dtype=float), _DB_FLOOR))


def _edges(values: np.ndarray, log: bool) -> np.ndarray:
    """Cell edges half-way between bin centres (geometric for rotor rates)."""
    v = np.log(values) if log else np.asarray(values, dtype=float)
    if v.size == 1:
        mid = np.array([v[0] - 0.02, v[0] + 0.02])
    else:
        inner = 0.5 * (v[1:] + v[:-1])
        mid = np.r_[2 * v[0] - inner[0], inner, 2 * v[-1] - inner[-1]]
    return np.exp(mid) if log else mid


def _require_view(result):
    from ..identify.views import FlightView

    if not isinstance(result.view, FlightView):
        raise InputError("result.view", "the spectra of a flight analysis (FlightView)", type(result.view).__name__)
    return result.view


def flight_figure(result, provenance: str | None = None):
    """The spectra map figure of a flight analysis.

    Artists carry a ``gid``: ``map:<axis>`` (the mesh), ``mode:<name>:<axis>``,
    ``order:<k>:<axis>``, ``dwell`` (the time-share bars), ``stationary:<axis>``,
    ``floor:<axis>``, ``band:<name>:<axis>`` (half-power band), ``peak:<name>:<axis>``,
    ``candidate:<name>:<axis>``; labels ``label:...``; the colour bar's axes ``colourbar``.

    Parameters
    ----------
    result : ModesResult
        A flight analysis with its view.
    provenance : str, optional
        Provenance line printed in small type.

    Returns
    -------
    matplotlib.figure.Figure
    """
    Figure, Canvas = require_matplotlib()
    from matplotlib import patheffects

    view = _require_view(result)
    nax = len(view.axes)
    fig = Figure(figsize=(8.6, 2.35 * nax + 1.9), layout="constrained")
    Canvas(fig)
    gs = fig.add_gridspec(nax + 1, 3, width_ratios=(3.3, 1.25, 0.09), height_ratios=[1.0] * nax + [0.32])
    rotor = view.rotor_known
    x = view.bin_values * (60.0 if rotor else 100.0)
    xe = _edges(x, log=rotor)
    f = view.freq_hz
    df = f[1] - f[0] if f.size > 1 else 1.0
    fe = np.r_[f - 0.5 * df, f[-1] + 0.5 * df]
    levels = _db(view.binned)
    vmin, vmax = np.nanpercentile(levels, 5), np.nanpercentile(levels, 99.7)
    maps: list = []
    panels: list = []
    label_groups = []
    mesh = None
    for i, axis in enumerate(view.axes):
        ax = fig.add_subplot(gs[i, 0], sharex=maps[0] if maps else None)
        pan = fig.add_subplot(gs[i, 1], sharey=ax)
        maps.append(ax)
        panels.append(pan)
        mesh = ax.pcolormesh(xe, fe, levels[:, i, :].T, cmap="viridis", vmin=vmin, vmax=vmax, shading="flat",
                             rasterized=True, gid=f"map:{axis}")
        ax.set_ylim(fe[0], fe[-1])
        ax.set_ylabel(f"{axis}\nfrequency (Hz)", fontsize=8)
        ax.tick_params(labelsize=7, labelbottom=False)
        labels = []
        for m in result.modes:
            ax.axhline(m.frequency_hz, color=MODE_COLOUR, lw=0.9, gid=f"mode:{m.name}:{axis}",
                       label="identified mode" if i == 0 and m is result.modes[0] else None)
            labels.append(ax.annotate(
                f"{m.name} {m.frequency_hz:.0f} Hz", xy=(0.0, m.frequency_hz),
                xycoords=ax.get_yaxis_transform(), xytext=(3, 1.5), textcoords="offset points", fontsize=6.5,
                color=MODE_COLOUR, va="bottom", ha="left", gid=f"label:mode:{m.name}:{axis}",
                bbox={"boxstyle": "square,pad=0.1", "fc": "black", "ec": "none", "alpha": 0.55},
                arrowprops={"arrowstyle": "-", "lw": 0.4, "color": MODE_COLOUR, "shrinkA": 0, "shrinkB": 0}))
        top_labels = []
        if rotor:
            shown: set[str] = set()
            for k, fam in sorted(view.families.items()):
                xs = np.array([xe[0], xe[-1]])
                ys = k * xs / 60.0
                if ys[0] > fe[-1]:
                    continue
                colour = FAMILY_COLOURS.get(fam, "#000000")
                ax.plot(xs, ys, color=colour, lw=1.0, ls=(0, (5, 2)), gid=f"order:{k:g}:{axis}",
                        path_effects=[patheffects.withStroke(linewidth=2.2, foreground=ORDER_COLOUR)],
                        label=f"{fam} order line (k × rotor rate)" if i == 0 and fam not in shown else None)
                shown.add(fam)
                if i == 0:
                    end_x = min(xe[-1], 60.0 * fe[-1] / k)
                    inside = end_x < xe[-1]
                    top_labels.append(ax.annotate(
                        f"{k:g}× {fam}", xy=(end_x, 1.0) if inside else (1.0, k * xe[-1] / 60.0),
                        xycoords=ax.get_xaxis_transform() if inside else ax.get_yaxis_transform(),
                        xytext=(0, 2) if inside else (2, 0), textcoords="offset points", fontsize=6.5,
                        color=FAMILY_COLOURS.get(fam, "#000000"), ha="center" if inside else "left",
                        va="bottom" if inside else "center", annotation_clip=False, gid=f"label:order:{k:g}",
                        rotation=0))
        label_groups.append((ax, labels, top_labels))
        # the stationary spectrum beside the map
        st = _db(view.stationary[i])
        pan.plot(st, f, color="#000000", lw=0.8, gid=f"stationary:{axis}",
                 label="stationary (median) spectrum" if i == 0 else None)
        pan.plot(_db(view.floor[i]), f, color="#777777", lw=0.8, ls=(0, (3, 2)), gid=f"floor:{axis}",
                 label="estimated noise floor" if i == 0 else None)
        for j, m in enumerate(result.modes):
            z = m.damping if m.damping is not None else m.damping_high
            pan.axhspan(m.frequency_hz * (1 - z), m.frequency_hz * (1 + z), color=MODE_COLOUR, alpha=0.25, lw=0,
                        gid=f"band:{m.name}:{axis}", label="half-power band f(1 ± ζ)" if i == 0 and j == 0 else None)
            pk = st[int(np.argmin(np.abs(f - m.frequency_hz)))]
            pan.plot([pk], [m.frequency_hz], marker="<", color=MODE_COLOUR, ms=4, ls="none",
                     gid=f"peak:{m.name}:{axis}", label="mode peak" if i == 0 and j == 0 else None)
        for j, c in enumerate(result.candidates):
            pk = st[int(np.argmin(np.abs(f - c.frequency_hz)))]
            pan.plot([pk], [c.frequency_hz], marker="<", mfc="none", mec=_CANDIDATE, ms=4, ls="none",
                     gid=f"candidate:{c.name}:{axis}",
                     label="candidate below the confidence floor" if i == 0 and j == 0 else None)
            pan.axhline(c.frequency_hz, color=_CANDIDATE, lw=0.6, ls=(0, (1, 2)), zorder=0)
        pan.tick_params(labelsize=7, labelleft=False, labelbottom=i == nax - 1)
        pan.grid(True, color="#E6E6E6", lw=0.5)
        if i == nax - 1:
            pan.set_xlabel("dB re bin level", fontsize=8)
    cax = fig.add_subplot(gs[:nax, 2])
    cax.set_gid("colourbar")
    bar = fig.colorbar(mesh, cax=cax)
    bar.set_label("spectral density re each bin's level (dB)", fontsize=8)
    bar.ax.tick_params(labelsize=7)
    # measured dwell: the share of time in each bin, along the bottom
    dax = fig.add_subplot(gs[nax, 0], sharex=maps[0])
    share = view.bin_counts / max(float(np.sum(view.bin_counts)), 1.0)
    dax.bar(xe[:-1], 100 * share, width=np.diff(xe), align="edge", color="#5A5A5A", edgecolor="white", lw=0.5,
            gid="dwell", label="measured dwell (share of time)")
    dax.set_ylabel("time\n(%)", fontsize=8)
    dax.tick_params(labelsize=7)
    dax.set_xlabel(f"rotor speed (rpm; bins by {view.bin_source})" if rotor else "throttle (%)", fontsize=8)
    dax.set_xlim(xe[0], xe[-1])
    for side in ("top", "right"):
        dax.spines[side].set_visible(False)
    handles, names = [], []
    for a in [maps[0], panels[0], dax]:
        for h, lab in zip(*a.get_legend_handles_labels()):
            if lab not in names:
                handles.append(h)
                names.append(lab)
    leg_ax = fig.add_subplot(gs[nax, 1:])
    leg_ax.axis("off")
    leg_ax.legend(handles, names, loc="center", fontsize=6.5, frameon=False, ncol=1, handlelength=2.0)
    title = f"{result.recording}: spectra against " + ("rotor speed" if rotor else "throttle (no rotor rate)")
    fig.suptitle(title, fontsize=9.5, x=0.01, ha="left")
    _footer(fig, provenance)
    fig.canvas.draw()               # the constrained layout settles here ...
    fig.set_layout_engine("none")   # ... and is frozen for the placement pass
    renderer = fig.canvas.get_renderer()
    for ax, labels, tops in label_groups:
        box = ax.get_window_extent(renderer)
        spread_labels(labels, renderer, "y", hi_px=box.y1)
        spread_labels([t for t in tops if t.get_ha() == "center"], renderer, "x", lo_px=box.x0, hi_px=box.x1 + 40)
        spread_labels([t for t in tops if t.get_ha() == "left"], renderer, "y", hi_px=box.y1 + 6)
    return fig


def time_figure(result, provenance: str | None = None):
    """Spectrogram against time (summed over axes) with the rotor-rate or throttle trace.

    Artists: ``spectrogram`` (the mesh), ``mode:<name>``, ``trace``; the colour bar's axes ``colourbar``.

    Parameters
    ----------
    result : ModesResult
        A flight analysis with its view.
    provenance : str, optional
        Provenance line.

    Returns
    -------
    matplotlib.figure.Figure
    """
    Figure, Canvas = require_matplotlib()
    view = _require_view(result)
    if view.times_s.size < 2:
        raise InputError("result.view.times_s", "at least two time columns", view.times_s.size)
    fig = Figure(figsize=(8.6, 5.2), layout="constrained")
    Canvas(fig)
    gs = fig.add_gridspec(2, 2, width_ratios=(1, 0.025), height_ratios=(3, 1))
    ax = fig.add_subplot(gs[0, 0])
    tr = fig.add_subplot(gs[1, 0], sharex=ax)
    t, f = view.times_s, view.freq_hz
    te = _edges(t, log=False)
    df = f[1] - f[0] if f.size > 1 else 1.0
    fe = np.r_[f - 0.5 * df, f[-1] + 0.5 * df]
    lev = _db(view.spectrogram)
    mesh = ax.pcolormesh(te, fe, lev.T, cmap="viridis", vmin=np.percentile(lev, 5), vmax=np.percentile(lev, 99.7),
                         shading="flat", rasterized=True, gid="spectrogram")
    labels = []
    for m in result.modes:
        ax.axhline(m.frequency_hz, color=MODE_COLOUR, lw=0.8, ls=(0, (6, 3)), gid=f"mode:{m.name}",
                   label="identified mode" if m is result.modes[0] else None)
        labels.append(ax.annotate(
            f"{m.name} {m.frequency_hz:.0f} Hz", xy=(1.0, m.frequency_hz), xycoords=ax.get_yaxis_transform(),
            xytext=(-3, 1.5), textcoords="offset points", fontsize=6.5, color=MODE_COLOUR, ha="right",
            va="bottom", gid=f"label:mode:{m.name}",
            bbox={"boxstyle": "square,pad=0.1", "fc": "black", "ec": "none", "alpha": 0.55},
            arrowprops={"arrowstyle": "-", "lw": 0.4, "color": MODE_COLOUR, "shrinkA": 0, "shrinkB": 0}))
    ax.set_ylabel("frequency (Hz)", fontsize=8)
    ax.tick_params(labelsize=7, labelbottom=False)
    ax.set_title(f"{result.recording}: spectrogram (all axes) against time", fontsize=9.5, loc="left")
    cax = fig.add_subplot(gs[0, 1])
    cax.set_gid("colourbar")
    bar = fig.colorbar(mesh, cax=cax)
    bar.set_label("spectral density (dB re 1 unit²/Hz)", fontsize=8)
    bar.ax.tick_params(labelsize=7)
    y = view.trace * (60.0 if view.trace_is_rotor else 100.0)
    what = {"logged": "rotor speed (rpm, logged)", "drive model": "rotor speed (rpm) the drive model gives for the "
            "logged throttle"}.get(view.trace_source, "throttle (%)")
    tr.plot(t, y, color="#0072B2", lw=1.0, gid="trace", label=what)
    tr.set_ylabel("rotor speed\n(rpm)" if view.trace_is_rotor else "throttle\n(%)", fontsize=8)
    tr.set_xlabel("time of clean recording (s)", fontsize=8)
    tr.tick_params(labelsize=7)
    tr.grid(True, color="#E6E6E6", lw=0.5)
    tr.set_xlim(te[0], te[-1])
    fig.legend(*_merged(ax, tr), loc="outside lower right", fontsize=7, frameon=False, ncol=2)
    _footer(fig, provenance)
    fig.canvas.draw()               # the constrained layout settles here ...
    fig.set_layout_engine("none")   # ... and is frozen for the placement pass
    renderer = fig.canvas.get_renderer()
    spread_labels(labels, renderer, "y", hi_px=ax.get_window_extent(renderer).y1)
    return fig


def _merged(*axes):
    handles, names = [], []
    for a in axes:
        for h, lab in zip(*a.get_legend_handles_labels()):
            if lab not in names:
                handles.append(h)
                names.append(lab)
    return handles, names


def _footer(fig, provenance: str | None) -> None:
    fig.text(0.995, 0.002, "Design advice only. Tap and bench tests with the propellers off.", fontsize=6,
             ha="right", va="bottom", color="#666666", gid="label:caution")
    if provenance:
        fig.text(0.995, 0.998, provenance, fontsize=6, ha="right", va="top", color="#666666",
                 gid="label:provenance")


def time_path(path):
    """The time view's file beside ``path``: its stem + ``-time``, same suffix.

    Parameters
    ----------
    path : path-like
        The main figure's file.

    Returns
    -------
    pathlib.Path

    Examples
    --------
    >>> time_path("out/flight.png").as_posix()
    'out/flight-time.png'
    """
    from pathlib import Path

    p = Path(path)
    return p.with_name(p.stem + "-time" + p.suffix)


def save_flight_figures(path, result, *, inputs=(), provenance: str | None = None) -> list:
    """Write the spectra map to ``path`` and the time view beside it (stem + ``-time``).

    Parameters
    ----------
    path : path-like
        Target file (.png, .svg or .pdf).
    result : ModesResult
        A flight analysis with its view.
    inputs : sequence of path-like
        Input files (never overwritten).
    provenance : str, optional
        Provenance line.

    Returns
    -------
    list of pathlib.Path
        The files written.
    """
    from pathlib import Path

    from ..files import write_output
    from .campbell import PLOT_FORMATS, _check_target

    suffix = Path(path).suffix.lower().lstrip(".")
    if suffix not in PLOT_FORMATS:
        raise InputError("--plot", "a file name ending in " + ", ".join("." + s for s in PLOT_FORMATS), str(path))
    second = time_path(path)
    for target in (Path(path), second):
        _check_target(target, inputs)
    write_output(path, figure_bytes(flight_figure(result, provenance), suffix), inputs=inputs)
    written = [Path(path)]
    view = _require_view(result)
    if view.times_s.size >= 2:
        write_output(second, figure_bytes(time_figure(result, provenance), suffix), inputs=inputs)
        written.append(second)
    return written
