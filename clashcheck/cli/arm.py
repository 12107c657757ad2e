"""The arm: beam estimate of arm modes."""

from __future__ import annotations

from pathlib import Path

import click

from ._common import PATH, emit, force_option

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


@click.command("arm")
@click.argument("build_file", required=False, type=click.Path(dir_okay=False, path_type=Path))
@_arm_options
@click.option("--format", "fmt", type=click.Choice(["table", "json"]), default="table",
              show_default=True, help="Output format.")
@click.option("--output", "-o", type=PATH, help="Write the estimate here (atomically).")
@force_option
def arm_command(build_file: Path | None, fmt: str, output: Path | None, **options: object) -> None:
    """Estimate the arm's flap and lead-lag bending modes from beam theory.

    Give a BUILD file with a [frame.arm] table, or the arm's geometry as
    options (not both).  The frequency range comes from the material data.
    """
    import json

    from ..errors import MISSING, InputError
    from ..inputs.armfile import parse_arm_table
    from ..model.arm import estimate_arm
    from ..report.arm import arm_json, arm_table

    table = {key: value for key, value in options.items() if value is not None}
    if build_file is not None:
        from ..inputs.buildfile import load_build

        if table:
            raise InputError("arm", "either a BUILD file or geometry options, not both",
                             sorted(table), "edit the build's [frame.arm] table instead")
        geometry = load_build(build_file).arm
        if geometry is None:
            raise InputError("frame.arm", "an [frame.arm] table in the build", MISSING)
    else:
        geometry = parse_arm_table(table, field="arm")
    estimate = estimate_arm(geometry)
    text = json.dumps(arm_json(estimate), indent=2) if fmt == "json" else arm_table(estimate)
    emit(text + "\n", output, [build_file] if build_file is not None else [])




#: The commands this module adds to the group.
COMMANDS = (arm_command,)
