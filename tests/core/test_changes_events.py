"""The shared vocabulary of operations: what changed, and progress in words."""
from honebench.core.changes import EVERYTHING, NOTHING, Changes, Done
from honebench.core.events import Progress, progress_text


def test_changes_union_and_truth():
    both = Changes(shelf=True) | Changes(runs=True)
    assert both.names() == ("shelf", "runs")
    assert both and not NOTHING
    assert (NOTHING | EVERYTHING) == EVERYTHING
    assert Done(3, both).value == 3 and Done(3).changes == NOTHING


def test_progress_text_says_count_passes_cache_and_time_left():
    assert progress_text(Progress(0, 10)) == "0/10 graded, timing the first answers"
    text = progress_text(Progress(4, 10, passed=3, cached=1, elapsed=2.0, eta=125.0))
    assert text == "4/10 graded, 3 passed so far, 1 from the cache, about 2 min left"
    assert progress_text(Progress(10, 10, passed=7)) == "10/10 graded, 7 passed so far"
