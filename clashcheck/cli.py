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
        except click.exceptions.NoArgsIsHelpError:
            raise
        except click.UsageError as exc:  # one line, not the usage block
            where = exc.ctx.command_path if exc.ctx is not None else "clashcheck"
            raise _InputFailure(f"{exc.format_message()} (see '{where} --help')") from None
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
@click.option("--plot", "plot_file", type=click.Path(dir_okay=False, path_type=Path),
              help="Also draw the Campbell diagram here (.png, .svg, .pdf; needs the [plot] extra). "
                   "With --format markdown the report embeds it and adds computed suggestions.")
def check(build_file: Path, fmt: str, fail_on: str, modes_file: Path | None, output: Path | None,
          plot_file: Path | None = None) -> None:
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
    if plot_file is not None:  # matplotlib and scipy are imported only on this path
        from .decide_report import report_with_diagram

        text = report_with_diagram(build, result, fmt, plot_file, output,
                                   inputs=[p for p in (build_file, modes_file) if p is not None])
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


# --- deciding between builds: compare, pick, plot (issue 5) -------------------


class _Quantity(click.ParamType):
    """A value with units, parsed once here into SI (e.g. ``"1750 rpm/V"``)."""

    def __init__(self, unit: str, example: str) -> None:
        self.unit, self.example = unit, example
        self.name = "quantity"

    def get_metavar(self, param, ctx=None) -> str:  # keep the unit's case, e.g. 'rpm/V'
        return f"'{self.example}'"

    def convert(self, value, param, ctx):
        if isinstance(value, float):  # a default given in SI
            return value
        from .errors import InputError
        from .units import parse

        try:
            return parse(value, self.unit, param.opts[0] if param else "value", example=self.example)
        except InputError as exc:
            self.fail(str(exc), param, ctx)


class _Counts(click.ParamType):
    """A comma-separated list of whole numbers, e.g. ``"4,6"``."""

    name = "N,N,..."

    def convert(self, value, param, ctx):
        if isinstance(value, tuple):
            return value
        try:
            numbers = tuple(int(part) for part in str(value).split(",") if part.strip())
        except ValueError:
            self.fail(f"expected whole numbers separated by commas, like '4,6', got {value!r}", param, ctx)
        if not numbers:
            self.fail("expected at least one number", param, ctx)
        return numbers


def _emit(text: str, output: Path | None, inputs) -> None:
    from .report import write_output

    if output is not None:
        write_output(output, text, inputs=inputs)
    else:
        click.echo(text, nl=False)


_PATH = click.Path(dir_okay=False, path_type=Path)


@main.command()
@click.argument("build_a", type=_PATH)
@click.argument("build_b", type=_PATH)
@click.option("--format", "fmt", type=_FORMATS, default="table", show_default=True, help="Output format.")
@click.option("--fail-on", type=click.Choice(list(_FAIL_LEVELS)), default="clash", show_default=True,
              help="Exit 1 when B is worse than A at this level.")
@click.option("--no-shift", is_flag=True, help="Use B's modes as written (no shift for the change in tip mass).")
@click.option("--plot", "plot_file", type=_PATH, help="Draw both Campbell diagrams side by side here.")
@click.option("--output", "-o", type=click.Path(path_type=Path), help="Write the report here (atomically).")
def compare(build_a: Path, build_b: Path, fmt: str, fail_on: str, no_shift: bool, plot_file: Path | None,
            output: Path | None) -> None:
    """Compare build A with a proposed swap B, side by side.

    B's arm modes are shifted from A's figures for the change in motor and
    propeller mass when both are known.  Exit codes: 0 B is not worse at the
    --fail-on level, 1 it is, 2 bad input.
    """
    from .build import load_build
    from .compare import compare_builds
    from .decide_report import render_compare

    result = compare_builds(load_build(build_a), load_build(build_b), shift_modes=not no_shift)
    if plot_file is not None:
        from .plot import campbell_data, save_campbell

        save_campbell(plot_file, [campbell_data(result.build_a, result.a), campbell_data(result.build_b, result.b)],
                      inputs=[build_a, build_b])
    _emit(render_compare(result, fmt, fail_on), output, [build_a, build_b])
    sys.exit(EXIT_FAIL if result.worse_at(fail_on) else EXIT_OK)


@main.command()
@click.argument("build_file", type=_PATH)
@click.option("--motors", type=click.Choice(["catalog"]), help="Search the catalog motors.")
@click.option("--stator", "stators", multiple=True, help="Catalog stator size to keep, e.g. 2207 (repeatable).")
@click.option("--max-motor-mass", type=_Quantity("kg", "40 g"), help="Heaviest catalog motor, e.g. '40 g'.")
@click.option("--kv-from", type=_Quantity("rpm/V", "1500 rpm/V"), help="Kv sweep on the build's motor: from.")
@click.option("--kv-to", type=_Quantity("rpm/V", "2200 rpm/V"), help="Kv sweep: to.")
@click.option("--kv-step", type=_Quantity("rpm/V", "50 rpm/V"), default="50 rpm/V", show_default=True,
              help="Kv sweep: step.")
@click.option("--poles", type=_Counts(), help="Pole counts to try, e.g. 12,14.")
@click.option("--props", help="'catalog', or catalog propeller ids separated by commas.")
@click.option("--max-prop-diameter", type=_Quantity("m", "5.1 in"), help="Largest propeller that fits the frame.")
@click.option("--cells", type=_Counts(), help="Cell counts to try, e.g. 4,6.")
@click.option("--cell-mass", type=_Quantity("kg", "45 g"), help="Mass of one cell, so the all-up mass follows --cells.")
@click.option("--pin", "pins", multiple=True, type=click.Choice(["motor", "kv", "poles", "prop", "cells"]),
              help="Keep this part as the build has it (repeatable).")
@click.option("--hover-low", type=_Quantity("%", "25 %"), default="25 %", show_default=True,
              help="Lowest hover throttle that keeps control resolution.")
@click.option("--hover-high", type=_Quantity("%", "50 %"), default="50 %", show_default=True,
              help="Highest hover throttle that keeps headroom.")
@click.option("--top", type=click.IntRange(1, 100), default=5, show_default=True, help="How many to list.")
@click.option("--format", "fmt", type=_FORMATS, default="table", show_default=True, help="Output format.")
@click.option("--output", "-o", type=click.Path(path_type=Path), help="Write the report here (atomically).")
def pick(build_file: Path, top: int, fmt: str, output: Path | None, props: str | None,
         kv_from: float | None, kv_to: float | None, kv_step: float, hover_low: float, hover_high: float,
         **options) -> None:
    """Search parts for the build's frame and rank them.

    With no search option, catalog motors and fitting catalog props are
    searched.  Exit codes: 0 the best candidate keeps the operating band
    clear, 1 none does, 2 bad input (e.g. an empty candidate set or
    contradictory pins).
    """
    from .build import load_build
    from .decide_report import render_pick
    from .errors import InputError
    from .pick import pick as run_pick
    from .pick import search_space

    if (kv_from is None) != (kv_to is None):
        raise InputError("pick --kv-to" if kv_to is None else "pick --kv-from", "both --kv-from and --kv-to",
                         "only one")
    if props is not None and props != "catalog":
        props = [p.strip() for p in props.split(",") if p.strip()]
    build = load_build(build_file)
    space = search_space(build, props=props, hover_range=(hover_low, hover_high),
                         kv_range=None if kv_from is None else (kv_from, kv_to, kv_step),
                         max_motor_mass_kg=options.pop("max_motor_mass"),
                         max_prop_diameter_m=options.pop("max_prop_diameter"),
                         cell_mass_kg=options.pop("cell_mass"),
                         poles=options.pop("poles") or (), cells=options.pop("cells") or (), **options)
    result = run_pick(build, space, top=top)
    _emit(render_pick(result, fmt), output, [build_file])
    sys.exit(EXIT_OK if result.top and result.top[0].band_clear else EXIT_FAIL)


@main.command("plot")
@click.argument("build_file", type=_PATH)
@click.option("--output", "-o", type=_PATH, required=True, help="The diagram: .png, .svg or .pdf.")
@click.option("--modes", "modes_file", type=_PATH, help="Measured modes to merge into the build.")
def plot_command(build_file: Path, output: Path, modes_file: Path | None) -> None:
    """Draw the Campbell diagram: excitation frequency against throttle, with the frame modes.

    Needs the [plot] extra (matplotlib).
    """
    from .build import load_build, load_modes_file
    from .clash import check_build
    from .plot import campbell_data, save_campbell

    build = load_build(build_file)
    if modes_file is not None:
        build = build.with_measured(load_modes_file(modes_file))
    result = check_build(build)
    save_campbell(output, [campbell_data(build, result)], inputs=[p for p in (build_file, modes_file) if p])
    click.echo(f"wrote {output}: {result.name}, verdict {result.verdict}")


# --- frame modes from recordings: the modes command (issue 3) -----------------


def _modes_columns(signal, time_column, time_unit, rate, throttle_column, rpm_columns, rpm_unit, poles):
    """The reader's column plan from the command-line options."""
    from .errors import InputError
    from .identify import Columns
    from .units import parse

    time_scale = parse(f"1 {time_unit}", "s", "--time-unit", example="1 ms")
    rpm_scale = {"rpm": 1.0 / 60.0, "Hz": 1.0}.get(rpm_unit)
    if rpm_unit == "erpm":
        if poles is None:
            raise InputError("--poles", "the magnet pole count, to turn electrical rpm into rotor rate",
                             None)
        rpm_scale = 1.0 / 60.0 / (poles / 2.0)
    split = lambda text: tuple(p.strip() for p in text.split(",") if p.strip()) if text else None  # noqa: E731
    return Columns(signals=split(signal), time_column=time_column, time_scale_s=time_scale,
                   sample_rate_hz=rate, throttle_column=throttle_column,
                   rpm_columns=split(rpm_columns) or (), rpm_scale_hz=rpm_scale)


def _modes_progress(quiet: bool, rows: int, channels: int):
    """A click progress bar on stderr for long analyses, else a no-op context."""
    import contextlib

    if quiet or not sys.stderr.isatty() or rows * channels < 3_000_000:
        return contextlib.nullcontext(None)
    return click.progressbar(length=rows, label="analysing", file=sys.stderr)


@main.command("modes")
@click.argument("recording", type=_PATH)
@click.option("--kind", type=click.Choice(["tap", "flight"]), required=True, help="What was recorded.")
@click.option("--signal", help="Signal columns, e.g. 'gx,gy,gz' (WAV/.npy: channel numbers; default all).")
@click.option("--time-column", help="Column holding the sample time (CSV, structured .npy).")
@click.option("--time-unit", default="s", show_default=True, help="Unit of the time column, e.g. 'ms', 'us'.")
@click.option("--rate", type=_Quantity("Hz", "8 kHz"), help="Sample rate, when there is no time column.")
@click.option("--throttle-column", help="Throttle column (fraction 0–1 or percent).")
@click.option("--rpm-columns", help="Rotor-rate columns, one per motor, e.g. 'rpm1,rpm2,rpm3,rpm4'.")
@click.option("--rpm-unit", type=click.Choice(["rpm", "Hz", "erpm"]), default="rpm", show_default=True,
              help="Unit of the rotor-rate columns; 'erpm' (electrical rpm) needs --poles.")
@click.option("--poles", type=click.IntRange(2, 200), help="Magnet poles (electrical orders, erpm).")
@click.option("--blades", type=click.IntRange(1, 12), help="Propeller blades (blade-pass orders).")
@click.option("--slots", type=click.IntRange(3, 300), help="Stator slots (cogging order).")
@click.option("--build", "build_file", type=_PATH, help="Build file: throttle → rotor rate, blades, poles.")
@click.option("--axes", help="Axis of each signal, e.g. 'roll,pitch,yaw' (the default for 3 signals).")
@click.option("--min-frequency", type=_Quantity("Hz", "20 Hz"), default=20.0, show_default="20 Hz")
@click.option("--max-frequency", type=_Quantity("Hz", "1 kHz"), help="Highest mode looked for.")
@click.option("--resolution", type=_Quantity("Hz", "1 Hz"), help="Frequency resolution of the spectra.")
@click.option("--format", "fmt", type=click.Choice(["table", "json"]), default="table", show_default=True)
@click.option("--output", "-o", type=_PATH, help="Also write the modes as a build fragment (TOML).")
@click.option("--quiet", "-q", is_flag=True, help="No progress bar.")
def modes_command(recording: Path, kind: str, build_file: Path | None, axes: str | None, fmt: str,
                  output: Path | None, quiet: bool, **opts) -> None:
    """Find frame modes (frequency, damping, axis) in a tap test or flight recording.

    Tap tests are done with the propellers removed. Results are design advice.
    """
    from .identify import worker

    if kind == "flight":  # a long recording streams in a second process: start it first
        worker.warm_up(recording)
    from .identify import FlightSettings, TapSettings, analyse_flight, analyse_tap, open_recording
    from .identify.output import render_json, render_table, render_toml

    columns = _modes_columns(opts.pop("signal"), opts.pop("time_column"), opts.pop("time_unit"),
                             opts.pop("rate"), opts.pop("throttle_column"), opts.pop("rpm_columns"),
                             opts.pop("rpm_unit"), opts["poles"])
    rec = open_recording(recording, columns)
    band = dict(min_frequency_hz=opts["min_frequency"], max_frequency_hz=opts["max_frequency"])
    if kind == "tap":
        settings = TapSettings(resolution_hz=opts["resolution"], **band)
        analyse = analyse_tap
    else:
        settings = FlightSettings(**band, **_modes_flight_options(opts, axes, build_file))
        analyse = analyse_flight
    with _modes_progress(quiet, rec.rows_estimate, len(rec.signal_names)) as bar:
        last = [0]

        def tick(done: int, total: int) -> None:
            if bar is not None:
                bar.update(max(0, min(done, total) - last[0]))
                last[0] = max(last[0], min(done, total))

        result = analyse(rec, settings, progress=tick)
    if output is not None:
        _emit(render_toml(result), output, [recording] + ([build_file] if build_file else []))
    click.echo(render_json(result) if fmt == "json" else render_table(result), nl=False)


def _modes_flight_options(opts: dict, axes: str | None, build_file: Path | None) -> dict:
    """FlightSettings keywords: resolution, axes, and the motor and prop counts (from --build)."""
    out: dict = {"blades": opts["blades"], "poles": opts["poles"], "slots": opts["slots"]}
    if opts["resolution"] is not None:
        out.update(resolution_hz=opts["resolution"], resolution_given=True)
    if axes:
        out["axes"] = tuple(a.strip() for a in axes.split(",") if a.strip())
    if build_file is not None:
        from .build import load_build
        from .drive import Drive

        build = load_build(build_file)
        drive = Drive.from_build(build)
        out["blades"] = out["blades"] or build.prop.blades
        out["poles"] = out["poles"] or build.motor.poles
        out["slots"] = out["slots"] or build.motor.slots
        out["rotor_of_throttle"] = drive.rotor_hz  # nominal pack; a bound method pickles
    return out
