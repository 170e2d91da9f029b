"""Builds test projects with constructed grade runs (no model): a sample set, shelf entries,
and runs whose marks pass or miss as the test says."""
from __future__ import annotations

from typing import Sequence

from honebench.core.project import Project
from honebench.core.records import Mark
from honebench.core.recipes import sample_sets_dir
from honebench.core.wording import Wording

ROUTING = "passenger_desk_routing.csv"


def new_project(tmp_path, set_name: str = ROUTING) -> Project:
    project = Project(tmp_path / "task.hone")
    project.import_set(sample_sets_dir() / set_name)
    return project


def add_run(project: Project, wording: Wording, split: str, passed: Sequence[bool], *,
            scores: Sequence[float] | None = None, outputs: Sequence[str] | None = None,
            item_ids: Sequence[str] | None = None, check: dict | None = None,
            fingerprint: str = "test-engine:sha256=abc", finish: bool = True,
            prompt_tokens: int = 10, completion_tokens: int = 3, seconds: float = 0.25) -> int:
    """A run of ``wording`` whose i-th mark (over the split's items, or ``item_ids``)
    passes when passed[i]; marks are saved in reverse order, as a grader may finish them."""
    set_id, qset = project.current_set()
    if item_ids is None:
        pool = qset.tuning() if split == "tuning" else qset.held_out()
        item_ids = [it.id for it in pool][:len(passed)]
    assert len(item_ids) == len(passed), "not enough items in that split"
    found = project.store.find_wording(wording.text, wording.placement)
    run_id = project.store.start_run(
        set_id=set_id, wording_text=wording.text, placement=wording.placement, split=split,
        fingerprint=fingerprint, params={"temperature": 0.0}, check=check or project.check().as_dict(),
        n_items=len(item_ids), wording_id=found.id if found else None)
    expected = {it.id: it.expected for it in qset.items}
    order = list(range(len(item_ids)))[::-1]
    for seq, i in enumerate(order):
        iid = item_ids[i]
        out = outputs[i] if outputs is not None else (expected[iid] if passed[i] else "no idea")
        sc = scores[i] if scores is not None else float(passed[i])
        project.store.add_mark(run_id, Mark(
            item_id=iid, output=out, extracted=out.splitlines()[0] if out else "",
            passed=bool(passed[i]), why="matches" if passed[i] else f"expected {expected[iid]!r}",
            score=sc, prompt_tokens=prompt_tokens, completion_tokens=completion_tokens,
            seconds=seconds), seq)
    if finish:
        project.store.finish_run(run_id, "finished")
    return run_id


def pattern(n_pass: int, n: int) -> list[bool]:
    """n_pass passes then misses."""
    return [True] * n_pass + [False] * (n - n_pass)
