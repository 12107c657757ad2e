"""The frame: the whole frame's modes from its geometry (issue 15)."""

from __future__ import annotations

from pathlib import Path

import click

from ._common import PATH, Quantity, emit, force_option, provenance_of

#: Library field names and the flags that set them.
FIELD_FLAGS = {"max_frequency_hz": "--max-frequency", "elements_per_arm": "--elements",
               "plot": "--plot", "separation": "--separation"}


@click.command("frame")
@click.argument("build_file", type=PATH)
@click.option("--format", "fmt", type=click.Choice(["table", "json"]), default="table",
              show_default=True, help="Output format.")
@click.option("--max-frequency", type=Quantity("Hz", "2 kHz"), default=2000.0,
              help="Report elastic modes below this (default 2 kHz).")
@click.option("--elements", type=click.IntRange(1, 64), default=8, show_default=True,
              help="Beam elements per arm.")
@click.option("--separation", type=click.FloatRange(0.0, 1.0, min_open=True, max_open=True),
              default=0.05, show_default=True,
              help="Modes closer than this fraction are reported as close.")
@click.option("--calibrate", "modes_file", type=PATH,
              help="Measured modes (a modes file): fit the root spring to them first.")
@click.option("--fit-modulus", is_flag=True,
              help="With --calibrate: also fit the modulus within the material's range.")
@click.option("--plot", "plot_file", type=PATH,
              help="Also draw plan and side views of the first 8 modes here (.png, .svg, .pdf).")
@click.option("--output", "-o", type=PATH, help="Write the report here (atomically).")
@force_option
def frame_command(build_file: Path, fmt: str, max_frequency: float, elements: int,
                  separation: float, modes_file: Path | None, fit_modulus: bool,
                  plot_file: Path | None, output: Path | None) -> None:
    """The whole frame's elastic modes from [frame.body], [frame.layout] and [frame.arm].

    Each mode has its pattern, the gyro axis it shows on and its gyro
    signature; close pairs are reported.  With --calibrate, the root spring
    (and with --fit-modulus the modulus) is fitted to a tap test first.
    """
    from ..analysis.close_modes import close_modes
    from ..inputs.framefile import estimate_once, load_frame_model
    from ..model.frame import calibrate_frame, frame_modes
    from ..report.common import dump_json
    from ..report.frame import frame_json, frame_table, save_frame_plot

    inputs = [p for p in (build_file, modes_file) if p is not None]
    if fit_modulus and modes_file is None:
        raise click.UsageError("--fit-modulus needs --calibrate")
    _, model = load_frame_model(build_file, elements_per_arm=elements)
    calibration = None
    if modes_file is not None:
        from ..inputs.buildfile import load_modes_file

        measured = load_modes_file(modes_file).modes
        calibration = calibrate_frame(model, measured, fit_modulus=fit_modulus)
        model = calibration.fitted
    estimate = estimate_once(model, max_frequency)
    pairs = close_modes(frame_modes(estimate), separation)
    if plot_file is not None:
        save_frame_plot(plot_file, estimate, inputs=inputs,
                        provenance=provenance_of(build_file.stem, inputs))
    text = (dump_json(frame_json(estimate, pairs, calibration)) if fmt == "json"
            else frame_table(estimate, pairs, calibration))
    emit(text, output, inputs)


#: The commands this module adds to the group.
COMMANDS = (frame_command,)
