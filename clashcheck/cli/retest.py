"""The retest: two tap analyses of the same frame, before and after a change."""

from __future__ import annotations

import sys
from pathlib import Path

import click

from ._common import EXIT_FAIL, EXIT_OK, PATH, emit, force_option


@click.command("retest")
@click.argument("before", type=PATH)
@click.argument("after", type=PATH)
@click.option("--format", "fmt", type=click.Choice(["table", "json"]), default="table", show_default=True)
@click.option("--output", "-o", type=PATH, help="Write the report here (atomically).")
@force_option
def retest_command(before: Path, after: Path, fmt: str, output: Path | None) -> None:
    """Compare two tap analyses (modes files) of the same frame, before and after a change.

    Matched modes with the change of frequency, viscous damping and friction
    drop per cycle, each with its 95 % uncertainty. Exit codes: 0 no mode's
    damping fell by more than its uncertainty, 1 damping got worse, 2 bad input.
    Tap tests are done with the propellers removed.
    """
    from ..analysis.retest import retest
    from ..inputs.buildfile import load_modes_file
    from ..report.retest import render_retest

    result = retest(load_modes_file(before), load_modes_file(after))
    emit(render_retest(result, fmt), output, [before, after])
    sys.exit(EXIT_FAIL if result.worse else EXIT_OK)


#: The commands this module adds to the group.
COMMANDS = (retest_command,)
