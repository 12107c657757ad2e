"""The command line: thin click commands over the library.

Each command parses its options, calls one library function, formats the
result with :mod:`clashcheck.report` and echoes it.  Library errors become one
line on stderr and exit code 2 in :class:`_Group.invoke`, never a traceback.
This is the only module that imports click.
"""

from __future__ import annotations

import click

from ..errors import ClashcheckError, InputError
from ._common import EXIT_INPUT

__all__ = ["main"]

#: Library field names and the command-line flag that sets each, from every
#: command module's ``FIELD_FLAGS``.  A library error names its own field
#: (``min_frequency_hz``); the user is told the flag (``--min-frequency``).
FIELD_FLAGS: dict[str, str] = {}


def _as_flags(exc: ClashcheckError) -> ClashcheckError:
    """``exc`` with its library field replaced by the flag that sets it, if any."""
    if isinstance(exc, InputError) and exc.field in FIELD_FLAGS:
        return InputError(FIELD_FLAGS[exc.field], exc.expected, exc.got, exc.hint)
    return exc


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
            raise _InputFailure(str(_as_flags(exc))) from None
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


def _register() -> None:
    """Add every command module's ``COMMANDS`` and ``FIELD_FLAGS`` to the group.

    Each module of this package whose name does not start with ``_`` is a
    command module; a new command needs no edit here.
    """
    from importlib import import_module
    from pkgutil import iter_modules

    for info in iter_modules(__path__):
        if info.name.startswith("_"):
            continue
        module = import_module(f"{__name__}.{info.name}")
        for command in module.COMMANDS:
            main.add_command(command)
        FIELD_FLAGS.update(getattr(module, "FIELD_FLAGS", {}))


_register()
