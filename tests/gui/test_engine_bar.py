"""The engine bar with an endpoint: the dialog refuses a bad address by name and stays open;
a good one loads in a job on the model lane (never on the GUI thread) and is remembered; a
server that does not answer gets the engine_failed message naming it, and the engine in
use stays."""
from __future__ import annotations

import threading

from PySide6.QtWidgets import QDialog

from honebench.core.engines.choice import DEFAULT_TIMEOUT, EngineChoice
from honebench.gui.engine import EndpointDialog, EngineBar, open_engine

from ..fakes import FakeEngine

WAIT = 30_000
SILENT = "http://127.0.0.1:9/v1"  # the discard port: nothing answers there (RFC 863)


def test_the_dialog_refuses_a_bad_address_and_keeps_the_fields(qtbot):
    dialog = EndpointDialog(None, initial=None)
    qtbot.addWidget(dialog)
    dialog.show()
    assert dialog.timeout.value() == DEFAULT_TIMEOUT == 30.0
    dialog.url.setText("127.0.0.1:8080/v1")
    dialog.model.setText("writer")
    dialog.accept()
    assert dialog.isVisible() and dialog.result() != QDialog.DialogCode.Accepted
    assert dialog.error.isVisible() and "http://" in dialog.error.text()
    assert dialog.url.text() == "127.0.0.1:8080/v1"  # nothing typed is lost
    dialog.url.setText("http://127.0.0.1:8080/v1")
    dialog.timeout.setValue(12)
    dialog.accept()
    assert dialog.result() == QDialog.DialogCode.Accepted
    assert dialog.choice() == EngineChoice.endpoint("http://127.0.0.1:8080/v1", "writer",
                                                    timeout=12.0)


def _bar(qtbot, runner, settings, factory):
    bar = EngineBar(runner, settings, factory)
    qtbot.addWidget(bar)
    return bar


def test_an_endpoint_loads_in_a_job_and_is_remembered(qtbot, runner, settings):
    opened = []

    def factory(choice):
        opened.append((choice, threading.current_thread() is threading.main_thread()))
        return FakeEngine()

    bar = _bar(qtbot, runner, settings, factory)
    with qtbot.waitSignal(bar.engine_ready, timeout=WAIT):
        bar.load_remembered()
    assert opened == [(EngineChoice.bundled(), False)]
    endpoint = EngineChoice.endpoint("http://127.0.0.1:8080/v1", "writer", timeout=12.0)
    with qtbot.waitSignal(bar.engine_ready, timeout=WAIT) as ready:
        bar.load(endpoint)
    assert opened[-1] == (endpoint, False)  # opened (and asked) off the GUI thread
    assert ready.args[0].choice == endpoint and bar.handle.choice == endpoint
    assert bar.choice.currentText() == "writer @ 127.0.0.1:8080"

    # a new bar (the next session) offers it again and loads it first
    second = _bar(qtbot, runner, settings, factory)
    texts = [second.choice.itemText(i) for i in range(second.choice.count())]
    assert "writer @ 127.0.0.1:8080" in texts
    with qtbot.waitSignal(second.engine_ready, timeout=WAIT):
        second.load_remembered()
    assert opened[-1] == (endpoint, False)
    for b in (bar, second):
        b.close_engine()


def test_a_silent_server_is_named_and_the_engine_in_use_stays(qtbot, runner, settings):
    fake = FakeEngine()

    def factory(choice):  # the real opening for endpoints: EndpointEngine.check() asks it
        return open_engine(choice) if choice.kind == "endpoint" else fake

    bar = _bar(qtbot, runner, settings, factory)
    with qtbot.waitSignal(bar.engine_ready, timeout=WAIT):
        bar.load_remembered()
    before = bar.handle
    with qtbot.waitSignal(bar.engine_failed, timeout=WAIT) as failed:
        bar.load(EngineChoice.endpoint(SILENT, timeout=2.0))
    message = failed.args[0]
    assert "127.0.0.1:9" in message and "stays" in message
    assert bar.handle is before and bar.choice.currentData() == ""  # back on the bundled
    assert bar.choice.isEnabled() and bar.endpoint.isEnabled()
    bar.close_engine()
