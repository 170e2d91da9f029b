"""Leaf widgets: the shelf panel, the item view and the column mapping dialog."""
from __future__ import annotations

import os
import shutil

import pytest
from PySide6.QtCore import Qt
from PySide6.QtGui import QPalette
from PySide6.QtWidgets import QDialog

from honebench.core.checks import CheckSpec
from honebench.core.diffing import diff_counts
from honebench.core.project import ShelfRow
from honebench.core.records import Mark, ShelfEntry
from honebench.core.sets import ColumnMapping, load_set, preview
from honebench.core.stats import score
from honebench.gui.grading.item_view import ItemView
from honebench.gui.grading.marks_model import EXTRACTED, MarksModel
from honebench.gui.project.mapping_dialog import MappingDialog
from honebench.gui.shelf.model import (EMPTY_TEXT, ID_ROLE, TUNING, VERSION,
                                       score_cell)
from honebench.gui.shelf.panel import ShelfPanel

TEXTS = {
    1: "Which department should handle this message? Reply with one word.",
    2: "Which department should handle this passenger message? Reply with one word only.",
    3: "Route this message. Answer with one department name.",
}


def entry(version: int, decision: str = "kept", note: str = "") -> ShelfEntry:
    # Ids differ from versions on purpose, so a mix-up between them shows.
    return ShelfEntry(id=100 + version, version=version, text=TEXTS[version], placement="before",
                      parent_id=None, origin="typed", created_at="2025-06-01T10:00:00+00:00",
                      decision=decision, note=note)


def shelf_rows() -> list[ShelfRow]:
    return [ShelfRow(entry(1), score(20, 35), None),
            ShelfRow(entry(2, note="tighter"), score(26, 35), score(12, 15)),
            ShelfRow(entry(3, "set_aside"), score(22, 35), None)]


@pytest.fixture
def shelf(qtbot):
    panel = ShelfPanel()
    qtbot.addWidget(panel)
    panel.resize(560, 600)
    panel.set_rows(shelf_rows())
    return panel


def cell(panel, row, col=VERSION, role=Qt.ItemDataRole.DisplayRole):
    return panel.model.data(panel.model.index(row, col), role)


# -- shelf ------------------------------------------------------------------------------
def test_shelf_lists_newest_first_with_scores(shelf):
    assert shelf.model.rowCount() == 3
    assert [cell(shelf, r, role=ID_ROLE) for r in range(3)] == [103, 102, 101]
    # 26/35 = 74.29%; 95% Wilson interval 57.9–86.1% (scipy binomtest, method="wilson").
    assert cell(shelf, 1, TUNING) == "74.3% (58–86, n=35)"
    assert score_cell(None) == "—"
    assert TEXTS[2] in cell(shelf, 1, role=Qt.ItemDataRole.ToolTipRole)


def test_set_aside_is_greyed_and_tagged_in_words(shelf):
    assert cell(shelf, 0) == "v3 · set aside"
    assert cell(shelf, 1) == "v2"
    grey = shelf.palette().color(QPalette.ColorGroup.Disabled, QPalette.ColorRole.Text)
    assert cell(shelf, 0, TUNING, Qt.ItemDataRole.ForegroundRole) == grey
    assert cell(shelf, 1, TUNING, Qt.ItemDataRole.ForegroundRole) is None


def test_newest_is_selected_first_and_select_changes_it(qtbot, shelf):
    assert shelf.selected_id() == 103
    with qtbot.waitSignal(shelf.selection_changed, timeout=1000) as blocker:
        shelf.select(101)
    assert blocker.args == [101]
    assert shelf.selected_id() == 101
    # A refresh keeps the selection and does not announce a change.
    with qtbot.assertNotEmitted(shelf.selection_changed):
        shelf.set_rows(shelf_rows())
    assert shelf.selected_id() == 101


def test_buttons_send_the_selected_wording_id(qtbot, shelf):
    shelf.select(102)
    assert not shelf.keep_button.isEnabled()  # already kept
    with qtbot.waitSignal(shelf.restore_requested, timeout=1000) as restored:
        qtbot.mouseClick(shelf.restore_button, Qt.MouseButton.LeftButton)
    assert restored.args == [102]
    with qtbot.waitSignal(shelf.decision_requested, timeout=1000) as decided:
        qtbot.mouseClick(shelf.aside_button, Qt.MouseButton.LeftButton)
    assert decided.args == [102, "set_aside"]
    shelf.select(103)
    assert shelf.keep_button.isEnabled() and not shelf.aside_button.isEnabled()
    with qtbot.waitSignal(shelf.decision_requested, timeout=1000) as decided:
        qtbot.mouseClick(shelf.keep_button, Qt.MouseButton.LeftButton)
    assert decided.args == [103, "kept"]


def test_note_is_sent_for_its_version_when_editing_finishes(qtbot, shelf):
    shelf.show()
    shelf.select(102)
    assert shelf.note.text() == "tighter"
    shelf.note.setFocus()
    shelf.note.selectAll()
    with qtbot.waitSignal(shelf.note_edited, timeout=1000) as blocker:
        qtbot.keyClicks(shelf.note, "best so far")
        qtbot.keyClick(shelf.note, Qt.Key.Key_Return)
    assert blocker.args == [102, "best so far"]
    # Pressing Enter again without a change sends nothing.
    with qtbot.assertNotEmitted(shelf.note_edited):
        qtbot.keyClick(shelf.note, Qt.Key.Key_Return)


def test_unsent_note_goes_to_the_old_version_when_the_selection_moves(qtbot, shelf):
    shelf.select(102)
    shelf.note.setText("typed but not confirmed")
    shelf.note.setModified(True)
    with qtbot.waitSignal(shelf.note_edited, timeout=1000) as blocker:
        shelf.select(101)
    assert blocker.args == [102, "typed but not confirmed"]
    assert shelf.note.text() == ""


def test_diff_heading_counts_words(shelf):
    shelf.select(101)
    editor = "Which department should handle this ferry message? Reply with a single word."
    shelf.set_editor_text(editor)
    # Worked by hand: "one" goes; "ferry", "a", "single" come.
    assert diff_counts(TEXTS[1], editor) == (1, 3)
    assert shelf.heading.text() == "Editor vs v1: 1 word removed, 3 added"
    html = shelf.diff.toHtml()
    assert "line-through" in html and "underline" in html
    shelf.set_editor_text(TEXTS[1])
    assert shelf.heading.text() == "Editor vs v1: the same wording"
    shelf.set_editor_text(TEXTS[1].replace(" ", "  ", 1))
    assert "only spacing" in shelf.heading.text()


def test_empty_shelf_says_what_to_do(qtbot):
    panel = ShelfPanel()
    qtbot.addWidget(panel)
    panel.set_rows([])
    assert panel.stack.currentWidget() is panel.empty
    assert panel.empty.text() == EMPTY_TEXT
    assert panel.details.isHidden()
    assert panel.selected_id() is None


# -- item view --------------------------------------------------------------------------
@pytest.fixture
def routing_set(sample_dir):
    return load_set(os.path.join(sample_dir, "passenger_desk_routing.csv"),
                    ColumnMapping(("message",), "department", "id"))


def miss_for(item) -> Mark:
    return Mark(item.id, "refund\nBecause they want money back.", "refund", False,
                f"expected '{item.expected}', found 'refund' (label match)",
                prompt_tokens=96, completion_tokens=9, seconds=0.41,
                prompt="<|user|>\nRoute this.\n\n" + item.fields["message"])


def test_item_view_shows_the_mark(qtbot, routing_set):
    item = routing_set.items[3]
    view = ItemView(item, miss_for(item), "label (fuzzy ≥ 80)")
    qtbot.addWidget(view)
    assert item.id in view.title.text()
    assert view.result.text() == "✗ missed"
    assert view.why.text() == f"expected '{item.expected}', found 'refund' (label match)"
    assert view.expected.text() == item.expected
    assert view.extracted.text() == "refund"
    assert view.output.toPlainText() == "refund\nBecause they want money back."
    assert item.fields["message"] in view.prompt.toPlainText()
    assert item.fields["message"] in view.inputs.toPlainText()
    assert view.prompt.isReadOnly() and view.output.isReadOnly()
    assert "96 tokens" in view.cost.text() and "0.41 s" in view.cost.text()
    assert view.check.text() == "label (fuzzy ≥ 80)"


def test_item_view_steps_and_updates_in_place(qtbot, routing_set):
    first, second = routing_set.items[0], routing_set.items[1]
    view = ItemView(first, miss_for(first), "label")
    qtbot.addWidget(view)
    with qtbot.waitSignal(view.step_requested, timeout=1000) as blocker:
        qtbot.mouseClick(view.next_button, Qt.MouseButton.LeftButton)
    assert blocker.args == [1]
    with qtbot.waitSignal(view.step_requested, timeout=1000) as blocker:
        qtbot.mouseClick(view.previous_button, Qt.MouseButton.LeftButton)
    assert blocker.args == [-1]
    passed = Mark(second.id, second.expected, second.expected, True,
                  f"matches '{second.expected}' (exact label)")
    view.show_mark(second, passed, "2 of 70")
    assert second.id in view.title.text()
    assert view.result.text() == "✓ passed"
    assert view.position.text() == "2 of 70"
    errored = Mark(second.id, "", "", False, "engine error", error="timed out after 60 s")
    view.show_mark(second, errored)
    assert view.result.text() == "⚠ error: timed out after 60 s"


def scored(item, chosen: str, share: float, runner_up: str, runner_share: float) -> Mark:
    return Mark(item.id, chosen, chosen, chosen == item.expected, f"scored '{chosen}'",
                confidence=share, runner_up=runner_up, runner_up_share=runner_share)


def test_a_scored_label_shows_its_confidence_and_the_runner_up(qtbot, routing_set):
    """The grade sheet's extracted column and the item view show a scored mark as
    "timetable 0.61, next refund 0.22"; "(none)" when nothing was extracted."""
    item = routing_set.items[0]
    mark = scored(item, "timetable", 0.61, "refund", 0.22)
    empty = Mark(item.id, "I cannot help.", "", False, "no label found")
    plain = miss_for(item)  # generated, not scored: the label alone
    model = MarksModel([mark, empty, plain], {item.id: item.expected})
    model.set_labels({"timetable", "refund"})
    shown = [model.data(model.index(row, EXTRACTED)) for row in range(3)]
    assert shown == ["timetable 0.61, next refund 0.22", "(none)", "refund"]
    view = ItemView(item, mark, "label")
    qtbot.addWidget(view)
    assert view.extracted.text() == "timetable 0.61, next refund 0.22"
    view.show_mark(item, empty)
    assert view.extracted.text() == "(none)"


def test_escape_closes_the_item_view(qtbot, routing_set):
    item = routing_set.items[0]
    view = ItemView(item, miss_for(item), "label")
    qtbot.addWidget(view)
    view.show()
    qtbot.waitExposed(view)
    qtbot.keyClick(view, Qt.Key.Key_Escape)
    assert not view.isVisible()


# -- mapping dialog ---------------------------------------------------------------------
@pytest.fixture
def routing_preview(sample_dir):
    path = os.path.join(sample_dir, "passenger_desk_routing.csv")
    head, guessed, problems = preview(path)
    return path, head, guessed, problems


def test_mapping_dialog_preselects_the_guess(qtbot, routing_preview):
    path, head, guessed, problems = routing_preview
    assert guessed == ColumnMapping(("message",), "department", "id")
    dialog = MappingDialog(path, head, guessed, problems, CheckSpec(kind="label"))
    qtbot.addWidget(dialog)
    assert dialog.head_model.rowCount() == len(head)
    assert dialog.head_model.headerData(0, Qt.Orientation.Vertical) == "2"  # the file's row 2
    assert dialog.mapping() == guessed
    assert dialog.ok_button.isEnabled() and dialog.reason.text() == ""
    assert dialog.check_spec() == CheckSpec(kind="label")
    assert dialog.split_settings() == (0, 0.3)


def test_expected_column_as_input_disables_ok(qtbot, routing_preview):
    path, head, guessed, problems = routing_preview
    dialog = MappingDialog(path, head, guessed, problems, CheckSpec(kind="label"))
    qtbot.addWidget(dialog)
    dialog.inputs.item(2).setCheckState(Qt.CheckState.Checked)  # 'department'
    assert not dialog.ok_button.isEnabled()
    assert "'department' is the expected answer" in dialog.reason.text()
    dialog.inputs.item(2).setCheckState(Qt.CheckState.Unchecked)
    assert dialog.ok_button.isEnabled()


def test_no_guess_starts_blank_and_lists_problems(qtbot, routing_preview):
    path, head, _guessed, _problems = routing_preview
    problems = ["Row 4, column 'department': the expected answer is blank or missing."]
    dialog = MappingDialog(path, head, None, problems, CheckSpec())
    qtbot.addWidget(dialog)
    assert "Row 4, column 'department'" in dialog.problems.text()
    assert not dialog.ok_button.isEnabled()
    assert "input field" in dialog.reason.text()
    dialog.inputs.item(1).setCheckState(Qt.CheckState.Checked)  # 'message'
    assert not dialog.ok_button.isEnabled() and "expected answer" in dialog.reason.text()
    dialog.expected.setCurrentIndex(dialog.expected.findData("department"))
    assert dialog.ok_button.isEnabled()
    assert dialog.mapping() == ColumnMapping(("message",), "department", None, None)


def test_problems_from_a_bad_file_keep_their_row_numbers(qtbot, tmp_path):
    # A blank expected answer on the file's row 3 (the header is row 1).
    bad = tmp_path / "bad.csv"
    bad.write_text("id,message,answer\na,Hello,refund\nb,Where is my bag?,\n", encoding="utf-8")
    head, guessed, problems = preview(bad)
    dialog = MappingDialog(str(bad), head, guessed, problems, CheckSpec())
    qtbot.addWidget(dialog)
    assert problems and "Row 3" in problems[0]
    assert "Row 3" in dialog.problems.text()


def test_check_settings_are_returned_and_bad_ones_shown_inline(qtbot, routing_preview):
    path, head, guessed, problems = routing_preview
    dialog = MappingDialog(path, head, guessed, problems, CheckSpec(kind="label"))
    qtbot.addWidget(dialog)
    dialog.show()
    assert dialog.option.placeholderText() == "taken from the expected answers if empty"
    dialog.option.setText("refund, timetable,  lost_property ")
    assert dialog.check_spec().labels == ("refund", "timetable", "lost_property")

    dialog.kind.setCurrentIndex(dialog.kind.findData("pattern"))
    dialog.option.setText("(unclosed")
    with pytest.raises(ValueError, match="pattern"):
        dialog.check_spec()
    dialog.accept()
    assert dialog.isVisible() and dialog.result() != QDialog.DialogCode.Accepted
    assert dialog.check_error.text().startswith("⚠ pattern:")

    dialog.kind.setCurrentIndex(dialog.kind.findData("json_field"))
    assert dialog.option.text() == ""  # each kind keeps its own option text
    dialog.option.setText("route.desk")
    dialog.extraction.setCurrentIndex(dialog.extraction.findData("after_marker"))
    assert dialog.marker.isVisible()
    dialog.marker.setText("Desk:")
    dialog.seed.setValue(7)
    dialog.fraction.setValue(0.25)
    dialog.accept()
    assert dialog.result() == QDialog.DialogCode.Accepted
    spec = dialog.check_spec()
    assert (spec.kind, spec.json_field, spec.extraction, spec.marker) == (
        "json_field", "route.desk", "after_marker", "Desk:")
    assert dialog.split_settings() == (7, 0.25)


def test_a_split_column_turns_off_the_drawn_split(qtbot, routing_preview):
    path, head, guessed, problems = routing_preview
    dialog = MappingDialog(path, head, guessed, problems, CheckSpec())
    qtbot.addWidget(dialog)
    dialog.split_column.setCurrentIndex(dialog.split_column.findData("id"))
    assert not dialog.fraction.isEnabled() and not dialog.seed.isEnabled()
    assert not dialog.ok_button.isEnabled()  # 'id' is already the item id
    dialog.id_column.setCurrentIndex(0)
    assert dialog.ok_button.isEnabled()
    assert dialog.mapping().split == "id" and dialog.mapping().id is None


# -- pictures ---------------------------------------------------------------------------
def distinct_colours(image, step: int = 4) -> int:
    return len({image.pixel(x, y) for x in range(0, image.width(), step)
                for y in range(0, image.height(), step)})


def test_snapshots_are_not_blank(qtbot, tmp_path, routing_set, routing_preview):
    shelf = ShelfPanel()
    shelf.resize(560, 600)
    shelf.set_rows(shelf_rows())
    shelf.select(102)
    shelf.set_editor_text(TEXTS[1])
    empty = ShelfPanel()
    empty.resize(420, 360)
    item = routing_set.items[13]
    view = ItemView(item, miss_for(item), CheckSpec(kind="label").describe())
    path, head, guessed, problems = routing_preview
    dialog = MappingDialog(path, head, guessed, problems, CheckSpec(kind="label"))
    widgets = {"shelf": shelf, "shelf_empty": empty, "item": view, "mapping": dialog}
    keep = os.environ.get("HONEBENCH_SNAP_DIR")  # set it to keep copies for a look
    for name, widget in widgets.items():
        qtbot.addWidget(widget)
        widget.show()
        qtbot.waitExposed(widget)
        target = tmp_path / f"leaf_{name}.png"
        image = widget.grab().toImage()
        assert image.save(str(target))
        assert target.exists() and target.stat().st_size > 0
        assert distinct_colours(image) > 1, f"{name} renders blank"
        if keep:
            os.makedirs(keep, exist_ok=True)
            shutil.copy(target, os.path.join(keep, target.name))


def test_summary_bar_shows_wall_time_beside_model_time(qtbot):
    """Items decoded together overlap, so their summed seconds overstate the run: the
    summary shows the wall time too, in the core's words (the CLI prints the same)."""
    from honebench.core.sets import Item
    from honebench.core.summary import summarize
    from honebench.gui.grading.summary import SummaryBar

    items = [Item(id=f"i{n}", fields={"q": "x"}, expected="a", split="tuning", row=n + 2)
             for n in range(4)]
    marks = [Mark(item_id=it.id, output="a", extracted="a", passed=True, why="ok",
                  seconds=8.0) for it in items]
    summary = summarize(marks, items, "exact", wall_seconds=9.5)
    bar = SummaryBar()
    qtbot.addWidget(bar)
    bar.set_summary(summary)
    assert "model time: 32.0 s, wall time: 9.5 s" in bar.detail_label.text()
