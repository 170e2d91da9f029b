"""An endpoint that accepts requests and never answers: each item gets an error mark once
--timeout passes, and the run goes on to the end. The server only listens on 127.0.0.1
and is shut down by the test."""
from __future__ import annotations

import json
import threading
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer

import pytest

from honebench.core.engines.base import Request
from honebench.core.engines.remote import DEFAULT_TIMEOUT, EndpointEngine
from tests.test_cli import honebench


@pytest.fixture
def silent_server():
    """Lists a model on GET /v1/models; holds every chat request without answering until
    the test ends."""
    release = threading.Event()
    held = []

    class Handler(BaseHTTPRequestHandler):
        def log_message(self, *args):
            pass

        def do_GET(self):
            raw = json.dumps({"object": "list", "data": [{"id": "desk", "object": "model"}]})
            self.send_response(200)
            self.send_header("Content-Type", "application/json")
            self.send_header("Content-Length", str(len(raw)))
            self.end_headers()
            self.wfile.write(raw.encode())

        def do_POST(self):
            self.rfile.read(int(self.headers["Content-Length"]))
            held.append(1)
            release.wait(120)  # never answers while the test runs

    server = ThreadingHTTPServer(("127.0.0.1", 0), Handler)
    server.daemon_threads = True
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    try:
        yield f"http://127.0.0.1:{server.server_address[1]}/v1", held
    finally:
        release.set()
        server.shutdown()
        server.server_close()
        thread.join()


def test_default_timeout_is_thirty_seconds():
    assert DEFAULT_TIMEOUT == 30.0  # the "sensible default" (common practice)
    assert EndpointEngine("http://127.0.0.1:9/v1").timeout == 30.0


def test_each_request_times_out_with_an_error_and_the_rest_still_run(silent_server):
    url, held = silent_server
    engine = EndpointEngine(url, timeout=0.5, concurrency=2)
    requests = [Request(key=str(i), messages=({"role": "user", "content": f"q{i}"},))
                for i in range(5)]
    results = list(engine.complete(requests))
    engine.close()
    assert sorted(r.key for r in results) == ["0", "1", "2", "3", "4"]
    for r in results:
        assert r.error == f"no answer from {url}/chat/completions within 0.5 s (timed out)"
    assert len(held) == 5  # every item was sent: one slow item does not stop the others


def test_cli_timeout_flag_gives_error_marks_and_finishes(tmp_path, sample_dir, silent_server):
    url, held = silent_server
    done = honebench("grade", sample_dir / "passenger_desk_routing.csv", "--wording",
                     "Which desk?", "--endpoint", url, "--timeout", "0.5", "--limit", "3",
                     "--json", home=tmp_path)
    data = json.loads(done.stdout)
    assert data["status"] == "finished" and data["total"] == 3 and data["errors"] == 3
    assert all("within 0.5 s (timed out)" in m["error"] for m in data["marks"])
    assert "Traceback" not in done.stderr
