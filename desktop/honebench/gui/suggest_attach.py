"""Adds the suggestions and auto-hone panels to the window: two docks on the right (tabbed
with the label table, so the shelf stays in view), Run-menu actions, and the wiring to the
window's signals. The window itself is not edited."""
from __future__ import annotations

from PySide6.QtCore import QEvent, QObject, Qt
from PySide6.QtGui import QAction, QKeySequence
from PySide6.QtWidgets import QDockWidget

from .hone_panel import HonePanel
from .suggest_panel import SuggestPanel

SUGGEST_KEYS = ("Ctrl+Shift+S", "Ctrl+Alt+S")  # the first one not taken is used


class _CloseGuard(QObject):
    """Cancels the panels' jobs when the window is about to close, so closing never waits
    for a whole auto-hone run."""

    def __init__(self, window, panels):
        super().__init__(window)
        self.panels = panels
        window.installEventFilter(self)

    def eventFilter(self, watched, event):
        if event.type() == QEvent.Type.Close:
            for panel in self.panels:
                panel.cancel()
        return False


def _menu(window, title: str):
    for action in window.menuBar().actions():
        menu = action.menu()
        if menu is not None and action.text().replace("&", "") == title:
            return menu
    return window.menuBar().addMenu(f"&{title}")


def _free_key(window) -> QKeySequence:
    taken = {seq.toString() for action in window.findChildren(QAction)
             for seq in action.shortcuts()}
    for key in SUGGEST_KEYS:
        if QKeySequence(key).toString() not in taken:
            return QKeySequence(key)
    return QKeySequence()


def _dock(window, title: str, name: str, widget) -> tuple[QDockWidget, bool]:
    """The panel in a dock: where the saved layout put it, else tabbed with the label
    table under the shelf. Also says whether the saved layout placed it."""
    dock = QDockWidget(title, window)
    dock.setObjectName(name)
    dock.setWidget(widget)
    if window.restoreDockWidget(dock):
        return dock, True
    window.addDockWidget(Qt.DockWidgetArea.RightDockWidgetArea, dock)
    window.tabifyDockWidget(window.labels_dock, dock)
    return dock, False


def attach_suggestions(window) -> tuple[SuggestPanel, HonePanel]:
    """Build both panels for ``window`` (a MainWindow) and return them."""
    state = lambda: window.state  # noqa: E731
    handle = lambda: window.engine_bar.handle  # noqa: E731
    suggest = SuggestPanel(window.runner, state=state, engine=handle,
                           params=window.engine_bar.params, editor_wording=window.editor.wording,
                           selected_id=window.shelf.selected_id)
    suggest.setAccessibleName("Suggestions")
    hone = HonePanel(window.runner, state=state, engine=handle, params=window.engine_bar.params,
                     editor_wording=window.editor.wording)
    hone.setAccessibleName("Auto-hone")
    suggest_dock, placed = _dock(window, "Suggestions", "suggest_dock", suggest)
    hone_dock, _ = _dock(window, "Auto-hone", "hone_dock", hone)
    suggest_dock.raise_()
    if not placed:  # the cards need room: most of the side's height goes to the tabs
        window.resizeDocks([window.shelf_dock, suggest_dock], [360, 460],
                           Qt.Orientation.Vertical)

    def show_rows(rows):
        window.shelf_control.show_rows(rows)
        window.shelf_control.changed.emit(rows)  # the window re-emits it as shelf_changed

    def load(wording, parent_id):
        window.editor.set_wording(wording, undoable=True)
        window.shelf_control.restored_from = parent_id

    status = window.statusBar().showMessage
    for panel in (suggest, hone):
        panel.shelf_changed.connect(show_rows)
        panel.status.connect(status)
        panel.problem.connect(window.show_problem)
    suggest.load_requested.connect(load)
    suggest.running_changed.connect(lambda busy: hone.set_blocked(
        "Wait for the suggestions to finish (or cancel them)." if busy else ""))
    hone.running_changed.connect(lambda busy: suggest.set_blocked(
        "Auto-hone is running; cancel it or wait for it to finish." if busy else ""))
    window.project_loaded.connect(suggest.set_project)
    window.project_loaded.connect(hone.set_project)
    window.shelf_changed.connect(suggest.set_shelf_rows)
    window.shelf.selection_changed.connect(lambda _id: suggest.refresh_base())
    window.editor.wording_changed.connect(lambda _w: suggest.refresh_base())
    if window.state is not None:
        suggest.set_project(window.state)

    def show_suggest():
        suggest_dock.show()
        suggest_dock.raise_()
        suggest.strategy.setFocus()

    def show_hone():
        hone_dock.show()
        hone_dock.raise_()
        hone.strategy.setFocus()

    run_menu = _menu(window, "Run")
    run_menu.addSeparator()
    suggest_action = QAction("Suggest &variants…", window)
    suggest_action.setShortcut(_free_key(window))
    suggest_action.setStatusTip("Ask the model for variant wordings, scored on the tuning items")
    suggest_action.triggered.connect(lambda _c=False: show_suggest())
    hone_action = QAction("&Auto-hone…", window)
    hone_action.setStatusTip("Run rounds of suggestions unattended, keeping only improvements")
    hone_action.triggered.connect(lambda _c=False: show_hone())
    run_menu.addActions([suggest_action, hone_action])
    view_menu = _menu(window, "View")
    listed = view_menu.actions()
    labels = window.labels_dock.toggleViewAction()
    after = listed.index(labels) + 1 if labels in listed else len(listed)
    before = listed[after] if after < len(listed) else None
    for dock, text in ((suggest_dock, "S&uggestions"), (hone_dock, "Auto-&hone")):
        toggle = dock.toggleViewAction()
        toggle.setText(text)
        view_menu.insertAction(before, toggle)
    _CloseGuard(window, (suggest, hone))
    suggest.dock, hone.dock = suggest_dock, hone_dock
    suggest.menu_actions = (suggest_action, hone_action)
    return suggest, hone
