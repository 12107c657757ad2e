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
- **Rounded timestamps.**  Exports print times with a fixed number of
  decimals (0.1 ms, integer µs or ms) or of significant digits, which makes
  uniform samples look jittery, or even repeat a time.  The printed precision
  ``q`` is found from the values themselves (the coarsest power of ten, fixed
  or relative to the value, that every time is a multiple of).  When every
  time lies within ``q/2`` of a straight line through the sample index, the
  samples are uniform to within their printing: the fitted rate is used and
  nothing is resampled (interpolating at rounded times would make false
  lines).  Both figures are reported: the apparent jitter and the real jitter
  left once the rounding's own share (``q²/12``) is taken out.
- **Throttle units.**  A throttle column may hold a fraction (0–1), a percent
  (0–100) or an actuator pulse width (1000–2000 µs).  Unless the unit is
  stated (``Columns.throttle_unit``), it is told from the range of the first
  block's values, said in a warning, and every block is turned into a
  fraction; values outside every range, or a later block outside the range
  chosen, are refused with a hint to state the unit.
- **Missing values in isolated rows** (one or two rows, e.g. short rows of a
  CSV export) between clean rows are filled by linear interpolation from
  their neighbours, counted and reported, so 2 % of short rows do not cut a
  recording into stretches too short to analyse; longer runs of missing rows
  break the recording as gaps do.
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

from ..errors import InputError, RecordingError
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
    "MAX_FILLED_ROWS",
    "MAX_ABS_VALUE",
    "printed_precision",
]

#: Values beyond this magnitude are no measurement: they count as missing, so no
#: sum of squares or spectrum can overflow.
MAX_ABS_VALUE = 1e100
#: Most consecutive rows with missing values that are filled from their neighbours.
MAX_FILLED_ROWS = 2
#: Rows per stretch over which the printed precision of the times is judged.
_QUANTUM_CHUNK = 4096

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
    #: For rounded timestamps, the bound on the real jitter that the rounding cannot explain.
    jitter: float = 0.0
    #: True when the samples were resampled onto a uniform grid.
    resampled: bool = False
    #: Printed precision of the timestamps [s] (largest seen), 0 when not rounded.
    time_precision_s: float = 0.0
    #: Apparent relative jitter of the rounded timestamps, before the rounding is taken out.
    apparent_jitter: float = 0.0
    #: True when the timestamps are uniform within their printed precision (fitted rate used).
    rounded_uniform: bool = False
    #: Rows whose missing values were filled from their neighbours.
    rows_filled: int = 0
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
        self._q_max = 0.0
        self._apparent = 0.0
        self._true_excess = 0.0
        self._rounded = False
        self._repeats = 0
        self._filled = 0
        self._throttle_unit: str | None = None
        self._notes: list[str] = []

    # ------------------------------------------------------------ public
    @property
    def sample_rate_hz(self) -> float | None:
        """Sample rate [Hz], known after the first block at the latest."""
        return self.fs

    def feed(self, block: Block) -> Iterator[Run]:
        """Check one block; yield the clean runs it holds.

        Parameters
        ----------
        block : Block
            The next block of consecutive rows from :meth:`Recording.blocks`,
            in order. Its ``throttle`` array, when present, is replaced by the
            throttle as a fraction (0–1).

        Returns
        -------
        Iterator[Run]
            The clean, uniformly sampled runs in the block (resampled onto a
            uniform grid when the timestamps jitter); ``Run.run`` changes after
            every gap or missing stretch. Nothing for an empty block.

        Raises
        ------
        RecordingError
            If the timestamps give no sample rate, repeat or go backwards, jitter
            beyond what resampling can repair, or a throttle value falls outside
            the range of the throttle unit taken from the first rows.
        InputError
            If the throttle unit is not stated and cannot be told from the
            values (field ``throttle_unit``).
        """
        n = block.signals.shape[0]
        self._rows_read += n
        if n == 0:
            return
        if block.throttle is not None:
            block.throttle = self._throttle_fraction(block.throttle, block.first_row)
        parts = _Parts(block.signals, block.rotor_hz, block.throttle, block.rotor_each_hz)
        bad = _bad_rows(block)
        if bad is not None:
            self._missing += int(bad.sum())
            if self._first_missing is None:
                self._first_missing = block.first_row + int(np.argmax(bad))
            bad, parts, filled = _fill_isolated(block, parts, bad)
            self._filled += filled
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
        assert self._dt is not None  # set with the sample rate
        if self._dt_n > 1:
            mean = self._dt_sum / self._dt_n
            var = max(self._dt_sq / self._dt_n - mean**2, 0.0)
            f.jitter = math.sqrt(var) / self._dt
            f.resampled = bool(self._resample)
        f.rows_filled = self._filled
        f.warnings.extend(self._notes)
        f.time_precision_s = self._q_max
        if self._rounded and not f.resampled:
            f.rounded_uniform = True
            f.apparent_jitter = self._apparent
            true = max(self._true_excess, 0.0) / self._dt
            f.jitter = true
            repeat = (f"; rounding makes {self._repeats} times repeat (giving the rate with "
                      "--rate instead of the time column avoids the question)"
                      if self._repeats else "")
            f.warnings.append(
                f"timestamps are printed to {_seconds(self._q_max)}, which makes them look "
                f"{100 * self._apparent:.2g} % jittery; within that rounding they are uniform "
                f"(real jitter at most {100 * true:.2g} %), so the fitted rate {self.fs:.6g} Hz is used "
                f"and nothing is resampled{repeat}"
            )
        if self._filled:
            f.warnings.append(
                f"{self._filled} isolated rows with missing values (runs of at most "
                f"{MAX_FILLED_ROWS}) were filled from their neighbours"
            )
        if f.resampled:
            f.warnings.append(
                f"timestamps jitter by {100 * f.jitter:.2g} % of the sample interval; "
                f"the samples were resampled onto a uniform {self.fs:.1f} Hz grid"
            )
        if self._missing:
            row = (self._first_missing or 0) + 2 if self.rec.format == "csv" else self._first_missing
            f.warnings.append(
                f"{self._missing} rows ({100 * self._missing / self._rows_read:.2g} %) have "
                f"missing values (first at row {row}); longer runs of them are skipped and no "
                "spectrum spans them"
            )
        if self._gaps:
            length, row = self._longest_gap
            where = f"row {row + 2}" if self.rec.format == "csv" else f"sample {row}"
            f.warnings.append(
                f"{self._gaps} gaps in the timestamps (longest {length:.3g} s, at {where}); "
                "no spectrum spans a gap"
            )
        n = max(self._rows_used, 1)
        means = self._sum / n
        std = np.sqrt(np.maximum(self._sq / n - means**2, 0.0))
        f.dc_offset = tuple(float(m) for m in means)
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
            if std[k] > 0 and abs(means[k]) > std[k]:
                f.warnings.append(
                    f"signal {chan}: DC offset {means[k]:.4g} is {abs(means[k]) / std[k]:.2g} times "
                    "its variation; it is removed from each segment before the spectra"
                )
            if std[k] == 0:
                f.warnings.append(f"signal {chan} is constant; it holds no vibration")
        return f

    # ------------------------------------------------------------ helpers
    def _account(self, sig: np.ndarray) -> None:
        self._rows_used += sig.shape[0]
        self._sum += np.einsum("ij->j", sig)
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
            if d.size == 0 or not (d > 0).any():
                raise RecordingError(self.rec.path, _row(self.rec, first_row if rows is None
                                                         else rows[0]),
                                     "too few distinct timestamps to find the sample rate")
            q0 = float(printed_precision(t).max())
            d0 = float(np.median(d))
            if d0 <= 0:  # rounding repeats most times: the span gives the interval
                d0 = float(t[-1] - t[0]) / (t.size - 1)
            ok0 = (d >= 0) & (d <= GAP_FACTOR * d0 + q0)
            if not ok0.any():  # no steady interval (times out of order): judge the rest later
                ok0 = d > 0
            steady = d[ok0]
            self._dt = float(steady.mean())  # the mean interval: unbiased under jitter
            first = int(np.argmin(ok0)) if not ok0.all() else d.size
            if q0 > JITTER_IGNORE * d0 and first >= 16:
                # rounded times: the least-squares slope over the first stretch is far
                # closer than the span / count, which is off by up to q / count
                x = np.arange(first + 1, dtype=np.float64)
                x -= x.mean()
                y = t[: first + 1] - t[0]
                self._dt = float(np.einsum("i,i->", x, y - y.mean()) / np.einsum("i,i->", x, x))
            if not self._dt > 0:
                raise RecordingError(self.rec.path, _row(self.rec, first_row if rows is None
                                                         else rows[0]),
                                     "too few distinct timestamps to find the sample rate")
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
        if d.size == 0:
            q = np.zeros(0)
        elif (d <= 0).any() or float(np.ptp(d[d <= GAP_FACTOR * self._dt])
                                     if (d <= GAP_FACTOR * self._dt).any() else 0.0) > (
                JITTER_IGNORE * self._dt):
            q = printed_precision(text)[1:]  # precision at the later sample of each interval
        else:  # uniform to float precision: no rounding to judge
            q = np.zeros(d.size)
        # rounding repeats a time only when the printed step is coarser than the interval
        back = np.flatnonzero((d < 0) | ((d == 0) & (q < self._dt * 1.01)))
        if back.size:
            i = int(back[0]) + 1
            what = "repeats" if d[back[0]] == 0 else "goes backwards"
            hint = ("; if the times are rounded, give the sample rate with --rate instead"
                    if what == "repeats" else "")
            raise RecordingError(self.rec.path, _row(self.rec, row_at(i)),
                                 f"the time {what} ({text[i - 1]:.9g} s, then {text[i]:.9g} s){hint}")
        self._repeats += int(np.count_nonzero(d == 0))
        brk = d > GAP_FACTOR * self._dt + q
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
        explained = False
        if ok.size and q.size and q.max() > 0:
            explained = self._rounding_explains(text, q, brk)
        if ok.size and explained:
            n_ok, s_ok, q_ok = ok.size, float(ok.sum()), float(np.einsum("i,i->", ok, ok))
            self._dt_n += n_ok
            self._dt_sum += s_ok
            self._dt_sq += q_ok
        elif ok.size:
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
        assert self._dt is not None
        values = parts[max(a, 0):b].stacked()
        if a < 0 and self._carry is not None:  # the carried sample leads this piece
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

    def _throttle_fraction(self, thr: np.ndarray, first_row: int) -> np.ndarray:
        """The throttle as a fraction, its unit stated or told from the values."""
        with np.errstate(invalid="ignore"):
            ok = thr[np.abs(thr) < MAX_ABS_VALUE]
        if self._throttle_unit is None:
            if ok.size == 0:
                return thr
            lo, hi = float(ok.min()), float(ok.max())
            unit = self.rec.columns.throttle_unit if self.rec.columns is not None else None
            if unit is None:
                if lo >= -0.05 and hi <= 1.5:
                    unit = "fraction"
                elif lo >= -5 and hi <= 105:
                    unit = "percent"
                elif lo >= 800 and hi <= 2200:
                    unit = "us"
                else:
                    raise InputError("throttle_unit", "a throttle column as a fraction (0–1), a percent "
                                     "(0–100) or a pulse width (1000–2000 µs)",
                                     f"values from {lo:g} to {hi:g}", "state its unit")
                if unit != "fraction":
                    self._notes.append(
                        f"the throttle column reads from {lo:g} to {hi:g}: taken as "
                        + ("percent" if unit == "percent" else "a 1000–2000 µs pulse width")
                        + " (state the unit to be sure)")
            self._throttle_unit = unit
        unit = self._throttle_unit
        out = thr if unit == "fraction" else (thr * 0.01 if unit == "percent" else (thr - 1000.0) / 1000.0)
        with np.errstate(invalid="ignore"):
            off = (out < -0.1) | (out > 1.5)
        if off.any():
            k = int(np.argmax(off))
            raise RecordingError(self.rec.path, _row(self.rec, first_row + k),
                                 f"throttle {thr[k]:g} is outside the range of the {unit} unit taken "
                                 "from the first rows; state the throttle unit")
        return out

    def _rounding_explains(self, text: np.ndarray, q: np.ndarray, brk: np.ndarray) -> bool:
        """True when every time lies within its printed precision of a line through the index.

        The line is fitted per continuous piece (least squares over the sample
        index).  Also records the apparent and the real jitter.
        """
        assert self._dt is not None
        n = text.size
        pid = np.r_[0, np.cumsum(brk)]
        starts = np.r_[0, np.flatnonzero(brk) + 1]
        x = np.arange(n, dtype=np.float64) - starts[pid]
        y = text - text[starts[pid]]
        cnt = np.bincount(pid).astype(np.float64)
        sx, sy = np.bincount(pid, x), np.bincount(pid, y)
        sxx, sxy = np.bincount(pid, x * x), np.bincount(pid, x * y)
        den = cnt * sxx - sx * sx
        safe = np.where(den > 0, den, 1.0)
        slope = np.where(den > 0, (cnt * sxy - sx * sy) / safe, self._dt)
        icpt = (sy - slope * sx) / cnt
        r = y - (icpt[pid] + slope[pid] * x)
        qs = np.r_[q[:1], q]
        tol = 0.5 * qs + 3.0 * qs / np.sqrt(cnt[pid]) + JITTER_IGNORE * self._dt
        if not bool((np.abs(r) <= tol).all()):
            return False
        ok = np.diff(text)[~brk]
        if ok.size > 1:
            self._apparent = max(self._apparent, float(np.std(ok)) / self._dt)
        self._q_max = max(self._q_max, float(qs.max()))
        self._rounded = True
        # what the rounding cannot explain bounds the real jitter
        self._true_excess = max(self._true_excess, float(np.max(np.abs(r) - 0.5 * qs)))
        return True


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


#: Times per stretch that the printed-precision search judges (a random sample, fixed seed).
_PRECISION_SAMPLE = 512


def _multiples(x: np.ndarray) -> float:
    """Share of ``x`` that is a whole number, to float precision."""
    return float(np.count_nonzero(np.abs(x - np.round(x)) <= 1e-3 + 1e-15 * np.abs(x))) / max(x.size, 1)


def _chunk_precision(c: np.ndarray) -> np.ndarray:
    with np.errstate(all="ignore"):  # tiny or huge times: a quotient may not be finite
        return _chunk_precision_of(c)


def _chunk_precision_of(c: np.ndarray) -> np.ndarray:
    fixed = 0.0
    span = float(np.ptp(c)) if c.size > 1 else 0.0
    if not (math.isfinite(span) and span > 0):
        return np.zeros(c.size)
    # the searches below judge a share of multiples: a sample of the stretch judges it as
    # well as every row, at a fraction of the cost.  The sample is drawn at random (fixed
    # seed, so the result repeats): a regular stride would alias with the sample rate.
    s = c if c.size <= _PRECISION_SAMPLE else c[np.sort(
        np.random.default_rng(0).choice(c.size, _PRECISION_SAMPLE, replace=False))]
    top = min(3, int(math.floor(math.log10(span))))
    for k in range(top, -13, -1):  # from the span (at most 1000 s) down to 1 ps, fixed decimals
        if _multiples(s / 10.0**k) >= 0.995:
            fixed = 10.0**k
            break
    out = np.full(c.size, fixed)
    with np.errstate(divide="ignore"):
        mag = np.floor(np.log10(np.abs(c)))
        mag_s = np.floor(np.log10(np.abs(s)))
    nz, nz_s = np.isfinite(mag), np.isfinite(mag_s)
    if nz_s.any():
        for digits in range(2, 17):  # significant digits
            qd = 10.0 ** (mag_s[nz_s] + 1 - digits)
            if (qd > 0).all() and _multiples(s[nz_s] / qd) >= 0.995:
                out[nz] = np.maximum(out[nz], 10.0 ** (mag[nz] + 1 - digits))
                break
    return out


def printed_precision(t: np.ndarray) -> np.ndarray:
    """The printed precision of each time: how coarsely the export rounded it.

    Judged over stretches of a few thousand rows: the coarsest power of ten,
    either fixed (``0.1 ms``, whole µs) or relative to the value (six
    significant digits), that nearly every time of the stretch is a multiple of.

    Parameters
    ----------
    t : ndarray
        Times [s].

    Returns
    -------
    ndarray
        Precision of each time [s]; tiny for times printed in full.

    Examples
    --------
    >>> t = np.round(np.arange(2000) / 4000.0, 4)   # 4 kHz printed to 0.1 ms
    >>> float(printed_precision(t).max())
    0.0001
    """
    t = np.asarray(t, dtype=np.float64)
    out = np.zeros(t.size)
    starts = list(range(0, t.size, _QUANTUM_CHUNK))
    if len(starts) > 1 and t.size - starts[-1] < _QUANTUM_CHUNK // 2:
        starts.pop()  # a short tail is judged with the stretch before it
    for a, b in zip(starts, starts[1:] + [t.size]):
        out[a:b] = _chunk_precision(t[a:b])
    return out


def _seconds(q: float) -> str:
    """A precision in words: ``0.1 ms``, ``1 µs``."""
    for unit, scale in (("s", 1.0), ("ms", 1e-3), ("µs", 1e-6), ("ns", 1e-9)):
        if q >= 0.1 * scale * 0.999:
            return f"{q / scale:.3g} {unit}"
    return f"{q:.3g} s"


def _fill_isolated(block: Block, parts: _Parts,
                   bad: np.ndarray) -> tuple[np.ndarray | None, _Parts, int]:
    """Fill runs of at most :data:`MAX_FILLED_ROWS` missing rows from their neighbours.

    Only runs with clean rows on both sides (in this block) and a finite time
    are filled; the rest stay missing.  Returns the rows still missing
    (``None`` when none), the parts with filled values, and the rows filled.
    """
    n = bad.size
    edges = np.flatnonzero(np.diff(np.r_[0, bad.astype(np.int8), 0]))
    starts, ends = edges[::2], edges[1::2]
    ok = (starts > 0) & (ends < n) & (ends - starts <= MAX_FILLED_ROWS)
    if block.time_s is not None:
        tbad = np.r_[0, np.cumsum(~_usable(block.time_s))]
        ok &= tbad[ends] - tbad[starts] == 0
    if not ok.any():
        return bad, parts, 0
    mark = np.zeros(n + 1, dtype=np.int64)
    np.add.at(mark, starts[ok], 1)
    np.add.at(mark, ends[ok], -1)
    fill = np.cumsum(mark[:n]) > 0
    idx = np.arange(n, dtype=np.float64)
    good = ~bad

    def fixed(arr: np.ndarray | None) -> np.ndarray | None:
        if arr is None:
            return None
        out = np.array(arr, dtype=np.float64, copy=True)
        cols = out[:, None] if out.ndim == 1 else out
        for k in range(cols.shape[1]):
            col = cols[:, k]
            where = fill & ~_usable(col)
            if where.any():
                col[where] = np.interp(idx[where], idx[good], col[good])
        return out

    filled = _Parts(fixed(parts.signals), fixed(parts.rotor_hz), fixed(parts.throttle))  # type: ignore[arg-type]
    left = bad & ~fill
    return (left if left.any() else None), filled, int(np.count_nonzero(fill))


def _usable(a: np.ndarray) -> np.ndarray:
    """True where a value is a number within ±:data:`MAX_ABS_VALUE` (NaN compares false)."""
    with np.errstate(invalid="ignore"):
        return np.asarray(np.abs(a) < MAX_ABS_VALUE)


def _bad_rows(block: Block) -> np.ndarray | None:
    """Rows with a missing value (NaN, ±inf, beyond ±1e100) in any used column; ``None`` if none."""
    arrays = [a for a in (block.signals, block.rotor_hz, block.throttle, block.time_s)
              if a is not None]
    if all(bool(_usable(a).all()) for a in arrays):  # the common case: whole-array checks
        return None
    bad = np.asarray(~_usable(block.signals).all(axis=1))
    for a in arrays[1:]:
        bad |= ~_usable(a)
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

    Parameters
    ----------
    path : str
        The recording (for the message).
    sample_rate_hz : float
        Sample rate of the recording [Hz].
    max_freq_hz : float
        Highest mode frequency asked about [Hz].

    Returns
    -------
    None
        Returns only when the rate suffices.

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
