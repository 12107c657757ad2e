"""The modes: frame modes from a tap test or a flight recording."""

from __future__ import annotations

import sys
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING

import click

if TYPE_CHECKING:
    from ..identify import ModesResult

from ._common import (
    PATH,
    Quantity,
    emit,
    provenance_of,
)


def _modes_columns(signal, time_column, time_unit, rate, throttle_column, rpm_columns, rpm_unit, poles):
    """The reader's column plan from the command-line options."""
    from ..errors import InputError
    from ..identify import Columns
    from ..inputs.units import parse

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


@click.command("modes")
@click.argument("recording", type=PATH)
@click.option("--kind", type=click.Choice(["tap", "flight"]), required=True, help="What was recorded.")
@click.option("--signal", help="Signal columns, e.g. 'gx,gy,gz' (WAV/.npy: channel numbers; default all).")
@click.option("--time-column", help="Column holding the sample time (CSV, structured .npy).")
@click.option("--time-unit", default="s", show_default=True, help="Unit of the time column, e.g. 'ms', 'us'.")
@click.option("--rate", type=Quantity("Hz", "8 kHz"), help="Sample rate, when there is no time column.")
@click.option("--throttle-column", help="Throttle column (fraction 0–1 or percent).")
@click.option("--rpm-columns", help="Rotor-rate columns, one per motor, e.g. 'rpm1,rpm2,rpm3,rpm4'.")
@click.option("--rpm-unit", type=click.Choice(["rpm", "Hz", "erpm"]), default="rpm", show_default=True,
              help="Unit of the rotor-rate columns; 'erpm' (electrical rpm) needs --poles.")
@click.option("--poles", type=click.IntRange(2, 200), help="Magnet poles (electrical orders, erpm).")
@click.option("--blades", type=click.IntRange(1, 12), help="Propeller blades (blade-pass orders).")
@click.option("--slots", type=click.IntRange(3, 300), help="Stator slots (cogging order).")
@click.option("--build", "build_file", type=PATH, help="Build file: throttle → rotor rate, blades, poles.")
@click.option("--axes", help="Axis of each signal, e.g. 'roll,pitch,yaw' (the default for 3 signals).")
@click.option("--min-frequency", type=Quantity("Hz", "20 Hz"), default=20.0, show_default="20 Hz")
@click.option("--max-frequency", type=Quantity("Hz", "1 kHz"), help="Highest mode looked for.")
@click.option("--resolution", type=Quantity("Hz", "1 Hz"), help="Frequency resolution of the spectra.")
@click.option("--format", "fmt", type=click.Choice(["table", "json"]), default="table", show_default=True)
@click.option("--output", "-o", type=PATH, help="Also write the modes as a build fragment (TOML).")
@click.option("--include-candidates", is_flag=True,
              help="Write peaks below the confidence floor into the modes file too.")
@click.option("--quiet", "-q", is_flag=True, help="No progress bar.")
@click.option("--plot", "plot_file", type=PATH,
              help="Also draw the spectra (.png, .svg, .pdf; needs the [plot] extra); a flight adds a "
                   "time view beside it (the file name + '-time').")
def modes_command(recording: Path, kind: str, build_file: Path | None, axes: str | None, fmt: str,
                  output: Path | None, quiet: bool, include_candidates: bool, plot_file: Path | None = None,
                  **opts) -> None:
    """Find frame modes (frequency, damping, axis) in a tap test or flight recording.

    Tap tests are done with the propellers removed. Results are design advice.
    """
    from ..identify import worker

    if kind == "flight":  # a long recording streams in a second process: start it first
        worker.warm_up(recording)
    from ..identify import (
        FlightSettings,
        TapSettings,
        analyse_flight,
        analyse_tap,
        open_recording,
    )
    from ..report.modes import render_json, render_table, render_toml

    if plot_file is not None:  # refuse a bad target before the analysis
        from ..report.recording_figures import check_plot_target

        check_plot_target(plot_file, [recording] + ([build_file] if build_file else []), kind)
    columns = _modes_columns(opts.pop("signal"), opts.pop("time_column"), opts.pop("time_unit"),
                             opts.pop("rate"), opts.pop("throttle_column"), opts.pop("rpm_columns"),
                             opts.pop("rpm_unit"), opts["poles"])
    rec = open_recording(recording, columns)
    band = dict(min_frequency_hz=opts["min_frequency"], max_frequency_hz=opts["max_frequency"])
    run: Callable[[Callable[[int, int], None]], ModesResult]
    if kind == "tap":
        tap_settings = TapSettings(resolution_hz=opts["resolution"], **band)

        def run(tick: Callable[[int, int], None]) -> ModesResult:
            return analyse_tap(rec, tap_settings, progress=tick)
    else:
        flight_settings = FlightSettings(**band, **_modes_flight_options(opts, axes, build_file))

        def run(tick: Callable[[int, int], None]) -> ModesResult:
            return analyse_flight(rec, flight_settings, progress=tick)
    with _modes_progress(quiet, rec.rows_estimate, len(rec.signal_names)) as bar:
        last = [0]

        def tick(done: int, total: int) -> None:
            if bar is not None:
                bar.update(max(0, min(done, total) - last[0]))
                last[0] = max(last[0], min(done, total))

        result = run(tick)
    inputs = [recording] + ([build_file] if build_file else [])
    if plot_file is not None:  # matplotlib is imported only on this path
        from ..identify.views import TapView, decay_views
        from ..report.recording_figures import save_recording_figures

        decays = decay_views(result.view, result.modes) if isinstance(result.view, TapView) else ()
        for path in save_recording_figures(plot_file, result, decays=decays, inputs=inputs,
                                           provenance=provenance_of(result.recording, inputs)):
            click.echo(f"wrote {path}", err=True)
    if output is not None:
        emit(render_toml(result, include_candidates=include_candidates), output, inputs)
    click.echo(render_json(result) if fmt == "json" else render_table(result), nl=False)


def _modes_flight_options(opts: dict, axes: str | None, build_file: Path | None) -> dict:
    """FlightSettings keywords: resolution, axes, and the motor and prop counts (from --build)."""
    out: dict = {"blades": opts["blades"], "poles": opts["poles"], "slots": opts["slots"]}
    if opts["resolution"] is not None:
        out.update(resolution_hz=opts["resolution"], resolution_given=True)
    if axes:
        out["axes"] = tuple(a.strip() for a in axes.split(",") if a.strip())
    if build_file is not None:
        from ..inputs.buildfile import load_build
        from ..model.drive import Drive

        build = load_build(build_file)
        drive = Drive.from_build(build)
        out["blades"] = out["blades"] or build.prop.blades
        out["poles"] = out["poles"] or build.motor.poles
        out["slots"] = out["slots"] or build.motor.slots
        out["rotor_of_throttle"] = drive.rotor_hz  # nominal pack; a bound method pickles
    return out


#: Library fields of the analysis settings and the flag that sets each.
FIELD_FLAGS = {
    "min_frequency_hz": "--min-frequency",
    "max_frequency_hz": "--max-frequency",
    "resolution_hz": "--resolution",
    "include_candidates": "--include-candidates",
    "axes": "--axes",
    "blades": "--blades",
    "poles": "--poles",
    "slots": "--slots",
    "rpm_columns": "--rpm-columns",
}

#: The commands this module adds to the group.
COMMANDS = (modes_command,)
