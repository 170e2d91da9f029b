"""CLI verbs over a project file: suggest, hone, confirm, compare, export."""
from __future__ import annotations

import json
import threading
from pathlib import Path

from .core.engines.base import Params
from .core.project import Project
from .core.store import PROJECT_SUFFIX
from .core.wording import Wording


def open_project(path: str | Path) -> Project:
    p = Path(path)
    if p.suffix != PROJECT_SUFFIX or not p.exists():
        raise ValueError(f"{p} is not an existing project file ({PROJECT_SUFFIX}); grade a "
                         "question set first (`honebench grade SET ...`) or open it in the window")
    return Project(p)


def _params(args) -> Params:
    return Params(max_tokens=args.max_tokens, temperature=args.temperature, seed=args.seed,
                  answer_mode=getattr(args, "answer_mode", "score"))


def _entry(project: Project, version: str | None):
    """A shelf entry by its label ("v3" or "3")."""
    if version is None:
        return None
    number = int(str(version).lstrip("vV"))
    for entry in project.store.shelf():
        if entry.version == number:
            return entry
    labels = ", ".join(e.label for e in project.store.shelf()) or "nothing yet"
    raise ValueError(f"no v{number} on the shelf; it holds {labels}")


def suggest_verb(args, engine) -> int:
    from .core.suggest.pipeline import suggest

    project = open_project(args.project)
    base_entry = _entry(project, args.base)
    base = Wording(base_entry.text, base_entry.placement) if base_entry else None
    other = _entry(project, args.other)
    outcome = suggest(project, engine, args.strategy, count=args.count, base=base,
                      other_id=other.id if other else None, seed=args.seed,
                      temperature=args.proposal_temperature, params=_params(args),
                      cancel=threading.Event())
    kept = None
    if args.keep_best and outcome.cards and outcome.cards[0].score.rate > outcome.base_score.rate:
        top = outcome.cards[0]
        parent = project.keep(outcome.base)  # the wording it came from goes on the shelf too
        kept = project.keep(Wording(top.text, top.placement), origin=top.strategy,
                            parent_id=parent.id, inputs=top.inputs).label
    if args.json:
        print(json.dumps([{
            "wording": c.text, "placement": c.placement, "score": c.score.rate,
            "passed": c.score.passed, "total": c.score.total,
            "interval": [c.score.low, c.score.high], "fixed": c.paired.fixed,
            "broken": c.paired.broken, "p_value": c.paired.p_value, "strategy": c.strategy,
            "inputs": c.inputs, "run_id": c.run_id} for c in outcome.cards],
            indent=2, ensure_ascii=False))
    else:
        print(f"current wording: {outcome.base_score.text()}")
        if outcome.notes.get("diagnosis"):
            print(f"diagnosis: {outcome.notes['diagnosis']}")
        print(outcome.message)
        for i, card in enumerate(outcome.cards, 1):
            print(f"\n[{i}] {card.score.text()}; {card.change_text(outcome.base_score)}")
            print(f"    {card.text}")
        if outcome.dropped:
            print(f"\ndropped: {'; '.join(outcome.dropped)}")
        if outcome.rule:
            print(outcome.rule)
        if kept:
            print(f"kept the top suggestion as {kept}")
        print(f"{outcome.model_calls} model calls, {outcome.seconds:.1f} s. Scores are on tuning "
              "items only; confirm a wording on held-out items before relying on it.")
    project.close()
    return 0


def hone_verb(args, engine) -> int:
    from .core.hone import HoneBudget, hone

    project = open_project(args.project)
    budget = HoneBudget(rounds=args.rounds, per_round=args.count, patience=args.patience,
                        seconds=args.seconds, model_calls=args.model_calls)

    def show(rnd):
        if not args.json:
            kept = f", kept v{project.store.wording(rnd.kept_id).version}" if rnd.kept_id else ""
            held = f", held-out {rnd.held_out.text()}" if rnd.held_out else ""
            print(f"round {rnd.number}: best {rnd.best_tuning.text()}{kept}{held}", flush=True)

    outcome = hone(project, engine, strategy=args.strategy, budget=budget, params=_params(args),
                   seed=args.seed, on_round=show, cancel=threading.Event())
    if args.json:
        print(json.dumps({"session": outcome.session, "stop_reason": outcome.stop_reason,
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
    project.close()
    return 0


def confirm_verb(args, engine) -> int:
    from .core.grading import Grader

    project = open_project(args.project)
    entry = _entry(project, args.version)
    set_id, qset = project.current_set()
    run = Grader(project.store, engine).grade(
        set_id=set_id, qset=qset, wording=Wording(entry.text, entry.placement),
        check=project.check(), params=_params(args), split="held_out", wording_id=entry.id)
    print(f"{entry.label} on held-out items: {project.run_score(run.run_id).text()}")
    project.close()
    return 0


def compare_verb(args) -> int:
    from .core.compare import compare_entries

    project = open_project(args.project)
    set_id, _ = project.current_set()
    a, b = _entry(project, args.first), _entry(project, args.second)
    comparison = compare_entries(project.store, set_id, a, b, split=args.split)
    print(comparison.text())
    for title, pairs in (("fixed", comparison.fixed), ("broken", comparison.broken)):
        if pairs:
            print(f"{title}: " + ", ".join(p.item.id for p in pairs))
    project.close()
    return 0


def export_verb(args) -> int:
    from .core.report import chosen_wording_text, write_html_report, write_marks_csv

    project = open_project(args.project)
    chosen = _entry(project, args.version)
    chosen_id = chosen.id if chosen else None
    if not (args.html or args.csv or args.text):
        raise ValueError("say what to export: --html FILE, --csv FILE and/or --text FILE")
    if args.html:
        print(f"report: {write_html_report(project, args.html, chosen_id=chosen_id)}")
    if args.csv:
        print(f"marks: {write_marks_csv(project, args.csv)}")
    if args.text:
        Path(args.text).write_text(chosen_wording_text(project, chosen_id) + "\n", encoding="utf-8")
        print(f"wording: {args.text}")
    project.close()
    return 0
