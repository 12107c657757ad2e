"""The command line: thin click commands over the library.

Each command parses its options, calls one library function, formats the
result with :mod:`clashcheck.report` and echoes it.  Library errors become one
line on stderr and exit code 2 in :class:`_Group.invoke`, never a traceback.
This is the only module that imports click.
"""

from __future__ import annotations

import sys
from pathlib import Path

import click

from .errors import ClashcheckError

__all__ = ["main"]

#: Exit codes of every command.
EXIT_OK, EXIT_FAIL, EXIT_INPUT = 0, 1, 2


class _InputFailure(click.ClickException):
    exit_code = EXIT_INPUT

    def show(self, file=None) -> None:  # one line, no usage block
        click.echo(f"clashcheck: error: {self.format_message()}", err=True)


class _Group(click.Group):
    def invoke(self, ctx: click.Context):
        try:
            return super().invoke(ctx)
        except ClashcheckError as exc:
            raise _InputFailure(str(exc)) from None
        except UnicodeDecodeError as exc:
            raise _InputFailure(f"input is not UTF-8 text: {exc.reason}") from None
        except OSError as exc:
            name = exc.filename if exc.filename is not None else "file"
            raise _InputFailure(f"{name}: {exc.strerror or exc}") from None


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(package_name="clashcheck")
def main() -> None:
    """Find where motor and propeller excitation meets the frame's modes.

    Results are design advice. Bench and tap tests are done with the
    propellers removed; lithium packs are charged and stored under
    supervision; local aviation rules and licensed practice come first.
    """


_FORMATS = click.Choice(["table", "json", "markdown"])
_FAIL_LEVELS = {"clash": ("clash",), "watch": ("watch", "clash"), "never": ()}


@main.command()
@click.argument("build_file", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--format", "fmt", type=_FORMATS, default="table", show_default=True, help="Output format.")
@click.option(
    "--fail-on",
    type=click.Choice(list(_FAIL_LEVELS)),
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
def check(build_file: Path, fmt: str, fail_on: str, modes_file: Path | None, output: Path | None) -> None:
    """Find the throttle ranges where excitation meets a frame mode.

    Exit codes: 0 nothing reaches the --fail-on level, 1 something does,
    2 bad input.
    """
    from .build import load_build, load_modes_file
    from .clash import check_build
    from .report import render, write_output

    build = load_build(build_file)
    if modes_file is not None:
        build = build.with_measured(load_modes_file(modes_file))
    result = check_build(build)
    text = render(result, fmt)
    if output is not None:
        write_output(output, text, inputs=[p for p in (build_file, modes_file) if p is not None])
    else:
        click.echo(text, nl=False)
    sys.exit(EXIT_FAIL if result.verdict in _FAIL_LEVELS[fail_on] else EXIT_OK)


@main.command()
@click.argument("kind", type=click.Choice(["motors", "props", "batteries", "frames", "materials"]), default="motors")
@click.option("--format", "fmt", type=click.Choice(["table", "json"]), default="table", show_default=True)
def catalog(kind: str, fmt: str) -> None:
    """List the shipped catalog entries of one kind (generic, typical figures)."""
    from .catalog import load_catalog
    from .report import render_catalog

    click.echo(render_catalog(kind, load_catalog(kind), fmt), nl=False)


# --- arm estimate (issue 4) -------------------------------------------------

_ARM_OPTIONS = (
    ("--length", "Free length from the clamp to the motor centre, e.g. '110 mm'."),
    ("--width", "Rectangular section: size in the frame's plane, e.g. '12 mm'."),
    ("--thickness", "Rectangular section: size out of the frame's plane, e.g. '5 mm'."),
    ("--outer-diameter", "Round tube: outer diameter, e.g. '16 mm'."),
    ("--wall", "Round tube: wall thickness, e.g. '1 mm'."),
    ("--material", "Material id from the catalog (see 'clashcheck catalog materials')."),
    ("--modulus", "Young's modulus along the arm, overriding the material's, e.g. '50 GPa'."),
    ("--density", "Density, overriding the material's, e.g. '1.55 g/cm^3'."),
    ("--tip-mass", "Motor + propeller + hardware at the tip, e.g. '48 g'."),
    ("--tip-inertia", "Rotary inertia of the tip body, e.g. '12 g*cm^2' (default: point mass)."),
    ("--clamp-stiffness", "Rotational stiffness of the clamp, e.g. '150 N*m/rad' (default: rigid)."),
)


def _arm_options(func):
    func = click.option(
        "--effective-length-factor", type=float, metavar="FACTOR",
        help="Model the arm as factor × length (1 to 2) for a clamp that is not rigid.",
    )(func)
    for flag, text in reversed(_ARM_OPTIONS):
        func = click.option(flag, metavar="VALUE", help=text)(func)
    return func


@main.command("arm")
@click.argument("build_file", required=False, type=click.Path(dir_okay=False, path_type=Path))
@_arm_options
@click.option("--format", "fmt", type=click.Choice(["table", "json"]), default="table",
              show_default=True, help="Output format.")
def arm_command(build_file: Path | None, fmt: str, **options: object) -> None:
    """Estimate the arm's flap and lead-lag bending modes from beam theory.

    Give a BUILD file with a [frame.arm] table, or the arm's geometry as
    options (not both).  The frequency range comes from the material data.
    """
    import json

    from .arm import estimate_arm, parse_arm_table
    from .arm_report import arm_json, arm_table
    from .errors import MISSING, InputError

    table = {key: value for key, value in options.items() if value is not None}
    if build_file is not None:
        from .build import load_build

        if table:
            raise InputError("arm", "either a BUILD file or geometry options, not both",
                             sorted(table), "edit the build's [frame.arm] table instead")
        geometry = load_build(build_file).arm
        if geometry is None:
            raise InputError("frame.arm", "an [frame.arm] table in the build", MISSING)
    else:
        geometry = parse_arm_table(table, field="arm")
    estimate = estimate_arm(geometry)
    click.echo(json.dumps(arm_json(estimate), indent=2) if fmt == "json" else arm_table(estimate))
