"""The suggestions and auto-hone panels inside the window: suggest, keep and set aside onto
the shelf, reopen; the plain no-usable-wording outcome; the real model; auto-hone with its
table, chart and cancel."""
from __future__ import annotations

import os
import time
from pathlib import Path

import pytest
from PySide6.QtCore import Qt

from honebench.gui.app import compose
from tests.core.suggest_fixtures import small_project
from tests.fakes import FakeEngine

from .pictures import non_blank

WAIT = 60_000
MODEL_WAIT = 600_000
REPHRASES = ["Name the one department that should answer this passenger message.",
             "Tell which desk must reply, using its name only: refund, booking_change, "
             "lost_property, accessibility or timetable.",
             "Pick the team for this note and give nothing but that team."]
LEVELS = ["Name the right desk for this passenger.",
          "Say which team must take this case, exactly.",
          "Pick the one department that should reply, carefully and briefly.",
          "Choose where this note goes: refunds, changes, lost items, access or sailings.",
          "Sort the passenger's words into the matching service queue without extra text."]


def snap_dir() -> Path:
    path = Path(os.environ.get("HONEBENCH_SNAP_DIR") or "/tmp/snap")
    path.mkdir(parents=True, exist_ok=True)
    return path


def _text(req) -> str:
    return "\n".join(m["content"] for m in req.messages)


def _lookup(project):
    """(message, expected answer, position among the items of its split)."""
    _, qset = project.current_set()
    return [(it.fields["message"], it.expected, i) for part in (qset.tuning(), qset.held_out())
            for i, it in enumerate(part)]


def _answer_item(table, text, right: int) -> str:
    message, expected, position = next(row for row in table if row[0] in text)
    return expected if position < right else "none"


def rephrase_engine(table):
    """Rephrase i (by seed) answers the first 3 + 2i items right; other wordings the first 4."""

    def answer(req):
        text = _text(req)
        if "Say this instruction again" in text:
            return REPHRASES[req.seed % len(REPHRASES)]
        level = next((i for i, w in enumerate(REPHRASES) if w in text), None)
        return _answer_item(table, text, 4 if level is None else 3 + 2 * level)

    return answer


def improving_engine(table):
    """Each rephrase moves one level up LEVELS (even seeds), or offers a worse wording
    (odd seeds); a wording at level k answers the first 3k items right."""

    def level(text):
        return max([i + 1 for i, w in enumerate(LEVELS) if w in text] or [0])

    def answer(req):
        text = _text(req)
        if "Say this instruction again" in text:
            k = level(text)
            return LEVELS[min(k, len(LEVELS) - 1)] if req.seed % 2 == 0 else \
                "Be quick about it now."
        return _answer_item(table, text, 3 * level(text))

    return answer


def open_window(qtbot, runner, settings, tmp_path, sample_dir, make_answer=None,
                on_call=None):
    """A window on a fresh 16-item routing project, with the panels attached.
    ``make_answer(table)`` gives the fake engine's answer function; None: the real model."""
    project = small_project(tmp_path, sample_dir)
    table, path = _lookup(project), project.path
    project.close()
    kwargs = {}
    if make_answer is not None:
        engine = FakeEngine(make_answer(table), on_call=on_call)
        kwargs["engine_factory"] = lambda _source: engine
    app = compose(runner, settings, quiet=True, **kwargs)
    qtbot.addWidget(app.window)
    app.window.show()
    with qtbot.waitSignal(app.session.opened, timeout=WAIT):
        app.session.open_project(path)
    qtbot.waitUntil(lambda: app.engine.handle is not None,
                    timeout=MODEL_WAIT if make_answer is None else WAIT)
    return app, app.suggest, app.hone, path



def run_suggest(qtbot, suggest, strategy, count, timeout=WAIT):
    suggest.strategy.setCurrentIndex(suggest.strategy.findData(strategy))
    suggest.count.setValue(count)
    assert suggest.go.isEnabled(), suggest.base_label.text()
    with qtbot.waitSignal(suggest.finished, timeout=timeout) as blocker:
        qtbot.mouseClick(suggest.go, Qt.MouseButton.LeftButton)
    return blocker.args[0]


def test_menu_actions_and_rule_before_the_first_run(qtbot, runner, settings, tmp_path,
                                                     sample_dir):
    window, suggest, hone, _ = open_window(qtbot, runner, settings, tmp_path, sample_dir,
                                           rephrase_engine)
    texts = [a.text() for a in window.window.menus["run"].actions()]
    assert "Suggest &variants…" in texts and "&Auto-hone…" in texts
    assert not window.suggest_action.shortcut().isEmpty()
    # held-out items are graded only by confirming a shelf version: not from the toolbar
    toolbar = [a.text() for a in window.window.toolbars["grading"].actions()]
    assert not any("held" in t.lower() for t in toolbar)
    # no shortcut of the window is given twice (an ambiguous key does nothing in Qt)
    from PySide6.QtGui import QAction
    keys = [s.toString() for a in window.window.findChildren(QAction) for s in a.shortcuts()]
    assert len(keys) == len(set(keys))
    # 11 tuning items: the slice is all of them but one (min(11, max(10, 11 // 4)) = 10)
    assert "first 10 tuning items" in suggest.rule.text()
    assert suggest.base_label.text() == "Starts from the editor's wording."
    suggest.strategy.setCurrentIndex(suggest.strategy.findData("blend"))
    assert not suggest.go.isEnabled() and "Blend needs" in suggest.base_label.text()


def test_suggest_keep_set_aside_and_reopen(qtbot, runner, settings, tmp_path, sample_dir):
    from honebench.core.events import Stage
    from honebench.gui.project.operations import Candidates

    window, suggest, _hone, path = open_window(qtbot, runner, settings, tmp_path, sample_dir,
                                               rephrase_engine)
    base_text = window.editor.wording().text
    events = []
    runner.job_started.connect(lambda job: job.progress.connect(events.append))
    outcome = run_suggest(qtbot, suggest, "rephrase", 3)
    # while scoring, each suggestion's running score came in; the last read is final
    last = [e for e in events if isinstance(e, Candidates)][-1]
    assert sorted((c.text, c.passed, c.done) for c in last.items) == sorted(
        (c.text, c.score.passed, 11) for c in outcome.cards)
    stages = [e for e in events if isinstance(e, Stage) and e.progress is not None]
    assert stages[-1].progress.done == stages[-1].progress.total
    assert [c.text for c in outcome.cards] == list(reversed(REPHRASES))  # best first
    assert len(suggest.cards) == 3
    first, second, third = suggest.cards
    assert "3 usable suggestion(s)" in suggest.message.text()
    # 4/11 for the current wording; the best rephrase gets 7 of 11 right
    assert first.heading.text().startswith("<b>Suggestion 1</b> · 63.6% (")
    assert "n=11" in first.heading.text()
    assert first.change.text().startswith("▲ +27 points") and "fixes 3, breaks 0" in \
        first.change.text()
    assert "<s" in first.diff.text() and "<u" in first.diff.text()
    assert first.origin.text() == ("Strategy: rephrase of the editor's wording\n"
                                   "Written by: fake-engine")  # the graded engine wrote it
    first.grab().save(str(snap_dir() / "suggest_card.png"))

    with qtbot.waitSignal(suggest.decided, timeout=WAIT):
        qtbot.mouseClick(first.keep_button, Qt.MouseButton.LeftButton)
    assert first.outcome.text() == "<b>✓ kept as v1</b>"
    assert not first.keep_button.isEnabled() and not first.aside_button.isEnabled()
    qtbot.keyClicks(second.reason, "too long for the desk")
    with qtbot.waitSignal(suggest.decided, timeout=WAIT):
        qtbot.mouseClick(second.aside_button, Qt.MouseButton.LeftButton)
    assert "set aside" in second.outcome.text()
    # the shelf panel shows both, once the one shelf model has re-read its rows
    qtbot.waitUntil(lambda: window.shelf_model.rowCount() == 2, timeout=WAIT)

    qtbot.mouseClick(third.load_button, Qt.MouseButton.LeftButton)
    assert window.editor.wording().text == third.card.text
    window.editor.set_wording(window.editor.wording().__class__(base_text, "before"))

    shelf = {e.text: e for e in window.session.project.store.shelf()}
    kept, aside = shelf[first.card.text], shelf[second.card.text]
    assert (kept.decision, kept.origin, kept.label) == ("kept", "rephrase", "v1")
    assert (aside.decision, aside.origin, aside.note) == ("set_aside", "rephrase",
                                                           "too long for the desk")
    window.window.grab().save(str(snap_dir() / "suggest_window.png"))
    suggest.grab().save(str(snap_dir() / "suggest_cards.png"))
    assert non_blank(snap_dir() / "suggest_window.png")

    with qtbot.waitSignal(window.session.opened, timeout=WAIT):
        window.session.open_project(path)
    assert suggest.cards == []  # a reopened project starts without old cards
    rows = {r.entry.text: r.entry for r in window.shelf_model.rows}
    assert rows[first.card.text].decision == "kept"
    assert rows[second.card.text].decision == "set_aside"
    assert window.shelf_model.rowCount() == 2
    # blend now has two entries to choose from
    window.shelf_panel.select(rows[first.card.text].id)
    suggest.strategy.setCurrentIndex(suggest.strategy.findData("blend"))
    assert suggest.other.count() == 2
    assert suggest.go.isEnabled(), suggest.base_label.text()
    assert window.window.problems == []


def test_junk_only_gives_the_plain_message_and_no_cards(qtbot, runner, settings, tmp_path,
                                                        sample_dir):
    window, suggest, _hone, _ = open_window(qtbot, runner, settings, tmp_path, sample_dir,
                                            lambda _table: lambda req: "Refund.")
    outcome = run_suggest(qtbot, suggest, "scoreboard", 3)
    assert outcome.cards == [] and suggest.cards == []
    text = suggest.message.text()
    assert "The model gave no usable wording (3 replies dropped: 3 under 3 words" in text
    assert window.window.problems == []  # said plainly in the panel, not as a problem dialog
    assert suggest.dropped_toggle.isVisible()
    assert suggest.dropped_toggle.text() == "3 replies dropped"
    assert not suggest.dropped.isVisible()
    qtbot.mouseClick(suggest.dropped_toggle, Qt.MouseButton.LeftButton)
    assert suggest.dropped.isVisible() and suggest.dropped.text().count("•") == 3
    qtbot.wait(50)
    suggest.grab().save(str(snap_dir() / "suggest_junk.png"))
    window.window.grab().save(str(snap_dir() / "suggest_junk_window.png"))


@pytest.mark.model
def test_rephrase_with_the_real_model(qtbot, runner, settings, tmp_path, sample_dir):
    window, suggest, _hone, _ = open_window(qtbot, runner, settings, tmp_path, sample_dir)
    window.engine.max_tokens.setValue(10)
    outcome = run_suggest(qtbot, suggest, "rephrase", 2, timeout=MODEL_WAIT)
    if outcome.cards:
        assert len(suggest.cards) == len(outcome.cards)
        assert all(c.card.score.total == 11 for c in suggest.cards)
    else:
        assert "The model gave no usable wording" in suggest.message.text()
    assert window.window.problems == []
    qtbot.wait(100)
    suggest.grab().save(str(snap_dir() / "suggest_real_model.png"))


def test_auto_hone_two_rounds_fill_the_table_and_chart(qtbot, runner, settings, tmp_path,
                                                       sample_dir):
    window, _suggest, hone, _ = open_window(qtbot, runner, settings, tmp_path, sample_dir,
                                            improving_engine)
    hone.strategy.setCurrentIndex(hone.strategy.findData("rephrase"))
    hone.rounds_spin.setValue(2)
    hone.per_round.setValue(2)
    with qtbot.waitSignal(hone.finished, timeout=WAIT) as blocker:
        qtbot.mouseClick(hone.start_button, Qt.MouseButton.LeftButton)
    outcome = blocker.args[0]
    assert outcome.stop_reason == "2 rounds done"
    assert hone.table.rowCount() == 3  # start, round 1, round 2
    assert [hone.table.item(r, 0).text() for r in range(3)] == ["start", "1", "2"]
    assert hone.table.item(1, 2).text().startswith("v")  # a kept version each round
    assert hone.table.item(2, 3).text() != "—"  # with its held-out score
    assert hone.chart.tuning.count() == 3
    assert [p.x() for p in hone.chart.tuning.points()] == [0, 1, 2]
    assert hone.chart.held.count() == 2
    assert round(hone.chart.tuning.points()[2].y(), 1) == round(
        outcome.rounds[1].best_tuning.rate * 100, 1)
    stored = window.session.project.store.shelf()
    qtbot.waitUntil(lambda: window.shelf_model.rowCount() == len(stored), timeout=WAIT)
    origins = {r.entry.origin for r in window.shelf_model.rows}
    assert "auto-hone: rephrase" in origins
    assert "Stopped: 2 rounds done." in hone.result.text()
    window.window.show_dock("hone")
    qtbot.wait(50)
    hone.grab().save(str(snap_dir() / "hone_panel.png"))
    window.window.grab().save(str(snap_dir() / "hone_window.png"))
    assert non_blank(snap_dir() / "hone_window.png")


def test_auto_hone_cancel_keeps_finished_rounds(qtbot, runner, settings, tmp_path, sample_dir):
    window, suggest, hone, _ = open_window(qtbot, runner, settings, tmp_path, sample_dir,
                                           improving_engine,
                                           on_call=lambda n: time.sleep(0.01))
    hone.strategy.setCurrentIndex(hone.strategy.findData("rephrase"))
    hone.rounds_spin.setValue(30)
    hone.patience.setValue(30)
    qtbot.mouseClick(hone.start_button, Qt.MouseButton.LeftButton)
    assert not suggest.go.isEnabled()  # one driver of the engine at a time
    qtbot.waitUntil(lambda: hone.table.rowCount() >= 2, timeout=WAIT)
    with qtbot.waitSignal(hone.finished, timeout=WAIT) as blocker:
        qtbot.mouseClick(hone.cancel_button, Qt.MouseButton.LeftButton)
    outcome = blocker.args[0]
    assert outcome.stop_reason == "cancelled"
    assert 1 <= len(outcome.rounds) < 30
    assert hone.table.rowCount() == len(outcome.rounds) + 1
    kept = [e for e in window.session.project.store.shelf() if e.decision == "kept"]
    assert kept  # round 1's improvement stays on the shelf
    assert len(window.session.project.store.hone_rounds(outcome.session)) == len(outcome.rounds)
    assert suggest.go.isEnabled()
    assert hone.start_button.isEnabled()
