"""The endpoint engine against a real tiny HTTP server on the loopback address.

The server imitates the response shape documented publicly in the OpenAI API reference as
"the chat completion object" (id, object, created, model, choices[].message.content,
choices[].finish_reason, usage.prompt_tokens / completion_tokens), and its error shape
{"error": {"message": ...}}. It only ever listens on 127.0.0.1 and refuses to answer more
than MAX_REQUESTS calls, so a runaway client cannot loop forever.
"""
import json
import math
import socket
import threading
import time
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from honebench.core.engines.base import EngineError, Request, Result
from honebench.core.engines.remote import (
    DEFAULT_RETRY_DELAY, MAX_RETRY_DELAY, EndpointEngine, read_reply, retry_delay,
    server_message,
)

MAX_REQUESTS = 200
SECRET = "sk-test-ferry-desk-0123456789"
MODEL_ID = "ferry-desk-mini"


class FakeServer:
    """State shared by the handler threads: what arrived, and how to behave."""

    def __init__(self):
        self.lock = threading.Lock()
        self.bodies: list[dict] = []
        self.headers: list[dict] = []
        self.in_flight = 0
        self.max_in_flight = 0
        self.delay = 0.0
        self.seen: dict[str, int] = {}  # user text -> times asked
        self.models_reply = "json"  # or "html", "401"

    @property
    def count(self) -> int:
        with self.lock:
            return len(self.bodies)


def make_handler(state: FakeServer):
    class Handler(BaseHTTPRequestHandler):
        def log_message(self, *args):  # keep test output quiet
            pass

        def _send(self, status, payload, headers=()):
            raw = payload if isinstance(payload, bytes) else json.dumps(payload).encode()
            self.send_response(status)
            self.send_header("Content-Type", "application/json")
            self.send_header("Content-Length", str(len(raw)))
            for name, value in headers:
                self.send_header(name, value)
            self.end_headers()
            self.wfile.write(raw)

        def do_GET(self):
            if self.path != "/v1/models":
                return self._send(404, {"error": {"message": f"no route {self.path}"}})
            if state.models_reply == "html":
                return self._send(200, b"<html><body>router login</body></html>")
            if state.models_reply == "401":
                auth = self.headers.get("Authorization", "")
                return self._send(401, {"error": {"message": f"key not accepted: {auth}"}})
            self._send(200, {"object": "list", "data": [{"id": MODEL_ID, "object": "model"}]})

        def do_POST(self):
            body = json.loads(self.rfile.read(int(self.headers["Content-Length"])))
            with state.lock:
                if len(state.bodies) >= MAX_REQUESTS:
                    refuse = True
                else:
                    refuse = False
                    state.bodies.append(body)
                    state.headers.append(dict(self.headers))
                    state.in_flight += 1
                    state.max_in_flight = max(state.max_in_flight, state.in_flight)
                    user = [m["content"] for m in body["messages"] if m["role"] == "user"][-1]
                    state.seen[user] = state.seen.get(user, 0) + 1
                    times = state.seen[user]
            if refuse:
                return self._send(500, {"error": {"message": "test server request limit"}})
            wrong_path = self.path != "/v1/chat/completions"
            if not wrong_path:
                time.sleep(2.0 if user == "slow" else state.delay)
            # leave the in-flight count before answering: once the answer is out, the
            # client may send its next request before this thread runs again
            with state.lock:
                state.in_flight -= 1
            if wrong_path:
                return self._send(404, {"error": {"message": "no such route"}})
            self._reply(user, times)

        def _reply(self, user, times):
            auth = self.headers.get("Authorization", "")
            if user == "fail":
                return self._send(500, {"error": {"message": "model crashed", "type": "server"}})
            if user == "busy-once" and times == 1:
                return self._send(429, {"error": {"message": "slow down"}},
                                  [("Retry-After", "0")])
            if user == "always-busy":
                return self._send(503, {"error": {"message": "loading model"}},
                                  [("Retry-After", "0")])
            if user == "busy-long":
                return self._send(429, {"error": {"message": "slow down"}},
                                  [("Retry-After", "5")])
            if user == "echo-key":
                return self._send(401, {"error": {"message": f"bad credentials {auth}"}})
            if user == "not-json":
                return self._send(200, b"<html>proxy error</html>")
            if user == "no-choices":
                return self._send(200, {"object": "chat.completion", "choices": []})
            if user == "with-logprobs":  # the documented choices[].logprobs.content shape
                top = [{"token": "Time", "logprob": -0.5}, {"token": " ref", "logprob": -1.2},
                       {"token": "Hello", "logprob": -2.0}]
                return self._send(200, {
                    "object": "chat.completion", "choices": [{
                        "index": 0, "finish_reason": "length",
                        "message": {"role": "assistant", "content": "Timetable"},
                        "logprobs": {"content": [{"token": "Time", "logprob": -0.5,
                                                  "top_logprobs": top}]}}],
                    "usage": {"prompt_tokens": 11, "completion_tokens": 1}})
            self._send(200, {
                "id": "chatcmpl-1", "object": "chat.completion", "created": 0,
                "model": MODEL_ID,
                "choices": [{"index": 0, "finish_reason": "stop",
                             "message": {"role": "assistant", "content": f"answer to {user}"}}],
                "usage": {"prompt_tokens": 11, "completion_tokens": 3, "total_tokens": 14},
            })

    return Handler


@pytest.fixture
def server(request):
    state = FakeServer()
    httpd = ThreadingHTTPServer(("127.0.0.1", 0), make_handler(state))
    thread = threading.Thread(target=httpd.serve_forever, args=(0.05,), daemon=True)
    thread.start()

    def stop():
        httpd.shutdown()
        httpd.server_close()
        thread.join(timeout=5)

    request.addfinalizer(stop)
    state.base_url = f"http://127.0.0.1:{httpd.server_address[1]}/v1"
    return state


@pytest.fixture
def make_engine(request):
    engines = []

    def make(*args, **kwargs):
        engine = EndpointEngine(*args, **kwargs)
        engines.append(engine)
        return engine

    request.addfinalizer(lambda: [e.close() for e in engines])
    return make


def ask(key, text, **kwargs):
    return Request(key=key, messages=({"role": "system", "content": "You answer the desk."},
                                      {"role": "user", "content": text}), **kwargs)


def refused_port():
    """A loopback port with nothing listening (bound, then closed)."""
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


# --- complete() -----------------------------------------------------------------------------
def test_every_request_gets_its_own_result(server, make_engine):
    engine = make_engine(server.base_url, MODEL_ID)
    requests = [ask(f"q{i}", f"item-{i}") for i in range(6)]
    results = {r.key: r for r in engine.complete(requests)}
    assert set(results) == {f"q{i}" for i in range(6)}
    for i in range(6):
        r = results[f"q{i}"]
        assert (r.text, r.error, r.finish_reason) == (f"answer to item-{i}", None, "stop")
        assert (r.prompt_tokens, r.completion_tokens) == (11, 3)
        assert r.seconds > 0
    assert server.count == 6


def test_request_body_fields(server, make_engine):
    engine = make_engine(server.base_url, MODEL_ID)
    list(engine.complete([ask("a", "plain", max_tokens=7, temperature=0.5, seed=42),
                          ask("b", "stops", stop=("\n", "###"))]))
    bodies = {b["messages"][-1]["content"]: b for b in server.bodies}
    plain = bodies["plain"]
    assert (plain["model"], plain["max_tokens"], plain["temperature"], plain["seed"]) == (
        MODEL_ID, 7, 0.5, 42)
    assert "stop" not in plain
    assert bodies["stops"]["stop"] == ["\n", "###"]
    assert [m["role"] for m in plain["messages"]] == ["system", "user"]


def test_model_field_left_out_when_not_given(server, make_engine):
    list(make_engine(server.base_url).complete([ask("a", "x")]))
    assert "model" not in server.bodies[0]


def test_prefill_goes_as_trailing_assistant_message(server, make_engine):
    list(make_engine(server.base_url).complete([ask("a", "item", prefill="Answer:")]))
    assert server.bodies[0]["messages"][-1] == {"role": "assistant", "content": "Answer:"}


def test_requests_really_overlap_but_stay_within_concurrency(server, make_engine):
    server.delay = 0.2
    engine = make_engine(server.base_url, concurrency=3)
    results = list(engine.complete([ask(f"q{i}", f"item-{i}") for i in range(6)]))
    assert len(results) == 6
    assert 2 <= server.max_in_flight <= 3


def test_concurrency_one_sends_one_at_a_time(server, make_engine):
    server.delay = 0.1
    results = list(make_engine(server.base_url, concurrency=1).complete(
        [ask(f"q{i}", f"item-{i}") for i in range(3)]))
    assert len(results) == 3
    assert server.max_in_flight == 1


def test_server_error_spoils_only_its_item(server, make_engine):
    results = {r.key: r for r in make_engine(server.base_url).complete(
        [ask("ok1", "item-1"), ask("bad", "fail"), ask("ok2", "item-2")])}
    assert "500" in results["bad"].error and "model crashed" in results["bad"].error
    assert "\n" not in results["bad"].error
    assert results["ok1"].error is None and results["ok2"].text == "answer to item-2"
    assert server.seen["fail"] == 1  # a 500 is not retried


def test_429_then_success_is_retried(server, make_engine):
    [result] = make_engine(server.base_url).complete([ask("a", "busy-once")])
    assert (result.error, result.text) == (None, "answer to busy-once")
    assert server.seen["busy-once"] == 2


def test_retried_only_once(server, make_engine):
    [result] = make_engine(server.base_url).complete([ask("a", "always-busy")])
    assert "503" in result.error and "loading model" in result.error
    assert server.seen["always-busy"] == 2


@pytest.mark.parametrize("text, needle", [("not-json", "not JSON"),
                                          ("no-choices", "choices[0].message.content")])
def test_malformed_answers_become_item_errors(server, make_engine, text, needle):
    results = {r.key: r for r in make_engine(server.base_url).complete(
        [ask("bad", text), ask("good", "item")])}
    assert needle in results["bad"].error
    assert results["good"].error is None


def test_timeout_is_an_item_error(server, make_engine):
    results = {r.key: r for r in make_engine(server.base_url, timeout=0.3).complete(
        [ask("slow", "slow"), ask("fast", "item")])}
    assert "timed out" in results["slow"].error and "0.3" in results["slow"].error
    assert results["fast"].error is None


def test_refused_connection_is_an_item_error_not_an_exception(make_engine):
    url = f"http://127.0.0.1:{refused_port()}/v1"
    results = list(make_engine(url).complete([ask("a", "x"), ask("b", "y")]))
    assert {r.key for r in results} == {"a", "b"}
    assert all("could not reach" in r.error and url in r.error for r in results)


def test_cancel_stops_sending(server, make_engine):
    server.delay = 0.2
    engine = make_engine(server.base_url, concurrency=2)
    results = []
    for result in engine.complete([ask(f"q{i}", f"item-{i}") for i in range(20)]):
        results.append(result)
        engine.cancel()
    sent_at_end = server.count
    time.sleep(0.6)  # long enough for two more rounds, had any been sent
    assert server.count == sent_at_end <= 4
    assert len(results) <= 2


def test_cancel_during_retry_wait_sends_no_retry(server, make_engine):
    engine = make_engine(server.base_url)
    timer = threading.Timer(0.3, engine.cancel)  # the server asks for a 5 s wait
    timer.start()
    try:
        assert list(engine.complete([ask("a", "busy-long")])) == []
    finally:
        timer.cancel()
    assert server.seen["busy-long"] == 1


def test_abandoned_run_stops_sending(server, make_engine):
    server.delay = 0.2
    gen = make_engine(server.base_url, concurrency=2).complete(
        [ask(f"q{i}", f"item-{i}") for i in range(20)])
    next(gen)
    gen.close()
    time.sleep(0.6)
    assert server.count <= 4


def test_engine_runs_again_after_cancel(server, make_engine):
    engine = make_engine(server.base_url)
    engine.cancel()
    assert len(list(engine.complete([ask("a", "x"), ask("b", "y")]))) == 2


# --- api key ----------------------------------------------------------------------------------
def test_api_key_sent_as_bearer_and_never_shown(server, make_engine):
    engine = make_engine(server.base_url, MODEL_ID, SECRET)
    results = {r.key: r for r in engine.complete([ask("ok", "item"), ask("leak", "echo-key")])}
    assert all(h["Authorization"] == f"Bearer {SECRET}" for h in server.headers)
    assert "401" in results["leak"].error and "bad credentials" in results["leak"].error
    server.models_reply = "401"
    with pytest.raises(EngineError) as caught:
        engine.check()
    assert "API key" in str(caught.value)
    shown = [results["leak"].error, str(caught.value), repr(engine), engine.describe(),
             engine.fingerprint(), repr(results["leak"])]
    assert not any(SECRET in text for text in shown)


def test_no_api_key_no_authorization_header(server, make_engine):
    list(make_engine(server.base_url).complete([ask("a", "x")]))
    assert "Authorization" not in server.headers[0]


# --- check() -------------------------------------------------------------------------------
def test_check_lists_the_models(server, make_engine):
    assert make_engine(server.base_url).check() == [MODEL_ID]
    assert make_engine(server.base_url + "/").check() == [MODEL_ID]


def test_check_refused_connection_names_the_url(make_engine):
    url = f"http://127.0.0.1:{refused_port()}/v1"
    with pytest.raises(EngineError) as caught:
        make_engine(url).check()
    message = str(caught.value)
    assert f"{url}/models" in message and "running" in message and "/v1" in message


@pytest.mark.parametrize("url", ["not a url", "127.0.0.1:8080/v1", "ftp://127.0.0.1/v1"])
def test_check_bad_url(make_engine, url):
    with pytest.raises(EngineError) as caught:
        make_engine(url).check()
    assert url in str(caught.value) and "http://" in str(caught.value)


def test_check_wrong_path(server, make_engine):
    url = server.base_url.removesuffix("/v1") + "/wrong"
    with pytest.raises(EngineError) as caught:
        make_engine(url).check()
    message = str(caught.value)
    assert f"{url}/models" in message and "404" in message and "/v1" in message


def test_check_not_json(server, make_engine):
    server.models_reply = "html"
    with pytest.raises(EngineError) as caught:
        make_engine(server.base_url).check()
    assert server.base_url in str(caught.value) and "JSON" in str(caught.value)


# --- the rest of the protocol ------------------------------------------------------------------
def test_render_is_the_plain_conversation():
    engine = EndpointEngine("http://127.0.0.1:9/v1")
    text = engine.render([{"role": "system", "content": "Be brief."},
                          {"role": "user", "content": "When is the last ferry?"}], "Answer:")
    assert text == ("[system]\nBe brief.\n\n[user]\nWhen is the last ferry?\n\n"
                    "[assistant]\nAnswer:")


def test_count_tokens_estimate():
    engine = EndpointEngine("http://127.0.0.1:9/v1")
    assert [engine.count_tokens(t) for t in ("", "a", "abcd", "abcde")] == [0, 1, 1, 2]


def test_fingerprint_describe_and_kind():
    engine = EndpointEngine("http://127.0.0.1:8080/v1/", "m1", concurrency=2)
    assert engine.fingerprint() == "endpoint:http://127.0.0.1:8080/v1|model=m1"
    assert engine.kind == "endpoint"
    assert "\n" not in engine.describe() and "m1" in engine.describe()


def test_score_choices_needs_local_engine():
    with pytest.raises(EngineError, match="label scoring needs the local engine"):
        EndpointEngine("http://127.0.0.1:9/v1").score_choices([], ["yes", "no"])


@pytest.mark.parametrize("kwargs", [{"concurrency": 0}, {"timeout": 0}])
def test_bad_settings_are_refused(kwargs):
    with pytest.raises(EngineError):
        EndpointEngine("http://127.0.0.1:9/v1", **kwargs)


@settings(max_examples=60)
@given(st.lists(st.tuples(st.sampled_from(["system", "user", "assistant"]), st.text())),
       st.text())
def test_render_and_count_never_raise(pairs, prefill):
    engine = EndpointEngine("http://127.0.0.1:9/v1")
    text = engine.render([{"role": r, "content": c} for r, c in pairs], prefill)
    assert text.endswith(f"[assistant]\n{prefill}")
    assert all(c in text for _, c in pairs)
    assert engine.count_tokens(text) == math.ceil(len(text) / 4)


# --- pure helpers ------------------------------------------------------------------------------
def test_retry_delay():
    # RFC 9110 section 10.2.3: Retry-After is delay-seconds or an HTTP-date.
    assert retry_delay("0") == 0
    assert retry_delay("2") == 2
    assert retry_delay("3600") == MAX_RETRY_DELAY
    assert retry_delay(None) == DEFAULT_RETRY_DELAY
    assert retry_delay("Fri, 31 Dec 1999 23:59:59 GMT") == DEFAULT_RETRY_DELAY
    assert retry_delay("-5") == DEFAULT_RETRY_DELAY
    assert retry_delay("nan") == DEFAULT_RETRY_DELAY


def test_server_message_shapes():
    assert server_message(b'{"error": {"message": "model crashed"}}') == "model crashed"
    assert server_message(b'{"error": "no slot free"}') == "no slot free"
    assert server_message(b'{"detail": "Not Found"}') == "Not Found"
    assert server_message(b"upstream\n  timed out") == "upstream timed out"
    assert server_message(b"") == ""


def test_read_reply_shape():
    # The OpenAI API reference, "the chat completion object".
    body = json.dumps({"choices": [{"message": {"role": "assistant", "content": "Pier 4"},
                                    "finish_reason": "length"}],
                       "usage": {"prompt_tokens": 9, "completion_tokens": 2}}).encode()
    assert read_reply("k", body, 0.5) == Result(key="k", text="Pier 4", prompt_tokens=9,
                                                completion_tokens=2, seconds=0.5,
                                                finish_reason="length")
    no_usage = read_reply("k", b'{"choices": [{"message": {"content": "x"}}]}')
    assert (no_usage.text, no_usage.prompt_tokens, no_usage.finish_reason) == ("x", 0, "")
    assert "no text in" in read_reply("k", b'{"choices": [{"message": {"content": null}}]}').error
    assert "overloaded" in read_reply("k", b'{"error": {"message": "overloaded"}}').error


json_values = st.recursive(
    st.none() | st.booleans() | st.integers() | st.floats(allow_nan=False) | st.text(),
    lambda inner: st.lists(inner, max_size=3) | st.dictionaries(
        st.sampled_from(["choices", "message", "content", "usage", "error", "finish_reason",
                         "prompt_tokens", "detail", "x"]), inner, max_size=4),
    max_leaves=12)


@settings(max_examples=200)
@given(st.one_of(st.binary(), json_values.map(lambda v: json.dumps(v).encode())))
def test_malformed_bodies_never_raise(body):
    result = read_reply("k", body)
    try:
        data = json.loads(body.decode("utf-8", "replace"))
        usable = isinstance(data["choices"][0]["message"]["content"], str)
    except Exception:
        usable = False
    assert result.key == "k" and (result.error is None) == usable
    if result.error:
        assert "\n" not in result.error and result.text == ""
    message = server_message(body)
    assert "\n" not in message and len(message) <= 200


def test_deeply_nested_body_is_an_error():
    assert "not JSON" in read_reply("k", b"[" * 100_000).error


# --- label scoring through logprobs ---------------------------------------------------------
def test_label_scores_come_from_the_first_token_logprobs(server, make_engine):
    engine = make_engine(server.base_url, MODEL_ID)
    labels = ("refund", "timetable", "lost_property")
    result = next(iter(engine.score_labels([ask("a", "with-logprobs", labels=labels)])))
    assert server.bodies[-1]["logprobs"] is True and server.bodies[-1]["top_logprobs"] == 20
    assert result.text == "timetable" and not result.note
    # worked by hand: refund -1.2 (" ref"), timetable -0.5 ("Time"), lost_property is not
    # listed, so it gets the smallest listed value minus log 2
    assert result.label_logprobs == pytest.approx((-1.2, -0.5, -2.0 - math.log(2)))
    assert sum(result.label_shares) == pytest.approx(1.0)
    assert result.label_shares[1] == pytest.approx(
        math.exp(-0.5) / (math.exp(-0.5) + math.exp(-1.2) + math.exp(-2.0) / 2))


def test_a_server_without_logprobs_falls_back_to_the_generated_answer(server, make_engine):
    engine = make_engine(server.base_url, MODEL_ID)
    result = next(iter(engine.score_labels([ask("a", "plain", labels=("refund", "timetable"))])))
    assert result.text == "answer to plain" and result.label_shares == ()
    assert "no logprobs" in result.note and "generated" in result.note
