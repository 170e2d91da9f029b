"""Cost beside score in the window: the shelf's cost columns and the progress chart's
score-vs-cost view with the Pareto front (runs written straight into the project)."""
from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import Qt
from PySide6.QtGui import QGuiApplication

from honebench.core.wording import Wording
from honebench.gui.shelf.model import ANSWER_TOKENS, PROMPT_TOKENS, SECONDS

from ..core.shelf_builder import add_run, new_project, pattern
from ..fakes import FakeEngine
from .pictures import non_blank
from .test_compare_view import dark_palette, open_window

# decision, tuning items passed of 30, prompt tokens, answer tokens, seconds per item
PLAN = [("kept", 15, 120, 4, 0.30), ("set_aside", 18, 260, 12, 0.20),
        ("kept", 24, 300, 8, 0.55), ("kept", 21, 310, 9, 0.25), ("", 24, 400, 10, 0.90),
        ("kept", None, 0, 0, 0.0)]


def _project(tmp_path) -> Path:
    project = new_project(tmp_path)
    for n, (decision, passed, prompt, answer, seconds) in enumerate(PLAN):
        wording = Wording(f"Wording number {n}", "system")
        if decision:
            (project.keep if decision == "kept" else project.set_aside)(wording)
        else:
            project.store.add_wording(wording.text, wording.placement)
        if passed is not None:
            add_run(project, wording, "tuning", pattern(passed, 30), prompt_tokens=prompt,
                    completion_tokens=answer, seconds=seconds)
    path = project.path
    project.close()
    return path


def _save(qtbot, widgets: dict[str, object]) -> None:
    app = QGuiApplication.instance()
    saved = app.palette()
    try:
        for mode, palette in (("light", saved), ("dark", dark_palette())):
            app.setPalette(palette)
            qtbot.wait(50)
            for name, widget in widgets.items():
                path = Path(f"/tmp/cost_{name}_{mode}.png")
                widget.grab().save(str(path))
                assert non_blank(path), path
    finally:
        app.setPalette(saved)


def test_shelf_shows_cost_and_the_chart_marks_the_pareto_front(qtbot, runner, settings,
                                                               tmp_path):
    window, extra = open_window(qtbot, runner, settings, _project(tmp_path), FakeEngine())
    model = window.shelf_model
    cells = {r.entry.label: [model.data(model.index(n, c)) for c in
                             (PROMPT_TOKENS, ANSWER_TOKENS, SECONDS)]
             for n, r in enumerate(model.rows)}
    assert cells["v1"] == ["120", "4.0", "0.30"]
    assert cells["v3"] == ["300", "8.0", "0.55"]
    assert cells["v6"] == ["—", "—", "—"]  # no tuning run
    window.window.resize(1280, 800)
    window.window.show_dock("chart")
    qtbot.waitUntil(extra.chart.isVisible, timeout=5000)
    chart = extra.chart
    chart.cost_button.click()
    assert chart.pages.currentWidget() is chart.cost
    cost = chart.cost
    # tokens per item (prompt + answer), worked by hand from PLAN:
    #   v1 124 (50%), v2 272 (60%), v3 308 (80%), v4 319 (70%), v5 410 (80%)
    # v4 is beaten by v3 (higher score, fewer tokens), v5 by v3 (same score, fewer tokens)
    assert [p.label for p in cost.points if p.on_front] == ["v1", "v2", "v3"]
    assert cost.rings.count() == 3
    assert cost.front_line.count() == 5  # three corners and two steps between them
    assert [p.x() for p in cost.markers["set_aside"].points()] == [272.0]
    assert len(cost.labels) == 5 and "Pareto front: v1, v2, v3" in cost.caption.text()
    # by seconds: v2 0.20 (60%), v4 0.25 (70%), v1 0.30 (50%), v3 0.55 (80%), v5 0.90 (80%)
    cost.set_measure("seconds")
    assert [p.label for p in cost.points if p.on_front] == ["v2", "v3", "v4"]
    assert "depend on the machine" in cost.caption.text()
    cost.set_measure("tokens")
    _save(qtbot, {"window": window.window})
    window.window.resizeDocks([window.window.docks["shelf"]], [600], Qt.Orientation.Horizontal)
    window.window.resizeDocks([window.window.docks["chart"]], [440], Qt.Orientation.Vertical)
    qtbot.wait(50)
    _save(qtbot, {"chart": chart, "shelf": window.shelf_panel})
    chart.version_button.click()
    assert chart.pages.currentIndex() == 0 and chart.point_count("tuning") == 5
    assert not chart.cost.measure_row.isVisible()  # the cost measure goes with its view
    _save(qtbot, {"chart_by_version": chart})
    window.window.close()


def test_item_view_says_a_cached_answers_cost_is_from_when_it_was_first_given():
    from honebench.core.records import Mark
    from honebench.gui.grading.item_view import cost_text

    fresh = Mark("a", "refund", "refund", True, "matches", prompt_tokens=412,
                 completion_tokens=7, seconds=0.38)
    assert cost_text(fresh) == "prompt 412 tokens + answer 7 tokens · 0.38 s"
    cached = Mark("a", "refund", "refund", True, "matches", prompt_tokens=412,
                  completion_tokens=7, seconds=0.38, cached=True)
    assert cost_text(cached) == ("prompt 412 tokens + answer 7 tokens · 0.38 s when first "
                                 "answered · answer taken from the cache")
    older = Mark("a", "refund", "refund", True, "matches", prompt_tokens=412,
                 completion_tokens=7, cached=True)  # saved before cached seconds were kept
    assert cost_text(older).endswith("7 tokens when first answered · answer taken from "
                                      "the cache")
