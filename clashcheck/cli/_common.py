"""What every command shares: exit codes, formats, parameter types, output."""

from __future__ import annotations

from pathlib import Path

import click

from ..analysis.levels import FAIL_LEVELS as _VERDICT_FAIL_LEVELS

#: Exit codes of every command: nothing at the fail level, something at it, bad input, a bug.
EXIT_OK, EXIT_FAIL, EXIT_INPUT, EXIT_BUG = 0, 1, 2, 3

FORMATS = click.Choice(["table", "json", "markdown"])
FAIL_LEVELS = _VERDICT_FAIL_LEVELS


class Quantity(click.ParamType):
    """A value with units, parsed once here into SI (e.g. ``"1750 rpm/V"``)."""

    def __init__(self, unit: str, example: str) -> None:
        self.unit, self.example = unit, example
        self.name = "quantity"

    def get_metavar(self, param, ctx=None) -> str:  # keep the unit's case, e.g. 'rpm/V'
        return f"'{self.example}'"

    def convert(self, value, param, ctx):
        if isinstance(value, float):  # a default given in SI
            return value
        from ..errors import InputError
        from ..inputs.units import parse

        try:
            return parse(value, self.unit, param.opts[0] if param else "value", example=self.example)
        except InputError as exc:
            self.fail(str(exc), param, ctx)


class Counts(click.ParamType):
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


def provenance_of(name: str, paths) -> str:
    """The provenance line of outputs made from the files ``paths`` (read here, hashed in report).

    Parameters
    ----------
    name : str
        Build or recording name.
    paths : sequence of path-like
        Input files, in a fixed order; missing ones are skipped.

    Returns
    -------
    str
    """
    from ..report.provenance import Provenance

    blobs = []
    for p in paths:
        try:
            blobs.append(Path(p).read_bytes())
        except OSError:
            continue
    return Provenance.of(name, blobs).line()


def emit(text: str, output: Path | None, inputs, fmt: str | None = None, provenance: str | None = None) -> None:
    """Write ``text`` to ``output`` atomically, or echo it; Markdown gets the provenance line."""
    from ..files import write_output

    if fmt == "markdown" and provenance:
        from ..report.provenance import markdown_footer

        text = text + markdown_footer(provenance)

    if output is not None:
        write_output(output, text, inputs=inputs)
    else:
        click.echo(text, nl=False)


PATH = click.Path(dir_okay=False, path_type=Path)


