"""What the figures of a recording analysis show, kept by the analysis (no drawing here).

- :class:`Timeline`: a bounded spectrogram against time, filled while a flight
  recording streams (adjacent columns are merged in pairs when it is full, so
  it never holds more than :data:`MAX_COLUMNS` columns);
- :class:`FlightView`: the binned spectra (per rotor-rate or throttle bin and
  axis), the stationary (median) spectrum, its floor, and the timeline;
- :class:`TapView`: the averaged impact spectrum, its floor and noise, the
  analysed trace with the impacts found (kept and rejected, with the reason);
- :func:`decay_views`: per mode, the cycle-averaged decay envelopes of the taps
  and the fitted decays (viscous and friction-viscous) evaluated on them.

numpy only at import; scipy is imported inside :func:`decay_views`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

__all__ = ["MAX_COLUMNS", "Timeline", "FlightView", "TapView", "DecayView", "decay_views", "flight_view"]

#: Most time columns a :class:`Timeline` keeps.
MAX_COLUMNS = 480


class Timeline:
    """Spectrogram against time, summed over axes, with a bounded number of columns.

    Parameters
    ----------
    hop_s : float
        Time between successive Welch segments [s].
    """

    def __init__(self, hop_s: float) -> None:
        self.hop_s = float(hop_s)
        self.per_column = 1          # segments per column
        self.columns: list[np.ndarray] = []
        self.aux: list[float] = []
        self.filled: list[int] = []
        self.segments = 0

    def add(self, psd: np.ndarray, aux: np.ndarray) -> None:
        """Add segments in time order.

        Parameters
        ----------
        psd : ndarray, shape (segments, frequencies)
            Band PSD of each segment, summed over axes [units²/Hz].
        aux : ndarray, shape (segments,)
            Rotor rate [Hz] or throttle [fraction] of each segment.
        """
        for row, a in zip(psd, aux):
            if self.filled and self.filled[-1] < self.per_column:
                self.columns[-1] = self.columns[-1] + row
                self.aux[-1] += float(a)
                self.filled[-1] += 1
            else:
                self.columns.append(np.array(row, dtype=float))
                self.aux.append(float(a))
                self.filled.append(1)
            self.segments += 1
            if len(self.columns) > MAX_COLUMNS:
                self._halve()

    def _halve(self) -> None:
        cols, aux, fill = [], [], []
        for i in range(0, len(self.columns) - 1, 2):
            cols.append(self.columns[i] + self.columns[i + 1])
            aux.append(self.aux[i] + self.aux[i + 1])
            fill.append(self.filled[i] + self.filled[i + 1])
        if len(self.columns) % 2:
            cols.append(self.columns[-1])
            aux.append(self.aux[-1])
            fill.append(self.filled[-1])
        self.columns, self.aux, self.filled = cols, aux, fill
        self.per_column *= 2

    def arrays(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Column mid-times [s], mean PSD per column (time, frequency), mean aux per column.

        Returns
        -------
        tuple of ndarray
        """
        if not self.columns:
            return np.zeros(0), np.zeros((0, 0)), np.zeros(0)
        fill = np.asarray(self.filled, dtype=float)
        start = np.r_[0.0, np.cumsum(fill)[:-1]]
        times = (start + 0.5 * fill) * self.hop_s
        return times, np.stack(self.columns) / fill[:, None], np.asarray(self.aux) / fill


@dataclass(frozen=True)
class FlightView:
    """The spectra behind a flight analysis, for its figures."""

    #: Frequencies of the analysed band [Hz].
    freq_hz: np.ndarray
    #: Bin values: mean rotor rate [Hz] (``rotor_known``) or throttle [fraction], ascending.
    bin_values: np.ndarray
    #: Segments per bin.
    bin_counts: np.ndarray
    #: Whether the bins are by rotor rate (else by throttle).
    rotor_known: bool
    #: Per bin and axis: the bin's mean spectrum over its own level, shape (bins, axes, f).
    binned: np.ndarray
    #: The stationary (median over bins) spectrum per axis, shape (axes, f).
    stationary: np.ndarray
    #: Its estimated noise floor per axis, shape (axes, f).
    floor: np.ndarray
    #: Axis names.
    axes: tuple[str, ...]
    #: Order number → family, for the order lines.
    families: dict[float, str]
    #: Timeline: column times [s], PSD (time, f) summed over axes, rotor rate [Hz] or throttle.
    times_s: np.ndarray = field(default_factory=lambda: np.zeros(0))
    spectrogram: np.ndarray = field(default_factory=lambda: np.zeros((0, 0)))
    trace: np.ndarray = field(default_factory=lambda: np.zeros(0))
    #: Whether :attr:`trace` is a rotor rate (else a throttle).
    trace_is_rotor: bool = True
    #: What the bins are by, in words.
    bin_source: str = "rotor rate"
    #: Where the trace comes from: ``"logged"``, ``"drive model"`` or ``"throttle"``.
    trace_source: str = "logged"


def flight_view(freq_hz, bin_values, bin_counts, rotor_known: bool, binned, stationary, axes, families,
                timeline: Timeline | None, bin_source: str = "rotor rate",
                trace_source: str = "logged") -> FlightView:
    """The :class:`FlightView` of a flight analysis (its floor estimated per axis).

    Parameters
    ----------
    freq_hz : ndarray
        Frequencies of the analysed band [Hz].
    bin_values, bin_counts : ndarray
        Bin values (rotor rate [Hz] or throttle [fraction]) and segments per bin.
    rotor_known : bool
        Whether the bins are by rotor rate.
    binned : ndarray, shape (bins, axes, f)
        Per-bin spectra over their levels.
    stationary : ndarray, shape (axes, f)
        The median spectrum.
    axes : sequence of str
        Axis names.
    families : dict
        Order number → family.
    timeline : Timeline or None
        The spectrogram against time.
    bin_source : str
        What the bins are by, in words (e.g. ``"rotor rate estimated from the log"``).
    trace_source : str
        Where the timeline's trace comes from: ``"logged"``, ``"drive model"`` or ``"throttle"``.

    Returns
    -------
    FlightView
    """
    from .peaks import noise_floor

    freq = np.asarray(freq_hz, dtype=float)
    stat = np.asarray(stationary, dtype=float)
    floor = np.stack([noise_floor(freq, s) for s in stat])
    order = np.argsort(np.asarray(bin_values, dtype=float))
    times, spec, trace = timeline.arrays() if timeline is not None else (np.zeros(0), np.zeros((0, 0)),
                                                                          np.zeros(0))
    return FlightView(freq, np.asarray(bin_values, dtype=float)[order], np.asarray(bin_counts)[order],
                      bool(rotor_known), np.asarray(binned, dtype=float)[order], stat, floor, tuple(axes),
                      dict(families), times, spec, trace, trace_source != "throttle", bin_source, trace_source)


@dataclass(frozen=True)
class TapView:
    """The spectrum and trace behind a tap analysis, for its figure."""

    #: Frequencies of the analysed band [Hz].
    freq_hz: np.ndarray
    #: Averaged impact spectrum, summed over channels [units²/Hz].
    spectrum: np.ndarray
    #: Floor estimated from the spectrum [units²/Hz].
    floor: np.ndarray
    #: Noise spectrum from the quiet lead-in [units²/Hz], or ``None``.
    noise: np.ndarray | None
    #: Sample rate [Hz].
    sample_rate_hz: float
    #: The analysed trace (the longest clean stretch, median removed), shape (samples, channels).
    trace: np.ndarray
    #: Impact onsets used [samples].
    impacts: np.ndarray
    #: Onsets found but left out [samples], and why (e.g. ``"double hit"``, ``"clipped"``).
    rejected: tuple[tuple[int, str], ...] = ()
    #: Samples kept before each onset.
    pre: int = 0


@dataclass(frozen=True)
class DecayView:
    """One mode's decay envelopes and fitted decays."""

    #: Mode name.
    mode: str
    #: Mode frequency (refined) [Hz].
    frequency_hz: float
    #: Per tap: block times [s] and envelope amplitudes [signal units].
    envelopes: tuple[tuple[np.ndarray, np.ndarray], ...]
    #: Per model name (``viscous``, ``friction-viscous``): per tap the fitted amplitudes on the same times.
    fitted: dict[str, tuple[np.ndarray, ...]]
    #: Per model name: its damping parameters, e.g. ``{"viscous": (ζ,), "friction-viscous": (ζ_v, D)}``.
    params: dict[str, tuple[float, ...]]
    #: The model the analysis chose.
    chosen: str


def decay_views(view: TapView, modes) -> tuple[DecayView, ...]:
    """Decay envelopes and fitted decays of each mode with a damping-against-amplitude result.

    The envelopes are those of :func:`~.decay.cycle_envelopes`, the fits those
    of :func:`~.decay.fit_decay_models` (the same band-pass and the same
    models as the analysis); each tap's starting amplitude is then the least
    squares projection of its envelope on the fitted shape.

    Parameters
    ----------
    view : TapView
        The tap analysis' view.
    modes : sequence of MeasuredMode
        The modes found.

    Returns
    -------
    tuple of DecayView
        For the modes whose decay could be followed.
    """
    from .decay import _shape, cycle_envelopes, fit_decay_models, isolation_bands

    x = view.trace
    if x.ndim == 2:
        x = x[:, int(np.argmax(np.sum(x * x, axis=0)))]
    on = np.asarray(view.impacts, dtype=int)
    pre = view.pre
    usable = [m for m in modes if m.amplitude_damping is not None]
    if on.size == 0 or not usable:
        return ()
    ends = np.r_[on[1:], x.size]
    length = int(np.min(ends - on)) + pre
    segs = np.stack([x[o - pre:o - pre + length] for o in on if o - pre >= 0 and o - pre + length <= x.size])
    lead = x[: max(0, int(on[0]) - pre)]
    fs = view.sample_rate_hz
    all_f = [m.frequency_hz for m in modes]
    bands = dict(zip((m.name for m in modes), isolation_bands(all_f, 0.5 * fs)))
    out = []
    for m in usable:
        try:
            envs, f_ref, _noise = cycle_envelopes(segs, fs, m.frequency_hz, bands[m.name], pre,
                                                  lead if lead.size else None)
            if not envs:
                continue
            fits = fit_decay_models(envs, f_ref)
        except (ValueError, np.linalg.LinAlgError):
            continue
        omega = 2 * math.pi * f_ref
        fitted, params = {}, {}
        for name in ("viscous", "friction-viscous"):
            fit = fits.get(name)
            if fit is None:
                continue
            theta = np.asarray(fit.params)
            curves = []
            for t, a in envs:
                unit = _shape(name, theta, np.ones(1), t, omega, 1.0)
                offset = _shape(name, theta, np.zeros(1), t, omega, 1.0)  # the friction part alone
                a0 = float(np.sum((a - offset) * (unit - offset)) / max(np.sum((unit - offset) ** 2), 1e-300))
                curves.append(_shape(name, theta, np.full(1, a0), t, omega, 1.0))
            fitted[name] = tuple(curves)
            params[name] = tuple(fit.params)
        out.append(DecayView(m.name, float(f_ref), tuple(envs), fitted, params, m.amplitude_damping.model))
    return tuple(out)
