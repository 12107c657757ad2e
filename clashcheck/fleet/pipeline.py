"""The fleet pipeline: manifest → tasks → store → drift and verdict per aircraft.

:func:`plan_fleet` turns a validated manifest into tasks (content hash and
settings key per recording) and says which are not yet in the store;
:func:`analyse_fleet` runs those and keeps the results; :func:`assess_fleet`
reads every aircraft's analyses back from the store and judges them
(:func:`clashcheck.analysis.drift.drift` and the build's clash verdict under
its baseline and its latest measured modes).
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import json
from collections.abc import Callable, Sequence
from typing import Any
from dataclasses import dataclass, field

from ..analysis.clash import VERDICTS, check_build
from ..analysis.drift import DriftResult, DriftSettings, ModeFeatures, Observation, drift, label_modes
from ..errors import InputError
from ..inputs.manifest import AircraftEntry, Manifest, RecordingEntry
from ..model.build import Build, MeasuredModes
from ..model.modes import Mode
from .records import AnalysisRecord, ModeRecord
from .runner import Task
from .store import Store

__all__ = [
    "ANALYSIS_VERSION",
    "settings_key",
    "PlannedRecording",
    "FleetPlan",
    "plan_fleet",
    "Progress",
    "RunSummary",
    "analyse_fleet",
    "VerdictChange",
    "AircraftResult",
    "FleetResult",
    "assess_fleet",
]

#: Part of every settings key: bump when the analyses' results change, so stored
#: results of an older analysis are not reused.
ANALYSIS_VERSION = "clashcheck-fleet-1"


def settings_key(entry: RecordingEntry, build_sha256: str | None) -> str:
    """SHA-256 (hex) of everything besides the bytes that shapes a recording's analysis.

    Parameters
    ----------
    entry : RecordingEntry
        The recording (kind and options, in SI).
    build_sha256 : str or None
        Content hash of the build the analysis uses (flight recordings), if any.

    Returns
    -------
    str
        The settings key.
    """
    opts = {k: v for k, v in sorted(entry.options.items()) if k != "build"}
    doc = {"analysis": ANALYSIS_VERSION, "kind": entry.kind, "options": opts, "build": build_sha256}
    return hashlib.sha256(json.dumps(doc, sort_keys=True, default=repr).encode()).hexdigest()


@dataclass(frozen=True)
class PlannedRecording:
    """One recording of one aircraft, ready to analyse."""

    #: The aircraft's id.
    aircraft: str
    #: The manifest's entry.
    entry: RecordingEntry
    #: The reader's column plan.
    columns: Any
    #: The analysis settings.
    settings: Any
    #: The settings key (:func:`settings_key`).
    settings_key: str


@dataclass(frozen=True)
class FleetPlan:
    """Every recording of the fleet, with its settings and the file's size and mtime when planned."""

    #: One per (aircraft, recording), in manifest order.
    recordings: tuple[PlannedRecording, ...]
    #: (size [bytes], mtime [ns]) of every recording file when planned (the hash cache's key).
    stats: dict[str, tuple[int, int]] = field(default_factory=dict)

    def content_of(self, path: str, store: Store) -> str | None:
        """The file's SHA-256 from the store's cache, if it was hashed at this size and mtime.

        Parameters
        ----------
        path : str
            Absolute path of a recording of this plan.
        store : Store
            The store.

        Returns
        -------
        str or None
            The hex digest, or ``None`` when not (yet) hashed.
        """
        size, mtime = self.stats[path]
        return store.cached_hash(path, size, mtime)

    def unhashed(self, store: Store) -> list[str]:
        """Recording files not hashed at their current size and mtime, each once.

        Parameters
        ----------
        store : Store
            The store (its hash cache).

        Returns
        -------
        list of str
            Absolute paths, sorted.
        """
        return sorted({r.entry.path for r in self.recordings if self.content_of(r.entry.path, store) is None})

    def pending(self, store: Store) -> list[Task]:
        """Tasks for every hashed recording whose (content, settings) is not in the store, each once.

        Parameters
        ----------
        store : Store
            The store.

        Returns
        -------
        list of Task
            One per new (content hash, settings key) pair, in manifest order.
        """
        known = store.known()
        out: dict[tuple[str, str], Task] = {}
        for r in self.recordings:
            digest = self.content_of(r.entry.path, store)
            if digest is not None and (digest, r.settings_key) not in known:
                out.setdefault((digest, r.settings_key),
                               Task(path=r.entry.path, kind=r.entry.kind, columns=r.columns,
                                    settings=r.settings, content_sha256=digest, settings_key=r.settings_key))
        return list(out.values())


def _where(aircraft: AircraftEntry, i: int) -> str:
    return f"aircraft {aircraft.id!r}.recordings[{i}]"


def plan_fleet(manifest: Manifest, store: Store) -> FleetPlan:
    """Build every recording's column plan, settings and settings key.

    Parameters
    ----------
    manifest : Manifest
        The validated manifest.
    store : Store
        The store (builds are hashed through its cache).

    Returns
    -------
    FleetPlan
        Every recording, with the size and mtime of its file.

    Raises
    ------
    InputError
        When a recording's options do not make valid settings, or its file
        cannot be read, naming the aircraft, the recording and the field.
    """
    import os

    from ..identify.options import recording_plan
    from ..inputs.buildfile import load_build

    builds: dict[str, tuple[Build, str]] = {}

    def build_of(path: str, where: str) -> tuple[Build, str]:
        if path not in builds:
            try:
                builds[path] = (load_build(path), store.content_hash(path))
            except InputError as exc:
                raise InputError(f"{where}: {exc.field}", exc.expected, exc.got, exc.hint) from None
        return builds[path]

    out = []
    stats: dict[str, tuple[int, int]] = {}
    for ac in manifest.aircraft:
        builds.setdefault(ac.build_path, (ac.build, store.content_hash(ac.build_path)))
        for i, rec in enumerate(ac.recordings):
            where = _where(ac, i)
            opts = dict(rec.options)
            build, build_sha = build_of(opts.pop("build", ac.build_path), f"{where}.build")
            try:
                plan = recording_plan(rec.kind, build=build if rec.kind == "flight" else None, **opts)
            except InputError as exc:
                raise InputError(f"{where}.{exc.field.lstrip('-').replace('-', '_')}", exc.expected,
                                 exc.got, exc.hint) from None
            try:
                st = os.stat(rec.path)
            except OSError as exc:
                raise InputError(f"{where}.path", "a readable recording", rec.name,
                                 exc.strerror or str(exc)) from None
            stats[rec.path] = (st.st_size, st.st_mtime_ns)
            out.append(PlannedRecording(ac.id, rec, plan.columns, plan.settings,
                                        settings_key(rec, build_sha if rec.kind == "flight" else None)))
    return FleetPlan(recordings=tuple(out), stats=stats)


@dataclass(frozen=True)
class RunSummary:
    """What one run did."""

    #: Recordings analysed in this run.
    analysed: int
    #: Of those, the ones that failed.
    failed: int
    #: Recordings whose analysis was already in the store.
    reused: int
    #: Wall time of hashing and analyses [s].
    elapsed_s: float
    #: Files hashed in this run (new or changed since the last).
    hashed: int = 0
    #: Recordings not analysed, not stored (a re-run tries them again): (path, one-line error) for
    #: files that could not be read to hash them and tasks whose worker failed.
    unreadable: tuple[tuple[str, str], ...] = ()


#: A progress callback: ``progress(stage, done, total)``, stage "hashing" or "analysing".
Progress = Callable[[str, int, int], None]


def analyse_fleet(plan: FleetPlan, store: Store, *, jobs: int = 1, scheduler: str | None = None,
                  processes: bool = True, progress: Progress | None = None,
                  on_record: Callable[[AnalysisRecord], None] | None = None, batch: int = 64) -> RunSummary:
    """Hash new files and analyse the recordings not yet in the store, on the workers.

    First every file not hashed before (at its size and mtime) is hashed on the
    workers; then each (content, settings) pair not in the store is analysed
    once.  Results are committed in batches (each batch one transaction), so an
    interrupted run keeps every batch it finished.

    Parameters
    ----------
    plan : FleetPlan
        From :func:`plan_fleet`.
    store : Store
        Where results go.
    jobs : int
        Local worker processes, or local-cluster workers with ``scheduler="local"``.
    scheduler : str, optional
        ``"local"`` or a Dask scheduler address; ``None`` for local processes.
    processes : bool
        Local cluster workers as processes (``False``: threads; for tests).
    progress : callable, optional
        ``progress(stage, done, total)`` after each file hashed or analysed.
    on_record : callable, optional
        Called with each analysis record as it arrives.
    batch : int
        Records per store transaction.

    Returns
    -------
    RunSummary
        Counts and wall time.
    """
    import time

    from .runner import Workers, analyse_task, hash_failed, hash_file, worker_failed

    start = time.perf_counter()
    tick = progress or (lambda stage, done, total: None)
    unreadable: list[tuple[str, str]] = []
    analysed = failed = 0
    with Workers(jobs, scheduler, processes) as workers:
        todo = plan.unhashed(store)
        hashes: list[tuple[str, int, int, str]] = []
        for done, (path, digest, error) in enumerate(workers.map_unordered(hash_file, todo, hash_failed), 1):
            if digest is None:
                unreadable.append((path, error or "unreadable"))
            else:
                hashes.append((path, *plan.stats[path], digest))
            tick("hashing", done, len(todo))
        store.put([], hashes)
        tasks = plan.pending(store)
        pending: list[AnalysisRecord] = []
        for record in workers.map_unordered(analyse_task, tasks, worker_failed):
            if record.transient:  # the worker failed, not the recording: report, do not keep
                unreadable.append((record.path, record.error or "worker failed"))
            else:
                pending.append(record)
            analysed += 1
            failed += not record.ok
            if on_record is not None:
                on_record(record)
            tick("analysing", analysed, len(tasks))
            if len(pending) >= batch:
                store.put(pending)
                pending = []
        store.put(pending)
    unique = {(plan.content_of(r.entry.path, store), r.settings_key) for r in plan.recordings}
    return RunSummary(analysed=analysed, failed=failed, reused=max(0, len(unique) - analysed),
                      elapsed_s=time.perf_counter() - start, hashed=len(todo), unreadable=tuple(unreadable))


@dataclass(frozen=True)
class VerdictChange:
    """The build's clash verdict under the baseline modes and under the latest modes."""

    #: Verdict with the baseline's measured modes.
    baseline: str
    #: Verdict with the latest measured modes.
    latest: str
    #: Modes whose own verdict got worse: (name, baseline verdict, latest verdict).
    modes: tuple[tuple[str, str, str], ...] = ()

    @property
    def worse(self) -> bool:
        """True when the latest verdict is worse than the baseline's."""
        return VERDICTS.index(self.latest) > VERDICTS.index(self.baseline)


@dataclass(frozen=True)
class AircraftResult:
    """One aircraft's state."""

    #: Aircraft id.
    id: str
    #: Build file.
    build_path: str
    #: Build name.
    build_name: str
    #: Recordings listed.
    recordings: int
    #: The latest analysed recording (as named in the manifest), if any.
    latest_recording: str | None
    #: Its date.
    latest_date: _dt.datetime | None
    #: Its modes, each with its track label (the build's mode name when matched) or ``None``.
    latest_modes: tuple[tuple[str | None, ModeRecord], ...]
    #: Drift against the baseline.
    drift: DriftResult
    #: The verdicts under baseline and latest modes (``None`` while building the baseline).
    verdict: VerdictChange | None
    #: Recordings that failed: (name as in the manifest, one-line error).
    errors: tuple[tuple[str, str], ...] = ()

    @property
    def flagged(self) -> bool:
        """True when a drift finding exists or the build's verdict got worse."""
        return bool(self.drift.findings) or (self.verdict is not None and self.verdict.worse)


@dataclass(frozen=True)
class FleetResult:
    """The whole fleet's state after a run."""

    #: The manifest.
    manifest: str
    #: The store.
    store: str
    #: What this run analysed.
    run: RunSummary
    #: One result per aircraft, in manifest order.
    aircraft: tuple[AircraftResult, ...]
    #: The drift settings used.
    settings: DriftSettings = field(default_factory=DriftSettings)


def _features(m: ModeRecord) -> ModeFeatures:
    return ModeFeatures(frequency_hz=m.frequency_hz, damping=m.damping, axis=m.axis,
                        viscous_damping=m.viscous_damping, friction_drop_per_cycle=m.friction_drop_per_cycle,
                        name=m.name)


def _measured(build: Build, figures: Sequence[tuple[str, str, float, float | None]], source: str) -> Build:
    """``build`` with measured modes (label, axis, frequency, damping) merged in."""
    kinds = {m.name: m.kind for m in build.modes}
    modes = tuple(Mode(name=label, frequency_hz=f, damping=z, axis=axis, kind=kinds.get(label, "other"),
                       origin="measured", source=source) for label, axis, f, z in figures)
    return build.with_measured(MeasuredModes(modes, (), source)) if modes else build


def _verdicts(build: Build, result: DriftResult) -> VerdictChange:
    """Clash verdicts with the baseline's and with the latest figures of every track."""
    base, latest = [], []
    for tr in result.tracks:
        lims = {lim.feature: lim for lim in tr.limits}
        f0 = lims["frequency_hz"].baseline_value if "frequency_hz" in lims else tr.reference_frequency_hz
        z0 = lims["damping"].baseline_value if "damping" in lims else None
        base.append((tr.label, tr.axis, f0, z0))
        if tr.latest is None:  # not found this time: no evidence of change
            latest.append((tr.label, tr.axis, f0, z0))
        else:
            latest.append((tr.label, tr.axis, tr.latest.frequency_hz, tr.latest.damping))
    r0 = check_build(_measured(build, base, "fleet baseline"))
    r1 = check_build(_measured(build, latest, "latest recording"))
    before = {mr.mode.name: mr.verdict for mr in r0.modes}
    worse = tuple((mr.mode.name, before.get(mr.mode.name, "clear"), mr.verdict) for mr in r1.modes
                  if VERDICTS.index(mr.verdict) > VERDICTS.index(before.get(mr.mode.name, "clear")))
    return VerdictChange(baseline=r0.verdict, latest=r1.verdict, modes=worse)


def assess_fleet(manifest: Manifest, store: Store, plan: FleetPlan, run: RunSummary,
                 settings: DriftSettings | None = None) -> FleetResult:
    """Judge every aircraft from the analyses in the store.

    Parameters
    ----------
    manifest : Manifest
        The validated manifest.
    store : Store
        The store holding every recording's analysis.
    plan : FleetPlan
        From :func:`plan_fleet` (the keys of each recording).
    run : RunSummary
        From :func:`analyse_fleet`.
    settings : DriftSettings, optional
        Baseline size and design false-alarm rate.

    Returns
    -------
    FleetResult
        One :class:`AircraftResult` per aircraft.
    """
    settings = settings or DriftSettings()
    by_aircraft: dict[str, list[PlannedRecording]] = {}
    for pr in plan.recordings:
        by_aircraft.setdefault(pr.aircraft, []).append(pr)
    unreadable = dict(run.unreadable)
    out = []
    for ac in manifest.aircraft:
        obs: list[Observation] = []
        records: list[tuple[RecordingEntry, AnalysisRecord]] = []
        errors = []
        for pr in by_aircraft.get(ac.id, []):
            rec = pr.entry
            digest = plan.content_of(rec.path, store)
            r = store.get(digest, pr.settings_key) if digest is not None else None
            if r is None or not r.ok:
                why = r.error if r is not None else unreadable.get(rec.path, "not analysed")
                errors.append((rec.name, why or "failed"))
                continue
            records.append((rec, r))
            obs.append(Observation(rec.name, rec.date, tuple(_features(m) for m in r.modes)))
        refs = [(m.name, m.frequency_hz, m.axis) for m in ac.build.modes]
        result = drift(obs, [(e.date, e.what) for e in ac.events], settings, refs)
        verdict = _verdicts(ac.build, result) if result.status == "monitoring" else None
        latest_modes: tuple[tuple[str | None, ModeRecord], ...] = ()
        if records:
            labels: dict[tuple[str, float], str] = {}
            for tr in result.tracks:
                if tr.latest is not None:
                    labels[(tr.latest.name, tr.latest.frequency_hz)] = tr.label
            if not result.tracks:  # still building the baseline: name modes after the build's nearest
                feats = [_features(m) for m in records[-1][1].modes]
                labels = {(m.name, m.frequency_hz): label for m, label in zip(feats, label_modes(feats, refs))
                          if label is not None}
            latest_modes = tuple((labels.get((m.name, m.frequency_hz)), m) for m in records[-1][1].modes)
        out.append(AircraftResult(
            id=ac.id, build_path=ac.build_path, build_name=ac.build.name, recordings=len(ac.recordings),
            latest_recording=records[-1][0].name if records else None,
            latest_date=records[-1][0].date if records else None, latest_modes=latest_modes,
            drift=result, verdict=verdict, errors=tuple(errors)))
    return FleetResult(manifest=manifest.path, store=str(store.path), run=run, aircraft=tuple(out),
                       settings=settings)
