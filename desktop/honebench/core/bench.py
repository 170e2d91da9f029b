"""``honebench bench``: the grader against a strict hand-written loop, in one process.

(a) hand loop: one ``Llama`` with the grader's n_threads and n_threads_batch, the wording
    in the system message, one ``create_chat_completion`` per item, greedy, the same
    max_tokens, no reset between items (so llama.cpp reuses the common prompt prefix);
(b) the grader generating answers (answer mode "generate"), cold cache;
(c) the grader scoring labels (answer mode "score"; label checks only), cold cache;
(d) a re-grade of every item of the set with every answer in the completion cache (filled
    by one cold grade first), in the mode of (c), else (b); the engine is already loaded.
Model loading is counted on every side of (a)-(c). Ratios, not absolute times, are the result: the
sides run interleaved in one process (a, b, c, a, b, c, ...) and each side's best round
counts, so a burst of other work on the machine does not decide a ratio. The physical
limit is measured in the same run: prompt evaluation and batched decoding in tokens/s, and
the seconds per item they imply for the tokens each mode must evaluate.
"""
from __future__ import annotations

import contextlib
import io
import tempfile
import time
from pathlib import Path

from .checks import judge
from .engines.base import Params
from .engines.model_files import bundled_model_path, check_model_file
from .recipes import sample_sets_dir

BENCH_MAX_TOKENS = 24


def _hand_loop(model: Path, threads: int, prompts: list[list[dict]], max_tokens: int):
    """(seconds including the model load, the answers)."""
    import llama_cpp

    start = time.perf_counter()
    with contextlib.redirect_stderr(io.StringIO()):
        llm = llama_cpp.Llama(model_path=str(model), n_ctx=2048, n_batch=512, verbose=True,
                              n_threads=threads, n_threads_batch=threads)
    llm.verbose = False
    answers = []
    for messages in prompts:
        out = llm.create_chat_completion(messages=messages, max_tokens=max_tokens,
                                         temperature=0.0)
        answers.append(out["choices"][0]["message"]["content"] or "")
    seconds = time.perf_counter() - start
    del llm
    return seconds, answers


def _grader_side(model: Path, tmp: Path, name: str, qset, items, wording, check, params):
    """(seconds including the engine load, the outcome, the engine's thread count, the
    cached re-grade's seconds, per-item own tokens)."""
    from .engines.local import LocalEngine
    from .grading import Grader, shared_prefix_chars
    from .project import Project
    from .wording import build_prompt

    start = time.perf_counter()
    engine = LocalEngine(model)
    scratch = Project(tmp / f"{name}.hone")  # a new file: an empty cache
    try:
        set_id = scratch.add_set(qset)
        grader = Grader(scratch.store, engine)
        outcome = grader.grade(set_id=set_id, qset=qset, wording=wording, check=check,
                               params=params, items=items)
        seconds = time.perf_counter() - start
        warm = 0.0  # measured on the whole set by _cached_regrade
        head = shared_prefix_chars(engine, wording, list(items[0].fields))
        own = []
        for it in items:
            built = build_prompt(wording, it.fields)
            text = engine.render(built.messages, built.prefill)
            own.append(engine.count_tokens(text) - engine.count_tokens(text[:head]))
        limit = _physical_limit(engine)
        return seconds, outcome, engine.n_threads, warm, own, limit
    finally:
        scratch.close()
        engine.close()


def _cached_regrade(model: Path, tmp: Path, qset, wording, check, params,
                    repeats: int = 3) -> tuple[int, float]:
    """(items, best seconds) of a re-grade of every item of the set whose answers are all
    in the completion cache: one cold grade fills it, then the same grade again."""
    from .engines.local import LocalEngine
    from .grading import Grader
    from .project import Project

    engine = LocalEngine(model)
    scratch = Project(tmp / "cached.hone")
    try:
        set_id = scratch.add_set(qset)
        grader = Grader(scratch.store, engine)
        kw = dict(set_id=set_id, qset=qset, wording=wording, check=check, params=params,
                  items=qset.items)
        grader.grade(**kw)
        best = float("inf")
        for _ in range(repeats):
            t0 = time.perf_counter()
            outcome = grader.grade(**kw)
            best = min(best, time.perf_counter() - t0)
            if outcome.model_calls or not all(m.cached for m in outcome.marks):
                raise RuntimeError("bench: the re-grade was not all from the cache")
        return len(qset.items), best
    finally:
        scratch.close()
        engine.close()


def _physical_limit(engine) -> tuple[float, float]:
    """(prompt-evaluation tokens/s, batched-decode tokens/s with the engine's
    items-at-a-time), measured on the engine's own decoder. Prompt evaluation is the faster
    of 512 tokens of one sequence and 16 sequences of 32 tokens, each in one call."""
    def measure():
        dec = engine._decoder()
        lib = dec.lib
        tokens = engine._tokens("The ferry to the islands leaves from the north pier. " * 60)[:512]
        lib.llama_memory_clear(dec.mem, True)
        dec.cached_prefix = []
        prompt_rate = 0.0
        for rows in ([(t, i, 1, i == len(tokens) - 1) for i, t in enumerate(tokens)],
                     [(t, i, s, i == 31) for s in range(1, 17) for i, t in
                      enumerate(tokens[32 * (s - 1):32 * s])]):
            t0 = time.perf_counter()
            dec.decode_rows(rows, abortable=False)
            prompt_rate = max(prompt_rate, len(rows) / (time.perf_counter() - t0))
            lib.llama_memory_clear(dec.mem, True)
        n, steps, start = engine.n_seq, 24, 32
        dec.decode_rows([(t, i, s, False) for s in range(1, n + 1)
                         for i, t in enumerate(tokens[:start])])
        t0 = time.perf_counter()
        for k in range(steps):
            dec.decode_rows([(tokens[k], start + k, s, True) for s in range(1, n + 1)],
                            abortable=False)
        decode_rate = n * steps / (time.perf_counter() - t0)
        lib.llama_memory_clear(dec.mem, True)
        return prompt_rate, decode_rate

    return engine._owner.call(measure)


def run_bench(set_path: str | None = None, items: int | None = None, model: str | None = None,
              repeats: int = 2, out=print) -> int:
    from .grading import select_items
    from .project import Project
    from .wording import Wording, build_prompt

    model_path = check_model_file(model or bundled_model_path())
    source = Path(set_path) if set_path else sample_sets_dir() / "passenger_desk_routing.csv"
    with tempfile.TemporaryDirectory() as tmp_name:
        tmp = Path(tmp_name)
        project = Project(tmp / "bench.hone")
        project.import_set(source)
        _, qset = project.current_set()
        # by default what a user grades: the tuning items (model load weighs on a short run)
        chosen = (list(select_items(qset, "tuning")) if items is None
                  else list(qset.items[:items]))
        draft = project.draft()
        wording = Wording(draft.text or "Answer briefly.", "system")
        check = project.check()
        if check.kind == "label" and not check.labels:
            from dataclasses import replace
            check = replace(check, labels=tuple(qset.labels()))
        project.close()
        scoring = check.kind == "label"
        out(f"bench: {len(chosen)} items of {qset.name}, {model_path.name}, max "
            f"{BENCH_MAX_TOKENS} tokens, greedy, wording in the system message; model load "
            f"counted on every side; best of {repeats} interleaved rounds")
        prompts = [list(build_prompt(wording, it.fields).messages) for it in chosen]
        sides: dict[str, list] = {"hand": [], "generate": [], "score": []}
        for round_no in range(repeats):
            threads = None
            for mode in ("generate", "score") if scoring else ("generate",):
                params = Params(max_tokens=BENCH_MAX_TOKENS, answer_mode=mode)
                got = _grader_side(model_path, tmp, f"{mode}{round_no}", qset, chosen,
                                   wording, check, params)
                sides[mode].append(got)
                threads = got[2]
                out(f"  round {round_no + 1}: grader, {mode}: {got[0]:.2f} s")
            sides["hand"].append(_hand_loop(model_path, threads, prompts, BENCH_MAX_TOKENS))
            out(f"  round {round_no + 1}: hand loop: {sides['hand'][-1][0]:.2f} s")
        mode = "score" if scoring else "generate"
        sides["cached"] = _cached_regrade(model_path, tmp, qset, wording, check,
                                          Params(max_tokens=BENCH_MAX_TOKENS, answer_mode=mode))
    return _report(sides, chosen, check, out)


def _report(sides, chosen, check, out) -> int:
    n = len(chosen)
    hand_s, answers = min(sides["hand"], key=lambda s: s[0])
    hand_ok = sum(judge(a, it.expected, check).passed for a, it in zip(answers, chosen))
    out(f"(a) hand loop        {n / hand_s:8.2f} items/s  ({hand_s:.2f} s)  accuracy "
        f"{hand_ok}/{n}")
    gen = min(sides["generate"], key=lambda s: s[0])
    prompt_rate = max(s[5][0] for side in ("generate", "score") for s in sides[side])
    decode_rate = max(s[5][1] for side in ("generate", "score") for s in sides[side])
    own = sum(gen[4]) / n
    made = sum(m.completion_tokens for m in gen[1].marks) / n
    out(f"(b) grader, generate {n / gen[0]:8.2f} items/s  ({gen[0]:.2f} s, {gen[2]} threads)"
        f"  accuracy {sum(m.passed for m in gen[1].marks)}/{n}")
    out(f"limit: prompt evaluation {prompt_rate:.0f} tokens/s, batched decode "
        f"{decode_rate:.0f} tokens/s (measured in this run)")
    gen_limit = own / prompt_rate + made / decode_rate
    out(f"generate: {own:.1f} own tokens and {made:.1f} answer tokens an item -> limit "
        f"{gen_limit:.3f} s an item; grader {gen[0] / n:.3f} s an item "
        f"({gen[0] / n / gen_limit:.2f}x the limit, model load included)")
    out(f"grader/hand-loop ratio: {hand_s / gen[0]:.2f}")
    warm = gen[3]
    if sides["score"]:
        sc = min(sides["score"], key=lambda s: s[0])
        warm = sc[3]
        out(f"(c) grader, score    {n / sc[0]:8.2f} items/s  ({sc[0]:.2f} s)  accuracy "
            f"{sum(m.passed for m in sc[1].marks)}/{n}")
        sc_limit = own / prompt_rate
        out(f"score: {own:.1f} own tokens an item -> limit {sc_limit:.3f} s an item; grader "
            f"{sc[0] / n:.3f} s an item ({sc[0] / n / sc_limit:.2f}x the limit, model load "
            "included)")
        out(f"label-scoring/hand-loop ratio: {hand_s / sc[0]:.2f}")
    if "cached" in sides:
        many, warm = sides["cached"]
        out(f"(d) cached regrade   {many / warm:8.2f} items/s  ({warm:.3f} s for all {many} "
            "items of the set, every answer from the completion cache; best of 3)")
        out(f"cached/hand-loop ratio: {(many / warm) / (n / hand_s):.2f}")
    else:
        out(f"(d) cached regrade   {n / warm:8.2f} items/s  ({warm:.3f} s)")
        out(f"cached/hand-loop ratio: {hand_s / warm:.2f}")
    out("note: other work on this machine slows every side; compare ratios from one run.")
    return 0
