"""Power spectral densities by Welch's method, one-shot or streamed.

:func:`welch_psd` wraps :func:`scipy.signal.welch` with the settings used
everywhere here (density scaling, Hann window, constant detrend, mean
average).  :class:`SegmentStream` computes the same segments from a recording
that arrives in blocks: each block goes through :func:`scipy.signal.spectrogram`
(which returns Welch's per-segment periodograms) with the overlap carried across
block boundaries, so the mean over the streamed segments equals a one-shot
:func:`scipy.signal.welch` of the whole run.  :class:`WelchAverage` keeps that
mean.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass

import numpy as np

__all__ = [
    "welch_psd",
    "segment_length",
    "SegmentStream",
    "Segments",
    "WelchAverage",
    "WINDOW",
]

#: Spectral window used by every spectrum here.
WINDOW = "hann"


def welch_psd(
    x: np.ndarray,
    sample_rate_hz: float,
    nperseg: int,
    noverlap: int | None = None,
    nfft: int | None = None,
    axis: int = -1,
) -> tuple[np.ndarray, np.ndarray]:
    """One-sided power spectral density by Welch's method.

    Parameters
    ----------
    x : array_like
        Samples (signal units).
    sample_rate_hz : float
        Sample rate [Hz].
    nperseg : int
        Segment length [samples].
    noverlap : int, optional
        Overlap [samples]; half a segment by default.
    nfft : int, optional
        FFT length [samples] (zero padding); ``nperseg`` by default.
    axis : int
        Time axis of ``x``.

    Returns
    -------
    freq_hz : ndarray
        Frequencies [Hz].
    psd : ndarray
        PSD [signal units² / Hz].

    Examples
    --------
    >>> f, p = welch_psd(np.ones(64), 64.0, 16)
    >>> float(f[1]), float(p.max())
    (4.0, 0.0)
    """
    from scipy import signal

    return signal.welch(
        np.asarray(x, dtype=np.float64), fs=sample_rate_hz, window=WINDOW, nperseg=nperseg,
        noverlap=noverlap, nfft=nfft, detrend="constant", scaling="density", axis=axis,
        average="mean",
    )


def segment_length(sample_rate_hz: float, resolution_hz: float) -> int:
    """Segment length giving at least the requested resolution.

    The length is rounded up to an even number of samples so that the FFT
    has a Nyquist bin.  The resolution is the bin spacing fs/nperseg.

    Examples
    --------
    >>> segment_length(8000.0, 1.0)
    8000
    """
    n = int(np.ceil(sample_rate_hz / resolution_hz - 1e-6))
    return n + (n % 2)


@dataclass
class Segments:
    """Periodograms of consecutive Welch segments from one block."""

    #: PSD per segment, shape (channels, frequencies, segments) [units²/Hz].
    psd: np.ndarray
    #: Mean of each auxiliary series over each segment, shape (series, segments).
    aux_mean: np.ndarray
    #: Run number of these segments.
    run: int


class SegmentStream:
    """Cut streamed runs into Welch segments; hand on their periodograms.

    Parameters
    ----------
    sample_rate_hz : float
        Sample rate [Hz].
    nperseg : int
        Segment length [samples].
    noverlap : int, optional
        Overlap [samples]; half a segment by default.
    nfft : int, optional
        FFT length [samples]; ``nperseg`` by default.

    Examples
    --------
    >>> s = SegmentStream(100.0, 20)
    >>> out = list(s.feed(0, np.zeros((50, 1))))
    >>> out[0].psd.shape
    (1, 11, 4)
    """

    def __init__(self, sample_rate_hz: float, nperseg: int, noverlap: int | None = None,
                 nfft: int | None = None) -> None:
        self.fs = float(sample_rate_hz)
        self.nperseg = int(nperseg)
        self.noverlap = self.nperseg // 2 if noverlap is None else int(noverlap)
        if not 0 <= self.noverlap < self.nperseg:
            raise ValueError("noverlap must be in [0, nperseg)")
        self.nfft = self.nperseg if nfft is None else int(nfft)
        self.hop = self.nperseg - self.noverlap
        self.freq_hz = np.fft.rfftfreq(self.nfft, 1.0 / self.fs)
        self._run: int | None = None
        self._buf: np.ndarray | None = None
        self._aux: np.ndarray | None = None

    def feed(self, run: int, x: np.ndarray, aux: np.ndarray | None = None) -> Iterator[Segments]:
        """Add samples of run ``run``; yield the segments they complete.

        Parameters
        ----------
        run : int
            Run number; a new number drops the unfinished segment of the last run.
        x : ndarray
            Samples, shape (rows, channels).
        aux : ndarray, optional
            Auxiliary series per row, shape (rows, series), averaged per segment
            (e.g. rotor rate [Hz]).
        """
        from scipy import signal

        x = np.asarray(x, dtype=np.float64)
        if aux is None:
            aux = np.zeros((x.shape[0], 0))
        if run != self._run or self._buf is None:
            self._run = run
            self._buf = x
            self._aux = aux
        else:
            self._buf = np.concatenate([self._buf, x])
            self._aux = np.concatenate([self._aux, aux])
        n = self._buf.shape[0]
        if n < self.nperseg:
            return
        nseg = (n - self.noverlap) // self.hop
        used = self.noverlap + nseg * self.hop
        _f, _t, sxx = signal.spectrogram(
            self._buf[:used].T, fs=self.fs, window=WINDOW, nperseg=self.nperseg,
            noverlap=self.noverlap, nfft=self.nfft, detrend="constant", scaling="density",
            mode="psd", axis=-1,
        )
        starts = np.arange(nseg) * self.hop
        if self._aux.shape[1]:
            c = np.vstack([np.zeros((1, self._aux.shape[1])), np.cumsum(self._aux, axis=0)])
            aux_mean = ((c[starts + self.nperseg] - c[starts]) / self.nperseg).T
        else:
            aux_mean = np.zeros((0, nseg))
        keep = nseg * self.hop
        self._buf = self._buf[keep:].copy()
        self._aux = self._aux[keep:].copy()
        yield Segments(sxx, aux_mean, run)


class WelchAverage:
    """Running mean of segment periodograms: Welch's average, streamed.

    Examples
    --------
    >>> avg = WelchAverage()
    >>> avg.add(np.ones((1, 3, 2)))
    >>> avg.mean().tolist(), avg.count
    ([[1.0, 1.0, 1.0]], 2)
    """

    def __init__(self) -> None:
        self._sum: np.ndarray | None = None
        self.count = 0

    def add(self, psd: np.ndarray) -> None:
        """Add periodograms of shape (channels, frequencies, segments)."""
        s = psd.sum(axis=-1)
        self._sum = s if self._sum is None else self._sum + s
        self.count += psd.shape[-1]

    def mean(self) -> np.ndarray:
        """Mean PSD, shape (channels, frequencies)."""
        if self._sum is None or self.count == 0:
            raise ValueError("no segments were added")
        return self._sum / self.count
