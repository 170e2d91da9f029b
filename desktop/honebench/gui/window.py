"""The window frame: a central widget, docks, menus, toolbars and the status line.

It knows no feature. The composition (``app.compose``) puts widgets in with ``set_central``
and ``add_dock`` and actions with ``add_action``; menus are named by key ("file", "edit",
"run", "view", "help"), never found by their text. Closing first runs the ``closing``
hooks (features cancel their jobs), waits for every job to end, then runs the ``closed``
hooks (the engine is closed) and waits again, so nothing is left inside the model.
"""
from __future__ import annotations

from pathlib import Path
from typing import Callable

from PySide6.QtCore import QByteArray, QSettings, Qt, Signal
from PySide6.QtGui import QAction
from PySide6.QtWidgets import (QDockWidget, QFrame, QLabel, QMainWindow, QMenu, QMessageBox,
                               QScrollArea, QTabBar, QToolBar, QWidget)

from .jobs import JobRunner

MENUS = (("file", "&File"), ("edit", "&Edit"), ("run", "&Run"), ("view", "&View"),
         ("help", "&Help"))
SIZE = (1280, 740)  # fits a 1366 x 768 screen with its panel


class MainWindow(QMainWindow):
    """Signals: ``file_dropped(path)`` for a file dropped on the window (accepted when
    ``accepts_drop(path)`` says so)."""

    file_dropped = Signal(str)

    def __init__(self, runner: JobRunner, settings: QSettings, *, quiet: bool = False,
                 parent=None):
        super().__init__(parent)
        self.runner, self.settings, self.quiet = runner, settings, quiet
        self.problems: list[tuple[str, str]] = []  # every problem shown, for tests and logs
        self.accepts_drop: Callable[[str], bool] = lambda _path: False
        self.closing_hooks: list[Callable[[], None]] = []
        self.closed_hooks: list[Callable[[], None]] = []
        self.docks: dict[str, QDockWidget] = {}
        self.toolbars: dict[str, QToolBar] = {}
        self._first_dock: dict[Qt.DockWidgetArea, QDockWidget] = {}
        self.setObjectName("honebench_main_window")
        self.setWindowTitle("honebench")
        self.setAcceptDrops(True)
        self.setDockOptions(QMainWindow.DockOption.AnimatedDocks
                            | QMainWindow.DockOption.AllowTabbedDocks)
        self.menus: dict[str, QMenu] = {key: self.menuBar().addMenu(title)
                                        for key, title in MENUS}
        self.lane_label = QLabel()
        self.lane_label.setAccessibleName("What the model is doing and what waits for it")
        self.statusBar().addPermanentWidget(self.lane_label)
        runner.lane_changed.connect(self.lane_label.setText)
        runner.unhandled_error.connect(
            lambda name, msg: self.show_problem(f"Could not {name}", msg))

    # -- building ------------------------------------------------------------------------
    def set_central(self, widget: QWidget) -> None:
        self.setCentralWidget(widget)

    def add_dock(self, key: str, title: str, widget: QWidget, *, view_text: str = "",
                 tab_with: str | None = None, shortcut: str | None = None,
                 area=Qt.DockWidgetArea.RightDockWidgetArea) -> QDockWidget:
        """Dock ``widget``; tabbed with the dock ``tab_with`` if given. Its show/hide toggle
        goes into the View menu (as ``view_text``). The widget sits in a scroll area, so
        what it shows can never make the window taller than the screen."""
        dock = QDockWidget(title, self)
        dock.setObjectName(f"{key}_dock")
        room = QScrollArea()
        room.setWidgetResizable(True)
        room.setFrameShape(QFrame.Shape.NoFrame)
        room.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        room.setWidget(widget)
        dock.setWidget(room)
        dock.setFeatures(QDockWidget.DockWidgetFeature.DockWidgetMovable
                         | QDockWidget.DockWidgetFeature.DockWidgetClosable)
        self.addDockWidget(area, dock)
        if tab_with is not None:
            self.tabifyDockWidget(self.docks[tab_with], dock)
        self.docks[key] = dock
        toggle = dock.toggleViewAction()
        toggle.setText(view_text or title)
        if shortcut:
            toggle.setShortcut(shortcut)
        self.menus["view"].addAction(toggle)
        return dock

    def show_dock(self, key: str) -> None:
        dock = self.docks[key]
        dock.show()
        dock.raise_()

    def add_action(self, menu: str, action: QAction, *, toolbar: str | None = None) -> QAction:
        """Put an action in a menu (by key) and optionally on a toolbar (by key)."""
        self.menus[menu].addAction(action)
        if toolbar is not None:
            self.toolbar(toolbar).addAction(action)
        return action

    def add_separator(self, menu: str, toolbar: str | None = None) -> None:
        self.menus[menu].addSeparator()
        if toolbar is not None:
            self.toolbar(toolbar).addSeparator()

    def add_submenu(self, menu: str, title: str) -> QMenu:
        return self.menus[menu].addMenu(title)

    def toolbar(self, key: str, title: str = "", widget: QWidget | None = None) -> QToolBar:
        """The toolbar ``key`` (made on first use, its toggle in the View menu)."""
        bar = self.toolbars.get(key)
        if bar is None:
            bar = QToolBar(title or key.capitalize())
            bar.setObjectName(f"{key}_toolbar")
            bar.setToolButtonStyle(Qt.ToolButtonStyle.ToolButtonTextBesideIcon)
            bar.setMovable(False)
            self.addToolBar(Qt.ToolBarArea.TopToolBarArea, bar)
            self.toolbars[key] = bar
            toggle = bar.toggleViewAction()
            toggle.setText(f"{title or key.capitalize()} toolbar")
            self.menus["view"].addAction(toggle)
        if widget is not None:
            bar.addWidget(widget)
        return bar

    def fit_tabs(self) -> None:
        """Tab titles of tabbed docks in full (never elided), scrolling when many."""
        for bar in self.findChildren(QTabBar):
            if bar.parent() is self:
                bar.setElideMode(Qt.TextElideMode.ElideNone)
                bar.setUsesScrollButtons(True)
                bar.setExpanding(False)

    # -- telling the user ----------------------------------------------------------------
    def status(self, text: str) -> None:
        self.statusBar().showMessage(text)

    def show_problem(self, title: str, message: str) -> None:
        """A dialog naming the problem (only the status line when quiet, as in snapshots)."""
        self.problems.append((title, message))
        self.statusBar().showMessage(f"{title}: {message.splitlines()[0]}")
        if not self.quiet:
            QMessageBox.warning(self, title, message)

    # -- layout, drops, closing ----------------------------------------------------------
    def restore_layout(self) -> None:
        for key, restore in (("window/geometry", self.restoreGeometry),
                             ("window/state", self.restoreState)):
            value = self.settings.value(key)
            if isinstance(value, QByteArray):
                restore(value)
        self.fit_tabs()

    def _dropped_path(self, event) -> str | None:
        urls = event.mimeData().urls() if event.mimeData().hasUrls() else []
        path = urls[0].toLocalFile() if urls else ""
        return path if path and self.accepts_drop(path) else None

    def dragEnterEvent(self, event):
        if self._dropped_path(event):
            event.acceptProposedAction()
        else:
            event.ignore()

    def dropEvent(self, event):
        path = self._dropped_path(event)
        if path:
            event.acceptProposedAction()
            self.file_dropped.emit(str(Path(path)))
        else:
            event.ignore()

    def closeEvent(self, event):
        self.settings.setValue("window/geometry", self.saveGeometry())
        self.settings.setValue("window/state", self.saveState())
        for hook in self.closing_hooks:  # save what is unsaved, cancel what runs
            hook()
        self.runner.wait_idle(60_000)
        for hook in self.closed_hooks:  # close the engine once nothing uses it
            hook()
        self.runner.wait_idle(30_000)
        self.settings.sync()
        super().closeEvent(event)
