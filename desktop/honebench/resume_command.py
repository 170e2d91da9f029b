"""The ``honebench resume`` verb: finish a grade run that was interrupted."""
from __future__ import annotations

import json
import threading

from .core.resume import resume_run, unfinished_runs


def resume_verb(args, engine) -> int:
    from .commands import open_project

    project = open_project(args.project)
    try:
        run_id = args.run
        if run_id is None:
            found = unfinished_runs(project.store)
            if not found:
                raise LookupError(f"{project.path} has no interrupted grade run to resume")
            run_id = found[-1].run.id
        outcome = resume_run(project.store, engine, run_id, cancel=threading.Event())
        summary = project.summary(outcome.run_id)
        if args.json:
            out = summary.as_dict()
            out.update(run_id=outcome.run_id, resumed=run_id, status=outcome.status,
                       model_calls=outcome.model_calls,
                       marks=[m.as_dict() for m in outcome.marks])
            print(json.dumps(out, indent=2, ensure_ascii=False))
        else:
            print(f"resumed run {run_id} as run {outcome.run_id}: {outcome.status}, "
                  f"{outcome.model_calls} model calls, the other answers from the cache")
            for line in summary.lines():
                print(line)
    finally:
        project.close()
    return 0


__all__ = ["resume_verb"]
