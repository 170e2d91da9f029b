"""Choosing project files: the new / open dialogs and the recent projects list."""
from __future__ import annotations

from pathlib import Path
from typing import Callable

from PySide6.QtCore import QSettings
from PySide6.QtWidgets import QFileDialog, QMenu, QWidget

from ...core.store import PROJECT_SUFFIX

RECENT_MAX = 8
FILTER = f"honebench projects (*{PROJECT_SUFFIX})"


def ask_new_project(parent: QWidget, settings: QSettings) -> str | None:
    """Where to create a new project file (with the .hone suffix), or None."""
    start = str(settings.value("projects/last_dir", str(Path.home())))
    path, _ = QFileDialog.getSaveFileName(parent, "New project", start, FILTER)
    if not path:
        return None
    if not path.endswith(PROJECT_SUFFIX):
        path += PROJECT_SUFFIX
    settings.setValue("projects/last_dir", str(Path(path).parent))
    return path


def ask_open_project(parent: QWidget, settings: QSettings) -> str | None:
    start = str(settings.value("projects/last_dir", str(Path.home())))
    path, _ = QFileDialog.getOpenFileName(parent, "Open a project", start, FILTER)
    if path:
        settings.setValue("projects/last_dir", str(Path(path).parent))
    return path or None


def recent_projects(settings: QSettings) -> list[str]:
    value = settings.value("recent_projects", []) or []
    return [value] if isinstance(value, str) else [str(v) for v in value]


def remember_recent(settings: QSettings, path: str) -> None:
    paths = [path] + [p for p in recent_projects(settings) if p != path]
    settings.setValue("recent_projects", paths[:RECENT_MAX])


def fill_recent_menu(menu: QMenu, settings: QSettings, open_project: Callable[[str], object]):
    menu.clear()
    paths = recent_projects(settings)
    for path in paths:
        action = menu.addAction(Path(path).name)
        action.setToolTip(path)
        action.setStatusTip(path)
        action.triggered.connect(lambda _c=False, p=path: open_project(p))
    if not paths:
        menu.addAction("(none yet)").setEnabled(False)
