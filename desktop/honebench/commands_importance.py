"""``honebench importance PROJECT vN``: which phrases of a shelf version carry its score.

A few Project calls and printing, like the other verbs (commands.py): each phrase is left
out alone and graded on the tuning items; the table (or ``--json``, one object per phrase)
shows the change in score, its paired interval, fixed / broken items and the exact test.
"""
from __future__ import annotations

import json
import threading

CAUTION = ("Small sets are noisy, and a phrase's effect can depend on the other phrases "
           "(each is left out alone).")


def importance_verb(args) -> int:
    from .commands import ProgressPrinter, _with_engine, open_project, run_settings

    project = open_project(args.project)
    try:
        entry = project.shelf_entry(args.version)  # ValueError naming what exists: exit 2
        if args.saved:
            result = project.saved_importance(entry.id)
            if result is None:
                raise ValueError(f"{entry.label} has no saved phrase importance yet; run "
                                 f"`honebench importance {args.project} {entry.label}`")
        else:
            from .cli import preflight_engine

            preflight_engine(args)
            settings = run_settings(project, args)
            show = ProgressPrinter(quiet=args.json)
            result = _with_engine(args, lambda engine: project.importance(
                engine, entry.id, settings=settings, early_stop=args.early_stop,
                on_event=show, cancel=threading.Event())).value
        if args.json:
            print(json.dumps(result.json_rows(), indent=2, ensure_ascii=False))
        else:
            print("\n".join(result.lines()))
    finally:
        project.close()
    return 0 if result.status == "finished" else 1


def add_parser(verbs, engine_args) -> None:
    """The verb's arguments (called by cli.build_parser)."""
    i = verbs.add_parser("importance", help="which phrases of a shelf version carry its score",
                         description="Leave each phrase of a shelf version out in turn, grade "
                         "the result on the tuning items and show the change in score with "
                         "its paired interval and exact test. " + CAUTION)
    i.add_argument("project")
    i.add_argument("version", help="e.g. v3")
    i.add_argument("--no-early-stop", dest="early_stop", action="store_false",
                   help="grade every phrase on every tuning item (default: a phrase whose "
                        "exact test is already below p = 0.001 after a chunk of 20 items is "
                        "not graded further)")
    i.add_argument("--saved", action="store_true",
                   help="print the latest saved result without grading anything")
    engine_args(i)
    i.add_argument("--json", action="store_true",
                   help="a JSON list: one object per phrase (phrase, delta, interval, fixed, "
                        "broken, p_value, n, ...)")

