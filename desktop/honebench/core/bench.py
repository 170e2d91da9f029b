"""``honebench bench``: the grader's throughput against a hand-written loop, in one process.

(a) hand loop: one ``create_chat_completion`` per item on a freshly reset model with default
    threads, as a first script would do it;
(b) the grader: a cold grade run (no cache) with the same wording, items and settings;
(c) a cached re-grade of the same run.
Ratios, not absolute times, are the result: both sides run on the same machine in one run,
interleaved (a, b, a, b, ...), and each side's best time counts, so a burst of other work on
the machine does not decide the ratio.
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


def _hand_loop(llm, prompts: list[tuple[dict, ...]], max_tokens: int) -> float:
    start = time.perf_counter()
    for messages in prompts:
        llm.reset()
        llm.create_chat_completion(messages=list(messages), max_tokens=max_tokens,
                                   temperature=0.0)
    return time.perf_counter() - start


def _plain_llama(model: Path):
    """A model loaded as a first script would: default threads and settings."""
    import llama_cpp

    with contextlib.redirect_stderr(io.StringIO()):
        llm = llama_cpp.Llama(model_path=str(model), n_ctx=2048, verbose=True)
    llm.verbose = False
    return llm


def run_bench(set_path: str | None = None, items: int = 24, model: str | None = None,
              repeats: int = 2, out=print) -> int:
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
            f"max {BENCH_MAX_TOKENS} tokens, temperature 0, wording placed "
            f"{wording.placement}; best of {repeats} interleaved rounds")

        prompts = [p.messages + (({"role": "assistant", "content": p.prefill},)
                                 if p.prefill else ())
                   for p in (build_prompt(wording, it.fields) for it in chosen)]
        engine = LocalEngine(model_path)
        plain = _plain_llama(model_path)
        hand, cold, warm = [], [], []
        try:
            for round_no in range(repeats):
                hand.append(_hand_loop(plain, prompts, BENCH_MAX_TOKENS))
                scratch = Project(Path(tmp) / f"round{round_no}.hone")  # empty cache
                set_id = scratch.add_set(qset)
                grader = Grader(scratch.store, engine)
                for times in (cold, warm):
                    t0 = time.perf_counter()
                    again = grader.grade(set_id=set_id, qset=qset, wording=wording,
                                         check=check, params=params, items=chosen)
                    times.append(time.perf_counter() - t0)
                scratch.close()
        finally:
            engine.close()
            project.close()
            del plain
        hand, cold, warm = min(hand), min(cold), min(warm)
    n = len(chosen)
    out(f"(a) hand loop      {n / hand:8.2f} items/s   ({hand:.2f} s)")
    out(f"(b) grader         {n / cold:8.2f} items/s   ({cold:.2f} s, {engine.n_threads} threads)")
    out(f"(c) cached regrade {n / warm:8.2f} items/s   ({warm:.3f} s, "
        f"{again.model_calls} model calls)")
    out(f"grader/hand-loop ratio: {hand / cold:.2f}")
    out(f"cached/hand-loop ratio: {hand / warm:.2f}")
    return 0
