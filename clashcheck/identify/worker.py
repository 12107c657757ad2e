"""A second process for the streaming pass of a long flight analysis.

The streaming pass (reading the file, the recording checks, the spectra; numpy
and, for CSV, pandas) and the import of scipy for the peak analysis are both
mostly Python-level work.  In one process they take turns under the GIL; in two
processes they run side by side on two cores.  So for a long recording
:func:`~.flight.analyse_flight` starts ``python -m clashcheck.identify.worker``,
hands it the request, imports scipy while the child streams, and then finishes
the analysis on the child's small totals (:class:`~.flight.StreamedFlight`).
The numbers are the same as in one process: the child runs the same code.
(One process with a CSV reader that parses outside the GIL, pyarrow's, in a
thread was measured against this for issue 9: 12–27 % slower in four runs of
``bench/bench_modes.py`` on its 10-minute file, so the second process stays.)

Used when all of these hold (:func:`wanted`):

- the recording file is at least :data:`MIN_BYTES` long;
- the process may use two or more CPUs;
- the request pickles (settings with a lambda for the rotor rate do not);
- the environment variable ``CLASHCHECK_WORKER`` is not ``off`` (or ``0``);
  ``on`` skips the first two conditions.

If the child cannot start, or ends before it says it is ready, the pass runs
in this process instead.  The request and the child's messages are pickles on
the two private pipes between parent and child; no file or user text is ever
unpickled.  The child's stderr goes to a temporary file, quoted if it fails.

Messages from the child, one pickle each: ``("ready",)``, ``("progress",
rows_done, rows_total)``, then ``("done", totals)``, ``("error", exc)`` for a
:class:`~clashcheck.errors.ClashcheckError`, or ``("crash", traceback_text)``.
"""

from __future__ import annotations

import atexit
import os
import pickle
import subprocess
import sys
import tempfile
from collections.abc import Callable
from typing import Any

__all__ = ["MIN_BYTES", "ENV_SWITCH", "wanted", "warm_up", "start", "Child", "main"]

#: Recordings smaller than this [bytes] stream in the calling process.
MIN_BYTES = 16 << 20

#: Environment variable that turns the second process off (``off`` or ``0``).
ENV_SWITCH = "CLASHCHECK_WORKER"


def _cpus() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # not on every platform
        return os.cpu_count() or 1


def _switch() -> str:
    return os.environ.get(ENV_SWITCH, "").strip().lower()


def _file_wanted(path: str) -> bool:
    """The checks that need only the file: the switch, its length and the CPUs."""
    switch = _switch()
    if switch in ("off", "0") or not sys.executable or getattr(sys, "frozen", False):
        return False  # a frozen program's executable is not a Python to run -m with
    if switch == "on":
        return True
    try:
        return os.path.getsize(path) >= MIN_BYTES and _cpus() >= 2
    except OSError:
        return False


def wanted(recording: Any, settings: Any) -> bool:
    """True when a second process is worth starting for this analysis.

    ``CLASHCHECK_WORKER=off`` (or ``0``) never starts one; ``on`` starts one
    whatever the file's length and the number of CPUs (for tests and timing).

    Parameters
    ----------
    recording : Recording
        The opened recording; without ``columns`` (the choice it was opened
        with) no child can open it again, and none is started.
    settings : object
        The analysis settings (e.g. ``FlightSettings``) to send to the child;
        they must pickle.

    Returns
    -------
    bool
        True when the switch allows it and the file is long enough with two or
        more CPUs (or the switch is ``on``), and the column choice and
        settings pickle; else False.
    """
    if getattr(recording, "columns", None) is None or not _file_wanted(recording.path):
        return False
    try:
        pickle.dumps((recording.columns, settings))
    except (pickle.PicklingError, TypeError, AttributeError):
        return False
    return True


#: A child started ahead of its request by :func:`warm_up`, or ``None``.
_spare: Child | None = None


def warm_up(path: str | os.PathLike[str]) -> None:
    """Start a child now for a recording that will probably stream in one.

    The command line calls this first thing, so the child's own start-up (Python,
    numpy, and pandas for a CSV) overlaps the parent's loading of the build file.
    The child waits for its request; if none comes it ends when this process does.

    Parameters
    ----------
    path : str or os.PathLike
        The recording that will probably be analysed. A child is started only
        when none is waiting yet and the file passes the switch, length and
        CPU checks of :func:`wanted`; a CSV (``.csv``, ``.txt``, ``.tsv``)
        child preloads its reader.

    Returns
    -------
    None
        The child, if started, is kept until a request takes it or this
        process ends.
    """
    global _spare
    text = os.fspath(path)
    if _spare is None and _file_wanted(text):
        _spare = _spawn(preload_csv=text.lower().endswith((".csv", ".txt", ".tsv")))


def _discard_spare() -> None:
    global _spare
    if _spare is not None:
        _spare.close()
        _spare = None


atexit.register(_discard_spare)


def _spawn(preload_csv: bool) -> Child | None:
    # the package's own folder first on the child's path, so the child imports
    # this very copy (an editable checkout as well as an installed one)
    root = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
    env = dict(os.environ)
    # the child makes no BLAS calls; idle BLAS threads would only spin
    env.setdefault("OPENBLAS_NUM_THREADS", "1")
    # glibc malloc: keep freed blocks for reuse instead of handing every large one
    # back to the kernel, which makes each new block fault its pages in again
    # (about a fifth of the CSV reader's time); see mallopt(3)
    env.setdefault("MALLOC_MMAP_THRESHOLD_", str(64 << 20))
    env.setdefault("MALLOC_TRIM_THRESHOLD_", str(128 << 20))
    env["PYTHONPATH"] = os.pathsep.join(p for p in (root, env.get("PYTHONPATH", "")) if p)
    errfile = tempfile.TemporaryFile()
    cmd = [sys.executable, "-P", "-m", "clashcheck.identify.worker"]
    if preload_csv:
        cmd.append("--csv")
    try:
        proc = subprocess.Popen(cmd, stdin=subprocess.PIPE, stdout=subprocess.PIPE,
                                stderr=errfile, env=env)
    except OSError:
        errfile.close()
        return None
    return Child(proc, errfile)


def start(kind: str, recording: Any, settings: Any) -> Child | None:
    """Hand a request to a child (the spare one if it runs), or return ``None``.

    Parameters
    ----------
    kind : str
        The pass to run, as ``"module:function"`` inside this package, e.g.
        ``"clashcheck.identify.flight:stream_flight"``; it is called as
        ``function(recording, settings, progress)`` and returns picklable totals.
    recording : Recording
        The opened recording; the child opens its file again with the same columns.
    settings : object
        The analysis settings (must pickle).
    """
    global _spare
    request = pickle.dumps((kind, recording.path, recording.columns, settings),
                           protocol=pickle.HIGHEST_PROTOCOL)
    child, _spare = _spare, None
    if child is not None and child.proc.poll() is not None:
        child.close()
        child = None
    if child is None:
        child = _spawn(preload_csv=recording.format == "csv")
        if child is None:
            return None
    try:
        child.proc.stdin.write(request)  # type: ignore[union-attr]
        child.proc.stdin.close()  # type: ignore[union-attr]
    except OSError:
        child.close()
        return None
    return child


class Child:
    """A running child process; use as a context manager so it never outlives its use."""

    def __init__(self, proc: subprocess.Popen, errfile: Any) -> None:
        self.proc = proc
        self._errfile = errfile
        self.ready = False

    def __enter__(self) -> Child:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        """Stop the child if it still runs, and release its pipes."""
        if self.proc.poll() is None:
            self.proc.kill()
        self.proc.wait()
        for pipe in (self.proc.stdin, self.proc.stdout):
            if pipe is not None and not pipe.closed:
                pipe.close()
        self._errfile.close()

    def _stderr_tail(self) -> str:
        self._errfile.seek(0)
        lines = self._errfile.read().decode("utf-8", "replace").strip().splitlines()
        return lines[-1] if lines else "no message"

    def result(self, progress: Callable[[int, int], None] | None = None) -> Any:
        """Wait for the child's totals, passing its progress on.

        Parameters
        ----------
        progress : callable or None
            Called as ``progress(rows_done, rows_total)`` [rows] for each
            progress message from the child; ``rows_total`` is the recording's
            row estimate. ``None`` ignores progress.

        Returns
        -------
        object or None
            The totals; ``None`` when the child ended before it was ready (the
            caller then runs the pass itself).

        Raises
        ------
        ClashcheckError
            The error the child's pass raised (a malformed recording, say).
        RuntimeError
            If the child failed after it started the pass.
        """
        assert self.proc.stdout is not None
        while True:
            try:
                msg = pickle.load(self.proc.stdout)
            except (EOFError, pickle.UnpicklingError, OSError):
                code = self.proc.wait()
                if not self.ready:
                    return None
                raise RuntimeError(f"the streaming process ended unexpectedly (exit code "
                                   f"{code}): {self._stderr_tail()}") from None
            tag = msg[0]
            if tag == "ready":
                self.ready = True
            elif tag == "progress":
                if progress is not None:
                    progress(msg[1], msg[2])
            elif tag == "done":
                return msg[1]
            elif tag == "error":
                raise msg[1]
            else:
                raise RuntimeError(f"the streaming process failed:\n{msg[1]}")


def _resolve(target: str) -> Callable[..., Any]:
    """The streaming pass named ``module:function``, inside this package only.

    The worker knows no analysis by import: the caller names its pass, so the
    analysis modules import this one and never the other way round.
    """
    import importlib

    module, _, name = target.partition(":")
    if not module.startswith(__package__ + ".") or not name.isidentifier():
        raise ValueError(f"unknown pass {target!r}")
    found: Callable[..., Any] = getattr(importlib.import_module(module), name)
    return found


def main() -> int:
    """The child's side: read one request from stdin, answer on stdout."""
    out = sys.stdout.buffer
    sys.stdout = sys.stderr  # nothing else may write into the message pipe

    def send(msg: tuple) -> None:
        pickle.dump(msg, out, protocol=pickle.HIGHEST_PROTOCOL)
        out.flush()

    import traceback

    if "--csv" in sys.argv[1:]:  # a CSV request is likely: load its reader while waiting
        try:
            import pandas  # noqa: F401
        except ImportError:
            pass
    try:
        request = sys.stdin.buffer.read()
        if not request:  # no request came (the parent ended early)
            return 0
        kind, path, columns, settings = pickle.loads(request)
        stream_pass = _resolve(kind)
        from ..errors import ClashcheckError
        from .readers import open_recording
    except Exception:
        traceback.print_exc()
        return 1  # not ready: the parent runs the pass itself
    try:
        send(("ready",))
        rec = open_recording(path, columns)
        totals = stream_pass(rec, settings, lambda done, total: send(("progress", done, total)))
        send(("done", totals))
    except BrokenPipeError:  # the parent stopped listening
        return 0
    except ClashcheckError as exc:
        send(("error", exc))
    except Exception:
        send(("crash", traceback.format_exc()))
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
