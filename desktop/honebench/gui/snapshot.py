"""``honebench gui --snapshot``: load, optionally grade, save a picture of the window, close."""
from __future__ import annotations

import sys
import time
from pathlib import Path

from PySide6.QtCore import QCoreApplication, QEventLoop

SNAPSHOT_SIZE = (1366, 768)
SNAPSHOT_TIMEOUT_S = 300


def wait_for(condition, timeout_s: float) -> bool:
    """Process events until ``condition()`` holds; False when the time runs out."""
    deadline = time.monotonic() + timeout_s
    qapp = QCoreApplication.instance()
    while not condition():
        if time.monotonic() > deadline:
            return False
        qapp.processEvents(QEventLoop.ProcessEventsFlag.AllEvents, 50)
        time.sleep(0.01)
    return True


def take_snapshot(app, path: Path, grade: bool, expect_set: bool = False) -> int:
    """Load, optionally grade ($HONEBENCH_GRADE_LIMIT items at most), save a PNG, close.
    ``expect_set``: wait for a question set being imported too."""
    window = app.window
    window.resize(*SNAPSHOT_SIZE)
    window.show()

    def failed() -> bool:
        return bool(window.problems)

    def ready() -> bool:
        state = app.session.state
        return (state is not None and app.engine.handle is not None
                and (state.qset is not None or not expect_set))

    code = 0
    if not wait_for(lambda: ready() or failed(), SNAPSHOT_TIMEOUT_S) or failed():
        code = 2
    elif grade:
        before = app.grading.last
        app.grade()
        if not wait_for(lambda: app.grading.last is not before or failed(),
                        SNAPSHOT_TIMEOUT_S) or failed():
            code = 2
    app.runner.wait_idle(10_000)
    wait_for(lambda: False, 0.3)  # let the preview and late repaints land
    path.parent.mkdir(parents=True, exist_ok=True)
    if not window.grab().save(str(path)):
        print(f"honebench: could not write the snapshot {path}", file=sys.stderr)
        code = 2
    for title, message in window.problems:
        print(f"honebench: {title}: {message}", file=sys.stderr)
    window.close()
    return code
