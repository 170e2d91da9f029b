"""The local engine must not take references to None it never gave (a refcount error in
code called from C). On Python 3.11 None is an ordinary object: each lost reference lowers
its count, and at zero the interpreter aborts with "deallocating None"."""
import gc
import sys

import pytest

from honebench.core.engines.base import Request

pytestmark = pytest.mark.model

CALLS = 100
# Sound bound: a refcount error repeated on every call lowers None's count by at least
# CALLS (100). Everything else that moves the count is a fixed number of objects that hold
# None and are made or freed once (caches warmed by the first calls, this test's own
# locals), which does not grow with CALLS; 30 leaves room for that and is far below 100.
ALLOWED_DROP = 30


@pytest.mark.skipif(sys.version_info >= (3, 12), reason="None is immortal from Python 3.12")
def test_none_refcount_does_not_fall_over_many_model_calls(local_engine):
    msgs = ({"role": "system", "content": "Answer with one word."},)

    def requests(start, n, **kw):
        return [Request(key=str(i), messages=msgs + (
            {"role": "user", "content": f"Passenger {i}: my bag went missing on the ferry"},),
            **kw) for i in range(start, start + n)]

    # warm up once, so one-off caches are filled before counting
    list(local_engine.complete(requests(0, 2, max_tokens=2)))
    list(local_engine.score_labels(requests(0, 2, labels=("refund", "lost_property"))))
    gc.collect()
    before = sys.getrefcount(None)
    done = 0
    for start in range(0, CALLS // 2, 25):  # prompts evaluated, tokens generated
        done += len(list(local_engine.complete(requests(start, 25, max_tokens=3))))
    for start in range(0, CALLS // 2, 25):  # prompts and label paths scored
        done += len(list(local_engine.score_labels(
            requests(start, 25, labels=("refund", "lost_property", "timetable")))))
    for i in range(20):  # one-item calls: render, tokenise, decode, detokenise each time
        done += len(list(local_engine.complete(requests(1000 + i, 1, max_tokens=2))))
    gc.collect()
    after = sys.getrefcount(None)
    assert done == CALLS + 20
    assert before - after <= ALLOWED_DROP, (before, after)
