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
        """The placeholder shown in help: the quoted example value.

        Parameters
        ----------
        param : click.Parameter
            The option being described (unused).
        ctx : click.Context or None, optional
            The click context (unused).

        Returns
        -------
        str
            The example in single quotes, e.g. ``"'1750 rpm/V'"``.
        """
        return f"'{self.example}'"

    def convert(self, value, param, ctx):
        """Parse an option value into a float in SI units.

        Parameters
        ----------
        value : str or float
            The value as typed (e.g. ``"1750 rpm/V"``), or a float default
            already in SI units, passed through.
        param : click.Parameter or None
            The option; its first flag names the value in error messages.
        ctx : click.Context or None
            The click context, for the usage error.

        Returns
        -------
        float
            The value in SI base units, rotation in cycles (rpm/V → Hz/V).

        Raises
        ------
        click.BadParameter
            When the text does not parse or has the wrong dimension.
        """
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
        """Parse a comma-separated list of whole numbers.

        Parameters
        ----------
        value : str or tuple of int
            The text as typed (e.g. ``"4,6"``), or a tuple default, passed
            through.
        param : click.Parameter or None
            The option, for the usage error.
        ctx : click.Context or None
            The click context, for the usage error.

        Returns
        -------
        tuple of int
            The numbers, in the order given (dimensionless counts).

        Raises
        ------
        click.BadParameter
            When a part is not a whole number or the list is empty.
        """
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
        Tool, version, date, name and a short hash of the files' bytes.
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
    """Print a report, or write it atomically to a file; Markdown gets the provenance line.

    Parameters
    ----------
    text : str
        The rendered report.
    output : pathlib.Path or None
        File to write; ``None`` prints to standard output.
    inputs : iterable of str or pathlib.Path
        The command's input files; ``output`` may not be one of them.
    fmt : str, optional
        The report's format; ``markdown`` gets the provenance footer.
    provenance : str, optional
        The provenance line (:func:`provenance_of`).

    Raises
    ------
    OutputError
        When ``output`` breaks the output policy (:mod:`clashcheck.files`).
    """
    from ..files import write_output

    if fmt == "markdown" and provenance:
        from ..report.provenance import markdown_footer

        text = text + markdown_footer(provenance)

    if output is not None:
        write_output(output, text, inputs=inputs)
    else:
        click.echo(text, nl=False)


PATH = click.Path(dir_okay=False, path_type=Path)


def _set_force(ctx: click.Context, param: click.Parameter, value: bool) -> bool:
    from ..files import FORCE

    FORCE.set(bool(value))
    return value


#: ``--force``: replace an existing output file that clashcheck did not write
#: (see :mod:`clashcheck.files` for the output policy).
force_option = click.option(
    "--force", is_flag=True, expose_value=False, callback=_set_force, is_eager=True,
    help="Replace an existing output file that clashcheck did not write.",
)


