"""Compare, confirm, the progress chart and the report export, attached to the window.

The compare test grades two wordings with the real bundled model; the others use runs
written straight into the project (tests/core/shelf_builder.py) and a fake engine.
"""
from __future__ import annotations

from html.parser import HTMLParser
from pathlib import Path

import pytest
from PySide6.QtCore import Qt
from PySide6.QtGui import QColor, QGuiApplication, QPalette
from PySide6.QtWidgets import QFileDialog

from honebench.core.project import Project
from honebench.core.report import SECTIONS
from honebench.core.wording import Wording
from honebench.gui.app import compose
from honebench.gui.compare.control import BEST_TAG, CHECK_TAG
from honebench.gui.project.operations import EDITOR
from honebench.gui.shelf.model import VERSION

from ..core.shelf_builder import add_run, new_project, pattern
from ..core.suggest_fixtures import small_project
from ..fakes import FakeEngine
from .pictures import non_blank

MODEL_WAIT = 600_000  # ms; the machine may be shared and busy
SNAP = Path("/tmp/snap")
GOOD = ("Route this passenger message to one department: refund, booking_change, "
        "lost_property, accessibility or timetable. Reply with the department only.")
POOR = "Reply with the single word refund, whatever the message says."


def open_window(qtbot, runner, settings, path, engine=None):
    """The composed window (as run_app composes it) on ``path``; returns (app, compare)."""
    kwargs = {} if engine is None else {"engine_factory": lambda _src: engine}
    app = compose(runner, settings, quiet=True, **kwargs)
    qtbot.addWidget(app.window)
    app.window.show()
    qtbot.waitUntil(lambda: app.engine.handle is not None, timeout=MODEL_WAIT)
    with qtbot.waitSignal(app.session.opened, timeout=MODEL_WAIT):
        app.session.open_project(path)
    return app, app.compare


def version_cells(app) -> dict[str, str]:
    """Shelf label -> the text of its version cell (with the tags in words)."""
    model = app.shelf_model
    return {r.entry.label: model.data(model.index(n, VERSION)) for n, r in enumerate(model.rows)}


def entry_id(app, label: str) -> int:
    return next(r.entry.id for r in app.shelf_model.rows if r.entry.label == label)


def keep(qtbot, app, label: str) -> None:
    """Keep the editor's wording and wait until the shelf shows it as ``label``."""
    with qtbot.waitSignal(app.shelf.kept, timeout=30_000):
        app.shelf.keep()
    qtbot.waitUntil(lambda: label in {r.entry.label for r in app.shelf_model.rows},
                    timeout=30_000)


def answer_key(project: Project):
    """A fake engine's answer: the expected answer of the item whose message is asked."""
    _, qset = project.current_set()
    key = {it.fields["message"]: it.expected for it in qset.items}

    def answer(request) -> str:
        asked = " ".join(m["content"] for m in request.messages)
        return next((exp for msg, exp in key.items() if msg in asked), "no idea")
    return answer


def dark_palette() -> QPalette:
    dark = QPalette()
    for role, colour in ((QPalette.ColorRole.Window, "#2b2b2b"),
                         (QPalette.ColorRole.WindowText, "#eeeeee"),
                         (QPalette.ColorRole.Base, "#1e1e1e"),
                         (QPalette.ColorRole.AlternateBase, "#262626"),
                         (QPalette.ColorRole.Text, "#eeeeee"),
                         (QPalette.ColorRole.Button, "#353535"),
                         (QPalette.ColorRole.ButtonText, "#eeeeee"),
                         (QPalette.ColorRole.Highlight, "#3d7ab8"),
                         (QPalette.ColorRole.Link, "#e0904a"),
                         (QPalette.ColorRole.PlaceholderText, "#a0a0a0"),
                         (QPalette.ColorRole.Mid, "#505050")):
        dark.setColor(role, QColor(colour))
    return dark


def snapshots(qtbot, widgets: dict[str, object]) -> None:
    """Save each widget in the light palette and in a dark one."""
    SNAP.mkdir(exist_ok=True)
    app = QGuiApplication.instance()
    saved = app.palette()
    try:
        for mode, palette in (("light", saved), ("dark", dark_palette())):
            app.setPalette(palette)
            qtbot.wait(50)
            for name, widget in widgets.items():
                path = SNAP / f"{name}_{mode}.png"
                widget.grab().save(str(path))
                assert non_blank(path), path
    finally:
        app.setPalette(saved)


# -- (1) compare two real runs of the bundled model ---------------------------------------
@pytest.mark.model
def test_compare_view_lists_match_the_marks_of_two_real_runs(qtbot, runner, settings,
                                                             tmp_path, sample_dir):
    project = small_project(tmp_path, sample_dir)
    path = project.path
    project.close()
    window, extra = open_window(qtbot, runner, settings, path)
    for text, label in ((GOOD, "v1"), (POOR, "v2")):
        window.editor.set_wording(Wording(text, "system"))
        with qtbot.waitSignal(window.grading.finished, timeout=MODEL_WAIT):
            window.grade()
        keep(qtbot, window, label)
    v1, v2 = entry_id(window, "v1"), entry_id(window, "v2")
    with qtbot.waitSignal(extra.compared, timeout=MODEL_WAIT) as blocker:
        extra.compare(v1, v2, "tuning")
    view = blocker.args[0]

    check = Project(path)
    runs = [r for r in check.store.runs() if r.split == "tuning" and r.status == "finished"]
    by_text = {r.wording_text: r.id for r in runs}
    a = {m.item_id: m.passed for m in check.store.marks(by_text[GOOD])}
    b = {m.item_id: m.passed for m in check.store.marks(by_text[POOR])}
    check.close()
    assert len(a) == len(b) == 11  # the small set's tuning items
    fixed = sorted(i for i in a if not a[i] and b[i])
    broken = sorted(i for i in a if a[i] and not b[i])
    assert broken, "the poor wording should break some items the good one passes"
    assert sorted(p.item.id for p in view.pairs("fixed")) == fixed
    assert sorted(p.item.id for p in view.pairs("broken")) == broken
    assert view.broken_box.title().startswith(f"Broken items ({len(broken)} of 11)")
    assert view.fixed_box.title().startswith(f"Fixed items ({len(fixed)} of 11)")
    assert f"/11, 95% interval" in view.score_a.text()
    assert "exact McNemar" in view.test.text()
    assert "95% paired interval" in view.test.text()  # the one phrase importance shows
    view.grab().save("/tmp/importance_compare_view.png")

    pair_view = view.open_pair(view.broken_list, 0)
    first = view.pairs("broken")[0]
    assert pair_view.title.text().startswith(f"Item {first.item.id} · broken")
    assert pair_view.side_a.result.text() == "✓ passed"
    assert pair_view.side_b.result.text() == "✗ missed"
    assert pair_view.side_b.output.toPlainText() == (first.b.output or
                                                     "(The model gave no output.)")
    view.resize(900, 620)
    snapshots(qtbot, {"compare_view": view, "compare_pair": pair_view})
    window.window.close()


# -- (2) confirm: best only after held-out grading; the overfit warning --------------------
def test_best_appears_only_after_confirming_on_held_out_items(qtbot, runner, settings,
                                                              tmp_path):
    project = new_project(tmp_path)
    for text, n_pass in (("Route the message.", 18), ("Route the message to a desk.", 24)):
        wording = Wording(text, "system")
        project.keep(wording)
        add_run(project, wording, "tuning", pattern(n_pass, 30))
    path, engine = project.path, FakeEngine(answer_key(project))
    project.close()
    window, extra = open_window(qtbot, runner, settings, path, engine)
    cells = version_cells(window)
    assert not any(BEST_TAG in c for c in cells.values()), cells
    assert "v2 leads on tuning items" in extra.bar.best.text()
    assert "grade it on held-out items to confirm" in extra.bar.best.text()
    assert not extra.bar.note.isVisible()  # two variants tried: no optimism note yet

    window.shelf_panel.select(entry_id(window, "v2"))
    assert extra.bar.confirm_button.isEnabled()
    with qtbot.waitSignal(extra.confirmed, timeout=30_000):
        qtbot.mouseClick(extra.bar.confirm_button, Qt.MouseButton.LeftButton)
    qtbot.waitUntil(lambda: BEST_TAG in version_cells(window)["v2"], timeout=30_000)
    cells = version_cells(window)
    assert cells["v2"] == f"v2 · {BEST_TAG}"
    assert BEST_TAG not in cells["v1"]
    row = next(r for r in window.shelf_model.rows if r.entry.label == "v2")
    assert row.held_out is not None and row.held_out.total == 36  # 30% of 120 items
    assert window.shelf_model.data(window.shelf_model.index(
        window.shelf_model.row_of(row.entry.id), 2)).endswith("n=36)")
    assert "v2 leads the kept versions" in extra.bar.best.text()
    window.window.resizeDocks([window.window.docks["shelf"]], [470], Qt.Orientation.Horizontal)
    snapshots(qtbot, {"shelf_best": window.shelf_panel, "window_best": window.window})
    window.window.close()


def test_an_overfit_version_gets_a_warning_and_many_variants_a_note(qtbot, runner,
                                                                    settings, tmp_path):
    project = new_project(tmp_path)
    _, qset = project.current_set()
    held = [it.id for it in qset.held_out()][:12]
    tight = Wording("Route it, exactly as in these examples.", "system")
    project.keep(tight)
    add_run(project, tight, "tuning", pattern(30, 30))
    add_run(project, tight, "held_out", pattern(3, 12), item_ids=held)
    for n in range(5):  # five more variants tried, set aside
        project.set_aside(Wording(f"Variant {n}", "system"))
    path = project.path
    project.close()
    window, extra = open_window(qtbot, runner, settings, path, FakeEngine())
    cell = version_cells(window)["v1"]
    assert CHECK_TAG in cell and BEST_TAG in cell  # leads, confirmed, but warned
    model = window.shelf_model
    tip = model.data(model.index(model.row_of(entry_id(window, "v1")), VERSION),
                     Qt.ItemDataRole.ToolTipRole)
    assert "clearly below" in tip and "25% (3/12" in tip
    assert extra.bar.note.isVisible()
    assert "best of 6 wordings tried" in extra.bar.note.text()
    window.window.resizeDocks([window.window.docks["shelf"]], [470], Qt.Orientation.Horizontal)
    snapshots(qtbot, {"shelf_best_warning": window.shelf_panel})
    window.window.close()


# -- (3) the progress chart -----------------------------------------------------------------
def test_chart_points_and_shapes_follow_the_shelf(qtbot, runner, settings, tmp_path):
    project = new_project(tmp_path)
    plan = [("kept", 15, 6), ("set_aside", 20, None), ("kept", 24, 9), ("set_aside", 12, 4),
            ("kept", None, None)]
    for n, (decision, tuning, held) in enumerate(plan):
        wording = Wording(f"Wording number {n}", "system")
        (project.keep if decision == "kept" else project.set_aside)(wording)
        if tuning is not None:
            add_run(project, wording, "tuning", pattern(tuning, 30))
        if held is not None:
            add_run(project, wording, "held_out", pattern(held, 12))
    path = project.path
    project.close()
    window, extra = open_window(qtbot, runner, settings, path, FakeEngine())
    window.window.show_dock("chart")  # it shares a tab with the other side panels
    qtbot.waitUntil(extra.chart.isVisible, timeout=5000)
    chart = extra.chart
    assert chart.point_count("tuning") == 4  # versions with a tuning score
    assert chart.point_count("held_out") == 3
    assert chart.bands["tuning"].upperSeries().count() == 2 * 4  # a short step per version
    # set-aside versions (v2, v4) are in the cross series; their x is the version's index
    crosses = chart.markers[("tuning", "set_aside")]
    assert sorted(p.x() for p in crosses.points()) == [1.0, 3.0]
    assert [p.x() for p in chart.markers[("held_out", "set_aside")].points()] == [3.0]
    assert sorted(p.x() for p in chart.markers[("tuning", "kept")].points()) == [0.0, 2.0]
    assert [round(p.y(), 3) for p in chart.lines["tuning"].points()] == \
        [50.0, round(2000 / 30, 3), 80.0, 40.0]
    legend = chart.legend.text()
    for words in ("tuning items", "held-out items", "●&nbsp;kept", "✕&nbsp;set aside",
                  "□&nbsp;not decided"):
        assert words in legend
    window.window.resizeDocks([window.window.docks["shelf"]], [600], Qt.Orientation.Horizontal)
    window.window.resizeDocks([window.window.docks["chart"]], [420], Qt.Orientation.Vertical)
    snapshots(qtbot, {"chart": chart, "chart_window": window.window})
    window.window.close()


# -- (4) the report export and compare against the editor -----------------------------------
class _Ids(HTMLParser):
    def __init__(self):
        super().__init__()
        self.ids = []

    def handle_starttag(self, tag, attrs):
        self.ids += [v for k, v in attrs if k == "id" and tag == "section"]


def test_export_report_writes_every_section(qtbot, runner, settings, tmp_path, monkeypatch):
    project = new_project(tmp_path)
    wording = Wording("Route the message.", "system")
    project.keep(wording)
    add_run(project, wording, "tuning", pattern(20, 30))
    path = project.path
    project.close()
    window, extra = open_window(qtbot, runner, settings, path, FakeEngine())
    out = tmp_path / "report.html"
    monkeypatch.setattr(QFileDialog, "getSaveFileName", lambda *a, **k: (str(out), ""))
    with qtbot.waitSignal(window.exports.exported, timeout=30_000):
        window.report_action.trigger()
    parser = _Ids()
    parser.feed(out.read_text(encoding="utf-8"))  # Python's own HTML parser
    assert parser.ids == list(SECTIONS)
    assert str(out) in window.window.statusBar().currentMessage()
    text_out = tmp_path / "wording.txt"
    with qtbot.waitSignal(window.exports.exported, timeout=30_000):
        window.exports.export_wording(str(text_out))
    assert text_out.read_text(encoding="utf-8") == "Route the message.\n"
    window.window.close()


def test_the_editor_is_graded_first_when_compared_without_a_run(qtbot, runner, settings,
                                                                tmp_path):
    project = new_project(tmp_path)
    wording = Wording("Route the message.", "system")
    project.keep(wording)
    add_run(project, wording, "tuning", pattern(0, 84))  # every tuning item missed
    path = project.path
    project.close()
    engine = FakeEngine(lambda _req: "refund")
    window, extra = open_window(qtbot, runner, settings, path, engine)
    window.editor.set_wording(Wording("Say refund.", "system"))
    with qtbot.waitSignal(extra.compared, timeout=30_000) as blocker:
        extra.compare(entry_id(window, "v1"), EDITOR, "tuning")
    view = blocker.args[0]
    assert engine.calls == 84  # the editor's wording was graded on every tuning item
    check = Project(path)
    _, qset = check.current_set()
    refunds = sorted(it.id for it in qset.tuning() if it.expected == "refund")
    check.close()
    assert sorted(p.item.id for p in view.pairs("fixed")) == refunds
    assert view.pairs("broken") == []
    # graded, the editor's wording went on the shelf (not decided) as the next version
    assert view.name_b.text() == "B · editor (v2)"
    window.window.close()
