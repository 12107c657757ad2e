"""Figure of a tap analysis: averaged impact spectrum, decay of each mode, impacts on the trace.

- top: the averaged impact spectrum (dB) with the peaks found, the noise floor
  estimated from the spectrum, the noise measured before the first tap, and
  each mode's half-power band f(1 ± ζ);
- middle: per mode, the cycle-averaged decay envelope of each tap (log scale)
  with the fitted decays, viscous (solid) and friction-viscous (dashed), the
  chosen one drawn thicker (:func:`clashcheck.identify.views.decay_views`);
- bottom: the analysed trace with the impacts used (▼) and those left out (✕,
  with the reason: double hit, clipped).

Nothing is computed here beyond unit changes (power → dB, samples → seconds).
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import InputError
from .campbell import figure_bytes, require_matplotlib, spread_labels

__all__ = ["tap_figure", "save_tap_figure"]

_SPECTRUM = "#000000"
_PEAK = "#D55E00"        # vermillion: modes (peaks and half-power bands)
_CANDIDATE = "#9A9A9A"
_FLOOR = "#0072B2"
_NOISE = "#56B4E9"
_USED = "#009E73"
_REJECTED = "#CC79A7"
_TAPS = ("#0072B2", "#E69F00", "#009E73", "#CC79A7", "#56B4E9", "#000000", "#D55E00", "#F0E442")


def _db(x):
    return 10.0 * np.log10(np.maximum(np.asarray(x, dtype=float), 1e-30))


def tap_figure(result, decays=(), provenance: str | None = None):
    """The tap analysis figure.

    Artists carry a ``gid``: ``spectrum``, ``floor``, ``noise``, ``peak:<name>``,
    ``band:<name>``, ``candidate:<name>``, ``envelope:<name>:<tap>``,
    ``fit:<name>:<model>:<tap>``, ``trace``, ``impacts``, ``rejected``;
    labels ``label:...``.

    Parameters
    ----------
    result : ModesResult
        A tap analysis with its view (:class:`~clashcheck.identify.views.TapView`).
    decays : sequence of DecayView
        The modes' decay envelopes and fits (:func:`clashcheck.identify.views.decay_views`).
    provenance : str, optional
        Provenance line printed in small type.

    Returns
    -------
    matplotlib.figure.Figure
    """
    from ..identify.views import TapView

    view = result.view
    if not isinstance(view, TapView):
        raise InputError("result.view", "the spectrum of a tap analysis (TapView)", type(view).__name__)
    Figure, Canvas = require_matplotlib()
    decays = list(decays)
    ncol = min(4, max(1, len(decays)))
    nrow_d = math.ceil(len(decays) / ncol) if decays else 0
    fig = Figure(figsize=(8.6, 3.0 + 2.1 * nrow_d + 1.9), layout="constrained")
    Canvas(fig)
    gs = fig.add_gridspec(2 + nrow_d, ncol, height_ratios=[1.5] + [1.05] * nrow_d + [0.9])
    ax = fig.add_subplot(gs[0, :])
    f = view.freq_hz
    ax.plot(f, _db(view.spectrum), color=_SPECTRUM, lw=0.8, gid="spectrum", label="averaged impact spectrum")
    ax.plot(f, _db(view.floor), color=_FLOOR, lw=0.9, ls=(0, (4, 2)), gid="floor",
            label="noise floor estimated from the spectrum")
    if view.noise is not None:
        ax.plot(f, _db(view.noise), color=_NOISE, lw=0.9, ls=(0, (1, 1.5)), gid="noise",
                label="noise before the first tap")
    labels = []
    spec_db = _db(view.spectrum)
    for j, m in enumerate(result.modes):
        z = m.damping if m.damping is not None else m.damping_high
        ax.axvspan(m.frequency_hz * (1 - z), m.frequency_hz * (1 + z), color=_PEAK, alpha=0.22, lw=0,
                   gid=f"band:{m.name}", label="half-power band f(1 ± ζ) of a mode" if j == 0 else None)
        y = float(spec_db[int(np.argmin(np.abs(f - m.frequency_hz)))])
        ax.plot([m.frequency_hz], [y], marker="v", color=_PEAK, ms=5, ls="none", gid=f"peak:{m.name}",
                label="mode peak" if j == 0 else None)
        zeta = f"ζ {m.damping:.3f}" if m.damping is not None else f"ζ < {m.damping_high:.3f}"
        labels.append(ax.annotate(f"{m.name}\n{m.frequency_hz:.0f} Hz, {zeta}", xy=(m.frequency_hz, y),
                                  xytext=(0, 6), textcoords="offset points", fontsize=6.5, color=_PEAK,
                                  ha="center", va="bottom", gid=f"label:mode:{m.name}",
                                  arrowprops={"arrowstyle": "-", "lw": 0.4, "color": _PEAK,
                                              "shrinkA": 0, "shrinkB": 0}))
    for j, c in enumerate(getattr(result, "candidates", ()) or ()):
        y = float(spec_db[int(np.argmin(np.abs(f - c.frequency_hz)))])
        ax.plot([c.frequency_hz], [y], marker="v", mfc="none", mec=_CANDIDATE, ms=5, ls="none",
                gid=f"candidate:{c.name}", label="candidate below the confidence floor" if j == 0 else None)
    top = float(np.max(spec_db))
    ax.set_ylim(float(np.percentile(spec_db, 1)) - 5, top + 18)  # room for the two-line peak labels
    highest = max((m.frequency_hz for m in result.modes), default=f[-1])
    ax.set_xlim(f[0], min(f[-1], max(1.6 * highest, 0.25 * f[-1])))
    ax.set_xlabel("frequency (Hz)", fontsize=8)
    ax.set_ylabel("spectral density\n(dB re 1 unit²/Hz)", fontsize=8)
    ax.tick_params(labelsize=7)
    ax.grid(True, color="#E6E6E6", lw=0.5)
    ax.set_title(f"{result.recording}: {result.averages} impacts averaged, resolution "
                 f"{result.resolution_hz:.3g} Hz", fontsize=9.5, loc="left")
    ax.legend(loc="upper right", fontsize=6.5, frameon=False)
    # decays
    dec_axes = []
    for i, d in enumerate(decays):
        dax = fig.add_subplot(gs[1 + i // ncol, i % ncol])
        dec_axes.append(dax)
        for k, (t, a) in enumerate(d.envelopes):
            colour = _TAPS[k % len(_TAPS)]
            dax.plot(1e3 * t, a, ls="none", marker="o", ms=2.2, color=colour, alpha=0.8,
                     gid=f"envelope:{d.mode}:{k}", label="envelope, one colour per tap" if i == 0 and k == 0 else None)
            for name, curves in d.fitted.items():
                thick = name == d.chosen
                dax.plot(1e3 * t, curves[k], color="#000000", lw=1.3 if thick else 0.8,
                         ls="-" if name == "viscous" else (0, (4, 2)), alpha=0.9 if thick else 0.6,
                         gid=f"fit:{d.mode}:{name}:{k}",
                         label=(("viscous fit" if name == "viscous" else "friction-viscous fit")
                                if i == 0 and k == 0 else None))
        dax.set_yscale("log")
        words = []
        if "viscous" in d.params:
            words.append(f"viscous ζ {d.params['viscous'][0]:.4f}")
        if "friction-viscous" in d.params:
            zv, drop = d.params["friction-viscous"]
            words.append(f"friction ζv {zv:.4f}, D {drop:.2g}")
        dax.set_title(f"{d.mode} {d.frequency_hz:.0f} Hz: {d.chosen} chosen", fontsize=7.5, loc="left")
        dax.text(0.98, 0.96, "\n".join(words), transform=dax.transAxes, ha="right", va="top", fontsize=6,
                 gid=f"label:decay:{d.mode}",
                 bbox={"boxstyle": "square,pad=0.15", "fc": "white", "ec": "none", "alpha": 0.8})
        dax.tick_params(labelsize=6.5)
        dax.set_xlabel("time after the impact (ms)", fontsize=7)
        if i % ncol == 0:
            dax.set_ylabel("envelope (recording units)", fontsize=7)
        dax.grid(True, color="#E6E6E6", lw=0.5)
    # trace with impacts
    tax = fig.add_subplot(gs[-1, :])
    x = view.trace
    ch = int(np.argmax(np.sum(x * x, axis=0))) if x.ndim == 2 else None
    sig = x[:, ch] if ch is not None else x
    fs = view.sample_rate_hz
    step = max(1, sig.size // 6000)   # keep the drawing light; the peaks stay (min and max per block)
    n = sig.size // step * step
    blocks = sig[:n].reshape(-1, step)
    tt = np.repeat(np.arange(blocks.shape[0]) * step / fs, 2)
    yy = np.column_stack([blocks.min(axis=1), blocks.max(axis=1)]).ravel()
    tax.plot(tt, yy, color="#555555", lw=0.5, gid="trace", label="analysed trace (strongest channel)")
    amp = float(np.max(np.abs(sig))) if sig.size else 1.0
    on = np.asarray(view.impacts, dtype=int)
    tax.plot(on / fs, np.full(on.size, 1.08 * amp), ls="none", marker="v", color=_USED, ms=5, gid="impacts",
             label="impact used")
    if view.rejected:
        rej = np.array([r[0] for r in view.rejected])
        tax.plot(rej / fs, np.full(rej.size, 1.08 * amp), ls="none", marker="x", color=_REJECTED, ms=6, mew=1.4,
                 gid="rejected", label="impact left out: " + ", ".join(sorted({r[1] for r in view.rejected})))
    if not decays:
        tax.set_title("impacts found (no decay envelope drawn: no mode's free decay could be followed "
                      "once band-passed)", fontsize=7.5, loc="left")
    else:
        tax.set_title("impacts found", fontsize=7.5, loc="left")
    tax.set_ylim(-1.2 * amp, 1.25 * amp)
    tax.set_xlim(0, sig.size / fs)
    tax.set_xlabel("time (s)", fontsize=8)
    tax.set_ylabel("signal\n(recording units)", fontsize=8)
    tax.tick_params(labelsize=7)
    tax.legend(loc="lower right", fontsize=6.5, frameon=False, ncol=3)
    handles, names = [], []
    for a in dec_axes[:1]:
        for h, lab in zip(*a.get_legend_handles_labels()):
            handles.append(h)
            names.append(lab)
    if handles:
        fig.legend(handles, names, loc="outside upper right", fontsize=6.5, frameon=False, ncol=3)
    fig.text(0.995, 0.002, "Tap tests with the propellers removed. Design advice only.", fontsize=6, ha="right",
             va="bottom", color="#666666", gid="label:caution")
    if provenance:
        fig.text(0.005, 0.002, provenance, fontsize=6, ha="left", va="bottom", color="#666666",
                 gid="label:provenance")
    fig.canvas.draw()               # the constrained layout settles here ...
    fig.set_layout_engine("none")   # ... and is frozen for the placement pass
    renderer = fig.canvas.get_renderer()
    box = ax.get_window_extent(renderer)
    spread_labels(labels, renderer, "x", lo_px=box.x0, hi_px=box.x1 + 20)
    return fig


def save_tap_figure(path, result, decays=(), *, inputs=(), provenance: str | None = None) -> list:
    """Write the tap figure of ``result`` to ``path`` (PNG, SVG or PDF).

    Parameters
    ----------
    path : path-like
        Target file.
    result : ModesResult
        A tap analysis with its view.
    decays : sequence of DecayView
        From :func:`clashcheck.identify.views.decay_views` (computed by the caller).
    inputs : sequence of path-like
        Input files (never overwritten).
    provenance : str, optional
        Provenance line.

    Returns
    -------
    list of pathlib.Path
        The file written.
    """
    from pathlib import Path

    from ..files import write_output
    from .campbell import PLOT_FORMATS, _check_target

    suffix = Path(path).suffix.lower().lstrip(".")
    if suffix not in PLOT_FORMATS:
        raise InputError("--plot", "a file name ending in " + ", ".join("." + s for s in PLOT_FORMATS), str(path))
    _check_target(Path(path), inputs)
    write_output(path, figure_bytes(tap_figure(result, decays, provenance), suffix), inputs=inputs)
    return [Path(path)]
