"""Figures of a recording analysis: the flight spectra (and time view) or the tap spectra."""

from __future__ import annotations

__all__ = ["save_recording_figures", "check_plot_target"]


def save_recording_figures(path, result, *, decays=(), inputs=(), provenance: str | None = None) -> list:
    """Write the figures of ``result`` (tap or flight) to ``path`` (a flight adds ``<stem>-time``).

    Parameters
    ----------
    path : path-like
        Target file (.png, .svg or .pdf).
    result : ModesResult
        A tap or flight analysis with its view.
    decays : sequence of DecayView
        Tap tests: the modes' decays (:func:`clashcheck.identify.views.decay_views`).
    inputs : sequence of path-like
        Input files (never overwritten).
    provenance : str, optional
        Provenance line printed in small type.

    Returns
    -------
    list of pathlib.Path
        The files written.
    """
    if result.kind == "flight":
        from .flight_figure import save_flight_figures

        return save_flight_figures(path, result, inputs=inputs, provenance=provenance)
    from .tap_figure import save_tap_figure

    return save_tap_figure(path, result, decays, inputs=inputs, provenance=provenance)


def check_plot_target(path, inputs=(), kind: str = "tap") -> None:
    """Refuse a figure path before the analysis: wrong suffix, missing folder, or an input's path.

    Parameters
    ----------
    path : path-like
        The figure's file.
    inputs : sequence of path-like
        Input files (never overwritten).
    kind : str
        ``tap`` or ``flight`` (a flight also writes the time view beside ``path``).

    Raises
    ------
    InputError
        For a suffix other than .png, .svg or .pdf.
    OutputError
        When a target cannot be written or is an input.
    """
    from pathlib import Path

    from ..errors import InputError
    from ..files import check_target
    from .campbell import PLOT_FORMATS

    if Path(path).suffix.lower().lstrip(".") not in PLOT_FORMATS:
        raise InputError("--plot", "a file name ending in " + ", ".join("." + s for s in PLOT_FORMATS), str(path))
    check_target(Path(path), inputs)
    if kind == "flight":
        from .flight_figure import time_path

        check_target(time_path(path), inputs)
