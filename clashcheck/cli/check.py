"""The check, catalog and plot: one build against its frame's modes."""

from __future__ import annotations

import sys
from pathlib import Path

import click

from ._common import (
    EXIT_FAIL,
    EXIT_OK,
    FAIL_LEVELS,
    FORMATS,
    PATH,
    force_option,
    emit,
    provenance_of,
)


@click.command()
@click.argument("build_file", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--format", "fmt", type=FORMATS, default="table", show_default=True, help="Output format.")
@click.option(
    "--fail-on",
    type=click.Choice(list(FAIL_LEVELS)),
    default="clash",
    show_default=True,
    help="Exit 1 when the verdict reaches this level.",
)
@click.option(
    "--modes",
    "modes_file",
    type=click.Path(dir_okay=False, path_type=Path),
    help="Measured modes (from 'clashcheck modes --output') to merge into the build.",
)
@click.option("--output", "-o", type=click.Path(path_type=Path), help="Write the report here (atomically).")
@force_option
@click.option("--plot", "plot_file", type=click.Path(dir_okay=False, path_type=Path),
              help="Also draw the Campbell diagram here (.png, .svg, .pdf; needs the [plot] extra). "
                   "With --format markdown the report embeds it and adds computed suggestions.")
@click.option("--suggest", "with_suggestions", is_flag=True,
              help="Add computed changes that would clear each clash, each confirmed by a full check.")
def check(build_file: Path, fmt: str, fail_on: str, modes_file: Path | None, output: Path | None,
          plot_file: Path | None = None, with_suggestions: bool = False) -> None:
    """Find the throttle ranges where excitation meets a frame mode.

    A significant order within its margin where the craft dwells (hover, and
    cruise for a cruiser) is a clash; windows crossed only in passage, or
    from weak orders, are a watch.

    Exit codes: 0 nothing reaches the --fail-on level, 1 something does,
    2 bad input, 3 an internal error (a bug).
    """
    from ..analysis.clash import check_build
    from ..analysis.levels import reaches
    from ..inputs.buildfile import load_build, load_modes_file
    from ..report.check import render

    build = load_build(build_file)
    if modes_file is not None:
        build = build.with_measured(load_modes_file(modes_file))
    result = check_build(build)
    inputs = [p for p in (build_file, modes_file) if p is not None]
    prov = provenance_of(result.name, inputs) if (fmt == "markdown" or plot_file is not None) else None
    suggestions = None
    if with_suggestions or (plot_file is not None and fmt == "markdown"):  # scipy only on this path
        from ..analysis.suggest import suggest

        suggestions = suggest(build, result)
    if plot_file is not None:  # matplotlib only on this path
        from ..errors import OutputError
        from ..report.campbell import campbell_data, save_campbell

        if output is not None and Path(output).resolve() == Path(plot_file).resolve():
            raise OutputError(str(plot_file), "the diagram and the report need different files")
        from ..analysis.diagram import diagram_curves

        save_campbell(plot_file, [campbell_data(build, result, diagram_curves(build, result), provenance=prov)],
                      inputs=inputs)
    if plot_file is not None and fmt == "markdown":
        from ..report.decide import image_reference, render_check_report

        text = render_check_report(build, result, suggestions, image_reference(plot_file, output))
    elif suggestions is not None:
        from ..report.decide import render_check_with_suggestions

        text = render_check_with_suggestions(result, suggestions, fmt)
    else:
        text = render(result, fmt)
    emit(text, output, inputs, fmt, prov)
    sys.exit(EXIT_FAIL if reaches(result.verdict, fail_on) else EXIT_OK)


@click.command()
@click.argument("kind", type=click.Choice(["motors", "props", "batteries", "frames", "materials"]), default="motors")
@click.option("--format", "fmt", type=click.Choice(["table", "json"]), default="table", show_default=True,
              help="Output format (JSON in SI, with unit-suffixed keys).")
@click.option("--output", "-o", type=click.Path(path_type=Path), help="Write the listing here (atomically).")
@force_option
def catalog(kind: str, fmt: str, output: Path | None) -> None:
    """List the shipped catalog entries of one kind (generic, typical figures)."""
    from ..inputs.catalog import load_catalog

    if fmt == "json":
        from ..inputs.catalog_entries import validated_entries
        from ..report.catalog import catalog_json

        text = catalog_json(kind, validated_entries(kind))
    else:
        from ..report.catalog import render_catalog

        text = render_catalog(kind, load_catalog(kind), fmt)
    emit(text, output, [])


@click.command("plot")
@click.argument("build_file", type=PATH)
@click.option("--plot", "plot_file", type=PATH, help="The diagram: .png, .svg or .pdf.")
@click.option("--output", "-o", "output", type=PATH, hidden=True,
              help="Former name of --plot for this command; kept for one release.")
@force_option
@click.option("--modes", "modes_file", type=PATH, help="Measured modes to merge into the build.")
def plot_command(build_file: Path, plot_file: Path | None, output: Path | None, modes_file: Path | None) -> None:
    """Draw the Campbell diagram: excitation frequency against rotor speed, with the frame modes.

    Needs the [plot] extra (matplotlib). The same figure comes with
    'check --plot FILE'.
    """
    from ..errors import InputError

    if (plot_file is None) == (output is None):
        raise InputError("--plot", "one file for the diagram (.png, .svg or .pdf)",
                         "both --plot and -o" if plot_file else "nothing")
    output = plot_file or output
    assert output is not None
    from ..analysis.clash import check_build
    from ..analysis.diagram import diagram_curves
    from ..inputs.buildfile import load_build, load_modes_file
    from ..report.campbell import campbell_data, save_campbell

    build = load_build(build_file)
    if modes_file is not None:
        build = build.with_measured(load_modes_file(modes_file))
    result = check_build(build)
    inputs = [p for p in (build_file, modes_file) if p]
    curves = diagram_curves(build, result)
    save_campbell(output, [campbell_data(build, result, curves, provenance=provenance_of(result.name, inputs))],
                  inputs=inputs)
    click.echo(f"wrote {output}: {result.name}, verdict {result.verdict}")


# --- frame modes from recordings: the modes command (issue 3) -----------------




#: The commands this module adds to the group.
COMMANDS = (check, catalog, plot_command)
