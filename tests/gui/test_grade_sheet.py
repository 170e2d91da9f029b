"""The grade sheet's model: lazy over 100,000 marks, batched streaming, sort and filters,
pass/miss told apart by text and shape."""
from __future__ import annotations

import random

import pytest
from PySide6.QtCore import Qt
from PySide6.QtGui import QColor, QGuiApplication, QPalette
from PySide6.QtWidgets import QTableView

from honebench.core.events import Progress
from honebench.core.records import Mark
from honebench.gui.grading.marks_model import (COLUMNS, EXTRACTED, ID, MARK_ROLE, RESULT, SECONDS, TOKENS,
                                       WHY, MarksFilter, MarksModel, OutcomeIcons)
from honebench.core.events import progress_text
from honebench.gui.grading.sheet import GradeSheetPanel


class CountingList(list):
    """A list that counts element reads made from Python."""

    reads = 0

    def __getitem__(self, i):
        CountingList.reads += 1
        return super().__getitem__(i)

    def __iter__(self):
        CountingList.reads += len(self)
        return super().__iter__()


def make_marks(n: int, seed: int = 7) -> list[Mark]:
    rng = random.Random(seed)
    out = []
    for i in range(n):
        passed = rng.random() < 0.6
        out.append(Mark(item_id=f"item-{i:06d}", output=f"answer {i}",
                        extracted="refund" if passed else "timetable", passed=passed,
                        why=("matches 'refund'" if passed
                             else "expected 'refund', found 'timetable'"),
                        prompt_tokens=rng.randint(50, 150), completion_tokens=rng.randint(1, 40),
                        seconds=rng.random()))
    return out


@pytest.fixture
def big():
    marks = make_marks(100_000)
    return marks, {m.item_id: "refund" for m in marks}


def test_a_100k_run_is_handed_over_without_touching_any_row(qtbot, big):
    marks, expected = big
    counted = CountingList(marks)
    CountingList.reads = 0
    model = MarksModel(counted, expected)
    assert CountingList.reads == 0  # the list is taken as is: no per-row Python work
    assert model.rowCount() == 100_000
    assert model.columnCount() == len(COLUMNS)
    model.set_marks(counted, expected)
    assert CountingList.reads == 0

    # formatting happens per visible cell: one element read per data() call
    for row in range(30):
        for col in range(len(COLUMNS)):
            model.data(model.index(row, col))
    assert CountingList.reads == 30 * len(COLUMNS)


def test_a_100k_run_sorts_and_filters_in_a_view_without_row_widgets(qtbot, big):
    marks, expected = big
    model = MarksModel(marks, expected)
    proxy = MarksFilter()
    proxy.setSourceModel(model)
    view = QTableView()
    qtbot.addWidget(view)
    view.setModel(proxy)
    view.setSortingEnabled(True)
    view.resize(800, 400)
    view.show()
    assert view.findChildren(QTableView) == []  # no per-row widgets of any kind
    assert view.indexWidget(proxy.index(0, 0)) is None

    view.sortByColumn(TOKENS, Qt.SortOrder.DescendingOrder)
    tokens = [m.prompt_tokens + m.completion_tokens for m in model.marks()]
    assert tokens == sorted(tokens, reverse=True)
    assert proxy.data(proxy.index(0, TOKENS)) == str(max(tokens))

    proxy.set_misses_only(True)
    assert proxy.rowCount() == sum(not m.passed for m in marks)
    proxy.set_text("item-00001")  # ids item-000010 .. item-000019, misses only
    wanted = [m for m in marks if not m.passed and "item-00001" in m.item_id]
    assert proxy.rowCount() == len(wanted)
    proxy.set_misses_only(False)
    proxy.set_text("")
    assert proxy.rowCount() == 100_000

    view.sortByColumn(ID, Qt.SortOrder.AscendingOrder)
    assert proxy.mark_at(0).item_id == "item-000000"
    assert proxy.mark_at(99_999).item_id == "item-099999"


def test_streamed_marks_appear_one_by_one(qtbot):
    """Marks finishing together (several items per decode step) are shown one per tick."""
    model = MarksModel()
    inserts = []
    model.rowsInserted.connect(lambda _p, first, last: inserts.append((first, last)))
    for mark in make_marks(4):
        model.append(mark)
    qtbot.waitUntil(lambda: model.rowCount() == 4, timeout=2000)
    assert inserts == [(0, 0), (1, 1), (2, 2), (3, 3)]


def test_a_backlog_of_marks_is_inserted_as_one_batch(qtbot):
    model = MarksModel()
    inserts = []
    model.rowsInserted.connect(lambda _p, first, last: inserts.append((first, last)))
    for mark in make_marks(250):
        model.append(mark)
    assert model.rowCount() == 0  # nothing inserted until the batch timer fires
    qtbot.waitUntil(lambda: model.rowCount() == 250, timeout=2000)
    assert inserts == [(0, 249)]
    model.append(make_marks(1, seed=3)[0])
    model.flush()
    assert inserts[-1] == (250, 250)


def test_sorting_keeps_the_selected_mark_selected(qtbot):
    marks = make_marks(50)
    model = MarksModel(marks, {})
    proxy = MarksFilter()
    proxy.setSourceModel(model)
    view = QTableView()
    qtbot.addWidget(view)
    view.setModel(proxy)
    view.setSortingEnabled(True)
    view.setCurrentIndex(proxy.index(10, 0))
    chosen = proxy.mark_at(10)
    view.sortByColumn(SECONDS, Qt.SortOrder.AscendingOrder)
    assert proxy.data(view.currentIndex(), MARK_ROLE) == chosen


def test_pass_and_miss_differ_in_text_and_shape_not_only_colour(qtbot):
    passed = Mark(item_id="p1", output="refund", extracted="refund", passed=True,
                  why="matches 'refund'")
    missed = Mark(item_id="m1", output="timetable", extracted="timetable", passed=False,
                  why="expected 'refund', found 'timetable'")
    errored = Mark(item_id="e1", output="", extracted="", passed=False, why="error: too long",
                   error="too long")
    model = MarksModel([passed, missed, errored], {})
    texts = [model.data(model.index(r, RESULT)) for r in range(3)]
    assert texts == ["pass", "miss", "error"]
    images = [model.data(model.index(r, RESULT), Qt.ItemDataRole.DecorationRole)
              .pixmap(16, 16).toImage() for r in range(3)]
    # the shapes differ pixel by pixel even though all are drawn in one colour
    assert images[0] != images[1] and images[1] != images[2] and images[0] != images[2]
    assert model.data(model.index(1, WHY), Qt.ItemDataRole.ToolTipRole) == missed.why
    assert model.data(model.index(2, EXTRACTED)) == "(none)"
    # a label check: a reply in which no label was found shows "(none)", not the reply
    rambling = Mark(item_id="r1", output="I am not sure, sorry.", extracted="I am not sure, sorry.",
                    passed=False, why="no label matched")
    labelled = MarksModel([missed, rambling], {})
    labelled.set_labels({"refund", "timetable"})
    assert labelled.data(labelled.index(0, EXTRACTED)) == "timetable"
    assert labelled.data(labelled.index(1, EXTRACTED)) == "(none)"


def test_icons_follow_a_dark_palette(qtbot):
    app = QGuiApplication.instance()
    saved = app.palette()
    try:
        dark = QPalette(saved)
        dark.setColor(QPalette.ColorRole.Text, QColor("#f0f0f0"))
        dark.setColor(QPalette.ColorRole.Base, QColor("#1e1e1e"))
        app.setPalette(dark)
        icon = OutcomeIcons().icon("miss").pixmap(32, 32).toImage()
        inked = [icon.pixelColor(x, y) for x in range(32) for y in range(32)
                 if icon.pixelColor(x, y).alpha() == 255]
        assert inked and all(c.lightness() > 200 for c in inked)  # light ink on dark
    finally:
        app.setPalette(saved)


def test_the_panel_shows_progress_and_an_empty_state(qtbot):
    panel = GradeSheetPanel()
    qtbot.addWidget(panel)
    assert panel.stack.currentWidget() is panel.empty
    assert panel.empty.text().startswith("No marks yet")
    panel.start_run(3, {}, "Grading tuning items…")
    assert panel.progress_row.isVisibleTo(panel)
    assert not panel.empty.text().startswith("No marks yet")  # no stale advice while grading
    marks = make_marks(3)
    for n, mark in enumerate(marks, 1):
        progress = Progress(n, 3, 0, 0, elapsed=n * 0.5, eta=(3 - n) * 0.5)
        panel.add_mark(mark, progress)
        # the window says exactly what the CLI says (core's one progress text)
        assert panel.progress.format() == progress_text(progress)
    panel.finish_run("Run 1")
    assert panel.model.rowCount() == 3
    assert not panel.progress_row.isVisibleTo(panel)
    assert panel.stack.currentWidget() is panel.table
    assert panel.count_label.text() == "3 marks"
    opened = []
    panel.open_requested.connect(opened.append)
    panel.table.doubleClicked.emit(panel.proxy.index(1, 0))
    assert opened == [panel.proxy.mark_at(1)]
