"""The package's layers import only downward (derived from the layout in DEVELOPERS.md).

Each subpackage of ``clashcheck`` is a layer.  A module may import from its own
layer and from the layers below it, never from a layer above.  Imports inside
functions count too: a lazy import upward is still an upward dependency.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parent.parent / "clashcheck"

#: Layer rank of each top-level part of the package, lowest first.
LAYERS = {
    "errors": 0, "_lazy": 0, "files": 0, "catalogs": 0,
    "model": 1,
    "inputs": 2,
    "identify": 3,
    "analysis": 4,
    "fleet": 4.5,
    "report": 5,
    "cli": 6, "__main__": 6,
}


def _part(module: str) -> str:
    """The top-level part of a dotted module name inside ``clashcheck``."""
    return module.split(".")[1] if module.count(".") else module


def _imports(path: Path) -> list[tuple[int, str]]:
    """(line, absolute module) for every clashcheck import in ``path``."""
    rel = path.relative_to(PACKAGE.parent).with_suffix("")
    parts = list(rel.parts)
    package = parts[:-1] if parts[-1] != "__init__" else parts[:-1]
    out = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = package[: len(package) - node.level + 1]
                target = ".".join([*base, node.module] if node.module else base)
                if not node.module:  # from . import x: each name is a module
                    out += [(node.lineno, f"{target}.{a.name}") for a in node.names]
                    continue
            else:
                target = node.module or ""
            if target.startswith("clashcheck"):
                out.append((node.lineno, target))
        elif isinstance(node, ast.Import):
            out += [(node.lineno, a.name) for a in node.names if a.name.startswith("clashcheck")]
    return out


MODULES = sorted(p for p in PACKAGE.rglob("*.py") if p.name != "__init__.py" or p.parent != PACKAGE)


def test_every_part_has_a_layer():
    parts = {p.relative_to(PACKAGE).parts[0].removesuffix(".py") for p in PACKAGE.iterdir()
             if (p.suffix == ".py" or (p.is_dir() and (p / "__init__.py").exists()))}
    assert parts - {"__init__"} <= set(LAYERS), f"give these a layer: {parts - set(LAYERS) - {'__init__'}}"


@pytest.mark.parametrize("path", MODULES, ids=lambda p: str(p.relative_to(PACKAGE)))
def test_imports_only_downward(path):
    own = _part(".".join(path.relative_to(PACKAGE.parent).with_suffix("").parts))
    upward = [
        f"line {line}: {target}"
        for line, target in _imports(path)
        if target.count(".") and LAYERS[_part(target)] > LAYERS[own]
    ]
    assert not upward, f"{path.relative_to(PACKAGE)} imports from a higher layer: {upward}"


def test_the_walker_sees_relative_and_lazy_imports():
    """The walker resolves relative imports, including one inside a function (derived by reading the file)."""
    found = {target for _, target in _imports(PACKAGE / "inputs" / "buildfile.py")}
    assert "clashcheck.model.build" in found  # from ..model.build import ... at the top
    assert "clashcheck.inputs.armfile" in found  # from .armfile import ... inside parse_build


def test_every_folder_is_a_regular_package():
    """A folder without ``__init__.py`` is left out of a non-editable install (setuptools' find)."""
    folders = {p.parent for p in PACKAGE.rglob("*.py") if "__pycache__" not in p.parts}
    missing = sorted(str(f.relative_to(PACKAGE)) for f in folders if not (f / "__init__.py").exists())
    assert not missing, f"add __init__.py to: {missing}"
