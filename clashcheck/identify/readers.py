"""Recording readers: CSV with a header row, WAV and NumPy ``.npy``.

Each reader streams its file in blocks of rows, so memory does not grow with
the length of the recording.

- **CSV** is read with chunked :func:`pandas.read_csv` when pandas is installed
  (the fastest well-kept CSV parser on the target machines, about four times
  faster than the fallback) and otherwise with :func:`numpy.loadtxt` fed one
  block of lines at a time.  Both paths give the same numbers.
- **WAV** is memory-mapped through :func:`scipy.io.wavfile.read` (mono or
  multi-channel; int16, int32 or float).  Integer samples are scaled to a full
  scale of 1.0, so clipping can be judged against the converter's range.
- **.npy** is memory-mapped with :func:`numpy.load`; a 1-D or 2-D float array,
  or a structured array whose field names act as column names.

A malformed file raises :class:`~clashcheck.errors.RecordingError` naming the
file, the row or byte, and the problem.
"""

from __future__ import annotations

import csv
import itertools
import math
import os
import re
import stat
import struct
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError, RecordingError

__all__ = [
    "FORMATS",
    "Columns",
    "Block",
    "Recording",
    "open_recording",
    "RPM_UNITS",
    "THROTTLE_UNITS",
    "BLOCK_ROWS",
    "PREFETCH",
    "MAX_FIELDS",
    "HEADER_BYTES",
    "MAX_CHANNELS",
    "MAX_SIGNALS",
]

#: Rows per block handed to the analysis (about 3 MB of float64 for 3 axes).
BLOCK_ROWS = 1 << 17

#: Most columns (CSV fields, .npy columns or fields) a recording may have.
MAX_FIELDS = 1024
#: Longest CSV header row read [bytes].
HEADER_BYTES = 1 << 16
#: Most WAV channels read.
MAX_CHANNELS = 64
#: Most signal columns analysed together.
MAX_SIGNALS = 16
#: Most cells (rows × fields) the CSV parser holds at once, so a wide file
#: is read in shorter blocks instead of a larger allocation.
MAX_BLOCK_CELLS = 1 << 20

#: Units accepted for throttle columns.
THROTTLE_UNITS = ("fraction", "percent", "us")

#: Units accepted for rotor-rate columns.
RPM_UNITS = ("rpm", "Hz", "erpm")


@dataclass(frozen=True)
class Columns:
    """Which columns of a recording carry what.

    Signals are named by header (CSV, structured ``.npy``) or by 0-based index
    written as text (WAV channels, plain ``.npy`` columns).  ``None`` means
    "every channel" for WAV and plain ``.npy``.
    """

    #: Signal column names or indices (as text); ``None`` for all channels.
    signals: tuple[str, ...] | None = None
    #: Column holding the sample time; ``None`` when the rate is stated.
    time_column: str | None = None
    #: Seconds per unit of the time column (1.0 for seconds, 1e-6 for µs).
    time_scale_s: float = 1.0
    #: Stated sample rate [Hz]; ``None`` when it comes from the file.
    sample_rate_hz: float | None = None
    #: Column holding the throttle (fraction 0–1, percent 0–100 or pulse width 1000–2000 µs).
    throttle_column: str | None = None
    #: Unit of the throttle column: ``"fraction"``, ``"percent"``, ``"us"`` (a 1000–2000 µs
    #: pulse width), or ``None`` to tell from the values.
    throttle_unit: str | None = None
    #: Columns holding rotor rates, one per motor; averaged.
    rpm_columns: tuple[str, ...] = ()
    #: Multiply rotor-rate column values by this to get rotor rate [Hz].
    rpm_scale_hz: float = 1.0 / 60.0

    def __post_init__(self) -> None:
        if self.signals is not None and len(self.signals) == 0:
            raise InputError("signals", "at least one signal column", "")
        if self.time_column is not None and self.sample_rate_hz is not None:
            raise InputError(
                "sample_rate_hz", "either a time column or a sample rate, not both", self.sample_rate_hz
            )
        if self.sample_rate_hz is not None and not (
            math.isfinite(self.sample_rate_hz) and self.sample_rate_hz > 0
        ):
            raise InputError("sample_rate_hz", "a sample rate above 0 Hz", self.sample_rate_hz)
        if not (math.isfinite(self.time_scale_s) and self.time_scale_s > 0):
            raise InputError("time_scale_s", "a unit of time", self.time_scale_s)
        if self.throttle_unit not in (None, *THROTTLE_UNITS):
            raise InputError("throttle_unit", "one of " + ", ".join(THROTTLE_UNITS), self.throttle_unit)
        if self.sample_rate_hz is not None and self.sample_rate_hz > 1e6:
            raise InputError("sample_rate_hz", "a sample rate up to 1 MHz", self.sample_rate_hz)
        if not (math.isfinite(self.rpm_scale_hz) and self.rpm_scale_hz > 0):
            raise InputError("rpm_scale_hz", "one of " + ", ".join(RPM_UNITS), self.rpm_scale_hz)


@dataclass
class Block:
    """One block of consecutive rows, as plain float64 arrays."""

    #: 0-based index of the block's first data row (header not counted).
    first_row: int
    #: Sample times [s], or ``None`` when the rate is stated.
    time_s: np.ndarray | None
    #: Signals, shape (rows, channels).
    signals: np.ndarray
    #: Throttle as read (fraction or percent), or ``None``.
    throttle: np.ndarray | None = None
    #: Rotor rate [Hz] averaged over the rotor-rate columns, or ``None``.
    rotor_hz: np.ndarray | None = None
    #: Rotor rate [Hz] of each motor, shape (rows, motors), when two or more
    #: rotor-rate columns are read; else ``None``.
    rotor_each_hz: np.ndarray | None = None


@dataclass
class Recording:
    """An opened recording: what it holds and how to stream it.

    Use :func:`open_recording` to make one.
    """

    #: The file.
    path: str
    #: ``"csv"``, ``"wav"`` or ``"npy"``.
    format: str
    #: Names of the signal channels, in order.
    signal_names: tuple[str, ...]
    #: Sample rate [Hz] when known up front (WAV header or stated rate).
    sample_rate_hz: float | None
    #: Full scale of the signals after reading (1.0 for integer WAV), or ``None``.
    full_scale: float | None
    #: Number of data rows, exact for WAV/.npy and estimated for CSV.
    rows_estimate: int
    #: True when a throttle column is present.
    has_throttle: bool
    #: True when rotor-rate columns are present.
    has_rotor: bool
    _blocks: Callable[[int], Iterator[Block]] = field(repr=False, default=None)  # type: ignore[assignment]
    #: The column choice it was opened with (so it can be opened again elsewhere).
    columns: Columns | None = None

    def blocks(self, block_rows: int = BLOCK_ROWS, prefetch: bool = True) -> Iterator[Block]:
        """Stream the recording in blocks of at most ``block_rows`` rows.

        With ``prefetch`` (CSV only) a background thread parses the next blocks
        while the caller works on this one; at most :data:`PREFETCH` blocks wait.

        Parameters
        ----------
        block_rows : int
            Most data rows per block [rows]; :data:`BLOCK_ROWS` by default.
        prefetch : bool
            Parse ahead in a background thread (CSV only; ignored for WAV and
            .npy).

        Returns
        -------
        Iterator[Block]
            The blocks in file order, each as plain float64 arrays.

        Raises
        ------
        RecordingError
            While iterating, when the file turns out malformed or unreadable
            (the error names the row or byte).
        """
        if prefetch and self.format == "csv":
            return _prefetched(self._blocks(block_rows))
        return self._blocks(block_rows)

    def read_all(self) -> Block:
        """Read the whole recording into one block (for short recordings)."""
        parts = list(self.blocks(prefetch=False))
        if not parts:
            raise RecordingError(self.path, "", "the file holds no data rows")

        def cat(name: str) -> np.ndarray | None:
            vals = [getattr(p, name) for p in parts]
            return None if vals[0] is None else np.concatenate(vals)

        return Block(0, cat("time_s"), np.concatenate([p.signals for p in parts]),
                     cat("throttle"), cat("rotor_hz"), cat("rotor_each_hz"))


#: Blocks parsed ahead by the background reader.
PREFETCH = 2


def _prefetched(gen: Iterator[Block]) -> Iterator[Block]:
    """Run a block generator in a thread; hand its blocks (or its error) over a queue.

    The CSV parser and numpy's FFT both spend most of their time outside the
    GIL, so on two cores parsing and analysis overlap.  The queue is bounded,
    so memory stays at a few blocks whatever the file's length.
    """
    import queue
    import threading

    q: queue.Queue = queue.Queue(maxsize=PREFETCH)
    stop = threading.Event()
    done = object()

    def put(item) -> bool:
        while not stop.is_set():
            try:
                q.put(item, timeout=0.1)
                return True
            except queue.Full:
                continue
        return False

    def run() -> None:
        try:
            for blk in gen:
                if not put(blk):
                    return
        except BaseException as exc:  # handed to the consumer, raised there
            put(exc)
            return
        put(done)

    thread = threading.Thread(target=run, name="clashcheck-reader", daemon=True)
    thread.start()
    try:
        while True:
            item = q.get()
            if item is done:
                return
            if isinstance(item, BaseException):
                raise item
            yield item
    finally:
        stop.set()


#: File suffixes the readers accept and the format each is read as.
FORMATS = {".csv": "csv", ".txt": "csv", ".tsv": "csv", ".wav": "wav", ".npy": "npy"}


def open_recording(path: str | os.PathLike[str], columns: Columns) -> Recording:
    """Open a recording for streaming.

    Parameters
    ----------
    path : str or path-like
        A ``.csv`` (or ``.txt``), ``.wav`` or ``.npy`` file.
    columns : Columns
        Which columns carry the signals, the time, the throttle and rotor rates.

    Returns
    -------
    Recording

    Raises
    ------
    RecordingError
        If the file is malformed or lacks a named column.
    InputError
        If the file type is unknown or the column options do not fit it.
    """
    text = os.fspath(path)
    try:
        mode = os.stat(text).st_mode
    except OSError as exc:
        raise RecordingError(text, "", "no such file" if isinstance(exc, FileNotFoundError)
                             else f"cannot be read ({exc.strerror})") from None
    if not stat.S_ISREG(mode):
        what = ("a folder" if stat.S_ISDIR(mode) else "a FIFO (named pipe)" if stat.S_ISFIFO(mode)
                else "a device" if stat.S_ISCHR(mode) or stat.S_ISBLK(mode) else "not a regular file")
        raise RecordingError(text, "", f"{what}; a recording must be a regular file")
    fmt = FORMATS.get(os.path.splitext(text)[1].lower())
    if fmt == "csv":
        return _open_csv(text, columns)
    if fmt == "wav":
        return _open_wav(text, columns)
    if fmt == "npy":
        return _open_npy(text, columns)
    raise InputError("RECORDING", "a .csv, .wav or .npy file", text)


# --------------------------------------------------------------------------- CSV

_PANDAS_LINE = re.compile(r"line (\d+)")


def _pandas():
    """pandas if installed, else ``None`` (module-level hook so tests can hide it)."""
    try:
        import pandas
    except ImportError:
        return None
    return pandas


def _sniff_csv(path: str) -> tuple[list[str], str, int, int]:
    """Header names, delimiter, an estimate of the data rows, and fields per data row.

    The header may be quoted and may end in a delimiter (a trailing empty
    column); data rows may end in a delimiter too.  Both are recognised here,
    explicitly, and the reader is told how many fields a row has, so no parser
    ever guesses an index column from a row that is one field longer.
    """
    with open(path, "rb") as fh:
        head = fh.read(HEADER_BYTES)
    if not head.strip():
        raise RecordingError(path, "row 1", "the file is empty; a header row was expected")
    if b"\x00" in head:
        pos = head.index(b"\x00")
        raise RecordingError(path, f"byte {pos}", "a NUL byte; this is not a text CSV file")
    if len(head) == HEADER_BYTES and b"\n" not in head and b"\r" not in head:
        raise RecordingError(path, "row 1", f"the header row is longer than {HEADER_BYTES // 1024} KiB; "
                             "a CSV recording was expected")
    try:
        text = head.decode("utf-8")
    except UnicodeDecodeError as exc:
        if exc.start < len(head) - 4:
            raise RecordingError(path, f"byte {exc.start}", "not UTF-8 text") from None
        text = head[: exc.start].decode("utf-8")
    lines = text.splitlines()
    if not lines:
        raise RecordingError(path, "row 1", "no text header row was found")
    header = lines[0].lstrip("\ufeff")
    if not header.strip():
        raise RecordingError(path, "row 1", "the first row is empty; a header row was expected")
    delim = ","
    for cand in (",", ";", "\t"):
        if cand in header:
            delim = cand
            break
    if header.count(delim) >= MAX_FIELDS:
        raise RecordingError(path, "row 1", f"the header has {header.count(delim) + 1} columns; "
                             f"at most {MAX_FIELDS} are read")
    try:
        names = [h.strip() for h in next(csv.reader([header], delimiter=delim))]
    except (csv.Error, StopIteration):
        raise RecordingError(path, "row 1", "the header row is not valid CSV") from None
    if not names:
        raise RecordingError(path, "row 1", "the header row holds no names")
    trailing_header = len(names) > 1 and names[-1] == ""
    if trailing_header:
        names = names[:-1]
    empty = [k + 1 for k, n in enumerate(names) if not n]
    if empty:
        raise RecordingError(path, "row 1", f"the header row has an empty name in column {empty[0]}")
    seen: set[str] = set()
    for n in names:
        if n in seen:
            raise RecordingError(path, "row 1", f"the header row repeats the name {n[:40]!r}")
        seen.add(n)
    try:
        float(names[0])
        numeric = True
    except ValueError:
        numeric = False
    if numeric:
        raise RecordingError(path, "row 1", "a header row with column names was expected, not numbers")
    complete = text.endswith(("\n", "\r")) or len(head) < HEADER_BYTES
    sample = [ln for ln in (lines[1:] if complete else lines[1:-1]) if ln.strip()][:200]
    # a row one field longer than the names, ending in an empty field, is a
    # trailing delimiter; it is read as one unused empty column
    extra = 0
    if sample:
        longer = sum(1 for ln in sample if ln.count(delim) == len(names)
                     and ln.rstrip("\r\n \t" if delim != "\t" else "\r\n ").endswith(delim))
        if trailing_header or longer * 2 > len(sample):
            extra = 1
    elif trailing_header:
        extra = 1
    first = next((ln for ln in lines[1:] if ln.strip()), None)
    if first is not None and first.count(delim) + 1 > len(names) + extra:
        # checked here: the parser would take a longer first row as the row length
        raise RecordingError(path, "row 2", f"malformed row (expected {len(names) + extra} fields, "
                             f"saw {first.count(delim) + 1})")
    size = os.path.getsize(path)
    if sample:
        per_row = sum(len(s) + 1 for s in sample) / len(sample)
        rows = int((size - len(header) - 1) / per_row)
    else:
        rows = max(len(lines) - 1, 0)
    return names, delim, max(rows, 1), len(names) + extra


def _pick(path: str, names: Sequence[str], wanted: str, what: str) -> int:
    try:
        return list(names).index(wanted)
    except ValueError:
        shown = ", ".join(names[:12])
        raise RecordingError(
            path, "row 1", f"no {what} column {wanted!r}; the header has: {shown}"
        ) from None


def _layout(path: str, names: Sequence[str], columns: Columns, default_signals: bool):
    """Column indices for time, signals, throttle and rotor rates."""
    if columns.signals is None:
        if not default_signals:
            raise InputError("signals", "the signal column names, e.g. 'gx,gy,gz'", None)
        used = {columns.time_column, columns.throttle_column, *columns.rpm_columns}
        sig_names = [n for n in names if n not in used]
    else:
        sig_names = list(columns.signals)
    sig = [_pick(path, names, s, "signal") for s in sig_names]
    tcol = None if columns.time_column is None else _pick(path, names, columns.time_column, "time")
    thr = (
        None if columns.throttle_column is None
        else _pick(path, names, columns.throttle_column, "throttle")
    )
    rpm = [_pick(path, names, r, "rotor-rate") for r in columns.rpm_columns]
    if len(sig) > MAX_SIGNALS:
        raise InputError("signals", f"at most {MAX_SIGNALS} signal columns", f"{len(sig)} columns",
                         "name the ones to analyse")
    if not sig:
        raise RecordingError(path, "", "no signal columns: every column is the time, throttle or "
                             "a rotor rate")
    return tcol, sig, thr, rpm, [names[i] for i in sig]


def _split(arr: np.ndarray, first_row: int, tcol: int | None, sig: list[int], thr: int | None,
           rpm: list[int], columns: Columns) -> Block:
    """Turn a (rows, used columns) array into a Block; columns in ``order``."""
    with np.errstate(all="ignore"):  # values out of range become missing, checked later
        time_s = None if tcol is None else arr[:, tcol] * columns.time_scale_s
        throttle = None if thr is None else arr[:, thr]
        rotor = each = None
        if rpm:
            rotor = arr[:, rpm].mean(axis=1) * columns.rpm_scale_hz
            if len(rpm) > 1:
                each = arr[:, rpm] * columns.rpm_scale_hz
    return Block(first_row, time_s, np.ascontiguousarray(arr[:, sig]), throttle, rotor, each)


def _open_csv(path: str, columns: Columns) -> Recording:
    names, delim, rows, nfields = _sniff_csv(path)
    if columns.time_column is None and columns.sample_rate_hz is None:
        raise InputError(
            "time_column", "a time column or a sample rate",
            None, "a CSV recording needs one of them",
        )
    tcol, sig, thr, rpm, sig_names = _layout(path, names, columns, default_signals=False)
    used = sorted({i for i in [tcol, thr, *sig, *rpm] if i is not None})
    pos = {c: k for k, c in enumerate(used)}
    remap = (
        None if tcol is None else pos[tcol],
        [pos[i] for i in sig],
        None if thr is None else pos[thr],
        [pos[i] for i in rpm],
    )
    ncols = nfields

    def blocks(block_rows: int) -> Iterator[Block]:
        pd = _pandas()
        if pd is not None:
            yield from _csv_blocks_pandas(pd, path, delim, names, used, ncols, block_rows, remap,
                                          columns)
        else:
            yield from _csv_blocks_numpy(path, delim, used, ncols, block_rows, remap, columns)

    return Recording(path, "csv", tuple(sig_names), columns.sample_rate_hz, None, rows,
                     thr is not None, bool(rpm), blocks, columns)


def _csv_blocks_pandas(pd, path, delim, names, used, ncols, block_rows, remap,
                       columns) -> Iterator[Block]:
    first = 0
    try:
        # all columns are tokenised (no usecols), so a row with too many fields is
        # caught; only the used ones must be numbers
        # the names are given and replace the header row's: the field count is
        # fixed, a longer row is an error and never becomes an index (header=0
        # with names, not skiprows=1: the parser checks every row against a
        # skip set, a fifth of its time)
        chunk_rows = max(256, min(block_rows, MAX_BLOCK_CELLS // ncols))
        all_names = list(names) + [f"\x00unused{k}" for k in range(ncols - len(names))]
        reader = pd.read_csv(
            path, sep=delim, header=0, names=all_names, index_col=False,
            chunksize=chunk_rows, dtype={names[c]: np.float64 for c in used}, engine="c",
            skip_blank_lines=True, encoding="utf-8",
        )
        with reader:
            while True:
                try:
                    chunk = next(reader)
                except StopIteration:
                    break
                except pd.errors.ParserError:
                    raise
                except ValueError as exc:  # a cell that is not a number
                    _raise_bad_cell(path, delim, used, first, chunk_rows, exc)
                if chunk.shape[1] != ncols:
                    raise RecordingError(path, f"row {first + 2}", "malformed rows (field count)")
                if ncols > len(names):  # the trailing field must stay empty
                    extra = chunk.iloc[:, len(names):].notna().to_numpy().any(axis=1)
                    if extra.any():
                        row = first + int(np.argmax(extra)) + 2
                        raise RecordingError(path, f"row {row}", "malformed row (a field beyond the "
                                             "header's columns)")
                arr = chunk.iloc[:, used].to_numpy(dtype=np.float64, copy=False)
                yield _split(arr, first, remap[0], remap[1], remap[2], remap[3], columns)
                first += arr.shape[0]
    except pd.errors.ParserError as exc:
        match = _PANDAS_LINE.search(str(exc))
        where = f"row {match.group(1)}" if match else ""
        detail = str(exc).split("C error: ")[-1].strip()
        raise RecordingError(path, where, f"malformed row ({detail})") from None
    except pd.errors.EmptyDataError:
        raise RecordingError(path, "row 1", "the file is empty; a header row was expected") from None
    except UnicodeDecodeError as exc:
        raise RecordingError(path, f"byte {exc.start}", "not UTF-8 text") from None


def _raise_bad_cell(path, delim, used, first, block_rows, exc) -> None:
    """Find the first non-numeric cell of a block by reading it again as text."""
    with open(path, encoding="utf-8", errors="replace") as fh:
        next(fh)
        for _ in range(first):
            next(fh)
        for k, line in enumerate(itertools.islice(fh, block_rows)):
            cells = line.rstrip("\r\n").split(delim)
            for c in used:
                cell = cells[c].strip() if c < len(cells) else ""
                if cell == "":
                    continue
                try:
                    float(cell)
                except ValueError:
                    raise RecordingError(
                        path, f"row {first + k + 2}", f"{cell[:30]!r} is not a number"
                    ) from None
    raise RecordingError(path, f"rows {first + 2}–{first + block_rows + 1}", f"unreadable ({exc})")


_LOADTXT_ROW = re.compile(r"row (\d+)", re.IGNORECASE)


def _csv_blocks_numpy(path, delim, used, ncols, block_rows, remap, columns) -> Iterator[Block]:
    first = 0
    with open(path, encoding="utf-8", newline="") as fh:
        try:
            next(fh)
        except StopIteration:
            return
        while True:
            lines = list(itertools.islice(fh, block_rows))
            if not lines:
                return
            arr = _loadtxt_block(path, lines, delim, used, ncols, first)
            yield _split(arr, first, remap[0], remap[1], remap[2], remap[3], columns)
            first += len(lines)


def _loadtxt_block(path, lines, delim, used, ncols, first) -> np.ndarray:
    try:  # every column, so rows with too many fields fail here too
        arr = np.loadtxt(lines, delimiter=delim, ndmin=2, dtype=np.float64, comments=None)
        if arr.shape[1] == ncols:
            return arr[:, used]
    except ValueError:
        pass
    # Slow path for a troubled block: blank cells become NaN (gaps), anything
    # else that is not a number is reported with its row.
    out = np.full((len(lines), len(used)), np.nan)
    kept = np.ones(len(lines), dtype=bool)
    for k, line in enumerate(lines):
        if not line.strip():  # blank lines are skipped, as loadtxt and pandas do
            kept[k] = False
            continue
        cells = line.rstrip("\r\n").split(delim)
        if len(cells) > ncols:
            raise RecordingError(
                path, f"row {first + k + 2}",
                f"malformed row (expected {ncols} fields, saw {len(cells)})",
            )
        for j, c in enumerate(used):
            cell = cells[c].strip() if c < len(cells) else ""
            if cell == "":
                out[k, j] = np.nan
                continue
            try:
                out[k, j] = float(cell)
            except ValueError:
                raise RecordingError(
                    path, f"row {first + k + 2}", f"{cell[:30]!r} is not a number"
                ) from None
    return out[kept]


# --------------------------------------------------------------------------- WAV

def _wav_header(path: str) -> tuple[int, int, int, int]:
    """Check a WAV file's chunks before any reader sees it.

    Returns
    -------
    channels, rate_hz, bits, data_bytes : int
        From the ``fmt `` chunk, and the size of the ``data`` chunk.

    Raises
    ------
    RecordingError
        For a missing mark, a missing or short ``fmt `` chunk, zero channels,
        a zero rate, 8-bit or other unsupported samples, no ``data`` chunk, or
        a ``data`` chunk cut short by the end of the file.
    """
    size = os.path.getsize(path)
    with open(path, "rb") as fh:
        head = fh.read(12)
        if len(head) < 12 or head[:4] not in (b"RIFF", b"RF64"):
            raise RecordingError(path, "byte 0", "not a RIFF/WAV file (no 'RIFF' mark)")
        if head[8:12] != b"WAVE":
            raise RecordingError(path, "byte 8", "a RIFF file but not WAVE audio")
        pos, fmt, data = 12, None, None
        for _ in range(1024):  # chunks before the data: a bounded walk
            if pos + 8 > size:
                break
            fh.seek(pos)
            cid = fh.read(4)
            (clen,) = struct.unpack("<I", fh.read(4))
            if cid == b"fmt ":
                body = fh.read(min(clen, 40))
                if len(body) < 16:
                    raise RecordingError(path, f"byte {pos}", "the 'fmt ' chunk is cut short")
                tag, channels, rate, _brate, _align, bits = struct.unpack("<HHIIHH", body[:16])
                if tag == 0xFFFE and len(body) >= 26:  # extensible: the real tag leads the sub-format
                    (tag,) = struct.unpack("<H", body[24:26])
                fmt = (tag, channels, rate, bits, pos)
            elif cid == b"data":
                data = (pos, clen)
                break
            pos += 8 + clen + (clen & 1)
    if fmt is None:
        raise RecordingError(path, "header", "no 'fmt ' chunk: the WAV header is damaged or cut short")
    tag, channels, rate, bits, at = fmt
    if channels == 0:
        raise RecordingError(path, f"byte {at + 10}", "the WAV header gives 0 channels")
    if channels > MAX_CHANNELS:
        raise RecordingError(path, f"byte {at + 10}",
                             f"{channels} channels; at most {MAX_CHANNELS} are read")
    if rate == 0:
        raise RecordingError(path, f"byte {at + 12}", "the WAV header gives a sample rate of 0 Hz")
    if tag == 1 and bits == 8:
        raise RecordingError(path, "header", "8-bit samples are too coarse for modal analysis (their "
                             "rounding shows as false peaks); record at 16 bits or more")
    if not ((tag == 1 and bits in (16, 24, 32)) or (tag == 3 and bits in (32, 64))):
        raise RecordingError(path, "header", f"unsupported WAV samples (format {tag}, {bits} bits); "
                             "16-, 24- or 32-bit integer or 32/64-bit float are read")
    if data is None:
        raise RecordingError(path, "header", "no data chunk: the file is cut short or holds no samples")
    dpos, dlen = data
    (riff_size,) = struct.unpack("<I", head[4:8])
    if head[:4] == b"RIFF" and riff_size != 0xFFFFFFFF and riff_size + 8 < dpos + 8:
        raise RecordingError(path, "byte 4", f"the RIFF size ({riff_size} bytes) ends before the "
                             "data chunk; the header is damaged")
    if dlen != 0xFFFFFFFF and dpos + 8 + dlen > size:
        raise RecordingError(path, f"byte {dpos}", f"the data chunk declares {dlen} bytes but the "
                             f"file holds {max(size - dpos - 8, 0)}; the file is cut short")
    return channels, rate, bits, dlen


def _open_wav(path: str, columns: Columns) -> Recording:
    import warnings

    from scipy.io import wavfile

    _channels, _rate, _bits, data_bytes = _wav_header(path)
    if data_bytes == 0:
        raise RecordingError(path, "header", "the WAV file holds no samples")
    if columns.time_column is not None or columns.throttle_column or columns.rpm_columns:
        raise InputError("time_column", "no time, throttle or rotor-rate column for a WAV file",
                         columns.time_column or columns.throttle_column or columns.rpm_columns)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error", wavfile.WavFileWarning)
            rate, data = wavfile.read(path, mmap=True)
    except wavfile.WavFileWarning as exc:
        raise RecordingError(path, "header", f"damaged WAV file ({exc})") from None
    except (struct.error, EOFError, OSError, MemoryError) as exc:
        raise RecordingError(path, "header", f"truncated WAV file ({exc})") from None
    except (UnboundLocalError, KeyError, TypeError, IndexError) as exc:  # the parser's own slips
        raise RecordingError(path, "header", f"damaged WAV header ({type(exc).__name__})") from None
    except ValueError as exc:
        msg = str(exc)
        if "mmap" in msg.lower() or "24" in msg:
            try:
                with warnings.catch_warnings():
                    warnings.simplefilter("error", wavfile.WavFileWarning)
                    rate, data = wavfile.read(path, mmap=False)
            except (ValueError, wavfile.WavFileWarning, struct.error, EOFError, OSError,
                    UnboundLocalError, KeyError, TypeError, IndexError) as exc2:
                raise RecordingError(path, "header", f"unreadable WAV file ({exc2})") from None
        else:
            raise RecordingError(path, "header", f"unreadable WAV file ({msg})") from None
    if data.ndim == 1:
        data = data[:, None]
    nch = data.shape[1]
    kind = data.dtype.kind
    if kind == "i":
        scale = 1.0 / float(2 ** (8 * data.dtype.itemsize - 1))
        full_scale: float | None = 1.0
    elif kind == "u":  # 8-bit WAV is unsigned with offset 128
        scale = 1.0 / 128.0
        full_scale = 1.0
    elif kind == "f":
        scale = 1.0
        full_scale = 1.0
    else:
        raise RecordingError(path, "header", f"unsupported sample type {data.dtype}")
    idx = _channel_indices(path, columns.signals, nch, "channel")
    if data.shape[0] == 0:
        raise RecordingError(path, "byte 44", "the WAV file holds no samples")

    def blocks(block_rows: int) -> Iterator[Block]:
        for start in range(0, data.shape[0], block_rows):
            part = np.asarray(data[start:start + block_rows][:, idx], dtype=np.float64)
            if kind == "u":
                part = part - 128.0
            yield Block(start, None, part * scale)

    names = tuple(f"ch{i}" for i in idx)
    return Recording(path, "wav", names, float(rate), full_scale, data.shape[0], False, False,
                     blocks, columns)


def _channel_indices(path: str, wanted: tuple[str, ...] | None, nch: int, what: str) -> list[int]:
    if wanted is None:
        return list(range(nch))
    out = []
    for w in wanted:
        text = w.removeprefix("ch")
        if not text.isdigit() or int(text) >= nch:
            raise InputError("signals", f"{what} numbers 0–{nch - 1} (e.g. '0,1')", w)
        out.append(int(text))
    return out


# --------------------------------------------------------------------------- NPY

def _open_npy(path: str, columns: Columns) -> Recording:
    with open(path, "rb") as fh:
        magic = fh.read(6)
    if magic != b"\x93NUMPY":
        raise RecordingError(path, "byte 0", "not a NumPy .npy file (no .npy header)")
    try:
        data = np.load(path, mmap_mode="r", allow_pickle=False)
    except ValueError as exc:
        if "pickle" in str(exc) or "object" in str(exc):
            raise RecordingError(path, "header", "the array holds Python objects; only numeric "
                                 "arrays are read") from None
        msg = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise RecordingError(path, "header", f"unreadable .npy file ({msg})") from None
    except Exception as exc:  # noqa: BLE001 - numpy parses the header text with Python's own
        # tokenizer and literal evaluator; whatever they raise on a damaged header means the same
        msg = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise RecordingError(path, "header", f"unreadable .npy file ({msg})") from None
    if not isinstance(data, np.ndarray):
        raise RecordingError(path, "header", "not a single .npy array")
    if data.dtype.names:
        if data.ndim != 1:
            raise RecordingError(path, "header", f"a structured array must be 1-D, not {data.ndim}-D")
        if len(data.dtype.names) > MAX_FIELDS:
            raise RecordingError(path, "header", f"{len(data.dtype.names)} fields; at most "
                                 f"{MAX_FIELDS} are read")
        names = [str(n) for n in data.dtype.names]
        tcol, sig, thr, rpm, sig_names = _layout(path, names, columns, default_signals=True)
        fields = list(data.dtype.names)
        for i in sorted({i for i in [tcol, thr, *sig, *rpm] if i is not None}):
            sub = data.dtype.fields[fields[i]][0]
            if sub.shape != () or sub.kind not in "iuf" or sub.itemsize > 8:
                raise RecordingError(path, "header", f"field {names[i][:40]!r} holds {sub}; only "
                                     "plain numbers (integer or float) are read")

        def get(rows, i):
            return np.asarray(rows[fields[i]], dtype=np.float64)

        nrows = data.shape[0]
    else:
        if data.dtype.kind not in "iuf" or data.dtype.itemsize > 8:
            raise RecordingError(path, "header", f"unsupported array type {data.dtype}; only plain "
                                 "numbers (integer or float) are read")
        if data.ndim == 1:
            data = data[:, None]
        if data.ndim != 2:
            raise RecordingError(path, "header", f"expected a 1-D or 2-D array, got {data.ndim}-D")
        if data.shape[1] == 0:
            raise RecordingError(path, "header", "the array has no columns")
        if data.shape[1] > MAX_FIELDS:
            raise RecordingError(path, "header", f"{data.shape[1]} columns; at most {MAX_FIELDS} are "
                                 "read (is the array transposed?)")
        names = [str(i) for i in range(data.shape[1])]
        tcol, sig, thr, rpm, sig_names = _layout(path, names, columns, default_signals=True)

        def get(rows, i):
            return np.asarray(rows[:, i], dtype=np.float64)

        nrows = data.shape[0]
    if columns.time_column is None and columns.sample_rate_hz is None:
        raise InputError(
            "sample_rate_hz", "a sample rate or a time column", None,
            "a .npy recording needs one of them",
        )
    if nrows == 0:
        raise RecordingError(path, "header", "the array holds no rows")

    def block_at(start: int, block_rows: int) -> Block:
        rows = data[start:start + block_rows]
        with np.errstate(all="ignore"):  # values out of range become missing, checked later
            sigs = np.column_stack([get(rows, i) for i in sig])
            time_s = None if tcol is None else get(rows, tcol) * columns.time_scale_s
            throttle = None if thr is None else get(rows, thr)
            rotor = each = None
            if rpm:
                each = np.column_stack([get(rows, i) for i in rpm]) * columns.rpm_scale_hz
                rotor = each.mean(axis=1)
                if len(rpm) == 1:
                    each = None
        return Block(start, time_s, sigs, throttle, rotor, each)

    def blocks(block_rows: int) -> Iterator[Block]:
        for start in range(0, nrows, block_rows):
            yield block_at(start, block_rows)

    return Recording(path, "npy", tuple(sig_names), columns.sample_rate_hz, None, nrows,
                     thr is not None, bool(rpm), blocks, columns)
