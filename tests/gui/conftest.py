"""Fixtures shared by the window tests: private settings and a job runner that must end idle."""
from __future__ import annotations

import pytest
from PySide6.QtCore import QSettings

from honebench.gui.jobs import JobRunner


@pytest.fixture
def settings(tmp_path):
    return QSettings(str(tmp_path / "settings.ini"), QSettings.Format.IniFormat)


@pytest.fixture
def runner(qtbot):
    r = JobRunner()
    yield r
    r.cancel_all()
    assert r.wait_idle(60_000), f"jobs left running: {r.active()}"
