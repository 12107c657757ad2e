"""Fixtures for every test item, the doctests in ``clashcheck/`` included."""

from __future__ import annotations

from pathlib import Path

import pytest


@pytest.fixture(autouse=True)
def _private_cache(tmp_path_factory: pytest.TempPathFactory, monkeypatch: pytest.MonkeyPatch) -> Path:
    """Keep the unit-conversion cache out of the user's home folder."""
    folder = tmp_path_factory.getbasetemp() / "clashcheck-cache"
    monkeypatch.setenv("CLASHCHECK_CACHE_DIR", str(folder))
    return folder
