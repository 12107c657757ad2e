"""Figures of a recording analysis: the flight spectra (and time view) or the tap spectra."""

from __future__ import annotations

__all__ = ["save_recording_figures"]


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
