"""The command line: thin click commands over the library.

Each command parses its options, calls one library function, formats the
result with :mod:`clashcheck.report` and echoes it.  Library errors become one
line on stderr and exit code 2 in :class:`_Group.invoke`, never a traceback.
An unexpected exception is a bug: one line saying so, exit code 3, and the
traceback in a file whose path is printed (or on stderr with ``--debug``).
Output never fails on encoding: where the stream cannot encode a character
(ζ, Ω, µ, –, ·, ...), its ASCII spelling is written instead.
This is the only module that imports click.
"""

from __future__ import annotations

import codecs
import errno
import os
import sys

import click

from ..errors import ClashcheckError, InputError, _printable
from ._common import EXIT_BUG, EXIT_INPUT

#: ASCII spellings for the characters the reports use, for streams that cannot encode them.
ASCII_SPELLINGS = {
    "ζ": "zeta", "Ω": "ohm", "µ": "u", "μ": "u", "–": "-", "—": "--", "−": "-", "·": "|", "×": "x",
    "±": "+/-", "≥": ">=", "≤": "<=", "≈": "~", "→": "->", "←": "<-", "²": "^2", "³": "^3", "⁴": "^4",
    "⁵": "^5", "√": "sqrt", "°": " deg", "‘": "'", "’": "'", "“": '"', "”": '"', "…": "...", "Δ": "delta",
    "∝": " prop. to ", "§": "sec. ", "π": "pi", "ρ": "rho", "ω": "omega", "₀": "0", "₁": "1", "₂": "2", "↔": "<->", "é": "e",
}


def _ascii_spelling(exc: UnicodeError):
    """Codec error handler: the ASCII spelling of what the stream cannot encode ('?' when none)."""
    if not isinstance(exc, UnicodeEncodeError):
        raise exc
    bad = exc.object[exc.start:exc.end]
    return "".join(ASCII_SPELLINGS.get(ch, "?") for ch in bad), exc.end


codecs.register_error("clashcheck-ascii", _ascii_spelling)


def _spelled_ascii(name: str) -> codecs.CodecInfo | None:
    """Codec ``clashcheck-ascii``: ASCII that spells out what it cannot encode.

    click treats a stream named ``ascii`` as misconfigured and writes UTF-8
    to it anyway; under this name it writes to the stream as it is.
    """
    if name.replace("_", "-") != "clashcheck-ascii":
        return None
    base = codecs.lookup("ascii")

    def encode(text: str, errors: str = "strict"):
        return codecs.ascii_encode(text, "clashcheck-ascii")

    class Encoder(codecs.IncrementalEncoder):
        def encode(self, text: str, final: bool = False) -> bytes:
            return codecs.ascii_encode(text, "clashcheck-ascii")[0]

    return codecs.CodecInfo(encode, base.decode, name="clashcheck-ascii", incrementalencoder=Encoder,
                            incrementaldecoder=base.incrementaldecoder)


codecs.register(_spelled_ascii)


def _safe_streams() -> None:
    """Make stdout and stderr fall back to ASCII spellings instead of failing to encode."""
    for stream in (sys.stdout, sys.stderr):
        reconfigure = getattr(stream, "reconfigure", None)
        encoding = getattr(stream, "encoding", None) or "utf-8"
        try:
            name = codecs.lookup(encoding).name
        except LookupError:
            continue
        if reconfigure is None or name.startswith("utf"):
            continue
        try:
            if name == "ascii":
                reconfigure(encoding="clashcheck-ascii")
            else:
                reconfigure(errors="clashcheck-ascii")
        except (ValueError, OSError, LookupError):  # a closed or detached stream
            pass

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


def _quick_exit() -> None:
    """At interpreter exit, skip the last full garbage collection over every object.

    The command's work is done by then; walking the objects that numpy, scipy
    and pandas made at import (cycles included) took about 0.1 s of every
    ``modes`` run.  :func:`gc.freeze` moves them out of the collector's sight;
    exit handlers still run, files are closed and streams flushed as usual.
    Registered once per process, so a test process that calls the command line
    many times keeps its ordinary collection until it ends.
    """
    global _EXIT_HOOKED
    if not _EXIT_HOOKED:
        import atexit
        import gc

        atexit.register(gc.freeze)
        _EXIT_HOOKED = True


_EXIT_HOOKED = False

#: Errors of writing to standard output: full disk, closed pipe, too large, I/O.
_OUTPUT_ERRNOS = (errno.ENOSPC, errno.EPIPE, errno.EFBIG, errno.EIO)


def _quiet_stdout() -> None:
    """Point standard output at the null device, so the exit's flush fails no second time."""
    try:
        null = os.open(os.devnull, os.O_WRONLY)
        os.dup2(null, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):
        pass


class _InputFailure(click.ClickException):
    exit_code = EXIT_INPUT

    def show(self, file=None) -> None:  # one line, no usage block
        click.echo(f"clashcheck: error: {self.format_message()}", err=True)


class _InternalError(click.ClickException):
    exit_code = EXIT_BUG

    def __init__(self, message: str, trace: str, debug: bool) -> None:
        super().__init__(message)
        self.trace, self.debug = trace, debug

    def show(self, file=None) -> None:
        if self.debug:
            click.echo(self.trace.rstrip("\n"), err=True)
            click.echo(f"clashcheck: internal error (a bug, not your input): {self.format_message()}", err=True)
            return
        where = _write_trace(self.trace)
        tail = f"; traceback in {where}" if where else "; run with --debug to see the traceback"
        click.echo(f"clashcheck: internal error (a bug, not your input): {self.format_message()}{tail}", err=True)


def _write_trace(trace: str) -> str | None:
    """Write a traceback to a new file in the temporary folder; its path, or ``None``."""
    import tempfile

    try:
        fd, path = tempfile.mkstemp(prefix="clashcheck-bug-", suffix=".txt")
        with open(fd, "w", encoding="utf-8") as fh:
            fh.write(trace)
    except OSError:
        return None
    return path


class _Group(click.Group):
    def main(self, *args, **kwargs):
        _safe_streams()
        _quick_exit()
        return super().main(*args, **kwargs)

    def invoke(self, ctx: click.Context):
        try:
            return super().invoke(ctx)
        except click.exceptions.NoArgsIsHelpError:
            raise
        except click.UsageError as exc:  # one line, not the usage block
            where = exc.ctx.command_path if exc.ctx is not None else "clashcheck"
            text = " ".join(exc.format_message().split())
            raise _InputFailure(f"{text} (see '{where} --help')") from None
        except ClashcheckError as exc:
            raise _InputFailure(str(_as_flags(exc))) from None
        except UnicodeDecodeError as exc:
            raise _InputFailure(f"input is not UTF-8 text: {exc.reason}") from None
        except OSError as exc:
            if exc.filename is None and exc.errno in _OUTPUT_ERRNOS:  # stdout full or closed
                _quiet_stdout()
                raise _InputFailure(f"standard output: cannot write ({exc.strerror or exc})") from None
            name = _printable(str(exc.filename)) if exc.filename is not None else "file"
            raise _InputFailure(f"{name}: {exc.strerror or exc}") from None
        except (click.exceptions.Exit, click.Abort, click.ClickException, KeyboardInterrupt):
            raise
        except Exception as exc:  # anything else is a bug: exit 3, never 1
            import traceback

            debug = bool((ctx.obj or {}).get("debug")) if isinstance(ctx.obj, dict) else False
            raise _InternalError(f"{type(exc).__name__}: {exc}", traceback.format_exc(), debug) from None


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(package_name="clashcheck")
@click.option("--debug", is_flag=True, help="On an internal error, show the traceback instead of writing it to a file.")
@click.pass_context
def main(ctx: click.Context, debug: bool) -> None:
    """Find where motor and propeller excitation meets the frame's modes.

    Exit codes: 0 nothing reaches the fail level, 1 something does, 2 bad
    input, 3 an internal error (a bug).

    Results are design advice. Bench and tap tests are done with the
    propellers removed; lithium packs are charged and stored under
    supervision; local aviation rules and licensed practice come first.
    """
    ctx.obj = {"debug": debug}


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
