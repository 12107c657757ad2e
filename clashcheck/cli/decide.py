"""The compare and pick: deciding between builds."""

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
    Counts,
    Quantity,
    emit,
    force_option,
    provenance_of,
)

#: Library fields of compare and pick, and the flag that sets each (see ``cli._as_flags``).
FIELD_FLAGS = {
    "cells": "--cells",
    "poles": "--poles",
    "pins": "--pin",
    "props": "--props",
    "motors": "--motors/--stator/--max-motor-mass",
    "kv_range": "--kv-from/--kv-to/--kv-step",
    "kv_hz_per_v": "--kv-from/--kv-to",
    "hover_range": "--hover-low/--hover-high",
    "cell_mass_kg": "--cell-mass",
    "top": "--top",
    "level": "--fail-on",
    "mass": "--mass",
}


@click.command()
@click.argument("build_a", type=PATH)
@click.argument("build_b", type=PATH)
@click.option("--format", "fmt", type=FORMATS, default="table", show_default=True, help="Output format.")
@click.option("--fail-on", type=click.Choice(list(FAIL_LEVELS)), default="clash", show_default=True,
              help="Exit 1 when B is worse than A at this level.")
@click.option("--no-shift", is_flag=True, help="Use B's modes as written (no shift for the change in tip mass).")
@click.option("--mass", type=click.Choice(["auto", "stated", "parts"]), default="auto", show_default=True,
              help="B's all-up mass: 'auto' adds the change in motor and propeller mass (as pick does) when B "
                   "states A's very mass; 'stated' keeps B's figure; 'parts' always adds the change.")
@click.option("--plot", "plot_file", type=PATH, help="Draw both Campbell diagrams side by side here.")
@click.option("--output", "-o", type=click.Path(path_type=Path), help="Write the report here (atomically).")
@force_option
def compare(build_a: Path, build_b: Path, fmt: str, fail_on: str, no_shift: bool, mass: str,
            plot_file: Path | None, output: Path | None) -> None:
    """Compare build A with a proposed swap B, side by side.

    B's arm modes are shifted from A's figures for the change in motor and
    propeller mass when both are known.  B is worse when a clash appears or
    gets much worse (+6 dB at a dwell point), or B cannot hover where A can.
    Exit codes: 0 B is not worse at the --fail-on level, 1 it is, 2 bad input.
    """
    from ..analysis.compare import compare_builds
    from ..inputs.buildfile import load_build
    from ..report.decide import render_compare

    result = compare_builds(load_build(build_a), load_build(build_b), shift_modes=not no_shift, mass=mass)
    prov = provenance_of(f"{result.a.name} vs {result.b.name}", [build_a, build_b])
    if plot_file is not None:
        from ..analysis.diagram import diagram_curves
        from ..report.campbell import campbell_data, save_campbell

        save_campbell(plot_file, [campbell_data(result.build_a, result.a, diagram_curves(result.build_a, result.a)),
                                  campbell_data(result.build_b, result.b, diagram_curves(result.build_b, result.b))],
                      inputs=[build_a, build_b], provenance=prov)
    emit(render_compare(result, fmt, fail_on), output, [build_a, build_b], fmt, prov)
    sys.exit(EXIT_FAIL if result.worse_at(fail_on) else EXIT_OK)


@click.command()
@click.argument("build_file", type=PATH)
@click.option("--motors", type=click.Choice(["catalog"]), help="Search the catalog motors.")
@click.option("--stator", "stators", multiple=True, help="Catalog stator size to keep, e.g. 2207 (repeatable).")
@click.option("--max-motor-mass", type=Quantity("kg", "40 g"), help="Heaviest catalog motor, e.g. '40 g'.")
@click.option("--kv-from", type=Quantity("rpm/V", "1500 rpm/V"), help="Kv sweep on the build's motor: from.")
@click.option("--kv-to", type=Quantity("rpm/V", "2200 rpm/V"), help="Kv sweep: to.")
@click.option("--kv-step", type=Quantity("rpm/V", "50 rpm/V"), default="50 rpm/V", show_default=True,
              help="Kv sweep: step.")
@click.option("--poles", type=Counts(), help="Pole counts to try, e.g. 12,14.")
@click.option("--props", help="'catalog', or catalog propeller ids separated by commas.")
@click.option("--max-prop-diameter", type=Quantity("m", "5.1 in"), help="Largest propeller that fits the frame.")
@click.option("--cells", type=Counts(), help="Cell counts to try, e.g. 4,6.")
@click.option("--cell-mass", type=Quantity("kg", "45 g"), help="Mass of one cell, so the all-up mass follows --cells.")
@click.option("--pin", "pins", multiple=True, type=click.Choice(["motor", "kv", "poles", "prop", "cells"]),
              help="Keep this part as the build has it (repeatable).")
@click.option("--hover-low", type=Quantity("%", "25 %"), default="25 %", show_default=True,
              help="Lowest hover throttle that keeps control resolution.")
@click.option("--hover-high", type=Quantity("%", "50 %"), default="50 %", show_default=True,
              help="Highest hover throttle that keeps headroom.")
@click.option("--top", type=click.IntRange(1, 100), default=5, show_default=True, help="How many to list.")
@click.option("--format", "fmt", type=FORMATS, default="table", show_default=True, help="Output format.")
@click.option("--output", "-o", type=click.Path(path_type=Path), help="Write the report here (atomically).")
@click.option("--write-build", "write_build", type=PATH,
              help="Write the top candidate as a build file here (atomically, never over an input), "
                   "for 'check' and 'compare'.")
@force_option
def pick(build_file: Path, top: int, fmt: str, output: Path | None, props: str | None,
         kv_from: float | None, kv_to: float | None, kv_step: float, hover_low: float, hover_high: float,
         write_build: Path | None, **options) -> None:
    """Search parts for the build's frame and rank them.

    With no search option, catalog motors and fitting catalog props are
    searched.  Exit codes: 0 the best candidate has no clash (no
    significant order in a dwell zone, hover at every pack state), 1 none
    has, 2 bad input (e.g. an empty candidate set or contradictory pins).
    """
    from ..analysis.pick import pick as run_pick
    from ..analysis.pick import search_space
    from ..errors import InputError, OutputError
    from ..inputs.buildfile import load_build
    from ..report.decide import render_pick

    if (kv_from is None) != (kv_to is None):
        raise InputError("--kv-to" if kv_to is None else "--kv-from", "both --kv-from and --kv-to",
                         "only one")
    prop_ids: str | list[str] | None = props
    if props is not None and props != "catalog":
        prop_ids = [p.strip() for p in props.split(",") if p.strip()]
        if not prop_ids:  # ',' is no list, and never means "all catalog props"
            raise InputError("--props", "'catalog' or catalog propeller ids separated by commas",
                             props)
    if write_build is not None and output is not None and Path(write_build).resolve() == Path(output).resolve():
        raise OutputError(str(write_build), "the build file and the report need different files")
    build = load_build(build_file)
    space = search_space(build, props=prop_ids, hover_range=(hover_low, hover_high),
                         kv_range=None if kv_from is None or kv_to is None else (kv_from, kv_to, kv_step),
                         max_motor_mass_kg=options.pop("max_motor_mass"),
                         max_prop_diameter_m=options.pop("max_prop_diameter"),
                         cell_mass_kg=options.pop("cell_mass"),
                         poles=options.pop("poles") or (), cells=options.pop("cells") or (), **options)
    result = run_pick(build, space, top=top)
    if write_build is not None and result.best is not None:
        from ..files import write_output
        from ..inputs.buildwrite import dump_build

        best = result.best
        header = (f"Written by 'clashcheck pick' from {build_file}: rank 1 of {result.searched} candidates "
                  f"({best.label}), verdict {best.result.verdict}.\nArm modes are written as shifted for the "
                  "candidate's tip mass; the all-up mass includes the change in part mass.")
        write_output(write_build, dump_build(best.build, header=header), inputs=[build_file])
    emit(render_pick(result, fmt), output, [build_file], fmt, provenance_of(build.name, [build_file]))
    sys.exit(EXIT_OK if result.top and result.top[0].band_clear else EXIT_FAIL)




#: The commands this module adds to the group.
COMMANDS = (compare, pick)

__all__ = ["COMMANDS", "FIELD_FLAGS"]
