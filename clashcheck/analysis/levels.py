"""Verdicts and fail levels: the one list of each (no imports, cheap to load).

The command line reads :data:`FAIL_LEVELS` at start-up, before numpy loads, so
this module imports nothing.
"""

from __future__ import annotations

__all__ = ["VERDICTS", "FAIL_LEVELS", "worse_verdict", "reaches"]

#: Verdicts from best to worst.
VERDICTS = ("clear", "watch", "clash")

#: Fail levels a command can stop at (``--fail-on``), and the verdicts that
#: reach each.  The command line, ``compare`` and ``pick`` use this list.
FAIL_LEVELS: dict[str, tuple[str, ...]] = {
    "clash": ("clash",),
    "watch": ("watch", "clash"),
    "never": (),
}


def worse_verdict(a: str, b: str) -> str:
    """The worse of two verdicts.

    Parameters
    ----------
    a, b : str
        Verdicts from :data:`VERDICTS`.

    Returns
    -------
    str

    Examples
    --------
    >>> worse_verdict("watch", "clash")
    'clash'
    """
    return a if VERDICTS.index(a) >= VERDICTS.index(b) else b


def reaches(verdict: str, fail_on: str) -> bool:
    """Whether ``verdict`` reaches the fail level ``fail_on`` (exit code 1).

    Parameters
    ----------
    verdict : str
        A verdict from :data:`VERDICTS`.
    fail_on : str
        A key of :data:`FAIL_LEVELS`.

    Returns
    -------
    bool

    Examples
    --------
    >>> reaches("watch", "clash"), reaches("watch", "watch")
    (False, True)
    """
    return verdict in FAIL_LEVELS[fail_on]
