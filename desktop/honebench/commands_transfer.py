"""``honebench transfer PROJECT v1 v3 --model OTHER.gguf``: the transfer check from the
command line. Chosen shelf versions are graded on a second engine over the same tuning
items as on the graded engine (the bundled model unless --graded-model / --graded-endpoint
names another) and compared: both scores with intervals, the paired test between engines,
ranks and the "wins here, not there" flags (core/transfer.py defines them).
"""
from __future__ import annotations

import json
import threading

from .core.engines.choice import EngineChoice
from .core.settings import ANSWER_MODES
from .core.transfer import CAUTION

HELP = "grade shelf versions on a second engine and compare with the graded one"


def add_parser(verbs) -> None:
    from .core.engines.choice import DEFAULT_TIMEOUT

    t = verbs.add_parser("transfer", help=HELP, description=(
        "Grade shelf versions on another engine (a GGUF file, another quantisation or an "
        "endpoint) over the same tuning items, and see whether their scores and their order "
        "hold there."))
    t.add_argument("project")
    t.add_argument("versions", nargs="+", metavar="VERSION", help="shelf versions, e.g. v1 v3")
    other = t.add_mutually_exclusive_group(required=True)
    other.add_argument("--model", metavar="FILE", help="the other engine: a GGUF model file")
    other.add_argument("--endpoint", metavar="URL", help="the other engine: an OpenAI-protocol "
                       "endpoint, e.g. http://127.0.0.1:8080/v1")
    t.add_argument("--endpoint-model", default="", metavar="NAME",
                   help="model name to ask the endpoint for (default: its own)")
    t.add_argument("--timeout", type=float, default=DEFAULT_TIMEOUT, metavar="SECONDS",
                   help="how long each endpoint request may take before the item gets an "
                        f"error mark (default {DEFAULT_TIMEOUT:g})")
    graded = t.add_mutually_exclusive_group()
    graded.add_argument("--graded-model", metavar="FILE", help="the engine the versions were "
                        "graded with, when not the bundled model: a GGUF file")
    graded.add_argument("--graded-endpoint", metavar="URL", help="... or an endpoint (its "
                        "default model, the same --timeout)")
    t.add_argument("--limit", type=int, metavar="N", help="only the first N tuning items")
    t.add_argument("--max-tokens", type=int, help="answer length limit (default: the "
                   "project's setting)")
    t.add_argument("--temperature", type=float, help="default: the project's setting")
    t.add_argument("--answer-mode", choices=ANSWER_MODES, help="default: the project's setting")
    t.set_defaults(seed=None, calibrate=None)
    t.add_argument("--json", action="store_true", help="print one JSON object per version")


def choices(args) -> tuple[EngineChoice, EngineChoice]:
    """(graded engine, other engine) the arguments name."""
    if args.graded_endpoint:
        graded = EngineChoice.endpoint(args.graded_endpoint, timeout=args.timeout)
    elif args.graded_model:
        graded = EngineChoice.file(args.graded_model)
    else:
        graded = EngineChoice.bundled()
    other = (EngineChoice.endpoint(args.endpoint, args.endpoint_model, timeout=args.timeout)
             if args.endpoint else EngineChoice.file(args.model))
    if other == graded:
        raise ValueError("the other engine is the graded engine itself; name another model "
                         "file or endpoint with --model or --endpoint")
    return graded, other


def transfer_verb(args) -> int:
    from .commands import ProgressPrinter, open_project, run_settings

    if args.limit is not None and args.limit < 1:
        raise ValueError(f"--limit must be at least 1, not {args.limit}")
    graded, other = choices(args)
    project = open_project(args.project)
    try:
        ids = [project.shelf_entry(v).id for v in args.versions]
        settings = run_settings(project, args)
        for choice in (graded, other):  # refused before any model is loaded
            choice.check()
        engines = []
        try:
            engines.append(graded.open())
            engines.append(other.open())
            result = project.transfer(
                engines[0], engines[1], ids, label=graded.label(), other_label=other.label(),
                limit=args.limit, settings=settings,
                on_event=ProgressPrinter(quiet=args.json), cancel=threading.Event()).value
        finally:
            for engine in engines:
                engine.close()
    finally:
        project.close()
    if args.json:
        print(json.dumps([version_json(result, v) for v in result.versions], indent=2,
                         ensure_ascii=False))
    else:
        print("\n".join(result.lines()))
    return 0


def version_json(result, v) -> dict:
    def side(engine: str, s, errors: int) -> dict:
        return {"engine": engine, "passed": s.passed, "total": s.total, "score": s.rate,
                "interval": [s.low, s.high], "errors": errors}

    return {"version": v.label, "n": v.n,
            "here": side(result.here_engine, v.here, v.errors_here),
            "there": side(result.there_engine, v.there, v.errors_there),
            "fixed_there": v.paired.fixed, "broken_there": v.paired.broken,
            "p_value": v.paired.p_value, "rank_here": v.rank_here,
            "rank_there": v.rank_there, "flips": list(v.flips), "flags": list(v.flags),
            "caution": CAUTION}

