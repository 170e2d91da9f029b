"""Exports: the HTML report, every mark as CSV, the chosen wording as text."""
from __future__ import annotations

from pathlib import Path

from ..changes import Done
from ..wording import Wording


class ExportOps:
    """Mixed into Project. ``chosen`` is a shelf id; None lets the report's rule choose."""

    def export_report(self, path: str | Path, *, chosen: int | None = None) -> Done[Path]:
        from ..report import write_html_report

        return Done(Path(write_html_report(self, path, chosen_id=chosen)))

    def export_marks(self, path: str | Path, *, run_id: int | None = None) -> Done[Path]:
        """One run's marks, or every mark of every run, as CSV (RFC 4180 quoting)."""
        from ..report import write_marks_csv

        return Done(Path(write_marks_csv(self, path, run_id=run_id)))

    def export_wording(self, path: str | Path, *, chosen: int | None = None,
                       wording: Wording | None = None) -> Done[Path]:
        """The chosen shelf wording (or the given one, e.g. the editor's) as a text file."""
        from ..report import chosen_wording_text

        text = wording.text if wording is not None else chosen_wording_text(self, chosen)
        out = Path(path)
        out.write_text(text if text.endswith("\n") else text + "\n", encoding="utf-8")
        return Done(out)
