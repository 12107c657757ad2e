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

__all__ = ["Task", "analyse_task", "run_tasks", "DASK_MISSING", "IN_FLIGHT_PER_WORKER"]

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
    def opt(name: str) -> float | None:  # figures another analysis may add (friction damping)
        v = getattr(m, name, None)
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


def _bounded(submit: Callable[[Task], Any], wait_one: Callable[[set], tuple[set, set]],
             tasks: Iterable[Task], limit: int) -> Iterator[Any]:
    """Keep at most ``limit`` futures in flight; yield each finished future."""
    pending: set = set()
    it = iter(tasks)
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


def _run_processes(tasks: Iterable[Task], jobs: int) -> Iterator[AnalysisRecord]:
    import multiprocessing
    from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait

    ctx = multiprocessing.get_context("spawn")  # no fork of a process that may hold threads
    with ProcessPoolExecutor(max_workers=jobs, mp_context=ctx, initializer=_single_process_worker) as pool:
        for fut in _bounded(lambda t: pool.submit(analyse_task, t),
                            lambda p: wait(p, return_when=FIRST_COMPLETED), tasks,
                            IN_FLIGHT_PER_WORKER * jobs):
            yield fut.result()


def _dask():
    try:
        import dask.distributed as dd
    except ImportError:
        raise InputError("scheduler", "an installed dask.distributed", "not installed", DASK_MISSING) from None
    return dd


def _run_dask(tasks: Iterable[Task], scheduler: str, jobs: int, processes: bool) -> Iterator[AnalysisRecord]:
    dd = _dask()
    cluster = None
    try:
        if scheduler == "local":
            cluster = dd.LocalCluster(n_workers=jobs, threads_per_worker=1, processes=processes,
                                      dashboard_address=None)
            client = dd.Client(cluster)
        else:
            try:
                client = dd.Client(scheduler, timeout="20s")
            except OSError as exc:
                raise InputError("scheduler", "the address of a running Dask scheduler", scheduler,
                                 _one_line(exc)) from None
        with client:
            workers = max(1, len(client.scheduler_info().get("workers", {})) or jobs)
            ac = dd.as_completed()

            def submit(task: Task) -> Any:
                fut = client.submit(analyse_task, task, pure=False)
                ac.add(fut)
                return fut

            def wait_one(pending: set) -> tuple[set, set]:
                fut = next(ac)
                pending.discard(fut)
                return {fut}, pending

            for fut in _bounded(submit, wait_one, tasks, IN_FLIGHT_PER_WORKER * workers):
                yield fut.result()
    finally:
        if cluster is not None:
            cluster.close()


def run_tasks(tasks: Iterable[Task], *, jobs: int = 1, scheduler: str | None = None,
              processes: bool = True) -> Iterator[AnalysisRecord]:
    """Analyse every task; yield records as they finish (not in task order).

    Parameters
    ----------
    tasks : iterable of Task
        The recordings to analyse.
    jobs : int
        Local worker processes (1 = in this process); with ``scheduler="local"``,
        the number of workers of the local cluster.
    scheduler : str, optional
        ``None`` for local processes; ``"local"`` to start a Dask ``LocalCluster``;
        otherwise the address of a running Dask scheduler (``tcp://host:8786``).
    processes : bool
        For ``scheduler="local"``: workers in separate processes (``False``: threads
        of this process, for quick tests).

    Yields
    ------
    AnalysisRecord
        One per task, errors included.

    Raises
    ------
    InputError
        ``jobs`` below 1, Dask missing, or the scheduler cannot be reached.
    """
    if not (isinstance(jobs, int) and jobs >= 1):
        raise InputError("jobs", "a whole number of at least 1", jobs)
    if scheduler:
        yield from _run_dask(tasks, scheduler, jobs, processes)
    elif jobs == 1:
        for task in tasks:
            yield analyse_task(task)
    else:
        yield from _run_processes(tasks, jobs)
