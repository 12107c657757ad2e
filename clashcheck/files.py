"""Safe file output: one policy for every file clashcheck writes.

Every command writes through :func:`atomic_file` or :func:`write_output`, so
the same rules hold everywhere:

- **Atomic.**  The data goes to a temporary file in the target's folder,
  which replaces the target in one step; an error leaves the old file as it
  was.
- **Never over an input.**  A target that is (or is a link to) one of the
  command's inputs is refused.
- **Regular files or new paths only.**  A folder, a device node (``/dev/null``
  included), a FIFO or a socket is refused: replacing it with a regular file,
  as root could, would destroy it.  A symbolic link to a regular file is
  written through (the link stays).
- **Never over a foreign file without ``force``.**  An existing file is
  replaced only when clashcheck wrote it, or when the caller passes
  ``force=True`` (the command line's ``--force``).  "clashcheck wrote it"
  means either: the output register (``outputs-v1.json`` in the cache folder,
  see :func:`cache_dir`) records this path with the file's present SHA-256,
  so the file is unchanged since clashcheck wrote it; or the file begins with
  :data:`MARKER` (the first line of the modes files clashcheck writes).  A
  file edited since, a file from another machine or any other file counts as
  foreign.  With the cache turned off (``CLASHCHECK_CACHE_DIR=``) only the
  marker is recognised, and ``--force`` is needed for the rest.
"""

from __future__ import annotations

import contextvars
import hashlib
import json
import os
import stat
import tempfile
from collections.abc import Iterable, Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import BinaryIO

from .errors import OutputError

__all__ = [
    "atomic_file",
    "check_target",
    "write_output",
    "written_by_clashcheck",
    "cache_dir",
    "FORCE",
    "MARKER",
    "MAX_RECOGNISED_BYTES",
]

#: Replace existing files that clashcheck did not write (set by ``--force``).
FORCE: contextvars.ContextVar[bool] = contextvars.ContextVar("clashcheck_force", default=False)
#: Text at the start of a file that marks it as written by clashcheck.
MARKER = b"# Frame modes measured by clashcheck"
#: Largest existing file whose content is checked against the register [bytes];
#: a larger one counts as foreign.
MAX_RECOGNISED_BYTES = 256 * 1024 * 1024
_REGISTER = "outputs-v1.json"
_REGISTER_LIMIT = 512


def cache_dir() -> Path | None:
    """The cache folder: ``$CLASHCHECK_CACHE_DIR``, else ``$XDG_CACHE_HOME/clashcheck``.

    Returns
    -------
    Path or None
        ``None`` when ``CLASHCHECK_CACHE_DIR`` is set to an empty string.
    """
    env = os.environ.get("CLASHCHECK_CACHE_DIR")
    if env is not None:
        return Path(env) if env.strip() else None
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "clashcheck"


def _digest_file(path: Path) -> str | None:
    try:
        if path.stat().st_size > MAX_RECOGNISED_BYTES:
            return None
        h = hashlib.sha256()
        with open(path, "rb") as fh:
            for chunk in iter(lambda: fh.read(1 << 20), b""):
                h.update(chunk)
        return h.hexdigest()
    except OSError:
        return None


def _register() -> dict[str, str]:
    folder = cache_dir()
    if folder is None:
        return {}
    try:
        raw = (folder / _REGISTER).read_bytes()
        doc = json.loads(raw.decode("utf-8")) if len(raw) < (1 << 20) else None
    except (OSError, ValueError, RecursionError):
        return {}
    if not isinstance(doc, dict):
        return {}
    return {k: v for k, v in doc.items() if isinstance(k, str) and isinstance(v, str)}


def _remember(path: Path, digest: str) -> None:
    """Record that clashcheck wrote ``path`` with this content; silent on failure (a cache)."""
    folder = cache_dir()
    if folder is None:
        return
    entries = _register()
    key = str(path)
    entries.pop(key, None)
    entries[key] = digest
    entries = dict(list(entries.items())[-_REGISTER_LIMIT:])
    try:
        folder.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(dir=folder, prefix=".outputs-", suffix=".tmp")
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            json.dump(entries, fh)
        os.replace(tmp, folder / _REGISTER)
    except OSError:
        pass


def written_by_clashcheck(path: str | Path) -> bool:
    """True when the existing regular file at ``path`` is one clashcheck wrote, unchanged.

    Parameters
    ----------
    path : str or path-like
        An existing file.

    Returns
    -------
    bool
        The register holds this path with the file's present SHA-256, or the
        file begins with :data:`MARKER`.
    """
    target = Path(os.path.realpath(path))
    try:
        with open(target, "rb") as fh:
            if fh.read(len(MARKER)) == MARKER:
                return True
    except OSError:
        return False
    known = _register().get(str(target))
    return known is not None and known == _digest_file(target)


def _kind(mode: int) -> str:
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    if stat.S_ISFIFO(mode):
        return "a FIFO (named pipe)"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "not a regular file"


def _same_file(a: Path, b: Path) -> bool:
    try:
        return a.resolve() == b.resolve() or (a.exists() and b.exists() and os.path.samefile(a, b))
    except OSError:
        return False


def check_target(path: str | Path, inputs: Iterable[str | Path] = (), *,
                 force: bool | None = None) -> Path:
    """Refuse an output path that breaks the output policy (see the module text).

    Parameters
    ----------
    path : str or path-like
        The output file.
    inputs : iterable of paths
        The command's inputs; the output may not be one of them.
    force : bool, optional
        Replace an existing file clashcheck did not write; ``None`` takes
        :data:`FORCE` (the command line's ``--force``).

    Returns
    -------
    Path
        The folder the file will be written in.

    Raises
    ------
    OutputError
        When the path is an input, a folder, a device, a FIFO or socket, in a
        missing folder, or an existing file clashcheck did not write (without
        ``force``).
    """
    target = Path(path)
    for inp in inputs:
        if _same_file(target, Path(inp)):
            raise OutputError(str(path), "refusing to overwrite an input file")
    try:
        mode = os.stat(target).st_mode
    except FileNotFoundError:
        mode = None
    except OSError as exc:
        raise OutputError(str(path), f"cannot be checked ({exc.strerror})") from None
    if mode is not None:
        if not stat.S_ISREG(mode):
            raise OutputError(str(path), f"is {_kind(mode)}; the output must be a regular file "
                              "or a new path")
        allowed = FORCE.get() if force is None else force
        if not allowed and not written_by_clashcheck(target):
            raise OutputError(str(path), "exists and was not written by clashcheck (or was changed "
                              "since); refusing to replace it without --force")
    elif os.path.islink(target):
        raise OutputError(str(path), "is a broken symbolic link")
    real = Path(os.path.realpath(target))
    folder = real.parent if str(real.parent) else Path(".")
    if not folder.is_dir():
        raise OutputError(str(path), f"folder {str(Path(path).parent)!r} does not exist")
    return folder


@contextmanager
def atomic_file(path: str | Path, inputs: Iterable[str | Path] = (), *,
                force: bool | None = None) -> Iterator[BinaryIO]:
    """Open ``path`` for writing so that it appears whole or not at all.

    The data goes to a temporary file in the same folder, which replaces the
    target in one step when the block ends without an error (and is removed
    otherwise).  The target obeys :func:`check_target`.

    Parameters
    ----------
    path : str or path-like
        The output file (a link to a regular file is written through).
    inputs : iterable of paths
        The command's inputs.
    force : bool, optional
        As in :func:`check_target`.

    Returns
    -------
    context manager
        Yields a binary file object.

    Raises
    ------
    OutputError
        When the policy refuses the path, or it cannot be written.
    """
    folder = check_target(path, inputs, force=force)
    target = Path(os.path.realpath(path))
    try:
        fd, tmp = tempfile.mkstemp(dir=folder, prefix=f".{target.name[:100]}.", suffix=".tmp")
    except OSError as exc:
        raise OutputError(str(path), f"cannot write here ({exc.strerror})") from None
    try:
        with os.fdopen(fd, "wb") as fh:
            yield fh
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)
        digest = _digest_file(Path(tmp))
        os.replace(tmp, target)
    except OSError as exc:
        raise OutputError(str(path), f"cannot write ({exc.strerror})") from None
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)
    if digest is not None:
        _remember(target, digest)


def write_output(path: str | Path, text: str | bytes, inputs: Iterable[str | Path] = (), *,
                 force: bool | None = None) -> None:
    """Write ``text`` to ``path`` atomically, under the output policy.

    Parameters
    ----------
    path : str or path-like
        The output file.
    text : str or bytes
        The content (text is written as UTF-8).
    inputs : iterable of paths
        The command's inputs; never overwritten.
    force : bool, optional
        As in :func:`check_target`.

    Raises
    ------
    OutputError
        When the policy refuses the path, or it cannot be written.
    """
    with atomic_file(path, inputs, force=force) as fh:
        fh.write(text.encode("utf-8") if isinstance(text, str) else text)
