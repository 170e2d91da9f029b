"""The import dialog's sheet picker and title rows: a workbook whose items are on its
second sheet, under two title rows, is read again (in a job) as the user picks the sheet
and the rows to skip, and the import reads what the dialog showed."""
from __future__ import annotations

import csv

import pandas as pd
from PySide6.QtWidgets import QDialog

from honebench.gui.project.mapping_dialog import MappingDialog

from .test_wiring import WAIT, composed

N_ROWS = 12


def _workbook(tmp_path, sample_dir):
    """Sheet 'Notes' first (no items); sheet 'Items' with two title rows, then the table.
    Written with openpyxl through pandas, the reader's own library."""
    with open(sample_dir / "passenger_desk_routing.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))[:N_ROWS]
    path = tmp_path / "desk.xlsx"
    table = pd.DataFrame([{k: r[k] for k in ("id", "message", "department")} for r in rows])
    with pd.ExcelWriter(path, engine="openpyxl") as book:
        pd.DataFrame({"About": ["Passenger desk messages, routed by hand"]}).to_excel(
            book, sheet_name="Notes", index=False)
        pd.DataFrame([["Passenger desk routing"], ["exported 2026-11-30"]]).to_excel(
            book, sheet_name="Items", index=False, header=False)
        table.to_excel(book, sheet_name="Items", index=False, startrow=2)
    return path, rows


def test_pick_the_sheet_and_skip_title_rows_then_import(qtbot, runner, settings, tmp_path,
                                                        sample_dir, monkeypatch):
    app, _engine, _path = composed(qtbot, runner, settings, tmp_path, sample_dir)
    path, rows = _workbook(tmp_path, sample_dir)
    seen = {}

    def use_the_dialog(dialog):
        """Stands in for the user in the modal dialog (its exec), events still flowing."""
        dialog.show()
        options = dialog.reading_options
        seen["sheets"] = [options.sheet.itemText(i) for i in range(options.sheet.count())]
        seen["first"] = dialog.head_model.columns
        seen["ok_at_first"] = dialog.ok_button.isEnabled()
        options.sheet.setCurrentIndex(options.sheet.findData("Items"))
        qtbot.waitUntil(lambda: not dialog.rereading, timeout=WAIT)
        seen["items_unskipped"] = dialog.head_model.columns
        options.skip.setValue(2)
        qtbot.waitUntil(lambda: not dialog.rereading
                        and dialog.head_model.columns == ["id", "message", "department"],
                        timeout=WAIT)
        seen["guess"] = (dialog.mapping().inputs, dialog.mapping().expected,
                         dialog.mapping().id)
        seen["intro"] = dialog.intro.text()
        dialog.accept()
        return QDialog.DialogCode(dialog.result())

    monkeypatch.setattr(MappingDialog, "exec", use_the_dialog)
    with qtbot.waitSignal(app.import_flow.imported, timeout=WAIT):
        app.import_flow.start(str(path))

    assert seen["sheets"] == ["Notes", "Items"]
    assert seen["first"] == ["About"] and not seen["ok_at_first"]
    assert seen["items_unskipped"] != ["id", "message", "department"]
    assert seen["guess"] == (("message",), "department", "id")
    assert "'Items'" in seen["intro"]
    qset = app.session.qset
    assert [it.id for it in qset.items] == [r["id"] for r in rows]
    assert {it.id: it.expected for it in qset.items} == {r["id"]: r["department"] for r in rows}
    assert app.window.problems == []


def test_a_csv_has_no_sheet_picker_but_title_rows(qtbot):
    from honebench.gui.project.reading_options import ReadingOptions

    options = ReadingOptions(None)
    qtbot.addWidget(options)
    options.show()
    assert not options.sheet.isVisible() and options.skip.isVisible()
    assert options.values() == (None, 0)
    with qtbot.waitSignal(options.changed) as blocker:
        options.skip.setValue(3)
    assert blocker.args == [None, 3]
