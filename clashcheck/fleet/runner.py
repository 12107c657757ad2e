"""Run recording analyses: in this process, on local processes, or on a Dask cluster.

Each recording is one task.  A task carries an absolute path and the
already-built column plan and settings (small, picklable objects), and
returns an :class:`~clashcheck.fleet.records.AnalysisRecord`: the modes as
plain numbers, or the one-line error.  An error in one recording never stops
the others.  The number of tasks in flight is bounded, so memory stays flat
however many recordings the fleet has.

Local processes use :class:`concurrent.futures.ProcessPoolExecutor`;
clusters use :mod:`dask.distributed` (optional extra ``fleet``).
"""

from __future__ import annotations

import os
import time
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass
from typing import Any

from ..errors import ClashcheckError, InputError
from .records import AnalysisRecord, ModeRecord

__all__ = ["Task", "analyse_task", "hash_file", "Workers", "run_tasks", "worker_failed", "hash_failed",
           "DASK_MISSING", "IN_FLIGHT_PER_WORKER"]

#: Tasks kept in flight per worker (bounds memory and the scheduler's queue).
IN_FLIGHT_PER_WORKER = 4
#: The message when Dask is asked for but not installed.
DASK_MISSING = "dask.distributed is not installed; install the fleet extra: pip install 'clashcheck[fleet]'"


@dataclass(frozen=True)
class Task:
    """One recording to analyse."""

    #: Absolute path of the recording (resolved before it is sent to a worker).
    path: str
    #: tap or flight.
    kind: str
    #: The reader's column plan (:class:`clashcheck.identify.Columns`).
    columns: Any
    #: The analysis settings (:class:`clashcheck.identify.TapSettings` or ``FlightSettings``).
    settings: Any
    #: SHA-256 of the recording's bytes.
    content_sha256: str
    #: SHA-256 of the settings.
    settings_key: str


def _mode_record(m: Any) -> ModeRecord:
    # friction-damping figures, where the analysis gives them: on the mode itself or in its
    # damping-against-amplitude result (``amplitude_damping``, tap tests)
    amp = getattr(m, "amplitude_damping", None)

    def opt(name: str) -> float | None:
        v = getattr(m, name, None)
        if v is None and amp is not None:
            v = getattr(amp, name, None)
        return None if v is None else float(v)

    return ModeRecord(name=m.name, frequency_hz=float(m.frequency_hz),
                      damping=None if m.damping is None else float(m.damping),
                      damping_low=float(m.damping_low), damping_high=float(m.damping_high), axis=m.axis,
                      confidence=float(m.confidence), viscous_damping=opt("viscous_damping"),
                      friction_drop_per_cycle=opt("friction_drop_per_cycle"))


def _one_line(exc: BaseException) -> str:
    text = str(exc) or type(exc).__name__
    return " ".join(text.split())


def analyse_task(task: Task) -> AnalysisRecord:
    """Analyse one recording and return a small record; errors come back as records.

    Parameters
    ----------
    task : Task
        The recording and how to analyse it.

    Returns
    -------
    AnalysisRecord
        The modes found, or ``ok=False`` with the one-line error.
    """
    from ..identify import analyse_flight, analyse_tap, open_recording

    start = time.perf_counter()
    common: dict[str, Any] = dict(content_sha256=task.content_sha256, settings_key=task.settings_key, path=task.path,
                                  kind=task.kind)
    try:
        rec = open_recording(task.path, task.columns)
        result = (analyse_tap if task.kind == "tap" else analyse_flight)(rec, task.settings)
    except (ClashcheckError, OSError, ValueError, MemoryError) as exc:
        return AnalysisRecord(ok=False, error=_one_line(exc), elapsed_s=time.perf_counter() - start,
                              **common)
    except Exception as exc:  # noqa: BLE001 - one bad recording never stops the batch
        return AnalysisRecord(ok=False, error=f"internal error: {type(exc).__name__}: {_one_line(exc)}",
                              elapsed_s=time.perf_counter() - start, **common)
    return AnalysisRecord(
        ok=True, modes=tuple(_mode_record(m) for m in result.modes), method=result.method,
        sample_rate_hz=float(result.sample_rate_hz), duration_s=float(result.duration_s),
        resolution_hz=float(result.resolution_hz), warnings=tuple(result.warnings),
        elapsed_s=time.perf_counter() - start, **common)


def _single_process_worker() -> None:
    """Pool initialiser: a worker analyses in its own process only (no streaming child)."""
    os.environ.setdefault("CLASHCHECK_WORKER", "off")


def hash_file(path: str) -> tuple[str, str | None, str | None]:
    """SHA-256 of one recording, run on a worker (it reads in parallel with the others).

    Parameters
    ----------
    path : str
        Absolute path.

    Returns
    -------
    tuple
        ``(path, hex digest or None, one-line error or None)``.
    """
    from .store import file_sha256

    try:
        return path, file_sha256(path), None
    except OSError as exc:
        return path, None, f"{path}: {exc.strerror or _one_line(exc)}"


def _bounded(submit: Callable[[Any], Any], wait_one: Callable[[set], tuple[set, set]],
             items: Iterable[Any], limit: int) -> Iterator[Any]:
    """Keep at most ``limit`` futures in flight; yield each finished future."""
    pending: set = set()
    it = iter(items)
    exhausted = False
    while True:
        while not exhausted and len(pending) < limit:
            try:
                pending.add(submit(next(it)))
            except StopIteration:
                exhausted = True
        if not pending:
            return
        done, pending = wait_one(pending)
        yield from done


def _dask():
    try:
        import dask.distributed as dd
    except ImportError:
        raise InputError("scheduler", "an installed dask.distributed", "not installed", DASK_MISSING) from None
    return dd


class Workers:
    """Where tasks run: this process, local processes, or a Dask cluster (a context manager).

    Parameters
    ----------
    jobs : int
        Local worker processes (1 = in this process); with ``scheduler="local"``,
        the number of workers of the local cluster.
    scheduler : str, optional
        ``None`` for local processes; ``"local"`` to start a Dask ``LocalCluster``;
        otherwise the address of a running Dask scheduler (``tcp://host:8786``).
    processes : bool
        For ``scheduler="local"``: workers in separate processes (``False``: threads
        of this process, for quick tests).

    Raises
    ------
    InputError
        ``jobs`` below 1, Dask missing, or the scheduler cannot be reached.
    """

    def __init__(self, jobs: int = 1, scheduler: str | None = None, processes: bool = True) -> None:
        if not (isinstance(jobs, int) and jobs >= 1):
            raise InputError("jobs", "a whole number of at least 1", jobs)
        self.jobs, self.scheduler, self.processes = jobs, scheduler or None, processes
        self._pool: Any = None
        self._client: Any = None
        self._cluster: Any = None
        self._dd: Any = None
        if self.scheduler:
            self._dd = _dask()  # fail early, before any work, when Dask is missing

    def __enter__(self) -> "Workers":
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        """Stop what this object started (never a cluster it only connected to)."""
        if self._pool is not None:
            self._pool.shutdown(cancel_futures=True)
            self._pool = None
        if self._client is not None:
            self._client.close()
            self._client = None
        if self._cluster is not None:
            self._cluster.close()
            self._cluster = None

    def _start(self) -> None:
        if self.scheduler is None and self.jobs > 1 and self._pool is None:
            import multiprocessing
            from concurrent.futures import ProcessPoolExecutor

            ctx = multiprocessing.get_context("spawn")  # no fork of a process that may hold threads
            self._pool = ProcessPoolExecutor(max_workers=self.jobs, mp_context=ctx,
                                             initializer=_single_process_worker)
        elif self.scheduler is not None and self._client is None:
            dd = self._dd
            if self.scheduler == "local":
                self._cluster = dd.LocalCluster(n_workers=self.jobs, threads_per_worker=1,
                                                processes=self.processes, dashboard_address=":0")
                self._client = dd.Client(self._cluster)
            else:
                try:
                    self._client = dd.Client(self.scheduler, timeout="20s")
                except OSError as exc:
                    raise InputError("scheduler", "the address of a running Dask scheduler", self.scheduler,
                                     _one_line(exc)) from None

    def map_unordered(self, fn: Callable[[Any], Any], items: Iterable[Any],
                      on_failure: Callable[[Any, BaseException], Any] | None = None) -> Iterator[Any]:
        """``fn(item)`` for every item, on the workers; results as they finish.

        Parameters
        ----------
        fn : callable
            A module-level function (it is pickled to the workers).
        items : iterable
            Its arguments, one per call; small and picklable.
        on_failure : callable, optional
            ``on_failure(item, exc)`` gives the result of an item whose worker failed
            (a process killed, a lost cluster worker); without it the error is raised.

        Yields
        ------
        object
            Each result, in the order they finish.
        """
        if self.scheduler is None and self.jobs == 1:
            yield from map(fn, items)
            return
        self._start()
        if self._pool is not None:
            from concurrent.futures import FIRST_COMPLETED, wait

            pool = self._pool
            of: dict[Any, Any] = {}

            def submit_local(x: Any) -> Any:
                fut = pool.submit(fn, x)
                of[fut] = x
                return fut

            for fut in _bounded(submit_local, lambda p: wait(p, return_when=FIRST_COMPLETED),
                                items, IN_FLIGHT_PER_WORKER * self.jobs):
                yield self._result(fut, of.pop(fut), on_failure)
            return
        client = self._client
        workers = max(1, len(client.scheduler_info().get("workers", {})) or self.jobs)
        ac = self._dd.as_completed()
        item_of: dict[Any, Any] = {}

        def submit(x: Any) -> Any:
            fut = client.submit(fn, x, pure=False)
            ac.add(fut)
            item_of[fut.key] = x
            return fut

        def wait_one(pending: set) -> tuple[set, set]:
            fut = next(ac)
            pending.discard(fut)
            return {fut}, pending

        for fut in _bounded(submit, wait_one, items, IN_FLIGHT_PER_WORKER * workers):
            yield self._result(fut, item_of.pop(fut.key), on_failure)

    @staticmethod
    def _result(fut: Any, item: Any, on_failure: Callable[[Any, BaseException], Any] | None) -> Any:
        try:
            return fut.result()
        except Exception as exc:  # noqa: BLE001 - the worker failed, not the recording
            if on_failure is None:
                raise
            return on_failure(item, exc)


def run_tasks(tasks: Iterable[Task], *, jobs: int = 1, scheduler: str | None = None,
              processes: bool = True) -> Iterator[AnalysisRecord]:
    """Analyse every task; yield records as they finish (not in task order).

    Parameters
    ----------
    tasks : iterable of Task
        The recordings to analyse.
    jobs, scheduler, processes
        Where they run; see :class:`Workers`.

    Yields
    ------
    AnalysisRecord
        One per task, errors included.
    """
    with Workers(jobs, scheduler, processes) as workers:
        yield from workers.map_unordered(analyse_task, tasks, worker_failed)


def worker_failed(task: Task, exc: BaseException) -> AnalysisRecord:
    """The record of a task whose worker failed: reported, not stored (a re-run tries again).

    Parameters
    ----------
    task : Task
        The task.
    exc : BaseException
        What the worker's failure raised here.

    Returns
    -------
    AnalysisRecord
        ``ok=False``, ``transient=True``, the one-line error.
    """
    return AnalysisRecord(content_sha256=task.content_sha256, settings_key=task.settings_key, path=task.path,
                          kind=task.kind, ok=False, transient=True,
                          error=f"worker failed: {type(exc).__name__}: {_one_line(exc)}")


def hash_failed(path: str, exc: BaseException) -> tuple[str, None, str]:
    """The result of a hashing task whose worker failed.

    Parameters
    ----------
    path : str
        The file.
    exc : BaseException
        What the worker's failure raised here.

    Returns
    -------
    tuple
        ``(path, None, one-line error)``.
    """
    return path, None, f"worker failed: {type(exc).__name__}: {_one_line(exc)}"
