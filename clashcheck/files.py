"""Safe file output: atomic writes that never replace an input.

Every command writes through :func:`atomic_file` or :func:`write_output`.
"""

from __future__ import annotations

import os
import tempfile
from collections.abc import Iterable, Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import BinaryIO

from .errors import OutputError

__all__ = ["atomic_file", "check_target", "write_output"]


def _same_file(a: Path, b: Path) -> bool:
    try:
        return a.resolve() == b.resolve() or (a.exists() and b.exists() and os.path.samefile(a, b))
    except OSError:
        return False


def check_target(path: str | Path, inputs: Iterable[str | Path] = ()) -> Path:
    """Refuse an output path that is an input, a folder, or in a missing folder.

    Returns
    -------
    Path
        The folder the file will be written in.
    """
    target = Path(path)
    for inp in inputs:
        if _same_file(target, Path(inp)):
            raise OutputError(str(path), "refusing to overwrite an input file")
    if target.is_dir():
        raise OutputError(str(path), "is a folder")
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise OutputError(str(path), f"folder {str(folder)!r} does not exist")
    return folder


@contextmanager
def atomic_file(path: str | Path, inputs: Iterable[str | Path] = ()) -> Iterator[BinaryIO]:
    """Open ``path`` for writing so that it appears whole or not at all.

    The data goes to a temporary file in the same folder, which replaces the
    target in one step when the block ends without an error (and is removed
    otherwise).  The target may not be one of ``inputs``.

    Raises
    ------
    OutputError
        When the path is an input, a folder, or cannot be written.
    """
    target = Path(path)
    folder = check_target(target, inputs)
    try:
        fd, tmp = tempfile.mkstemp(dir=folder, prefix=f".{target.name}.", suffix=".tmp")
    except OSError as exc:
        raise OutputError(str(path), f"cannot write here ({exc.strerror})") from None
    try:
        with os.fdopen(fd, "wb") as fh:
            yield fh
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)
        os.replace(tmp, target)
    except OSError as exc:
        raise OutputError(str(path), f"cannot write ({exc.strerror})") from None
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)


def write_output(path: str | Path, text: str | bytes, inputs: Iterable[str | Path] = ()) -> None:
    """Write ``text`` to ``path`` atomically, never over one of ``inputs``.

    Raises
    ------
    OutputError
        When the path is an input, a folder, or cannot be written.
    """
    with atomic_file(path, inputs) as fh:
        fh.write(text.encode("utf-8") if isinstance(text, str) else text)
