"""Conventions that check themselves: numpydoc parameters, typing, a clean home folder.

The docstring rule follows python-control's docstring test: every public
function and public method of the package documents each of its parameters
in a numpydoc ``Parameters`` section (parsed with numpydoc itself).
"""

from __future__ import annotations

import importlib
import inspect
import os
import pkgutil
import subprocess
import sys
from pathlib import Path

import pytest

import clashcheck

REPO = Path(__file__).resolve().parent.parent


def _public_callables():
    for info in pkgutil.walk_packages(clashcheck.__path__, "clashcheck."):
        if info.name.endswith("__main__") or info.name.startswith("clashcheck.catalogs"):
            continue
        module = importlib.import_module(info.name)
        for name, obj in vars(module).items():
            if name.startswith("_") or getattr(obj, "__module__", None) != module.__name__:
                continue
            if inspect.isfunction(obj):
                yield f"{info.name}.{name}", obj
            elif inspect.isclass(obj):
                for attr, member in vars(obj).items():
                    if not attr.startswith("_") and inspect.isfunction(member):
                        yield f"{info.name}.{name}.{attr}", member


def _undocumented(func) -> list[str]:
    from numpydoc.docscrape import FunctionDoc

    params = [p for p in inspect.signature(func).parameters if p not in ("self", "cls")]
    if not params:
        return []
    documented = {n.strip().lstrip("*") for p in FunctionDoc(func)["Parameters"] for n in p.name.split(",")}
    return [p for p in params if p not in documented]


def test_every_public_function_documents_its_parameters():
    missing = {name: gaps for name, func in _public_callables() if (gaps := _undocumented(func))}
    assert not missing, "undocumented parameters (numpydoc 'Parameters'):\n" + "\n".join(
        f"  {name}: {', '.join(gaps)}" for name, gaps in sorted(missing.items()))


def test_the_docstring_rule_catches_a_gap():
    def documented(a, b):
        """Add.

        Parameters
        ----------
        a, b : float
            Numbers.
        """

    def gap(a, b):
        """Add.

        Parameters
        ----------
        a : float
            A number.
        """

    assert _undocumented(documented) == []
    assert _undocumented(gap) == ["b"]


def test_mypy_is_clean():
    """The package ships ``py.typed``; mypy (settings in pyproject.toml) finds no error."""
    pytest.importorskip("mypy")
    done = subprocess.run([sys.executable, "-m", "mypy", "--no-error-summary"], cwd=REPO,
                          capture_output=True, text=True, timeout=600)
    assert done.returncode == 0, done.stdout[-4000:]


def test_doctests_write_nothing_in_home(tmp_path):
    """The unit-cache fixture covers the doctests (root conftest.py), so a run leaves HOME empty."""
    env = {k: v for k, v in os.environ.items() if k not in ("CLASHCHECK_CACHE_DIR", "XDG_CACHE_HOME")}
    env["HOME"] = str(tmp_path)
    done = subprocess.run([sys.executable, "-m", "pytest", "-q", "-p", "no:randomly", "clashcheck/model"],
                          cwd=REPO, env=env, capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stdout[-2000:]
    assert [p for p in tmp_path.rglob("*") if p.is_file()] == []
