"""The transfer check in the window: "Check on another engine…" opens the dialog; the check
runs as one operation on the model lane (the other engine is opened inside the job and
closed after), with progress, ETA and Stop; the result fills the dialog's table."""
from __future__ import annotations

from typing import Callable

from PySide6.QtCore import QObject, Signal
from PySide6.QtWidgets import QPushButton, QWidget

from ..jobs import Job, JobRunner
from ..project import operations
from ..project.session import ProjectSession
from ..shelf.model import ShelfModel
from ..shelf.panel import ShelfPanel
from .dialog import TransferDialog

TEXT = "Check on another &engine…"
BUTTON = "Other engine…"
TIP = ("Grade chosen shelf versions on a second engine (another model file, quantisation or "
       "an endpoint) over the same tuning items, and see whether they win there too")


class TransferControl(QObject):
    """Signals: ``finished(TransferResult)`` once a check is saved."""

    finished = Signal(object)

    def __init__(self, runner: JobRunner, session: ProjectSession, shelf: ShelfModel,
                 panel: ShelfPanel, engine, *, show_problem: Callable[[str, str], None],
                 status: Callable[[str], None], dialog_parent: QWidget, parent=None):
        super().__init__(parent)
        self.runner, self.session, self.shelf, self.panel = runner, session, shelf, panel
        self.engine, self.show_problem, self.status = engine, show_problem, status
        self.dialog_parent = dialog_parent
        self.dialog: TransferDialog | None = None
        self.job: Job | None = None
        self.button = QPushButton(BUTTON)  # short: it shares the shelf's row with two more
        self.button.setAccessibleName("Check the chosen versions on another engine")
        self.button.setToolTip(TIP)
        self.button.clicked.connect(self.open_dialog)
        shelf.rows_changed.connect(self._on_rows)
        session.opened.connect(lambda _s: self.update_enabled())
        self.update_enabled()

    def _on_rows(self, rows) -> None:
        """New shelf rows: the button, and the dialog's list (its ticks kept) unless a
        check is running."""
        self.update_enabled()
        if self.dialog is not None and self.job is None and rows:
            self.dialog.set_versions(rows, set(self.dialog.chosen_ids()))

    def can_open(self) -> bool:
        return self.session.qset is not None and bool(self.shelf.rows)

    def update_enabled(self) -> None:
        self.button.setEnabled(self.can_open())

    # -- the dialog ----------------------------------------------------------------------
    def open_dialog(self) -> TransferDialog | None:
        """Show the dialog with the selected version and the best other one ticked (a rank
        change needs two versions)."""
        if not self.can_open():
            return None
        if self.dialog is None:
            self.dialog = TransferDialog(self.dialog_parent)
            self.dialog.run_requested.connect(self.run)
            self.dialog.cancel_requested.connect(self.cancel)
        rows = list(self.shelf.rows)
        chosen = {self.panel.selected_id() or rows[0].entry.id}
        others = [r for r in rows if r.entry.id not in chosen]  # newest first
        graded = [r for r in others if r.tuning is not None]
        if graded or others:  # the best graded other version, else the newest other one
            chosen.add(max(graded, key=lambda r: (r.tuning.rate, r.entry.version)).entry.id
                       if graded else others[0].entry.id)
        if self.job is None:
            self.dialog.set_versions(rows, chosen)
        handle = self.engine.handle
        self.dialog.set_graded_engine(handle.describe() if handle else
                                      "the model has not loaded yet")
        self.dialog.show()
        self.dialog.raise_()
        if self.job is None:
            self._show_latest()
        return self.dialog

    def _show_latest(self) -> None:
        project, dialog = self.session.project, self.dialog
        self.runner.submit(lambda ctx: operations.latest_transfer(project),
                           done=dialog.show_result, name="read the transfer check")

    # -- running -------------------------------------------------------------------------
    def run(self, choice, wording_ids: list[int]) -> Job | None:
        """Run the check as a job on the model lane."""
        if self.job is not None or self.session.project is None:
            return None
        handle, dialog = self.engine.handle, self.dialog
        if handle is None:
            dialog.show_message("⚠ The graded model has not loaded yet; wait for it, then run "
                                "the check again.")
            return None
        project, settings = self.session.project, self.engine.project_settings()
        name = f"check on {choice.label()}"

        def finish(result):
            self._ended(f"Checked on {choice.label()}: "
                        f"{len(result.flagged)} of {len(result.versions)} versions flagged")
            dialog.show_result(result)
            self.finished.emit(result)

        def failed(message):
            stopped = self.job is not None and self.job.cancel_event.is_set()
            self._ended("")
            dialog.show_message("Stopped the check; the marks graded so far are saved." if stopped
                                else f"⚠ The check did not finish: {message}")

        dialog.set_running(True)
        dialog.show_message(f"Opening {choice.label()}…")
        self.status(f"Checking on {choice.label()}…")
        self.job = self.runner.submit(
            lambda ctx: operations.transfer(project, handle, choice=choice,
                                            wording_ids=wording_ids, settings=settings,
                                            cancel=ctx.cancel_event, on_event=ctx.report),
            done=finish, failed=failed, cancelled=lambda: self._ended("Stopped the check"),
            progress=dialog.show_event, name=name, uses_model=True)
        return self.job

    def _ended(self, text: str) -> None:
        self.job = None
        if self.dialog is not None:
            self.dialog.set_running(False)
            if text:
                self.dialog.show_message(text)
        if text:
            self.status(text)

    def cancel(self) -> None:
        if self.job is not None:
            self.job.cancel()
