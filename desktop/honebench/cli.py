"""The command line: ``honebench <verb>``. A thin front over the core, like the window.

With no verb, honebench opens the desktop window.
"""
from __future__ import annotations

import argparse
import json
import sqlite3
import sys
import threading
from pathlib import Path

from .core.checks import CHECKS, CheckSpec
from .core.engines.base import EngineError, Params
from .core.sets import SetError
from .core.store import PROJECT_SUFFIX, StoreError
from .core.wording import PLACEMENTS, Wording

CAUTION = ("Scores on small sets are noisy and a wording tuned on these items can overfit; "
           "confirm on held-out items and review outputs before relying on them.")


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
    g.add_argument("--project", type=Path, help="project file to use (default: one per set "
                   "in ~/.honebench/projects, or $HONEBENCH_HOME)")
    _engine_args(g)
    g.add_argument("--json", action="store_true", help="print one JSON object")

    b = verbs.add_parser("bench", help="time the grader against a hand-written loop")
    b.add_argument("--set", dest="set_path", help="question set (default: the routing sample)")
    b.add_argument("--items", type=int, default=24, help="items per timing (default 24)")
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
    p.add_argument("--max-tokens", type=int, default=32)
    p.add_argument("--temperature", type=float, default=0.0)
    p.add_argument("--seed", type=int, default=0)


def main(argv: list[str] | None = None) -> int:
    args = build_parser().parse_args(argv)
    try:
        if args.verb is None or args.verb == "gui":
            return _gui(args)
        if args.verb == "grade":
            return _grade(args)
        if args.verb == "resume":
            from .resume_command import resume_verb
            engine = open_engine(args)
            try:
                return resume_verb(args, engine)
            finally:
                engine.close()
        if args.verb in ("suggest", "hone", "confirm"):
            from . import commands
            engine = open_engine(args)
            try:
                return getattr(commands, f"{args.verb}_verb")(args, engine)
            finally:
                engine.close()
        if args.verb in ("compare", "export"):
            from . import commands
            return getattr(commands, f"{args.verb}_verb")(args)
        if args.verb == "bench":
            from .core.bench import run_bench
            return run_bench(set_path=args.set_path, items=args.items, model=args.model)
    except (SetError, EngineError, StoreError, ValueError, LookupError, OSError) as exc:
        print(f"honebench: {exc}", file=sys.stderr)
        return 2
    except sqlite3.Error as exc:  # the store turns the usual ones into StoreError
        print(f"honebench: the project file could not be used ({exc}); nothing more was "
              "saved. Try again, or work on a copy of the file.", file=sys.stderr)
        return 2
    return 0


def open_engine(args):
    """The engine the arguments ask for."""
    if getattr(args, "endpoint", None):
        from .core.engines.remote import EndpointEngine
        engine = EndpointEngine(args.endpoint, args.endpoint_model, timeout=args.timeout)
        engine.check()
        return engine
    from .core.engines.local import LocalEngine
    return LocalEngine(args.model)


def preflight_engine(args) -> None:
    """Check the model file or endpoint the arguments name, without loading a model."""
    if getattr(args, "endpoint", None):
        open_engine(args).close()
    elif getattr(args, "model", None):
        from .core.engines.model_files import check_model_file
        check_model_file(args.model)


def _grade(args) -> int:
    from .core.grading import Grader
    from .core.project import Project, default_project_path, read_question_set

    source = Path(args.source)
    reading = {"sheet": args.sheet, "skip_rows": args.skip_rows}
    preflight_engine(args)  # a bad model file or endpoint is refused before anything is saved
    if source.suffix == PROJECT_SUFFIX:
        if not source.exists():
            raise ValueError(f"project file {source} does not exist")
        if args.sheet is not None or args.skip_rows:
            raise ValueError("--sheet and --skip-rows choose what to read from a question set "
                             "file; a project file already holds its items")
        project = Project(source)
    else:
        mapping = None
        if args.inputs or args.expected or args.id_column:
            from .core.sets import ColumnMapping, guess_mapping, read_table
            columns = list(read_table(source, **reading).columns)
            try:
                guessed = guess_mapping(columns)
            except SetError:
                guessed = ColumnMapping(inputs=(), expected="")
            mapping = ColumnMapping(inputs=tuple(args.inputs or guessed.inputs),
                                    expected=args.expected or guessed.expected,
                                    id=args.id_column or guessed.id, split=guessed.split)
        qset = read_question_set(source, mapping, **reading)  # validated before any write
        project = Project(args.project or default_project_path(source))
        project.add_set(qset)
    from .core.resume import interrupted_note
    note = interrupted_note(project.store, project.path)
    if note:
        print(f"honebench: {note}", file=sys.stderr)
    set_id, qset = project.current_set()
    check = _check_from_args(project.check(), args)
    from .core.check_fit import check_fits_set
    check_fits_set(check, qset)  # refused before the check is saved
    project.set_check(check)
    draft = project.draft()
    text = args.wording_file.read_text(encoding="utf-8") if args.wording_file else args.wording
    wording = Wording(text.strip() if text is not None else draft.text,
                      args.placement or draft.placement)
    if not wording.text:
        raise ValueError("no wording given: pass --wording TEXT or --wording-file FILE")
    project.save_draft(wording)
    from .core.grading import select_items
    items = select_items(qset, args.split)[: args.limit] if args.limit else None
    engine = open_engine(args)
    params = Params(max_tokens=args.max_tokens, temperature=args.temperature, seed=args.seed)
    shown = [0]

    def progress(mark, prog):
        if not args.json and sys.stderr.isatty():
            eta = f", about {prog.eta:.0f} s left" if prog.eta else ""
            print(f"\r{prog.done}/{prog.total} graded{eta}   ", end="", file=sys.stderr)
        shown[0] = prog.done

    try:
        outcome = Grader(project.store, engine).grade(
            set_id=set_id, qset=qset, wording=wording, check=check, params=params,
            split=args.split, items=items, on_mark=progress, cancel=threading.Event())
    finally:
        engine.close()
    if shown[0] and not args.json and sys.stderr.isatty():
        print(file=sys.stderr)
    summary = project.summary(outcome.run_id)
    if args.json:
        out = summary.as_dict()
        out.update(run_id=outcome.run_id, status=outcome.status,
                   fingerprint=project.store.run(outcome.run_id).fingerprint,
                   project=str(project.path), split=args.split, wording=wording.text,
                   placement=wording.placement, model_calls=outcome.model_calls,
                   marks=[m.as_dict() for m in outcome.marks])
        print(json.dumps(out, indent=2, ensure_ascii=False))
    else:
        print(f"{project.title()}: {qset.name}, {args.split} items "
              f"({len(outcome.marks)} graded, run {outcome.run_id})")
        for line in summary.lines():
            print(line)
        misses = [m for m in outcome.marks if not m.passed][:5]
        if misses:
            print("first misses:")
            for m in misses:
                print(f"  {m.item_id}: {m.why}")
        print(f"saved in {project.path}")
        print(CAUTION)
    project.close()
    return 0


def _check_from_args(saved: CheckSpec, args) -> CheckSpec:
    d = saved.as_dict()
    if args.check and args.check != saved.kind:
        d = CheckSpec(kind=args.check).as_dict()
    for name in ("extraction", "pattern", "json_field", "marker"):
        value = getattr(args, name, None)
        if value is not None:
            d[name] = value
    from .core.check_fit import collect_labels
    labels, warnings = collect_labels(args.labels, args.each_label or (), args.labels_file)
    for warning in warnings:
        print(f"honebench: warning: {warning}", file=sys.stderr)
    if labels is not None:
        d["labels"] = labels
    return CheckSpec.from_dict(d)


def _gui(args) -> int:
    try:
        from .gui.app import run_app
    except ImportError as exc:
        print(f"honebench: the desktop window is not available here ({exc}). "
              "Use `honebench grade SET --wording ...` meanwhile; `honebench --help` lists "
              "all verbs.", file=sys.stderr)
        return 2
    return run_app(getattr(args, "source", None), snapshot=getattr(args, "snapshot", None),
                   grade=getattr(args, "grade", False))


if __name__ == "__main__":
    sys.exit(main())
