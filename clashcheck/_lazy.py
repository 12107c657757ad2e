"""Lazy public names for package ``__init__`` files (PEP 562); standard library only."""

from __future__ import annotations

from collections.abc import Callable
from importlib import import_module
from typing import Any


def lazy_getattr(package: str, names: dict[str, str], namespace: dict[str, Any]) -> Callable[[str], Any]:
    """A module ``__getattr__`` that imports ``names[name]`` (a submodule) on first use.

    The value is stored in ``namespace`` (the package's globals), so each name is
    looked up once.

    Parameters
    ----------
    package : str
        The package's ``__name__``.
    names : dict of str to str
        Public name → submodule (relative to the package) that defines it.
    namespace : dict
        The package's ``globals()``, where each value is stored once loaded.

    Returns
    -------
    callable
        The package's ``__getattr__``.
    """

    def __getattr__(name: str) -> Any:
        if name in names:
            value = getattr(import_module(f".{names[name]}", package), name)
            namespace[name] = value
            return value
        raise AttributeError(f"module {package!r} has no attribute {name!r}")

    return __getattr__
