"""The CLI's verbs: each reads its arguments, calls ``core.project.Project`` and prints.

Nothing here computes: grading, confirming, comparing, suggesting and exporting are the same
Project operations the window runs. Settings flags override the project's settings for one
run only; check flags are saved as the project's answer check, as the window does.
"""
from __future__ import annotations

import json
import sys
import threading
from pathlib import Path

from .core.checks import CheckSpec
from .core.engines.base import EngineError
from .core.events import Finished, Marked, Stage, Started, progress_text
from .core.project import (Project, column_mapping, default_project_path, project_file,
                           read_question_set)
from .core.store import PROJECT_SUFFIX
from .core.wording import Wording

CAUTION = ("Scores on small sets are noisy and a wording tuned on these items can overfit; "
           "confirm on held-out items and review outputs before relying on them.")


class ProgressPrinter:
    """Shows progress events on stderr in the core's words: one updating line on a
    terminal, only the stages when stderr is a file or a pipe; nothing with --json."""

    def __init__(self, quiet: bool = False, stream=None):
        self.stream = stream or sys.stderr
        self.quiet = quiet
        self.live = not quiet and self.stream.isatty()
        self._open = False

    def __call__(self, event) -> None:
        if self.quiet:
            return
        if isinstance(event, Marked):
            if self.live:
                print(f"\r{progress_text(event.progress)}   ", end="", file=self.stream,
                      flush=True)
                self._open = True
        elif isinstance(event, (Started, Stage)):
            text = event.what if isinstance(event, Started) else event.text
            if text:
                self._end_line()
                print(text, file=self.stream, flush=True)
        elif isinstance(event, Finished):
            self._end_line()

    def _end_line(self) -> None:
        if self._open:
            print(file=self.stream)
            self._open = False


def open_project(path: str | Path) -> Project:
    """An existing project file (``task`` means ``task.hone``)."""
    return Project.open(path).value


def run_settings(project: Project, args):
    """The project's settings with this run's flags applied (not saved)."""
    return project.settings().override(
        max_tokens=args.max_tokens, temperature=args.temperature, seed=args.seed,
        answer_mode=getattr(args, "answer_mode", None),
        calibrate=getattr(args, "calibrate", None))


def _with_engine(args, work):
    from .cli import open_engine

    engine = open_engine(args)
    try:
        return work(engine)
    finally:
        engine.close()


def _suggest_flags(args) -> bool:
    return bool(getattr(args, "suggest_model", None) or getattr(args, "suggest_endpoint", None))


def _with_engines(args, project: Project, work):
    """``work(engine, proposer)``: the graded engine and the one that writes suggestions
    (the flags', else the project's suggestion engine; the graded engine itself when it is
    the same one). Both are checked before any model is loaded."""
    from .cli import engine_choice, suggest_engine_choice

    graded = engine_choice(args).validate()
    choice = suggest_engine_choice(args, project.settings().suggest_engine)
    if choice is None or choice.key() == graded.key():
        return _with_engine(args, lambda engine: work(engine, engine))
    try:  # a bad file or a silent server is refused before the graded model loads
        choice.check()
        proposer = choice.open()
    except EngineError as exc:
        where = ("the project's suggestion engine (change it in the window's Proposals by, "
                 "or give --suggest-model / --suggest-endpoint)" if not _suggest_flags(args)
                 else "the suggestion engine")
        raise EngineError(f"{exc}\n(This is {where}; nothing was graded.)") from None
    try:
        return _with_engine(args, lambda engine: work(engine, proposer))
    finally:
        proposer.close()


# -- grade --------------------------------------------------------------------------------
def grade_verb(args) -> int:
    from .cli import preflight_engine
    from .core.check_fit import check_fits_set

    preflight_engine(args)  # a bad model file or endpoint is refused before anything is saved
    project = _grade_project(args)
    try:
        note = project.interrupted_note()
        if note:
            print(f"honebench: {note}", file=sys.stderr)
        check = _check_from_args(project.check(), args)
        check_fits_set(check, project.current_set()[1])  # refused before the check is saved
        project.set_check(check)
        draft = project.draft()
        # the text exactly as given, as the window keeps it (a trailing space can matter at
        # the start of the answer); a file loses only its final line break
        text = (args.wording_file.read_text(encoding="utf-8").removesuffix("\n")
                .removesuffix("\r") if args.wording_file else args.wording)
        wording = Wording(text if text is not None else draft.text,
                          args.placement or draft.placement)
        if not wording.text:
            raise ValueError("no wording given: pass --wording TEXT or --wording-file FILE")
        settings = run_settings(project, args)
        show = ProgressPrinter(quiet=args.json)
        done = _with_engine(args, lambda engine: project.grade(
            engine, wording, split=args.split, limit=args.limit, settings=settings,
            on_event=show, cancel=threading.Event()))
        _print_grade(project, done.value, args)
    finally:
        project.close()
    return 0


def _grade_project(args) -> Project:
    """The project a grade writes to; a question set is read and checked before any file
    is created, and a --project path with the wrong extension is refused first."""
    source = Path(args.source)
    if source.suffix == PROJECT_SUFFIX:
        if args.sheet is not None or args.skip_rows:
            raise ValueError("--sheet and --skip-rows choose what to read from a question set "
                             "file; a project file already holds its items")
        return open_project(source)
    target = project_file(args.project) if args.project else default_project_path(source)
    reading = {"sheet": args.sheet, "skip_rows": args.skip_rows}
    mapping = column_mapping(source, inputs=args.inputs, expected=args.expected,
                             id=args.id_column, **reading)
    qset = read_question_set(source, mapping, **reading)
    project = Project.open(target, create=True).value
    project.import_set(qset)
    return project


def _print_grade(project: Project, result, args) -> None:
    outcome, summary = result.outcome, result.summary
    if args.json:
        out = summary.as_dict()
        out.update(run_id=outcome.run_id, status=outcome.status,
                   fingerprint=result.run.fingerprint, project=str(project.path),
                   split=args.split, wording=result.run.wording_text,
                   placement=result.run.placement, version=result.entry.label,
                   settings=result.run.params, model_calls=outcome.model_calls,
                   marks=[m.as_dict() for m in outcome.marks])
        print(json.dumps(out, indent=2, ensure_ascii=False))
        return
    _, qset = project.current_set()
    print(f"{project.title()}: {qset.name}, {args.split} items ({len(outcome.marks)} graded, "
          f"run {outcome.run_id}, {result.entry.label} on the shelf)")
    for line in summary.lines():
        print(line)
    misses = [m for m in outcome.marks if not m.passed][:5]
    if misses:
        print("first misses:")
        for m in misses:
            print(f"  {m.item_id}: {m.why}")
    print(f"saved in {project.path}")
    print(CAUTION)


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


# -- suggest and hone -----------------------------------------------------------------------
def suggest_verb(args) -> int:
    project = open_project(args.project)
    try:
        base = project.shelf_entry(args.base).id if args.base else None
        other = project.shelf_entry(args.other).id if args.other else None
        settings = run_settings(project, args)
        done = _with_engines(args, project, lambda engine, proposer: project.suggest(
            engine, args.strategy, count=args.count, base=base, other=other,
            proposal_temperature=args.proposal_temperature, keep_best=args.keep_best,
            settings=settings, on_event=ProgressPrinter(quiet=args.json),
            cancel=threading.Event(), proposer=proposer))
        _print_suggestions(done.value, args)
    finally:
        project.close()
    return 0


def _print_suggestions(result, args) -> None:
    outcome = result.outcome
    if args.json:
        print(json.dumps([{
            "wording": c.text, "placement": c.placement, "score": c.score.rate,
            "passed": c.score.passed, "total": c.score.total,
            "interval": [c.score.low, c.score.high], "fixed": c.paired.fixed,
            "broken": c.paired.broken, "p_value": c.paired.p_value, "strategy": c.strategy,
            "proposer": c.proposer, "inputs": c.inputs, "run_id": c.run_id}
            for c in outcome.cards],
            indent=2, ensure_ascii=False))
        return
    print(f"current wording: {outcome.base_score.text()}")
    if outcome.notes.get("diagnosis"):
        print(f"diagnosis: {outcome.notes['diagnosis']}")
    print(outcome.message)
    for i, card in enumerate(outcome.cards, 1):
        print(f"\n[{i}] {card.score.text()}; {card.change_text(outcome.base_score)}")
        print(f"    {card.text}")
        print(f"    written by {card.proposer}")
    if outcome.dropped:
        print(f"\ndropped: {'; '.join(outcome.dropped)}")
    if outcome.rule:
        print(outcome.rule)
    if result.kept:
        print(f"kept the top suggestion as {result.kept.label}")
    print(f"{outcome.model_calls} model calls, {outcome.seconds:.1f} s. Scores are on tuning "
          "items only; confirm a wording on held-out items before relying on it.")


def hone_verb(args) -> int:
    from .core.hone import HoneBudget

    project = open_project(args.project)
    budget = HoneBudget(rounds=args.rounds, per_round=args.count, patience=args.patience,
                        seconds=args.seconds, model_calls=args.model_calls)

    def show(rnd) -> None:
        if not args.json:
            kept = f", kept {project.entry(rnd.kept_id).label}" if rnd.kept_id else ""
            held = f", held-out {rnd.held_out.text()}" if rnd.held_out else ""
            print(f"round {rnd.number}: best {rnd.best_tuning.text()}{kept}{held}", flush=True)

    written_by = []

    def run(engine, proposer):
        from .core.engines.choice import engine_label

        written_by.append("" if args.strategy == "phrase-edits" else engine_label(proposer))
        if written_by[0] and not args.json:
            print(f"suggestions written by {written_by[0]}, graded by "
                  f"{engine_label(engine)}", flush=True)
        return project.hone(engine, strategy=args.strategy, budget=budget, settings=settings,
                            on_round=show, cancel=threading.Event(), proposer=proposer)

    try:
        settings = run_settings(project, args)
        outcome = _with_engines(args, project, run).value
    finally:
        project.close()
    if args.json:
        print(json.dumps({"session": outcome.session, "stop_reason": outcome.stop_reason,
                          "proposer": written_by[0] or "no model (phrase edits)",
                          "rounds": [{
                              "round": r.number, "best_wording": r.best_text,
                              "best_tuning": r.best_tuning.rate,
                              "best_tuning_interval": [r.best_tuning.low, r.best_tuning.high],
                              "n": r.best_tuning.total, "kept_id": r.kept_id,
                              "held_out": r.held_out.rate if r.held_out else None,
                              "model_calls": r.model_calls, "seconds": round(r.seconds, 2)}
                              for r in outcome.rounds]}, indent=2, ensure_ascii=False))
    else:
        print(f"stopped: {outcome.stop_reason}. The best tuning score is the best of many tries "
              "on the same items and is optimistic; the held-out scores are the fairer estimate.")
    return 0


# -- confirm, compare, export ---------------------------------------------------------------
def confirm_verb(args) -> int:
    project = open_project(args.project)
    try:
        entry = project.shelf_entry(args.version)
        settings = run_settings(project, args)
        done = _with_engine(args, lambda engine: project.confirm(
            engine, entry.id, settings=settings, on_event=ProgressPrinter(),
            cancel=threading.Event()))
        print(done.value.text())
    finally:
        project.close()
    return 0


def compare_verb(args) -> int:
    project = open_project(args.project)
    try:
        a, b = (project.shelf_entry(v).id for v in (args.first, args.second))
        settings = run_settings(project, args)

        def compare(engine):
            return project.compare(engine, a, b, split=args.split, settings=settings,
                                   on_event=ProgressPrinter(), cancel=threading.Event())

        graded = all(project.graded_run(x, args.split) is not None for x in (a, b))
        comparison = (compare(None) if graded else _with_engine(args, compare)).value
        print(comparison.text())
        for title, pairs in (("fixed", comparison.fixed), ("broken", comparison.broken)):
            if pairs:
                print(f"{title}: " + ", ".join(p.item.id for p in pairs))
    finally:
        project.close()
    return 0


def export_verb(args) -> int:
    if not (args.html or args.csv or args.text):
        raise ValueError("say what to export: --html FILE, --csv FILE and/or --text FILE")
    project = open_project(args.project)
    try:
        chosen = project.shelf_entry(args.version).id if args.version else None
        if args.html:
            print(f"report: {project.export_report(args.html, chosen=chosen).value}")
        if args.csv:
            print(f"marks: {project.export_marks(args.csv).value}")
        if args.text:
            print(f"wording: {project.export_wording(args.text, chosen=chosen).value}")
    finally:
        project.close()
    return 0


# -- resume -------------------------------------------------------------------------------
def resume_verb(args) -> int:
    project = open_project(args.project)
    try:
        done = _with_engine(args, lambda engine: project.resume(
            engine, args.run, on_event=ProgressPrinter(quiet=args.json),
            cancel=threading.Event()))
        resumed, outcome = done.value.resumed, done.value.outcome
        summary = project.summary(outcome.run_id)
        if args.json:
            out = summary.as_dict()
            out.update(run_id=outcome.run_id, resumed=resumed, status=outcome.status,
                       model_calls=outcome.model_calls,
                       marks=[m.as_dict() for m in outcome.marks])
            print(json.dumps(out, indent=2, ensure_ascii=False))
        else:
            print(f"resumed run {resumed} as run {outcome.run_id}: {outcome.status}, "
                  f"{outcome.model_calls} "
                  "model calls, the other answers from the cache")
            for line in summary.lines():
                print(line)
    finally:
        project.close()
    return 0
