"""Starting the window: which project to open, and the ``--snapshot`` mode.

With no source the last project opens; on the very first run a demo project is built from
the routing sample set so there is something to grade at once. A question set as source
gets its own project (one per set, in the projects folder) and is imported into it.
"""
from __future__ import annotations

import os
import sys
import time
from pathlib import Path

from PySide6.QtCore import QCoreApplication, QEventLoop, QSettings
from PySide6.QtWidgets import QApplication

from ..core.project import default_project_path, projects_dir
from ..core.store import PROJECT_SUFFIX
from .jobs import JobRunner
from .confirm_attach import attach_compare_and_confirm
from .main_window import MainWindow
from .suggest_attach import attach_suggestions
from .project_tasks import DEMO_NAME

ORG = APP = "honebench"
SNAPSHOT_SIZE = (1280, 820)
SNAPSHOT_TIMEOUT_S = 300


def application() -> QApplication:
    app = QApplication.instance() or QApplication(sys.argv[:1])
    app.setOrganizationName(ORG)
    app.setApplicationName(APP)
    app.setApplicationDisplayName("honebench")
    return app


def open_source(window: MainWindow, settings: QSettings, source: str | os.PathLike | None):
    """Open what was asked for: a project, a question set, the last project or the demo."""
    if source:
        path = Path(source)
        if path.suffix == PROJECT_SUFFIX:
            if not path.exists():
                raise FileNotFoundError(f"project file {path} does not exist; check the path "
                                        "or open the question set itself")
            return window.open_project(path)
        if not path.exists():
            raise FileNotFoundError(f"question set {path} does not exist; check the path")
        return window.open_project(default_project_path(path), then_import=str(path.resolve()))
    last = settings.value("last_project")
    if last and Path(str(last)).exists():
        return window.open_project(str(last))
    return window.open_project(projects_dir() / DEMO_NAME, demo=True)


def run_app(source=None, snapshot: Path | None = None, grade: bool = False) -> int:
    """Run the window; with ``snapshot`` save a picture of it and return instead."""
    app = application()
    settings = QSettings()
    runner = JobRunner()
    window = MainWindow(runner, settings, quiet=snapshot is not None)
    attach_compare_and_confirm(window)
    attach_suggestions(window)
    window.grade_limit = grade_limit()
    try:
        open_source(window, settings, source)
    except FileNotFoundError as exc:
        print(f"honebench: {exc}", file=sys.stderr)
        window.close()
        return 2
    if snapshot is None:
        window.show()
        return app.exec()
    expect_set = bool(source) and Path(source).suffix != PROJECT_SUFFIX
    return take_snapshot(window, Path(snapshot), grade, expect_set)


def grade_limit() -> int | None:
    """$HONEBENCH_GRADE_LIMIT: grade at most this many items per run (checks, pictures)."""
    raw = os.environ.get("HONEBENCH_GRADE_LIMIT", "").strip()
    try:
        return max(1, int(raw)) if raw else None
    except ValueError:
        print(f"honebench: ignoring HONEBENCH_GRADE_LIMIT={raw!r}: give a whole number",
              file=sys.stderr)
        return None


def _wait(condition, timeout_s: float) -> bool:
    deadline = time.monotonic() + timeout_s
    app = QCoreApplication.instance()
    while not condition():
        if time.monotonic() > deadline:
            return False
        app.processEvents(QEventLoop.ProcessEventsFlag.AllEvents, 50)
        time.sleep(0.01)
    return True


def take_snapshot(window: MainWindow, path: Path, grade: bool, expect_set: bool = False) -> int:
    """Load, optionally grade ($HONEBENCH_GRADE_LIMIT items at most), save a PNG, close.
    ``expect_set``: wait for a question set being imported too."""
    window.resize(*SNAPSHOT_SIZE)
    window.show()

    def failed() -> bool:
        return bool(window.problems)

    def ready() -> bool:
        state = window.state
        return (state is not None and window.engine_bar.handle is not None
                and (state.qset is not None or not expect_set))

    code = 0
    if not _wait(lambda: ready() or failed(), SNAPSHOT_TIMEOUT_S) or failed():
        code = 2
    elif grade:
        before = window.last_grade
        window.grade("tuning")
        if not _wait(lambda: window.last_grade is not before or failed(), SNAPSHOT_TIMEOUT_S) \
                or failed():
            code = 2
    window.runner.wait_idle(10_000)
    _wait(lambda: False, 0.3)  # let the preview and late repaints land
    path.parent.mkdir(parents=True, exist_ok=True)
    if not window.grab().save(str(path)):
        print(f"honebench: could not write the snapshot {path}", file=sys.stderr)
        code = 2
    for title, message in window.problems:
        print(f"honebench: {title}: {message}", file=sys.stderr)
    window.close()
    return code
