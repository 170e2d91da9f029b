"""Work the compare and confirm actions run in jobs: plain functions, no Qt."""
from __future__ import annotations

import threading
from pathlib import Path

from ..core.compare import compare_runs, latest_run
from ..core.grading import Grader
from ..core.wording import Wording

EDITOR = -1  # stands for the editor's wording where a shelf id is expected
SPLIT_WORDS = {"tuning": "tuning items", "held_out": "held-out items"}


def grade_wording(project, handle, params, wording: Wording, wording_id, split: str,
                  cancel: threading.Event, report=None) -> int:
    """Grade one wording on one split of the current set; returns the run id. Answers
    already in the completion cache are reused by the grader."""
    set_id, qset = project.current_set()
    on_mark = (lambda _m, prog: report(("mark", prog.done, prog.total))) if report else None
    with handle as engine:
        outcome = Grader(project.store, engine).grade(
            set_id=set_id, qset=qset, wording=wording, check=project.check(), params=params,
            split=split, wording_id=wording_id, on_mark=on_mark, cancel=cancel)
    if outcome.status != "finished":
        raise ValueError(f"the grade run on the {SPLIT_WORDS[split]} was {outcome.status} "
                         f"after {len(outcome.marks)} items; nothing is compared or confirmed")
    return outcome.run_id


def confirm_entry(project, handle, params, wording_id: int, cancel, report=None):
    """Grade a shelf version on the held-out items; returns (run id, shelf rows)."""
    entry = project.store.wording(wording_id)
    run = grade_wording(project, handle, params, Wording(entry.text, entry.placement),
                        entry.id, "held_out", cancel, report)
    return run, project.shelf_rows()


def compare_choice(project, handle, params, a: int, b: int, split: str, editor: Wording,
                   cancel, report=None):
    """Compare A and B (wording ids or EDITOR) on a split, grading first whichever has no
    finished run there. Returns (Comparison, shelf rows)."""
    set_id, _ = project.current_set()
    runs, names = [], []
    for key in (a, b):
        if key == EDITOR:
            found = project.store.find_wording(editor.text, editor.placement)
            wording, wid = editor, found.id if found else None
            name = f"editor ({found.label})" if found else "the editor's wording"
        else:
            entry = project.store.wording(key)
            wording, wid, name = Wording(entry.text, entry.placement), entry.id, entry.label
        run = latest_run(project.store, wording.text, wording.placement, split, set_id)
        if run is None:
            if handle is None:
                raise ValueError(f"{name} is not graded on the {SPLIT_WORDS[split]} yet and "
                                 "the model has not loaded; wait for it, then compare again")
            if report:
                report(("grading", name))
            run = grade_wording(project, handle, params, wording, wid, split, cancel, report)
        runs.append(run)
        names.append(name)
    comparison = compare_runs(project.store, runs[0], runs[1], name_a=names[0],
                              name_b=names[1])
    return comparison, project.shelf_rows()


def write_text(path: str, text: str) -> str:
    Path(path).write_text(text if text.endswith("\n") else text + "\n", encoding="utf-8")
    return path
