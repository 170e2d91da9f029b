"""Starting the window: the Qt application, what to open first, and ``run_app`` (which
composes the window exactly as the tests do, with app.compose)."""
from __future__ import annotations

import os
import sys
from pathlib import Path

from PySide6.QtCore import QSettings
from PySide6.QtWidgets import QApplication

from ..core.project import DEMO_NAME, default_project_path, projects_dir
from ..core.store import PROJECT_SUFFIX
from .app import App, compose
from .jobs import JobRunner

ORG = APP = "honebench"


def application() -> QApplication:
    qapp = QApplication.instance() or QApplication(sys.argv[:1])
    qapp.setOrganizationName(ORG)
    qapp.setApplicationName(APP)
    qapp.setApplicationDisplayName("honebench")
    return qapp


def open_source(app: App, settings: QSettings, source: str | os.PathLike | None):
    """Open what was asked for: a project, a question set, the last project or the demo."""
    session = app.session
    if source:
        path = Path(source)
        if path.suffix == PROJECT_SUFFIX:
            if not path.exists():
                raise FileNotFoundError(f"project file {path} does not exist; check the path "
                                        "or open the question set itself")
            return session.open_project(path)
        if not path.exists():
            raise FileNotFoundError(f"question set {path} does not exist; check the path")
        return session.open_project(default_project_path(path), then_import=str(path.resolve()))
    last = settings.value("last_project")
    if last and Path(str(last)).exists():
        return session.open_project(str(last))
    return session.open_project(projects_dir() / DEMO_NAME, demo=True)


def run_app(source=None, snapshot: Path | None = None, grade: bool = False) -> int:
    """Run the window; with ``snapshot`` save a picture of it and return instead."""
    from .snapshot import take_snapshot

    qapp = application()
    settings = QSettings()
    app = compose(JobRunner(), settings, quiet=snapshot is not None)
    try:
        open_source(app, settings, source)
    except FileNotFoundError as exc:
        print(f"honebench: {exc}", file=sys.stderr)
        app.window.close()
        return 2
    if snapshot is None:
        app.window.show()
        return qapp.exec()
    expect_set = bool(source) and Path(source).suffix != PROJECT_SUFFIX
    return take_snapshot(app, Path(snapshot), grade, expect_set)
