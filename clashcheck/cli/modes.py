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
    force_option,
    provenance_of,
)


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
@click.option("--throttle-column", help="Throttle column (fraction 0–1, percent or 1000–2000 µs pulse).")
@click.option("--throttle-unit", type=click.Choice(["fraction", "percent", "us"]),
              help="Unit of the throttle column (default: told from its values).")
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
@force_option
@click.option("--include-candidates", is_flag=True,
              help="Also write weak or flagged peaks (confidence below the floor) as modes.")
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
    from ..identify import analyse_flight, analyse_tap, open_recording
    from ..identify.options import recording_plan
    from ..report.modes import render_json, render_table, render_toml

    if plot_file is not None:  # refuse a bad target before the analysis
        from ..report.recording_figures import check_plot_target

        check_plot_target(plot_file, [recording] + ([build_file] if build_file else []), kind)
    build = None
    if build_file is not None:
        from ..inputs.buildfile import load_build

        build = load_build(build_file)
    # the time figure's spectrogram is kept only when a figure is drawn
    plan = recording_plan(kind, build=build, axes=axes, include_candidates=include_candidates,
                          keep_timeline=plot_file is not None, **opts)
    rec = open_recording(recording, plan.columns)
    run: Callable[[Callable[[int, int], None]], ModesResult]
    if kind == "tap":
        tap_settings = plan.settings

        def run(tick: Callable[[int, int], None]) -> ModesResult:
            return analyse_tap(rec, tap_settings, progress=tick)  # type: ignore[arg-type]
    else:
        flight_settings = plan.settings

        def run(tick: Callable[[int, int], None]) -> ModesResult:
            return analyse_flight(rec, flight_settings, progress=tick)  # type: ignore[arg-type]
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


#: Library fields of the recording options and analysis settings, and the flag that sets each.
FIELD_FLAGS = {
    "time_unit": "--time-unit",
    "rpm_unit": "--rpm-unit",
    "min_frequency_hz": "--min-frequency",
    "max_frequency_hz": "--max-frequency",
    "resolution_hz": "--resolution",
    "axes": "--axes",
    "blades": "--blades",
    "poles": "--poles",
    "slots": "--slots",
    "rpm_columns": "--rpm-columns",
    "signals": "--signal",
    "time_column": "--time-column",
    "sample_rate_hz": "--rate",
    "time_scale_s": "--time-unit",
    "rpm_scale_hz": "--rpm-unit",
    "throttle_unit": "--throttle-unit",
    "include_candidates": "--include-candidates",
}

#: The commands this module adds to the group.
COMMANDS = (modes_command,)
