"""The endpoint engine against a real OpenAI-protocol server: llama-cpp-python's own
(``python -m llama_cpp.server``) serving the bundled model on 127.0.0.1.

The reference for what the server should answer is llama-cpp-python's own API
(``Llama.create_chat_completion``) on the same model file, asked the same messages in the
same order with the same settings. Every server a test starts listens on the loopback
address only and is stopped by the test.
"""
from __future__ import annotations

import json
import socket
import subprocess
import sys
import threading
import time
import urllib.request

import pytest

from honebench.core.checks import CheckSpec
from honebench.core.engines.base import Params
from honebench.core.engines.model_files import bundled_model_path
from honebench.core.engines.remote import EndpointEngine
from honebench.core.grading import Grader
from honebench.core.project import Project
from honebench.core.wording import Wording, build_prompt

pytestmark = pytest.mark.model

WORDING = Wording("Which department should handle this message? Reply with one of: refund, "
                  "booking_change, lost_property, accessibility, timetable.", "before")
# written answers: these tests compare the server's generation with llama-cpp-python's own
PARAMS = Params(max_tokens=8, temperature=0.0, seed=0, answer_mode="generate")
N_CTX = 2048


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class Server:
    """``python -m llama_cpp.server`` with the bundled model, on a free loopback port."""

    def __init__(self, log_path):
        self.port = _free_port()
        self.url = f"http://127.0.0.1:{self.port}/v1"
        self.log = open(log_path, "wb")
        self.proc = subprocess.Popen(
            [sys.executable, "-m", "llama_cpp.server", "--model", str(bundled_model_path()),
             "--host", "127.0.0.1", "--port", str(self.port), "--n_ctx", str(N_CTX),
             "--verbose", "False"], stdout=self.log, stderr=subprocess.STDOUT)
        deadline = time.monotonic() + 300  # a guard against a server that never starts
        while True:
            if self.proc.poll() is not None:
                self.stop()
                pytest.fail(f"llama_cpp.server exited early; see {log_path}")
            try:
                with urllib.request.urlopen(self.url + "/models", timeout=5) as resp:
                    json.load(resp)
                return
            except OSError:
                if time.monotonic() > deadline:
                    self.stop()
                    pytest.fail(f"llama_cpp.server did not answer; see {log_path}")
                time.sleep(0.5)

    def kill(self) -> None:
        self.proc.kill()
        self.proc.wait()

    def stop(self) -> None:
        if self.proc.poll() is None:
            self.proc.terminate()
            try:
                self.proc.wait(timeout=30)
            except subprocess.TimeoutExpired:
                self.kill()
        self.log.close()


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    srv = Server(tmp_path_factory.mktemp("server") / "server.log")
    yield srv
    srv.stop()


@pytest.fixture
def project(tmp_path, sample_dir):
    proj = Project(tmp_path / "desk.hone")
    proj.import_set(sample_dir / "passenger_desk_routing.csv")
    yield proj
    proj.close()


def _grade(project, engine, items, on_mark=None):
    set_id, qset = project.current_set()
    return Grader(project.store, engine).grade(
        set_id=set_id, qset=qset, wording=WORDING, check=project.check(), params=PARAMS,
        items=items, on_mark=on_mark)


def test_grading_through_the_server_matches_llama_cpp_python(server, project):
    items = project.current_set()[1].tuning()[:6]
    engine = EndpointEngine(server.url, concurrency=1)
    assert engine.check() == [str(bundled_model_path())]  # the server lists its model file
    outcome = _grade(project, engine, items)
    engine.close()
    assert outcome.status == "finished" and len(outcome.marks) == 6
    assert all(m.error is None for m in outcome.marks)
    # reference: llama-cpp-python's own chat completion on the same file, same order, with
    # the server's default repeat penalty of 1.1 (llama_cpp/server/types.py,
    # repeat_penalty_field), which the OpenAI protocol has no field to change
    from llama_cpp import Llama

    llm = Llama(model_path=str(bundled_model_path()), n_ctx=N_CTX, verbose=False)
    by_id = {m.item_id: m for m in outcome.marks}
    for item in items:
        built = build_prompt(WORDING, item.fields)
        reply = llm.create_chat_completion(
            messages=list(built.messages), max_tokens=PARAMS.max_tokens,
            temperature=PARAMS.temperature, seed=PARAMS.seed, repeat_penalty=1.1)
        assert by_id[item.id].output == reply["choices"][0]["message"]["content"], item.id
        assert by_id[item.id].prompt_tokens == reply["usage"]["prompt_tokens"]
    llm.close()
    # graded again: every answer from the project's cache, no request to the server
    again = _grade(project, EndpointEngine(server.url), items)
    assert again.model_calls == 0 and all(m.cached for m in again.marks)


def test_label_scoring_through_the_server(server, project):
    """Score mode over the protocol: each mark names one of the labels, with a share from
    the server's first-token log-probabilities, or, when the server gives none, the written
    answer with a note saying so."""
    items = project.current_set()[1].tuning()[:6]
    labels = project.check().labels or project.current_set()[1].labels()
    engine = EndpointEngine(server.url, concurrency=2)
    set_id, qset = project.current_set()
    outcome = Grader(project.store, engine).grade(
        set_id=set_id, qset=qset, wording=WORDING, check=project.check(),
        params=Params(max_tokens=8, answer_mode="score"), items=items)
    engine.close()
    assert outcome.status == "finished" and all(m.error is None for m in outcome.marks)
    scored = [m for m in outcome.marks if m.confidence is not None]
    for m in scored:
        assert m.extracted in labels and 0 < m.confidence <= 1 and m.runner_up in labels
    for m in outcome.marks:
        if m.confidence is None:
            assert "gave no logprobs" in m.why, m.why


def test_transfer_check_on_the_bundled_model_through_the_server(server, project,
                                                              local_engine, capsys):
    """The transfer check: the same wording graded by the bundled model here and through
    the server there, on the same items; the flags come from the two engines' counts."""
    from honebench.core.settings import ProjectSettings
    from honebench.core.transfer import ranks

    entries = [project.keep(w).value for w in (WORDING, Wording(
        "Route the passenger's message to one department.", "system"))]
    engine = EndpointEngine(server.url, concurrency=2, timeout=120)
    try:
        result = project.transfer(
            local_engine, engine, [e.id for e in entries], other_label="bundled via server",
            limit=6, settings=ProjectSettings(answer_mode="generate", max_tokens=8)).value
    finally:
        engine.close()
    assert result.there_fingerprint.startswith("endpoint:") and result.n == 6
    for v in result.versions:
        there = project.store.marks(v.there_run)
        assert len(there) == 6 and all(m.error is None and not m.cached for m in there)
        assert v.there.passed == sum(m.passed for m in there)
    passes = [[v.here.passed for v in result.versions], [v.there.passed for v in result.versions]]
    assert [v.rank_here for v in result.versions] == ranks(passes[0])
    assert [v.rank_there for v in result.versions] == ranks(passes[1])
    assert project.latest_transfer() == result
    # the same check from the command line: the graded runs and the server's answers are
    # reused (same engines, same settings), so it reports the same numbers
    from honebench import cli

    assert cli.main(["transfer", str(project.path), "v1", "v2", "--endpoint", server.url,
                     "--limit", "6", "--answer-mode", "generate", "--max-tokens", "8",
                     "--json"]) == 0
    printed = json.loads(capsys.readouterr().out)
    assert [(v["here"]["passed"], v["there"]["passed"], v["p_value"], v["flags"])
            for v in printed] == [(v.here.passed, v.there.passed, v.paired.p_value,
                                   list(v.flags)) for v in result.versions]
    assert printed[0]["there"]["engine"] == f"endpoint at {server.url}"


def test_concurrent_requests_all_get_their_own_answer(server, tmp_path, sample_dir):
    items = None
    outputs = []
    for n, concurrency in enumerate((1, 4)):
        proj = Project(tmp_path / f"c{n}.hone")  # a fresh cache each time
        proj.import_set(sample_dir / "passenger_desk_routing.csv")
        items = proj.current_set()[1].tuning()[:8]
        engine = EndpointEngine(server.url, concurrency=concurrency)
        outcome = _grade(proj, engine, items)
        engine.close()
        assert len(outcome.marks) == 8 and all(m.error is None for m in outcome.marks)
        assert all(m.output and m.completion_tokens > 0 for m in outcome.marks)
        outputs.append({m.item_id: m.output for m in outcome.marks})
        proj.close()
    assert set(outputs[1]) == {it.id for it in items}
    # with four at once the server still answers each item from its own prompt: the
    # answers agree with the one-at-a-time run (greedy decoding)
    assert outputs[1] == outputs[0]


def test_server_killed_mid_run_gives_error_marks_and_the_run_ends(tmp_path, project):
    srv = Server(tmp_path / "killed.log")
    items = project.current_set()[1].tuning()[:8]
    engine = EndpointEngine(srv.url, concurrency=2, timeout=120)  # room for a busy machine
    seen = []

    def kill_after_first(mark, progress):
        seen.append(mark)
        if mark.error is None and srv.proc.poll() is None:
            srv.kill()  # right after the first answer

    done: dict = {}
    worker = threading.Thread(target=lambda: done.update(
        outcome=_grade(project, engine, items, on_mark=kill_after_first)))
    try:
        worker.start()
        worker.join(timeout=300)  # a hang guard, not a speed check: the run must end
        assert not worker.is_alive(), "grading hung after the server died"
    finally:
        srv.stop()
        engine.close()
    outcome = done["outcome"]
    assert outcome.status == "finished" and len(outcome.marks) == 8
    answered = [m for m in outcome.marks if m.error is None]
    errors = [m for m in outcome.marks if m.error]
    # one answer before the kill; at most the one other request then in flight may have
    # been answered before the process died; everything after got an error mark
    assert 1 <= len(answered) <= 2 and len(errors) == 8 - len(answered)
    for mark in errors:  # the message names the server and what went wrong
        assert srv.url in mark.error and ("could not reach" in mark.error
                                          or "connection" in mark.error), mark.error
    text = "\n".join(project.summary(outcome.run_id).lines())
    assert f"{len(errors)} items got no answer" in text
    # the answers received before the server died are kept, and cached for a re-grade
    assert project.store.run_counts(outcome.run_id) == (sum(m.passed for m in answered), 8)
    again = _grade(project, engine, [it for it in items if it.id in
                                     {m.item_id for m in answered}])
    assert again.model_calls == 0 and all(m.cached for m in again.marks)
