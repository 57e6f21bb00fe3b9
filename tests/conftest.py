"""Every test gets its own cache folder: no test reads what another (or the user) stored."""

from __future__ import annotations

from pathlib import Path

import pytest


@pytest.fixture(autouse=True)
def private_cache(tmp_path_factory: pytest.TempPathFactory, monkeypatch: pytest.MonkeyPatch) -> Path:
    folder = tmp_path_factory.mktemp("cache")
    monkeypatch.setenv("LINKCHECK_CACHE_DIR", str(folder))
    return folder
