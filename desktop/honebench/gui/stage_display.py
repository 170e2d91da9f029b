"""One stage of a long job shown in a progress bar and a label (suggest, auto-hone)."""
from __future__ import annotations

from PySide6.QtWidgets import QLabel, QProgressBar

from ..core.events import Progress, progress_text


def show_stage(bar: QProgressBar, label: QLabel, text: str, p: Progress | None) -> None:
    """``text`` with the progress, done/total and ETA; a busy bar when there is no count."""
    if p is None:
        bar.setRange(0, 0)
        label.setText(text)
        return
    bar.setRange(0, max(p.total, 1))
    bar.setValue(min(p.done, max(p.total, 1)))
    bar.setFormat(f"{p.done}/{p.total}")
    label.setText(f"{text}: {progress_text(p)}")
