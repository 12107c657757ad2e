"""The clashcheck error family.

Every error a user can cause derives from :class:`ClashcheckError`.  Errors
keep their data as fields and build their message from them, so a caller can
inspect ``err.field`` instead of parsing text.  The command line turns any
:class:`ClashcheckError` into one line on stderr and exit code 2.
"""

from __future__ import annotations

__all__ = [
    "MISSING",
    "ClashcheckError",
    "InputError",
    "RecordingError",
    "OutputError",
]


class _Missing:
    """Stands for "no value given"; shows as ``nothing`` in messages."""

    def __repr__(self) -> str:
        return "nothing"


#: Pass as ``got`` when a required value is absent.
MISSING = _Missing()


#: Longest message an error builds [characters]; longer texts (whole header
#: rows, long paths) are cut in the middle, so one line stays one readable line.
MAX_MESSAGE = 300


def _printable(text: str, limit: int = MAX_MESSAGE) -> str:
    """``text`` with control characters escaped and cut to ``limit`` characters.

    A message then stays on one line, however the path or value was written.
    """
    text = text if text.isprintable() else repr(text)[1:-1]
    if len(text) > limit:
        keep = (limit - 5) // 2
        text = f"{text[:keep]} ... {text[-keep:]}"
    return text


class ClashcheckError(Exception):
    """Base class of every error clashcheck raises on purpose."""


class InputError(ClashcheckError, ValueError):
    """A value that entered from outside is missing, malformed or out of range.

    Parameters
    ----------
    field : str
        Dotted path of the offending value, e.g. ``"motor.kv"``.
    expected : str
        What was expected, in words, e.g. ``"a speed constant like '1750 rpm/V'"``.
    got : object
        What arrived.  Long values are shortened in the message.
    hint : str, optional
        One extra sentence, e.g. a "did you mean" suggestion.
    """

    def __init__(self, field: str, expected: str, got: object, hint: str = "") -> None:
        self.field = field
        self.expected = expected
        self.got = got
        self.hint = hint
        super().__init__(self._message())

    def _message(self) -> str:
        got = repr(self.got)
        if len(got) > 80:
            got = got[:77] + "..."
        text = f"{_printable(str(self.field), 160)}: expected {self.expected}, got {got}"
        if self.hint:
            text += f" ({self.hint})"
        return _printable(text, MAX_MESSAGE + 60)

    def __reduce__(self):  # keep pickling (multiprocessing, hypothesis) working
        return (type(self), (self.field, self.expected, self.got, self.hint))


class RecordingError(ClashcheckError, ValueError):
    """A recording file is malformed or unusable.

    Parameters
    ----------
    path : str
        The file.
    location : str
        Where in the file, e.g. ``"row 1042"`` or ``"byte 44"``; may be empty.
    problem : str
        What is wrong, in words.
    """

    def __init__(self, path: str, location: str, problem: str) -> None:
        self.path = path
        self.location = location
        self.problem = problem
        where = f"{_printable(str(path), 160)}, {location}" if location else _printable(str(path), 160)
        super().__init__(f"{where}: {_printable(str(problem))}")

    def __reduce__(self):
        return (type(self), (self.path, self.location, self.problem))


class OutputError(ClashcheckError, OSError):
    """An output file cannot be written where it was asked for."""

    def __init__(self, path: str, problem: str) -> None:
        self.path = path
        self.problem = problem
        super().__init__(f"{path}: {problem}")

    def __str__(self) -> str:
        return f"{_printable(str(self.path), 160)}: {_printable(str(self.problem))}"

    def __reduce__(self):
        return (type(self), (self.path, self.problem))
