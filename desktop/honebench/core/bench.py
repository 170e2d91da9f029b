"""``honebench bench``: the grader's throughput against a hand-written loop, in one process.

(a) hand loop: one ``create_chat_completion`` per item on a freshly reset model with default
    threads, as a first script would do it;
(b) the grader: a cold grade run (no cache) with the same wording, items and settings;
(c) a cached re-grade of the same run.
Ratios, not absolute times, are the result: both sides run on the same machine in one run.
"""
from __future__ import annotations

import contextlib
import io
import tempfile
import time
from pathlib import Path

from .engines.base import Params
from .engines.model_files import bundled_model_path, check_model_file
from .recipes import sample_sets_dir

BENCH_MAX_TOKENS = 24


def _hand_loop(model: Path, prompts: list[tuple[dict, ...]], max_tokens: int) -> float:
    import llama_cpp

    with contextlib.redirect_stderr(io.StringIO()):
        llm = llama_cpp.Llama(model_path=str(model), n_ctx=2048, verbose=True)
    llm.verbose = False
    start = time.perf_counter()
    for messages in prompts:
        llm.reset()
        llm.create_chat_completion(messages=list(messages), max_tokens=max_tokens,
                                   temperature=0.0)
    seconds = time.perf_counter() - start
    del llm
    return seconds


def run_bench(set_path: str | None = None, items: int = 24, model: str | None = None,
              out=print) -> int:
    from .engines.local import LocalEngine
    from .grading import Grader
    from .project import Project
    from .wording import Wording, build_prompt

    model_path = check_model_file(model or bundled_model_path())
    source = Path(set_path) if set_path else sample_sets_dir() / "passenger_desk_routing.csv"
    params = Params(max_tokens=BENCH_MAX_TOKENS, temperature=0.0)
    with tempfile.TemporaryDirectory() as tmp:
        project = Project(Path(tmp) / "bench.hone")
        set_id = project.import_set(source)
        _, qset = project.current_set()
        chosen = qset.items[:items]
        wording = project.draft() if project.draft().text else Wording("Answer briefly.", "system")
        check = project.check()
        out(f"bench: {len(chosen)} items of {qset.name}, {model_path.name}, "
            f"max {BENCH_MAX_TOKENS} tokens, temperature 0")

        prompts = [build_prompt(wording, it.fields) for it in chosen]
        hand = _hand_loop(model_path, [p.messages + ((
            {"role": "assistant", "content": p.prefill},) if p.prefill else ()) for p in prompts],
            BENCH_MAX_TOKENS)
        engine = LocalEngine(model_path)
        try:
            grader = Grader(project.store, engine)
            t0 = time.perf_counter()
            grader.grade(set_id=set_id, qset=qset, wording=wording, check=check, params=params,
                         items=chosen)
            cold = time.perf_counter() - t0
            t0 = time.perf_counter()
            again = grader.grade(set_id=set_id, qset=qset, wording=wording, check=check,
                                 params=params, items=chosen)
            warm = time.perf_counter() - t0
        finally:
            engine.close()
            project.close()
    n = len(chosen)
    out(f"(a) hand loop      {n / hand:8.2f} items/s   ({hand:.2f} s)")
    out(f"(b) grader         {n / cold:8.2f} items/s   ({cold:.2f} s, {engine.n_threads} threads)")
    out(f"(c) cached regrade {n / warm:8.2f} items/s   ({warm:.3f} s, "
        f"{again.model_calls} model calls)")
    out(f"grader/hand-loop ratio: {hand / cold:.2f}")
    out(f"cached/hand-loop ratio: {hand / warm:.2f}")
    return 0
