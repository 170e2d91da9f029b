"""Shared fixtures. The real bundled model is loaded once per test session."""
from __future__ import annotations

import os

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

import pytest  # noqa: E402


@pytest.fixture(autouse=True)
def _private_home(tmp_path, monkeypatch):
    """Projects made for bare sets go to a temporary folder, never the user's home."""
    monkeypatch.setenv("HONEBENCH_HOME", str(tmp_path / "home"))


@pytest.fixture(scope="session")
def local_engine():
    from honebench.core.engines.local import LocalEngine

    engine = LocalEngine()
    yield engine
    engine.close()


@pytest.fixture
def sample_dir():
    from honebench.core.recipes import sample_sets_dir

    return sample_sets_dir()
