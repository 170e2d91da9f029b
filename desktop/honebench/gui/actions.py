"""The window's actions, menus and toolbar. Each action calls one window method."""
from __future__ import annotations

from dataclasses import dataclass

from PySide6.QtCore import QPointF, Qt
from PySide6.QtGui import (QAction, QGuiApplication, QIcon, QKeySequence, QPainter, QPainterPath,
                           QPalette, QPixmap, QPolygonF)
from PySide6.QtWidgets import QMainWindow, QMenu, QStyle, QToolBar


@dataclass
class Actions:
    new_project: QAction
    open_project: QAction
    import_set: QAction
    export_marks: QAction
    quit: QAction
    undo: QAction
    redo: QAction
    grade: QAction
    grade_held_out: QAction
    cancel: QAction
    keep: QAction
    about: QAction
    tour: QAction
    recent_menu: QMenu
    toolbar: QToolBar
    engine_toolbar: QToolBar


def drawn_icon(kind: str) -> QIcon:
    """Toolbar shapes in the palette's button-text colour (readable on light and dark):
    play (grade), fast (grade held-out), stop (cancel), ribbon (keep)."""
    palette = QGuiApplication.palette()
    icon = QIcon()
    for mode, group in ((QIcon.Mode.Normal, QPalette.ColorGroup.Active),
                        (QIcon.Mode.Disabled, QPalette.ColorGroup.Disabled)):
        colour = palette.color(group, QPalette.ColorRole.ButtonText)
        for size in (16, 24, 32):
            pix = QPixmap(size, size)
            pix.fill(Qt.GlobalColor.transparent)
            p = QPainter(pix)
            p.setRenderHint(QPainter.RenderHint.Antialiasing)
            p.setPen(Qt.PenStyle.NoPen)
            p.setBrush(colour)
            s = float(size)

            def tri(x0: float, x1: float) -> None:
                p.drawPolygon(QPolygonF([QPointF(x0, s * .18), QPointF(x1, s * .5),
                                         QPointF(x0, s * .82)]))

            if kind == "play":
                tri(s * .25, s * .82)
            elif kind == "fast":
                tri(s * .1, s * .5)
                tri(s * .5, s * .9)
            elif kind == "stop":
                p.drawRoundedRect(s * .22, s * .22, s * .56, s * .56, s * .06, s * .06)
            else:
                path = QPainterPath(QPointF(s * .26, s * .12))
                path.lineTo(s * .74, s * .12)
                path.lineTo(s * .74, s * .88)
                path.lineTo(s * .5, s * .66)
                path.lineTo(s * .26, s * .88)
                path.closeSubpath()
                p.drawPath(path)
            p.end()
            icon.addPixmap(pix, mode)
    return icon


def _action(window, text: str, slot, shortcut=None, tip: str = "", icon=None) -> QAction:
    action = QAction(text, window)
    if shortcut is not None:
        action.setShortcuts(shortcut if isinstance(shortcut, list) else [shortcut])
    if tip:
        action.setToolTip(tip)
        action.setStatusTip(tip)
    if isinstance(icon, str):
        action.setIcon(drawn_icon(icon))
    elif icon is not None:
        action.setIcon(window.style().standardIcon(icon))
    action.triggered.connect(lambda _checked=False: slot())
    return action


def install_actions(window: QMainWindow, engine_bar) -> Actions:
    """Build the menus and toolbars of ``window`` (a MainWindow) and return the actions."""
    sp = QStyle.StandardPixmap
    key = QKeySequence
    new_project = _action(window, "&New project…", window.new_project, key(key.StandardKey.New),
                          "Start a project file for another task", sp.SP_FileIcon)
    open_project = _action(window, "&Open project…", window.choose_project,
                           key(key.StandardKey.Open), "Open a project file (.hone)",
                           sp.SP_DialogOpenButton)
    import_set = _action(window, "&Import question set…", window.import_flow.choose,
                         key("Ctrl+I"), "Read a question set (CSV, TSV, JSONL, JSON, Parquet, "
                         "XLSX) into this project")
    export_marks = _action(window, "&Export marks as CSV…", window.export_marks, key("Ctrl+E"),
                           "Write the grade sheet's marks to a CSV file")
    quit_ = _action(window, "&Quit", window.close, key(key.StandardKey.Quit), "Close honebench")
    quit_.setMenuRole(QAction.MenuRole.QuitRole)

    undo = _action(window, "&Undo", window.editor.undo, key(key.StandardKey.Undo),
                   "Undo the last edit of the wording")
    redo = _action(window, "&Redo", window.editor.redo, key(key.StandardKey.Redo),
                   "Redo the edit of the wording")
    undo.setEnabled(False)
    redo.setEnabled(False)
    window.editor.text_edit.undoAvailable.connect(undo.setEnabled)
    window.editor.text_edit.redoAvailable.connect(redo.setEnabled)

    grade = _action(window, "&Grade tuning items", lambda: window.grade("tuning"),
                    [key("Ctrl+Return"), key("Ctrl+Enter")],
                    "Grade the wording over the tuning items (Ctrl+Return)", "play")
    grade_held = _action(window, "Grade &held-out items", lambda: window.grade("held_out"),
                         [key("Ctrl+Shift+Return"), key("Ctrl+Shift+Enter")],
                         "Grade the wording over the held-out items, kept apart for an honest "
                         "check (Ctrl+Shift+Return)", "fast")
    cancel = _action(window, "&Cancel grading", window.cancel_grade, key("Esc"),
                     "Stop the grade run; finished marks are kept (Esc)", "stop")
    cancel.setEnabled(False)
    keep = _action(window, "&Keep on the shelf", window.keep_current, key("Ctrl+K"),
                   "Put the editor's wording on the shelf as the next version (Ctrl+K)",
                   "keep")
    about = _action(window, "&About honebench", window.show_about, tip="About honebench")
    about.setMenuRole(QAction.MenuRole.AboutRole)
    tour = _action(window, "Guided &tour", window.show_tour, key(key.StandardKey.HelpContents),
                   "A short walk through the sample project")

    bar = window.menuBar()
    file_menu = bar.addMenu("&File")
    file_menu.addActions([new_project, open_project])
    recent = file_menu.addMenu("Open &recent")
    recent.aboutToShow.connect(lambda: window.fill_recent_menu(recent))
    file_menu.addSeparator()
    file_menu.addActions([import_set, export_marks])
    file_menu.addSeparator()
    file_menu.addAction(quit_)

    edit_menu = bar.addMenu("&Edit")
    edit_menu.addActions([undo, redo])

    run_menu = bar.addMenu("&Run")
    run_menu.addActions([grade, grade_held, cancel])
    run_menu.addSeparator()
    run_menu.addAction(keep)

    for action, short in ((grade, "Grade"), (grade_held, "Grade held-out"), (cancel, "Cancel"),
                          (keep, "Keep")):
        action.setIconText(short)
    toolbar = QToolBar("Grading")
    toolbar.setObjectName("grading_toolbar")
    toolbar.setToolButtonStyle(Qt.ToolButtonStyle.ToolButtonTextBesideIcon)
    toolbar.addActions([grade, grade_held, cancel])
    toolbar.addSeparator()
    toolbar.addAction(keep)
    window.addToolBar(Qt.ToolBarArea.TopToolBarArea, toolbar)

    engine_toolbar = QToolBar("Engine")
    engine_toolbar.setObjectName("engine_toolbar")
    engine_toolbar.addWidget(engine_bar)
    window.addToolBar(Qt.ToolBarArea.TopToolBarArea, engine_toolbar)

    view_menu = bar.addMenu("&View")
    shelf_toggle = window.shelf_dock.toggleViewAction()
    shelf_toggle.setText("&Shelf")
    shelf_toggle.setShortcut(key("Ctrl+Shift+S"))
    view_menu.addAction(shelf_toggle)
    labels_toggle = window.labels_dock.toggleViewAction()
    labels_toggle.setText("&Label table")
    view_menu.addAction(labels_toggle)
    for tb, name in ((toolbar, "&Grading toolbar"), (engine_toolbar, "&Engine toolbar")):
        toggle = tb.toggleViewAction()
        toggle.setText(name)
        view_menu.addAction(toggle)
    view_menu.addSeparator()
    view_menu.addAction(_action(window, "Focus the &wording", window.editor.text_edit.setFocus,
                                key("Ctrl+1"), "Move the keyboard focus to the wording"))
    view_menu.addAction(_action(window, "Focus the grade &sheet", window.sheet.table.setFocus,
                                key("Ctrl+2"), "Move the keyboard focus to the grade sheet"))
    view_menu.addAction(_action(window, "Focus the &filter", window.sheet.filter_edit.setFocus,
                                key(key.StandardKey.Find), "Filter the marks by text"))

    help_menu = bar.addMenu("&Help")
    help_menu.addActions([tour, about])
    return Actions(new_project, open_project, import_set, export_marks, quit_, undo, redo, grade,
                   grade_held, cancel, keep, about, tour, recent, toolbar, engine_toolbar)
