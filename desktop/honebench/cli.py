"""The command line: ``honebench <verb>``. A thin front over the core, like the window:
the parser is here, each verb in commands.py is a few calls to ``core.project.Project``.

With no verb, honebench opens the desktop window.
"""
from __future__ import annotations

import argparse
import sqlite3
import sys
from pathlib import Path

from .core.checks import CHECKS
from .core.engines.base import EngineError
from .core.sets import SetError
from .core.settings import ANSWER_MODES, ProjectSettings
from .core.store import PROJECT_SUFFIX, StoreError
from .core.wording import PLACEMENTS


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="honebench", description=(
        "Find the instruction wording that makes your local model do one task well."))
    verbs = p.add_subparsers(dest="verb", metavar="VERB")

    g = verbs.add_parser("grade", help="grade a wording over a question set")
    g.add_argument("source", help="a question set file (csv, tsv, jsonl, json, parquet, xlsx) "
                                  f"or a project file ({PROJECT_SUFFIX})")
    text = g.add_mutually_exclusive_group()
    text.add_argument("--wording", help="the instruction text")
    text.add_argument("--wording-file", type=Path, help="read the instruction from a file")
    g.add_argument("--placement", choices=PLACEMENTS, help="where the wording goes "
                   "(system message, before/after the question, start of the answer)")
    g.add_argument("--check", choices=CHECKS, help="the answer check")
    g.add_argument("--extraction", help="whole, first_line, after_marker, last_number, label")
    g.add_argument("--label", action="append", dest="each_label", metavar="LABEL",
                   help="an allowed label (label check); repeat for each, commas are kept")
    g.add_argument("--labels-file", type=Path, metavar="FILE",
                   help="allowed labels, one per line (label check)")
    g.add_argument("--labels", help="allowed labels, comma separated (label check); a label "
                                    "that holds a comma needs --label or --labels-file")
    g.add_argument("--pattern", help="regular expression (pattern check)")
    g.add_argument("--json-field", help="dotted path into the answer's JSON (json_field check)")
    g.add_argument("--marker", help="text before the answer (after_marker extraction)")
    g.add_argument("--input", action="append", dest="inputs", metavar="COLUMN",
                   help="input field column (repeat for several)")
    g.add_argument("--expected", metavar="COLUMN", help="expected-answer column")
    g.add_argument("--id-column", metavar="COLUMN", help="item id column")
    g.add_argument("--sheet", metavar="NAME|NUMBER", help="the Excel sheet holding the items, "
                   "by name or number counted from 1 (default: the first)")
    g.add_argument("--skip-rows", type=int, default=0, metavar="N",
                   help="title rows above the column names to leave out (CSV, TSV, Excel)")
    g.add_argument("--split", choices=("tuning", "held_out", "all"), default="tuning")
    g.add_argument("--limit", type=int, help="grade only the first N items of the split")
    g.add_argument("--project", help=f"project file to use ({PROJECT_SUFFIX}, added when "
                   "missing; default: one per set in ~/.honebench/projects, or $HONEBENCH_HOME)")
    _engine_args(g)
    g.add_argument("--json", action="store_true", help="print one JSON object")

    b = verbs.add_parser("bench", help="time the grader against a hand-written loop")
    b.add_argument("--set", dest="set_path", help="question set (default: the routing sample)")
    b.add_argument("--items", type=int, default=None,
                   help="items per timing (default: the set's tuning items, 84 on the routing "
                        "sample, as a user grades them)")
    b.add_argument("--model", help="GGUF file (default: the bundled model)")

    from .core.suggest.strategies import STRATEGIES

    s = verbs.add_parser("suggest", help="ask the model for scored variants of a wording")
    s.add_argument("project", help=f"project file ({PROJECT_SUFFIX})")
    s.add_argument("--strategy", choices=STRATEGIES, default="scoreboard")
    s.add_argument("--count", type=int, default=4, help="variants to ask for")
    s.add_argument("--base", metavar="VERSION", help="start from this shelf version (default: "
                   "the draft)")
    s.add_argument("--other", metavar="VERSION", help="second version, for blend")
    s.add_argument("--proposal-temperature", type=float, default=1.0)
    s.add_argument("--keep-best", action="store_true",
                   help="keep the top suggestion if it beats the current wording")
    _engine_args(s)
    _suggest_engine_args(s)
    s.add_argument("--json", action="store_true")

    h = verbs.add_parser("hone", help="run rounds of suggestions unattended")
    h.add_argument("project")
    h.add_argument("--rounds", type=int, default=5)
    h.add_argument("--count", type=int, default=4, help="suggestions per round")
    h.add_argument("--strategy", choices=STRATEGIES, default="scoreboard")
    h.add_argument("--patience", type=int, default=3, help="stop after N rounds without gain")
    h.add_argument("--seconds", type=float, help="time budget")
    h.add_argument("--model-calls", type=int, help="model-call budget")
    _engine_args(h)
    _suggest_engine_args(h)
    h.add_argument("--json", action="store_true")

    c = verbs.add_parser("confirm", help="grade a shelf version on the held-out items")
    c.add_argument("project")
    c.add_argument("version", help="e.g. v3")
    _engine_args(c)

    r = verbs.add_parser("resume", help="finish a grade run that was interrupted")
    r.add_argument("project")
    r.add_argument("run", nargs="?", type=int, help="run number (default: the latest "
                   "interrupted run); the engine must be the one it was graded with")
    _engine_args(r, generation=False)
    r.add_argument("--json", action="store_true")

    cmp_ = verbs.add_parser("compare", help="two shelf versions on the same items")
    cmp_.add_argument("project")
    cmp_.add_argument("first")
    cmp_.add_argument("second")
    cmp_.add_argument("--split", choices=("tuning", "held_out"), default="tuning")
    _engine_args(cmp_)  # used only for a version not yet graded on that split

    from .commands_transfer import add_parser as add_transfer_parser
    add_transfer_parser(verbs)
    from .commands_importance import add_parser as add_importance

    add_importance(verbs, _engine_args)

    e = verbs.add_parser("export", help="write the report, all marks, or the chosen wording")
    e.add_argument("project")
    e.add_argument("--html", type=Path, help="one self-contained HTML report")
    e.add_argument("--csv", type=Path, help="every mark of every run")
    e.add_argument("--text", type=Path, help="the chosen wording alone")
    e.add_argument("--version", help="the version to report as chosen (default: the best)")

    ui = verbs.add_parser("gui", help="open the desktop window")
    ui.add_argument("source", nargs="?", help="project file or question set to open")
    ui.add_argument("--snapshot", type=Path, help="save a picture of the window and exit")
    ui.add_argument("--grade", action="store_true", help="with --snapshot: grade first")
    return p


def _engine_args(p: argparse.ArgumentParser, generation: bool = True) -> None:
    from .core.engines.remote import DEFAULT_TIMEOUT

    p.add_argument("--model", help="GGUF model file (default: bundled SmolLM2-135M-Instruct)")
    p.add_argument("--endpoint", help="OpenAI-protocol endpoint URL, e.g. http://127.0.0.1:8080/v1")
    p.add_argument("--endpoint-model", default="", help="model name to ask the endpoint for")
    p.add_argument("--timeout", type=float, default=DEFAULT_TIMEOUT, metavar="SECONDS",
                   help="endpoint only: how long each item may wait for an answer before it "
                        f"gets an error mark and the run goes on (default {DEFAULT_TIMEOUT:g})")
    if not generation:
        return
    # None = not given: the project's settings apply; a value overrides them for this run only
    p.add_argument("--max-tokens", type=int, help="answer length limit (default: the "
                   f"project's setting, at first {ProjectSettings().max_tokens})")
    p.add_argument("--temperature", type=float, help="0 answers greedily (default: the "
                   "project's setting)")
    p.add_argument("--seed", type=int, help="sampling seed (default: the project's setting)")
    p.add_argument("--answer-mode", choices=ANSWER_MODES, help="score: rank the allowed labels "
                   "(label check); generate: let the model write (default: the project's)")
    p.add_argument("--calibrate", action=argparse.BooleanOptionalAction, default=None,
                   help="score mode: divide each item's label shares by the wording's label "
                        "prior, scored with every input field empty or N/A (default: the "
                        "project's setting)")


def _suggest_engine_args(p: argparse.ArgumentParser) -> None:
    """Who writes the suggestions, for this run only (default: the project's suggestion
    engine, else the graded engine); the graded engine still scores them."""
    p.add_argument("--suggest-model", metavar="FILE", help="a GGUF file that writes the "
                   "suggestions (default: the project's suggestion engine, at first the "
                   "graded engine)")
    p.add_argument("--suggest-endpoint", metavar="URL", help="an OpenAI-protocol endpoint "
                   "that writes the suggestions, e.g. http://127.0.0.1:8080/v1")
    p.add_argument("--suggest-endpoint-model", default="", metavar="NAME",
                   help="model name to ask the suggestion endpoint for")
    p.add_argument("--suggest-timeout", type=float, metavar="SECONDS", help="how long the "
                   "suggestion endpoint may take per request (default: --timeout)")


def main(argv: list[str] | None = None) -> int:
    args = build_parser().parse_args(argv)
    try:
        if args.verb is None or args.verb == "gui":
            return _gui(args)
        if args.verb == "bench":
            from .core.bench import run_bench
            return run_bench(set_path=args.set_path, items=args.items, model=args.model)
        if args.verb == "transfer":
            from .commands_transfer import transfer_verb
            return transfer_verb(args)
        if args.verb == "importance":
            from .commands_importance import importance_verb
            return importance_verb(args)
        from . import commands
        return getattr(commands, f"{args.verb}_verb")(args)
    except (SetError, EngineError, StoreError, ValueError, LookupError, OSError) as exc:
        print(f"honebench: {exc}", file=sys.stderr)
        return 2
    except sqlite3.Error as exc:  # the store turns the usual ones into StoreError
        print(f"honebench: the project file could not be used ({exc}); nothing more was "
              "saved. Try again, or work on a copy of the file.", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("\nhonebench: interrupted; every finished mark is saved in the project.",
              file=sys.stderr)
        return 130


def engine_choice(args):
    """The engine the arguments name (--endpoint, --model or the bundled model)."""
    from .core.engines.choice import EngineChoice

    if getattr(args, "endpoint", None):
        return EngineChoice.endpoint(args.endpoint, args.endpoint_model or "",
                                     timeout=args.timeout)
    if getattr(args, "model", None):
        return EngineChoice.file(args.model)
    return EngineChoice.bundled()


def suggest_engine_choice(args, saved=None):
    """The engine that writes suggestions: --suggest-endpoint or --suggest-model for this
    run, else ``saved`` (the project's setting), else None (the graded engine writes)."""
    from .core.engines.choice import EngineChoice

    if getattr(args, "suggest_endpoint", None) and getattr(args, "suggest_model", None):
        raise ValueError("give --suggest-model FILE or --suggest-endpoint URL, not both")
    if getattr(args, "suggest_endpoint", None):
        timeout = args.suggest_timeout if args.suggest_timeout is not None else args.timeout
        return EngineChoice.endpoint(args.suggest_endpoint, args.suggest_endpoint_model or "",
                                     timeout=timeout).validate()
    if getattr(args, "suggest_model", None):
        return EngineChoice.file(args.suggest_model).validate()
    return saved


def open_engine(args):
    """The engine the arguments ask for."""
    return engine_choice(args).open()


def preflight_engine(args) -> None:
    """Check the model file or endpoint the arguments name, without loading a model."""
    engine_choice(args).check()


def _gui(args) -> int:
    try:
        from .gui.launch import run_app
    except ImportError as exc:
        print(f"honebench: the desktop window is not available here ({exc}). "
              "Use `honebench grade SET --wording ...` meanwhile; `honebench --help` lists "
              "all verbs.", file=sys.stderr)
        return 2
    return run_app(getattr(args, "source", None), snapshot=getattr(args, "snapshot", None),
                   grade=getattr(args, "grade", False))


if __name__ == "__main__":
    sys.exit(main())
