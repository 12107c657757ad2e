"""The fleet: analyse every new recording of a fleet, keep the results, report drift."""

from __future__ import annotations

import os
import sys
from pathlib import Path
from typing import Any

import click

from ._common import EXIT_FAIL, EXIT_OK, PATH, emit, force_option


@click.command("fleet")
@click.argument("manifest", type=PATH)
@click.option("--store", "store_path", type=PATH,
              help="Store file (SQLite); default: fleet-store.sqlite next to the manifest.")
@click.option("--jobs", "-j", type=click.IntRange(1, 1024), default=1, show_default=True,
              help="Local worker processes (with --scheduler local: its workers).")
@click.option("--scheduler", envvar="DASK_SCHEDULER_ADDRESS",
              help="Dask scheduler address (tcp://host:8786), or 'local' to start a local cluster; "
                   "default $DASK_SCHEDULER_ADDRESS.")
@click.option("--format", "fmt", type=click.Choice(["table", "json"]), default="table", show_default=True)
@click.option("--quiet", "-q", is_flag=True, help="No progress bar.")
@click.option("--output", "-o", type=PATH, help="Write the report here (atomically).")
@force_option
def fleet_command(manifest: Path, store_path: Path | None, jobs: int, scheduler: str | None, fmt: str,
                  quiet: bool, output: Path | None) -> None:
    """Analyse every recording of a fleet not yet analysed; report drift per aircraft.

    Exit code 1 when any aircraft is flagged (a mode left its baseline's band,
    or the build's verdict got worse), 0 otherwise, 2 for bad input.
    Tap tests are done with the propellers removed. Results are design advice.
    """
    from ..fleet.pipeline import analyse_fleet, assess_fleet, plan_fleet
    from ..fleet.store import DEFAULT_STORE_NAME, Store
    from ..inputs.manifest import load_manifest
    from ..report.fleet import render_json, render_table

    fleet = load_manifest(manifest)
    store_file = store_path if store_path is not None else Path(fleet.path).parent / DEFAULT_STORE_NAME
    inputs = [fleet.path] + [a.build_path for a in fleet.aircraft] + \
             [r.path for a in fleet.aircraft for r in a.recordings]
    if scheduler == "local" and jobs == 1:
        jobs = os.cpu_count() or 2
    with Store(store_file, inputs) as store:
        plan = plan_fleet(fleet, store)
        bars = _Bars(enabled=not quiet)
        try:
            run = analyse_fleet(plan, store, jobs=jobs, scheduler=scheduler or None, progress=bars.update)
        finally:
            bars.close()
        result = assess_fleet(fleet, store, plan, run)
    emit(render_json(result) if fmt == "json" else render_table(result), output, inputs + [store_file])
    sys.exit(EXIT_FAIL if any(a.flagged for a in result.aircraft) else EXIT_OK)


class _Bars:
    """One click progress bar on stderr per stage (hashing, analysing), made when the stage starts."""

    def __init__(self, enabled: bool) -> None:
        self.enabled = enabled
        self.stage: str | None = None
        self.bar: Any = None

    def update(self, stage: str, done: int, total: int) -> None:
        if not self.enabled:
            return
        if stage != self.stage:
            self.close()
            self.stage = stage
            self.bar = click.progressbar(length=total, label=f"{stage} recordings", file=sys.stderr,
                                         show_pos=True)
            self.bar.__enter__()
        if self.bar is not None:
            self.bar.update(1)

    def close(self) -> None:
        if self.bar is not None:
            self.bar.__exit__(None, None, None)
            self.bar = None


#: Library fields and the flag that sets each.
FIELD_FLAGS = {"jobs": "--jobs", "scheduler": "--scheduler"}

#: The commands this module adds to the group.
COMMANDS = (fleet_command,)
