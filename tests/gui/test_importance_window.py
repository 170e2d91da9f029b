"""The shelf's phrase check in the composed window (fake engine): it runs as a job with
progress, then the editor shades the version's phrases with a legend and tooltips."""
from __future__ import annotations

import time

from PySide6.QtCore import QEvent, Qt
from PySide6.QtGui import QColor, QHelpEvent, QPalette
from PySide6.QtWidgets import QApplication, QToolTip

from honebench.core.wording import Wording
from honebench.gui.grading.phrase_shading import MIN_CONTRAST, contrast, shade

from .test_wiring import WAIT, composed_on, grade_and_keep
from ..core.suggest_fixtures import small_project
from ..fakes import FakeEngine

ROUTE = "Route the message to its department."
TEXT = ROUTE + " Reply with the department only."


def test_the_phrase_check_shades_the_editor(qtbot, runner, settings, tmp_path, sample_dir):
    project = small_project(tmp_path, sample_dir)
    _, qset = project.current_set()
    key = {it.fields["message"]: it.expected for it in qset.items}
    path = project.path
    project.close()

    def answer(request) -> str:  # right only while the first phrase is there
        asked = " ".join(m["content"] for m in request.messages)
        if ROUTE not in asked:
            return "no idea"
        return next((exp for msg, exp in key.items() if msg in asked), "no idea")

    slow = FakeEngine(answer, on_call=lambda _n: time.sleep(0.03))  # time to see progress
    app, engine, _ = composed_on(qtbot, runner, settings, path, slow)
    grade_and_keep(qtbot, app, TEXT)
    app.editor.set_wording(Wording("something else entirely", "before"))
    assert app.importance.action.isEnabled()
    progress = []
    with qtbot.waitSignal(app.importance.shown, timeout=WAIT) as shown:
        job = app.importance.start()
        job.progress.connect(progress.append)
        assert app.importance.bar.button.text() == "Stop the phrase check"
        qtbot.waitUntil(lambda: "graded" in app.importance.bar.progress.text(), timeout=WAIT)
        qtbot.wait(20)  # let the layout take the new line before the picture
        app.shelf_panel.grab().save("/tmp/importance_running.png")
    result = shown.args[0]
    # the version came back into the editor, shaded; its first phrase matters
    assert app.editor.wording().text == TEXT
    route, reply = result.effects
    assert route.measurable and route.broken == 11 and not reply.measurable
    selections = app.editor.text_edit.extraSelections()
    assert len(selections) == 2
    assert selections[0].format.background().style() != Qt.BrushStyle.NoBrush  # filled
    assert selections[1].format.background().style() == Qt.BrushStyle.NoBrush  # underlined
    assert app.editor.shading.legend.isVisible()
    assert "no measurable effect" in app.editor.shading.legend.text()
    assert app.editor.shading.effect_at(3) is route
    assert "breaks 11" in route.tip() and "p = " in route.tip()
    assert app.importance.bar.button.text() == "Which phrases matter…"
    app.window.grab().save("/tmp/importance_window.png")
    app.editor.grab().save("/tmp/importance_editor.png")
    # any edit clears the shading: it describes the wording as analysed
    app.editor.text_edit.appendPlainText(" More.")
    assert app.editor.text_edit.extraSelections() == []
    assert not app.editor.shading.legend.isVisible()
    app.window.close()


def _palette(base: str, text: str) -> QPalette:
    palette = QPalette()
    palette.setColor(QPalette.ColorRole.Base, QColor(base))
    palette.setColor(QPalette.ColorRole.Text, QColor(text))
    return palette


def test_the_scale_keeps_text_readable_on_light_and_dark_palettes():
    for base, text in (("#ffffff", "#000000"), ("#1e1e1e", "#e6e6e6"),
                       ("#2b2b2b", "#ffffff"), ("#f0f0f0", "#202020")):
        palette = _palette(base, text)
        for delta in (-0.5, -0.2, -0.02, 0.02, 0.2, 0.5):
            fill = shade(delta, 0.5, palette)
            # source: WCAG 2.x contrast ratio, 4.5 : 1 for body text (published standard)
            assert contrast(fill, palette.color(QPalette.ColorRole.Text)) >= MIN_CONTRAST
            assert fill != palette.color(QPalette.ColorRole.Base)  # still visibly shaded
        helps, hurts = shade(-0.5, 0.5, palette), shade(0.5, 0.5, palette)
        assert helps.blue() > helps.red() and hurts.red() > hurts.blue()  # two hues
    # worked example of the formula: black on white is 21 : 1, white on white 1 : 1
    assert round(contrast(QColor("#000000"), QColor("#ffffff")), 6) == 21.0
    assert contrast(QColor("#ffffff"), QColor("#ffffff")) == 1.0


def test_the_shading_on_a_dark_palette_picture(qtbot):
    """Renders the editor with a dark palette for a look (saved under /tmp)."""
    from honebench.core.importance import ImportanceResult, PhraseEffect
    from honebench.gui.grading.editor import WordingEditor

    text = "Route it. Name the desk; be brief. Reply with one word."
    effects = (PhraseEffect(0, "Route it.", 0, 9, 40, 30, 18, 1, 13, 0.002, -0.45, -0.15),
               PhraseEffect(1, "Name the desk;", 10, 24, 40, 30, 33, 5, 2, 0.45, -0.06, 0.2),
               PhraseEffect(2, "be brief.", 25, 34, 40, 30, 36, 7, 1, 0.07, 0.01, 0.3),
               PhraseEffect(3, "Reply with one word.", 35, 55, 40, 30, 26, 2, 6, 0.29, -0.25,
                            0.05))
    result = ImportanceResult(7, "v3", text, "system", "tuning", 40, 30, effects, True)
    for name, base, fg, window in (("dark", "#1e1e1e", "#e6e6e6", "#2d2d2d"),
                                   ("light", "#ffffff", "#000000", "#efefef")):
        editor = WordingEditor()
        qtbot.addWidget(editor)
        palette = editor.palette()
        for role, colour in ((QPalette.ColorRole.Base, base), (QPalette.ColorRole.Text, fg),
                             (QPalette.ColorRole.Window, window),
                             (QPalette.ColorRole.WindowText, fg)):
            palette.setColor(role, QColor(colour))
        editor.setPalette(palette)
        editor.set_wording(Wording(text, "system"))
        assert editor.show_importance(result)
        assert len(editor.text_edit.extraSelections()) == 4
        editor.resize(520, 300)
        editor.grab().save(f"/tmp/importance_editor_{name}.png")


def test_changing_the_placement_clears_the_shading(qtbot):
    from honebench.core.importance import ImportanceResult, PhraseEffect
    from honebench.gui.grading.editor import WordingEditor

    text = "Route it. Reply with one word."
    effects = (PhraseEffect(0, "Route it.", 0, 9, 40, 30, 18, 1, 13, 0.002, -0.45, -0.15),
               PhraseEffect(1, "Reply with one word.", 10, 30, 40, 30, 30, 2, 2, 1.0, -0.1,
                            0.1))
    editor = WordingEditor()
    qtbot.addWidget(editor)
    editor.set_wording(Wording(text, "system"))
    assert not editor.show_importance(ImportanceResult(1, "v1", "other text", "system",
                                                       "tuning", 40, 30, effects, True))
    assert editor.show_importance(ImportanceResult(1, "v1", text, "system", "tuning", 40, 30,
                                                   effects, True))
    assert len(editor.text_edit.extraSelections()) == 2
    # hovering the first phrase shows its numbers
    editor.show()
    view = editor.text_edit.viewport()
    at = editor.text_edit.cursorRect(editor.text_edit.textCursor()).center()
    QApplication.sendEvent(view, QHelpEvent(QEvent.Type.ToolTip, at, view.mapToGlobal(at)))
    assert "Leaving this phrase out: -30 pts on 40 items" in QToolTip.text()
    editor.placement.setCurrentIndex(editor.placement.findData("before"))
    assert editor.text_edit.extraSelections() == [] and editor.shading.result is None
