"""The one save-path helper: a save dialog that starts where the last export went."""
from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import QSettings
from PySide6.QtWidgets import QFileDialog, QWidget

LAST_DIR = "export/last_dir"


def ask_save_path(parent: QWidget, settings: QSettings, title: str, name: str,
                  file_filter: str) -> str | None:
    """Ask where to save ``name``; remember the folder. None when the user cancels."""
    start = Path(str(settings.value(LAST_DIR, str(Path.home()))))
    path, _ = QFileDialog.getSaveFileName(parent, title, str(start / name), file_filter)
    if not path:
        return None
    settings.setValue(LAST_DIR, str(Path(path).parent))
    return path
