"""Provenance: what ties a figure or a report to its inputs (tool, version, date, name, input hash).

Pure: the caller (the command line) reads the input files and passes their
bytes; nothing here touches a file or the clock unless no date is given.

Examples
--------
>>> p = Provenance.of("Harbour quad", [b"name = 'x'\\n"], date="2026-12-02")
>>> p.line().endswith("· 2026-12-02 · Harbour quad · inputs sha256:d20f1bd7")
True
"""

from __future__ import annotations

import datetime as _dt
import hashlib
from collections.abc import Iterable
from dataclasses import dataclass

__all__ = ["Provenance", "content_hash", "markdown_footer", "TOOL"]

#: Tool name printed in every provenance line.
TOOL = "clashcheck"


def content_hash(blobs: Iterable[bytes], length: int = 8) -> str:
    """Short SHA-256 of the inputs' contents, in order (each length-prefixed).

    Parameters
    ----------
    blobs : iterable of bytes
        The input files' contents.
    length : int, optional
        Hex digits kept (4 to 64).

    Returns
    -------
    str
        ``length`` lowercase hex digits.

    Examples
    --------
    >>> content_hash([b"a", b"b"]) != content_hash([b"ab"])
    True
    """
    if not 4 <= length <= 64:
        raise ValueError("length must be 4 to 64 hex digits")
    h = hashlib.sha256()
    for blob in blobs:
        h.update(len(blob).to_bytes(8, "little"))
        h.update(blob)
    return h.hexdigest()[:length]


def _version() -> str:
    import clashcheck  # the package's own version (the root package sits below every layer)

    return str(clashcheck.__version__)


@dataclass(frozen=True)
class Provenance:
    """Where a figure or report came from."""

    #: Build or recording name(s).
    name: str
    #: Short content hash of the inputs (hex).
    input_hash: str
    #: Date the output was made (ISO, YYYY-MM-DD).
    date: str
    #: Tool version.
    version: str
    #: Tool name.
    tool: str = TOOL

    @classmethod
    def of(cls, name: str, blobs: Iterable[bytes], date: str | None = None) -> "Provenance":
        """Provenance of outputs made from ``blobs`` (the inputs' bytes).

        Parameters
        ----------
        name : str
            Build or recording name.
        blobs : iterable of bytes
            The inputs' contents, in a fixed order.
        date : str, optional
            ISO date; today (UTC) when not given.

        Returns
        -------
        Provenance
        """
        if date is None:
            date = _dt.datetime.now(_dt.timezone.utc).date().isoformat()
        return cls(name=" ".join(str(name).split()), input_hash=content_hash(blobs), date=date,
                   version=_version())

    def line(self) -> str:
        """One line: tool version · date · name · input hash.

        Returns
        -------
        str
        """
        return f"{self.tool} {self.version} · {self.date} · {self.name} · inputs sha256:{self.input_hash}"


def markdown_footer(prov: "Provenance | str | None") -> str:
    """The provenance as the last line of a Markdown report (small type), or ``''``.

    Parameters
    ----------
    prov : Provenance, str or None
        Provenance of the report (or its line).

    Returns
    -------
    str
        Text to append, starting with a blank line; empty for ``None``.
    """
    if prov is None:
        return ""
    line = prov if isinstance(prov, str) else prov.line()
    return f"\n---\n\n<sub>{line}</sub>\n"
