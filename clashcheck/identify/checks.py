"""Recording checks: timestamps, gaps, missing values, clipping, DC offset.

:class:`Conditioner` sits between a reader and the analysis.  It takes the
reader's blocks and hands on *runs*: stretches of clean, uniformly sampled
rows.  A new run starts after every gap or missing value, so no spectrum ever
spans one.  Along the way it measures what is wrong with the recording and
says so in plain words:

- **Timestamp jitter** (the spread of the sample intervals relative to their
  median).  Below :data:`JITTER_IGNORE` the samples are taken as uniform;
  up to :data:`JITTER_REFUSE` they are resampled onto a uniform grid by
  linear interpolation; above it the recording is refused.
- **Gaps** (an interval longer than 1.5 times the nominal one) and rows with
  missing values (NaN or blank cells): skipped, counted and reported.
- **Clipping**: samples at the converter's full scale (integer WAV) or, when
  the full scale is unknown, a flat top: the extreme value repeated far more
  often than its neighbour value.
- **DC offset** larger than the signal's own variation: reported; the spectra
  remove it segment by segment.

Two further checks need the analysis settings and live here as functions:
:func:`require_duration` and :func:`require_sample_rate`.
"""

from __future__ import annotations

import math
from collections.abc import Iterator
from dataclasses import dataclass, field

import numpy as np

from ..errors import RecordingError
from .readers import Block, Recording

__all__ = [
    "Run",
    "Findings",
    "Conditioner",
    "require_duration",
    "require_sample_rate",
    "JITTER_IGNORE",
    "JITTER_REFUSE",
    "GAP_FACTOR",
    "USABLE_BAND",
]

#: Relative timestamp jitter below which samples are taken as uniform.
JITTER_IGNORE = 1e-3
#: Relative timestamp jitter above which the recording is refused.
JITTER_REFUSE = 0.2
#: An interval longer than this many nominal intervals is a gap.
GAP_FACTOR = 1.5
#: Highest analysed frequency as a fraction of the sample rate (0.4 fs keeps
#: clear of the anti-alias filter's roll-off below Nyquist).
USABLE_BAND = 0.4


@dataclass
class Run:
    """Clean, uniformly sampled rows; ``run`` changes after every gap."""

    #: Run number, counting from 0.
    run: int
    #: 0-based data row of the first raw row this part came from.
    first_row: int
    #: Signals, shape (rows, channels).
    signals: np.ndarray
    #: Rotor rate [Hz] per row, or ``None``.
    rotor_hz: np.ndarray | None = None
    #: Throttle per row as read, or ``None``.
    throttle: np.ndarray | None = None
    #: Rotor rate [Hz] of each motor, (rows, motors), or ``None``.
    rotor_each_hz: np.ndarray | None = None


@dataclass
class Findings:
    """What the checks found; ``warnings`` holds one sentence per problem."""

    #: Sample rate [Hz].
    sample_rate_hz: float
    #: Clean rows handed on.
    rows_used: int = 0
    #: Rows read.
    rows_read: int = 0
    #: Rows dropped for missing values.
    rows_missing: int = 0
    #: Number of gaps in the timestamps.
    gaps: int = 0
    #: Relative timestamp jitter (std of intervals / nominal interval); 0 without timestamps.
    jitter: float = 0.0
    #: True when the samples were resampled onto a uniform grid.
    resampled: bool = False
    #: Clipped fraction per channel.
    clipped_fraction: tuple[float, ...] = ()
    #: Mean per channel (signal units).
    dc_offset: tuple[float, ...] = ()
    #: Standard deviation per channel (signal units).
    std: tuple[float, ...] = ()
    #: Plain-language warnings.
    warnings: list[str] = field(default_factory=list)

    @property
    def duration_s(self) -> float:
        """Duration of the clean rows [s]."""
        return self.rows_used / self.sample_rate_hz


class _Extremes:
    """Streaming top-two distinct values and their counts (for flat tops)."""

    def __init__(self) -> None:
        self.vals: list[tuple[float, int]] = []

    def add(self, x: np.ndarray) -> None:
        if x.size == 0:
            return
        top = np.max(x)
        c1 = int(np.count_nonzero(x == top))
        rest = x[x < top]
        cands = list(self.vals) + [(float(top), c1)]
        if rest.size:
            second = np.max(rest)
            cands.append((float(second), int(np.count_nonzero(rest == second))))
        merged: dict[float, int] = {}
        for v, c in cands:
            merged[v] = merged.get(v, 0) + c
        self.vals = sorted(merged.items(), reverse=True)[:2]

    def flat_top(self) -> int:
        """Samples at the extreme when it looks clipped, else 0."""
        if not self.vals:
            return 0
        c1 = self.vals[0][1]
        c2 = self.vals[1][1] if len(self.vals) > 1 else 0
        return c1 if c1 >= 3 and c1 > 3 * max(c2, 1) else 0


class Conditioner:
    """Check a recording block by block and hand on clean runs.

    Parameters
    ----------
    recording : Recording
        The opened recording.

    Examples
    --------
    >>> cond = Conditioner(rec)                       # doctest: +SKIP
    >>> for block in rec.blocks():                    # doctest: +SKIP
    ...     for run in cond.feed(block): ...
    >>> findings = cond.finish()                      # doctest: +SKIP
    """

    def __init__(self, recording: Recording) -> None:
        self.rec = recording
        self.fs: float | None = recording.sample_rate_hz
        self._dt: float | None = None if self.fs is None else 1.0 / self.fs
        self._run = 0
        self._rows_read = 0
        self._rows_used = 0
        self._missing = 0
        self._gaps = 0
        self._longest_gap = (0.0, 0)
        self._first_missing: int | None = None
        self._dt_n = 0
        self._dt_sum = 0.0
        self._dt_sq = 0.0
        self._resample: bool | None = None
        self._carry: tuple[float, _Parts, int] | None = None  # (t, row values, data row)
        self._grid_next: float | None = None
        self._nch = len(recording.signal_names)
        self._sum = np.zeros(self._nch)
        self._sq = np.zeros(self._nch)
        self._fs_clip = np.zeros(self._nch, dtype=np.int64)
        self._hi = [_Extremes() for _ in range(self._nch)]
        self._lo = [_Extremes() for _ in range(self._nch)]
        self._last_t: float | None = None
        self._clip_rows = 0

    # ------------------------------------------------------------ public
    @property
    def sample_rate_hz(self) -> float | None:
        """Sample rate [Hz], known after the first block at the latest."""
        return self.fs

    def feed(self, block: Block) -> Iterator[Run]:
        """Check one block; yield the clean runs it holds."""
        n = block.signals.shape[0]
        self._rows_read += n
        if n == 0:
            return
        parts = _Parts(block.signals, block.rotor_hz, block.throttle, block.rotor_each_hz)
        bad = _bad_rows(block)
        if bad is not None:
            self._missing += int(bad.sum())
            if self._first_missing is None:
                self._first_missing = block.first_row + int(np.argmax(bad))
        if block.time_s is None:
            yield from self._uniform(block.first_row, parts, bad)
        else:
            yield from self._timed(block.first_row, block.time_s, parts, bad)

    def finish(self) -> Findings:
        """Close the checks and return what they found."""
        if self.fs is None:
            raise RecordingError(self.rec.path, "", "the file holds no usable rows")
        f = Findings(self.fs, self._rows_used, self._rows_read, self._missing, self._gaps)
        name = self.rec.path
        if self._rows_used == 0:
            raise RecordingError(name, "", "no usable rows: every row has a missing value")
        if self._dt_n > 1:
            mean = self._dt_sum / self._dt_n
            var = max(self._dt_sq / self._dt_n - mean**2, 0.0)
            f.jitter = math.sqrt(var) / self._dt
            f.resampled = bool(self._resample)
        if f.resampled:
            f.warnings.append(
                f"timestamps jitter by {100 * f.jitter:.2g} % of the sample interval; "
                f"the samples were resampled onto a uniform {self.fs:.1f} Hz grid"
            )
        if self._missing:
            row = (self._first_missing or 0) + 2 if self.rec.format == "csv" else self._first_missing
            f.warnings.append(
                f"{self._missing} rows ({100 * self._missing / self._rows_read:.2g} %) have "
                f"missing values (first at row {row}); they are skipped and no spectrum spans them"
            )
        if self._gaps:
            length, row = self._longest_gap
            where = f"row {row + 2}" if self.rec.format == "csv" else f"sample {row}"
            f.warnings.append(
                f"{self._gaps} gaps in the timestamps (longest {length:.3g} s, at {where}); "
                "no spectrum spans a gap"
            )
        n = max(self._rows_used, 1)
        mean = self._sum / n
        std = np.sqrt(np.maximum(self._sq / n - mean**2, 0.0))
        f.dc_offset = tuple(float(m) for m in mean)
        f.std = tuple(float(s) for s in std)
        clipped = []
        for k in range(self._nch):
            if self.rec.full_scale is not None:
                count = int(self._fs_clip[k])
                clipped.append(count / n)
            else:
                count = self._hi[k].flat_top() + self._lo[k].flat_top()
                clipped.append(count / max(self._clip_rows, 1))
        f.clipped_fraction = tuple(clipped)
        for k, frac in enumerate(clipped):
            chan = self.rec.signal_names[k]
            if frac > 0:
                f.warnings.append(
                    f"signal {chan}: {100 * frac:.3g} % of the samples are clipped; peaks and "
                    "damping near strong modes may be distorted"
                )
            if std[k] > 0 and abs(mean[k]) > std[k]:
                f.warnings.append(
                    f"signal {chan}: DC offset {mean[k]:.4g} is {abs(mean[k]) / std[k]:.2g} times "
                    "its variation; it is removed from each segment before the spectra"
                )
            if std[k] == 0:
                f.warnings.append(f"signal {chan} is constant; it holds no vibration")
        return f

    # ------------------------------------------------------------ helpers
    def _account(self, sig: np.ndarray) -> None:
        self._rows_used += sig.shape[0]
        self._sum += sig.sum(axis=0)
        self._sq += np.einsum("ij,ij->j", sig, sig)
        if self.rec.full_scale is not None:
            level = self.rec.full_scale * (1.0 - 5e-5)
            self._fs_clip += np.count_nonzero(np.abs(sig) >= level, axis=0)
        else:
            # flat tops show as many samples at the extreme: every 4th sample of a
            # long block estimates the clipped share as well, at a quarter of the cost
            step = 4 if sig.shape[0] > 65536 else 1
            self._clip_rows += -(-sig.shape[0] // step)
            for k in range(self._nch):
                col = sig[::step, k]
                self._hi[k].add(col)
                self._lo[k].add(-col)

    def _emit(self, first_row: int, parts: _Parts) -> Run:
        self._account(parts.signals)
        return Run(self._run, first_row, parts.signals, parts.rotor_hz, parts.throttle,
                   parts.rotor_each)

    def _uniform(self, first_row: int, parts: _Parts, bad: np.ndarray | None) -> Iterator[Run]:
        if bad is None:
            yield self._emit(first_row, parts)
            return
        # split at missing rows; each missing stretch starts a new run
        edges = np.flatnonzero(np.diff(np.r_[0, (~bad).astype(np.int8), 0]))
        for a, b in zip(edges[::2], edges[1::2]):
            if a > 0:
                self._break()
            yield self._emit(first_row + int(a), parts[a:b])
        if bad[-1]:
            self._break()

    def _timed(self, first_row: int, t: np.ndarray, parts: _Parts,
               bad: np.ndarray | None) -> Iterator[Run]:
        # data rows of the kept samples; None while they are first_row, first_row + 1, ...
        rows: np.ndarray | None = None
        if bad is not None:
            keep = ~bad
            t, parts, rows = t[keep], parts[keep], np.flatnonzero(keep) + first_row
        if t.size == 0:
            self._break()
            return
        if self._dt is None:
            d = np.diff(t)
            d = d[d > 0]
            if d.size == 0:
                raise RecordingError(self.rec.path, _row(self.rec, first_row if rows is None
                                                         else rows[0]),
                                     "too few distinct timestamps to find the sample rate")
            d0 = float(np.median(d))
            steady = d[d <= GAP_FACTOR * d0]
            self._dt = float(steady.mean())  # the mean interval: unbiased under jitter
            self.fs = 1.0 / self._dt
        # with the carried last sample of the previous block in front ("extended"
        # indices), the intervals span the block boundary
        carry = self._carry
        off = 1 if carry is not None else 0
        if carry is not None:
            text = np.empty(t.size + 1)
            text[0] = carry[0]
            text[1:] = t
        else:
            text = t

        def row_at(e: int) -> int:
            """Data row of extended index ``e``."""
            if carry is not None and e == 0:
                return carry[2]
            return int(first_row + e - off if rows is None else rows[e - off])

        d = np.diff(text)
        back = np.flatnonzero(d <= 0)
        if back.size:
            i = int(back[0]) + 1
            what = "repeats" if d[back[0]] == 0 else "goes backwards"
            raise RecordingError(self.rec.path, _row(self.rec, row_at(i)),
                                 f"the time {what} ({text[i - 1]:.9g} s, then {text[i]:.9g} s)")
        brk = d > GAP_FACTOR * self._dt
        if brk.any():
            self._gaps += int(brk.sum())
            k = int(np.argmax(np.where(brk, d, 0.0)))
            if d[k] > self._longest_gap[0]:
                self._longest_gap = (float(d[k]), row_at(k + 1))
        if rows is not None:  # a dropped row between two kept ones also breaks the run
            rows_ext = rows if carry is None else np.r_[carry[2], rows]
            brk |= np.diff(rows_ext) > 1
        broken = bool(brk.any())
        ok = d[~brk] if broken else d
        if ok.size:
            # einsum, not np.dot: BLAS's idle threads would spin beside the CSV reader
            n_ok, s_ok, q_ok = ok.size, float(ok.sum()), float(np.einsum("i,i->", ok, ok))
            self._dt_n += n_ok
            self._dt_sum += s_ok
            self._dt_sq += q_ok
            rel = math.sqrt(max(q_ok / n_ok - (s_ok / n_ok) ** 2, 0.0)) / self._dt
            if rel > JITTER_REFUSE:
                raise RecordingError(
                    self.rec.path,
                    f"rows {_row(self.rec, row_at(0))[4:]}–{_row(self.rec, row_at(text.size - 1))[4:]}",
                    f"timestamps jitter by {100 * rel:.3g} % of the sample interval, more than "
                    f"the {100 * JITTER_REFUSE:.0f} % that resampling can honestly repair",
                )
            if self._resample is None:
                self._resample = rel > JITTER_IGNORE
            elif rel > JITTER_IGNORE:
                self._resample = True
        # split into continuous pieces (extended indices)
        bounds = np.r_[0, np.flatnonzero(brk) + 1, text.size] if broken else (0, text.size)
        for j in range(len(bounds) - 1):
            a, b = int(bounds[j]), int(bounds[j + 1])
            if j > 0:
                self._break()
            with_carry = carry is not None and j == 0  # its sample was handed on already
            yield from self._piece(text[a:b], parts, a - off, b - off, row_at(a), with_carry)
        self._carry = (float(text[-1]), parts[parts.signals.shape[0] - 1:], row_at(text.size - 1))

    def _piece(self, t: np.ndarray, parts: _Parts, a: int, b: int, first_row: int,
               with_carry: bool) -> Iterator[Run]:
        """Hand on block rows ``a:b`` (times ``t``; ``a`` is -1 for the carried sample)."""
        if not self._resample:
            a = max(a, 0)
            if b > a:
                yield self._emit(first_row if not with_carry else first_row + 1, parts[a:b])
            return
        if self._grid_next is None or not with_carry:
            self._grid_next = float(t[0])
        start = self._grid_next
        if t[-1] < start:
            return
        values = parts[max(a, 0):b].stacked()
        if a < 0:  # the carried sample leads this piece
            values = np.vstack([self._carry[1].stacked(), values])
        count = int(math.floor((t[-1] - start) / self._dt + 1e-9)) + 1
        grid = start + self._dt * np.arange(count)
        out = np.empty((count, values.shape[1]))
        for k in range(values.shape[1]):
            out[:, k] = np.interp(grid, t, values[:, k])
        self._grid_next = start + self._dt * count
        yield self._emit(first_row, parts.unstacked(out))

    def _break(self) -> None:
        self._run += 1
        self._grid_next = None


@dataclass
class _Parts:
    """The per-row arrays of a block, sliced and indexed together."""

    signals: np.ndarray
    rotor_hz: np.ndarray | None
    throttle: np.ndarray | None
    rotor_each: np.ndarray | None = None

    def __getitem__(self, index) -> _Parts:
        return _Parts(self.signals[index],
                      None if self.rotor_hz is None else self.rotor_hz[index],
                      None if self.throttle is None else self.throttle[index],
                      None if self.rotor_each is None else self.rotor_each[index])

    def stacked(self) -> np.ndarray:
        """One (rows, columns) array: signals, rotor rate, throttle, each motor's rate."""
        extra = [a[:, None] for a in (self.rotor_hz, self.throttle) if a is not None]
        if self.rotor_each is not None:
            extra.append(self.rotor_each)
        return np.hstack([self.signals, *extra]) if extra else self.signals

    def unstacked(self, values: np.ndarray) -> _Parts:
        """The inverse of :meth:`stacked` for an array of the same columns."""
        nsig = self.signals.shape[1]
        col = iter(range(nsig, values.shape[1]))
        rotor = None if self.rotor_hz is None else values[:, next(col)]
        thr = None if self.throttle is None else values[:, next(col)]
        each = None
        if self.rotor_each is not None:
            first = next(col)
            each = values[:, first:first + self.rotor_each.shape[1]]
        return _Parts(np.ascontiguousarray(values[:, :nsig]), rotor, thr, each)


def _bad_rows(block: Block) -> np.ndarray | None:
    """Rows with a missing value (NaN, ±inf) in any used column; ``None`` when there are none."""
    arrays = [a for a in (block.signals, block.rotor_hz, block.throttle, block.time_s)
              if a is not None]
    if all(np.isfinite(a).all() for a in arrays):  # the common case: whole-array checks
        return None
    bad = ~np.isfinite(block.signals).all(axis=1)
    for a in arrays[1:]:
        bad |= ~np.isfinite(a)
    return bad


def _row(rec: Recording, data_row: int) -> str:
    """Location text of a data row: file row for CSV (header is row 1), else sample."""
    if rec.format == "csv":
        return f"row {int(data_row) + 2}"
    return f"row {int(data_row)}"


def require_duration(path: str, have_s: float, need_s: float, what: str) -> None:
    """Refuse a recording shorter than an analysis needs.

    Parameters
    ----------
    path : str
        The recording (for the message).
    have_s : float
        Usable duration [s].
    need_s : float
        Duration the analysis needs [s].
    what : str
        Why, e.g. ``"a resolution of 0.5 Hz with 8 averages"``.

    Raises
    ------
    RecordingError
        If ``have_s < need_s``; the message gives the duration needed.
    """
    if have_s < need_s:
        raise RecordingError(
            path, "", f"the recording has {have_s:.3g} s of usable data; {what} needs "
            f"at least {need_s:.3g} s"
        )


def require_sample_rate(path: str, sample_rate_hz: float, max_freq_hz: float) -> None:
    """Refuse a sample rate too low for the highest mode asked about.

    Frequencies up to :data:`USABLE_BAND` × fs are analysed.

    Raises
    ------
    RecordingError
        If ``max_freq_hz > USABLE_BAND * sample_rate_hz``; the message gives
        the rate needed.
    """
    if max_freq_hz > USABLE_BAND * sample_rate_hz:
        raise RecordingError(
            path, "", f"sampled at {sample_rate_hz:g} Hz, too slow for modes up to "
            f"{max_freq_hz:g} Hz; that needs at least {max_freq_hz / USABLE_BAND:g} Hz "
            f"(or lower --max-frequency to {USABLE_BAND * sample_rate_hz:g} Hz)"
        )
