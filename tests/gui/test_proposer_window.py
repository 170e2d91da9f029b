"""The window's suggestion engine ("Proposals by"): the choice is saved in the project's
settings (and a later engine-bar edit keeps it), the chosen engine is opened in the
suggestions' job (not on the GUI thread) and kept open for the next run, it writes the
suggestions while the graded engine scores them, every card says who wrote them, and
switching back closes it."""
from __future__ import annotations

import threading

from honebench.core.engines.choice import EngineChoice
from honebench.core.project import Project
from honebench.gui.app import compose
from tests.core.suggest_fixtures import small_project
from tests.fakes import FakeEngine

from .test_suggest_panel import REPHRASES, _answer_item, _lookup, _text, run_suggest

WAIT = 60_000
ASK = "Say this instruction again"  # the rephrase meta-prompt's words


class Writer(FakeEngine):
    """The fake suggestion engine: writes the rephrases, can be closed."""

    def __init__(self):
        self.asked: list[str] = []
        self.closed = False

        def answer(req):
            self.asked.append(_text(req))
            return REPHRASES[req.seed % len(REPHRASES)]

        super().__init__(answer)

    def label(self) -> str:
        return "writer.gguf"

    def close(self) -> None:
        self.closed = True


def test_proposals_by_another_engine(qtbot, runner, settings, tmp_path, sample_dir):
    project = small_project(tmp_path, sample_dir)
    table, path = _lookup(project), project.path
    project.close()
    graded_asked: list[str] = []

    def graded_answer(req):
        text = _text(req)
        graded_asked.append(text)
        return _answer_item(table, text, 11 if any(r in text for r in REPHRASES) else 4)

    graded, writers, opened_on_gui_thread = FakeEngine(graded_answer), [], []
    writer_file = str(tmp_path / "writer.gguf")

    def factory(choice):
        opened_on_gui_thread.append(threading.current_thread() is threading.main_thread())
        if choice.kind == "file":
            writers.append(Writer())
            return writers[-1]
        return graded

    settings.setValue("engine/files", [writer_file])  # a file used before: offered
    app = compose(runner, settings, quiet=True, engine_factory=factory)
    qtbot.addWidget(app.window)
    app.window.show()
    with qtbot.waitSignal(app.session.opened, timeout=WAIT):
        app.session.open_project(path)
    qtbot.waitUntil(lambda: app.engine.handle is not None, timeout=WAIT)
    suggest = app.suggest
    assert suggest.proposer.currentText() == "Same as the graded engine"

    # choose the file: saved in the project, nothing opened yet
    index = suggest.proposer.findData(writer_file)
    assert index > 0
    suggest.proposer.setCurrentIndex(index)
    with qtbot.waitSignal(app.session.settings_saved, timeout=WAIT):
        suggest.proposer.activated.emit(index)  # what a user's pick sends
    assert writers == []
    # a later edit in the engine bar keeps the suggestion engine
    with qtbot.waitSignal(app.session.settings_saved, timeout=WAIT):
        app.engine.max_tokens.setValue(30)
        app.engine.commit_settings()
    check = Project(path)
    assert check.settings().suggest_engine == EngineChoice.file(writer_file)
    assert check.settings().max_tokens == 30
    check.close()

    outcome = run_suggest(qtbot, suggest, "rephrase", 3)
    assert len(writers) == 1 and len(writers[0].asked) == 3
    assert all(ASK in t for t in writers[0].asked)
    assert not any(ASK in t for t in graded_asked)  # the graded engine only scored
    assert all(c.score.total == 11 for c in outcome.cards)
    assert opened_on_gui_thread and not any(opened_on_gui_thread)
    assert suggest.cards and all(card.origin.text().endswith("Written by: writer.gguf")
                                 for card in suggest.cards)

    # the next run uses the engine kept open
    run_suggest(qtbot, suggest, "rephrase", 2)
    assert len(writers) == 1 and len(writers[0].asked) == 5

    # auto-hone asks the same suggestion engine, still open
    hone = app.hone
    hone.strategy.setCurrentIndex(hone.strategy.findData("rephrase"))
    hone.rounds_spin.setValue(1)
    hone.per_round.setValue(2)
    with qtbot.waitSignal(hone.finished, timeout=WAIT):
        hone.start()
    assert len(writers) == 1 and len(writers[0].asked) == 7
    assert not any(ASK in t for t in graded_asked)

    # back to the graded engine: saved, and the suggestion engine is closed on the lane
    same = suggest.proposer.findData("same")
    suggest.proposer.setCurrentIndex(same)
    with qtbot.waitSignal(app.session.settings_saved, timeout=WAIT):
        suggest.proposer.activated.emit(same)
    qtbot.waitUntil(lambda: writers[0].closed, timeout=WAIT)
    check = Project(path)
    assert check.settings().suggest_engine is None and check.settings().max_tokens == 30
    check.close()
    app.window.close()
