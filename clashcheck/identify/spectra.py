"""Power spectral densities by Welch's method, one-shot or streamed.

:func:`welch_psd` wraps :func:`scipy.signal.welch` with the settings used
everywhere here (density scaling, Hann window, constant detrend, mean
average).  :class:`SegmentStream` computes the same segments from a recording
that arrives in blocks, with the overlap carried across block boundaries, so
the mean over the streamed segments equals a one-shot :func:`scipy.signal.welch`
of the whole run.  It does Welch's arithmetic (constant detrend, periodic Hann
window, density scaling) on numpy's FFT, so a long recording streams while
scipy is still loading.  :class:`WelchAverage` keeps that
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
    "hann_periodic",
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


def hann_periodic(n: int) -> np.ndarray:
    """The periodic Hann window of length ``n``, 0.5 − 0.5·cos(2πk/n).

    The same as ``scipy.signal.get_window("hann", n)`` (the DFT-even form used
    by :func:`scipy.signal.welch`), written out so that streaming spectra need
    no scipy import.

    Parameters
    ----------
    n : int
        Window length [samples].

    Returns
    -------
    ndarray
        The ``n`` window weights (float64, from 0 up to 1 at ``n/2``).

    Examples
    --------
    >>> hann_periodic(4).tolist()
    [0.0, 0.5, 1.0, 0.5]
    """
    return 0.5 - 0.5 * np.cos(2.0 * np.pi * np.arange(n) / n)


def segment_length(sample_rate_hz: float, resolution_hz: float) -> int:
    """Segment length giving at least the requested resolution.

    The length is rounded up to an even number of samples so that the FFT
    has a Nyquist bin.  The resolution is the bin spacing fs/nperseg.

    Parameters
    ----------
    sample_rate_hz : float
        Sample rate [Hz].
    resolution_hz : float
        Requested bin spacing [Hz], greater than 0.

    Returns
    -------
    int
        Segment length [samples], even, with fs/length no coarser than
        ``resolution_hz``.

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

    #: PSD per segment, shape (segments, channels, frequencies) [units²/Hz].
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
    (4, 1, 11)
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
        window = hann_periodic(self.nperseg)
        # density scaling and the one-sided doubling are folded into the window
        # (|FFT(c·x)|² = c²·|FFT(x)|²); the DC and Nyquist bins, which are not
        # doubled, are halved back after the FFT
        self._window = window * np.sqrt(2.0 / (self.fs * float(np.sum(window**2))))
        self._run: int | None = None
        self._buf: np.ndarray | None = None
        self._aux: np.ndarray | None = None
        self._pad: np.ndarray | None = None

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
        starts = np.arange(nseg) * self.hop
        yield Segments(self._periodograms(self._buf, nseg), self._aux_means(starts), run)
        keep = nseg * self.hop
        self._buf = self._buf[keep:].copy()
        self._aux = self._aux[keep:].copy()

    def _periodograms(self, buf: np.ndarray, nseg: int) -> np.ndarray:
        """Welch's modified periodograms of ``nseg`` segments, (segments, channels, freqs).

        The same arithmetic as :func:`scipy.signal.spectrogram` (constant detrend,
        density scaling, one-sided doubling) on numpy's FFT, so streaming needs no
        scipy import; the tests hold it against :func:`scipy.signal.welch`.
        """
        n = self.nperseg
        # all channels in one pass: frames (channels, segments, nperseg) as a view of
        # the channel-major samples, detrended into a zero-padded buffer, windowed in
        # place, one FFT call
        chans = np.ascontiguousarray(buf.T)
        frames = np.lib.stride_tricks.sliding_window_view(chans, n, axis=1)[:, :: self.hop][:, :nseg]
        seg = self._padded(frames.shape[0], nseg)
        head = seg[..., :n]
        np.subtract(frames, frames.mean(axis=-1, keepdims=True), out=head)
        head *= self._window
        spec = np.fft.rfft(seg, axis=-1)  # (channels, segments, freqs), C order
        parts = spec.view(np.float64)  # re, im, re, im, ...
        np.multiply(parts, parts, out=parts)
        power = np.add(parts[..., 0::2], parts[..., 1::2])
        power[..., 0] *= 0.5
        if self.nfft % 2 == 0:
            power[..., -1] *= 0.5
        power = power.transpose(1, 0, 2)  # (segments, channels, freqs), a view
        return power

    def _padded(self, nch: int, nseg: int) -> np.ndarray:
        """A zero-padded segment buffer (channels, nseg, nfft), kept between blocks.

        Only the first ``nperseg`` samples of each row are ever written, so the
        padding stays zero and the buffer is not cleared again.
        """
        pad = self._pad
        if pad is None or pad.shape[0] != nch or pad.shape[1] < nseg:
            pad = self._pad = np.zeros((nch, nseg, self.nfft))
        return pad[:, :nseg]

    def _aux_means(self, starts: np.ndarray) -> np.ndarray:
        aux, nseg = self._aux, starts.size
        if aux is None or not aux.shape[1]:
            return np.zeros((0, nseg))
        r, rest = divmod(self.nperseg, self.hop)
        if rest == 0:  # a segment is r whole hops: add the hops' sums (no running sum)
            hops = aux[: (nseg + r - 1) * self.hop].reshape(nseg + r - 1, self.hop, -1)
            hops = np.einsum("ijk->ik", hops)
            sums = hops[:nseg].copy()
            for i in range(1, r):
                sums += hops[i:i + nseg]
            return (sums / self.nperseg).T
        c = np.vstack([np.zeros((1, aux.shape[1])), np.cumsum(aux, axis=0)])
        return ((c[starts + self.nperseg] - c[starts]) / self.nperseg).T


class WelchAverage:
    """Running mean of segment periodograms: Welch's average, streamed.

    Examples
    --------
    >>> avg = WelchAverage()
    >>> avg.add(np.ones((2, 1, 3)))
    >>> avg.mean().tolist(), avg.count
    ([[1.0, 1.0, 1.0]], 2)
    """

    def __init__(self) -> None:
        self._sum: np.ndarray | None = None
        self.count = 0

    def add(self, psd: np.ndarray) -> None:
        """Add periodograms of shape (segments, channels, frequencies).

        Parameters
        ----------
        psd : ndarray
            Periodograms, shape (segments, channels, frequencies)
            [units²/Hz]; every call must have the same channels and
            frequencies.

        Returns
        -------
        None
            The running sum and :attr:`count` (segments added) are updated.
        """
        s = psd.sum(axis=0)
        self._sum = s if self._sum is None else self._sum + s
        self.count += psd.shape[0]

    def mean(self) -> np.ndarray:
        """Mean PSD, shape (channels, frequencies)."""
        if self._sum is None or self.count == 0:
            raise ValueError("no segments were added")
        return self._sum / self.count
