"""Exports: one self-contained HTML report, every mark as CSV, the chosen wording as text.

The report has these sections (their HTML ids): task, set, engine, shelf, chosen,
comparison, chart, cautions. It uses inline CSS and an inline SVG chart only: no scripts,
no external files or links. Every text that comes from the user or the model is escaped.
"""
from __future__ import annotations

import csv
from dataclasses import dataclass
from datetime import datetime, timezone
from html import escape
from pathlib import Path

import pandas as pd

from .. import __version__
from .chart_svg import progress_chart_svg
from .compare import Comparison, compare_entries, latest_run, run_name
from .honesty import ShelfAssessment, assess_shelf
from .project import Project, ShelfRow
from .report_importance import importance_section
from .records import ShelfEntry
from .report_cost import cost_section
from .report_transfer import transfer_section
from .sets import QuestionSet
from .stats import Score
from .wording import PLACEMENT_LABELS

SECTIONS = ("task", "set", "engine", "shelf", "chosen", "comparison", "chart", "cost",
            "cautions")
SPLITS = ("tuning", "held_out")
CSV_COLUMNS = ("run_id", "version", "split", "item_id", "expected", "output", "extracted",
               "passed", "score", "why", "error", "tokens", "seconds")
DECISIONS = {"kept": "kept", "set_aside": "set aside", "": "not decided"}

STYLE = """
:root { color-scheme: light dark; }
body { font-family: system-ui, sans-serif; line-height: 1.45; max-width: 64rem;
       margin: 2rem auto; padding: 0 1rem; }
h1 { font-size: 1.6rem; } h2 { font-size: 1.25rem; margin-top: 2rem;
     border-bottom: 1px solid rgba(127,127,127,.4); }
table { border-collapse: collapse; width: 100%; font-size: .92rem; }
th, td { border: 1px solid rgba(127,127,127,.4); padding: .3rem .45rem; vertical-align: top;
         text-align: left; }
th { background: rgba(127,127,127,.12); }
pre { white-space: pre-wrap; word-break: break-word; margin: 0; font-size: .88rem; }
.wording { padding: .6rem; border: 1px solid rgba(127,127,127,.4); border-radius: 4px; }
.setaside { opacity: .6; } .warn { font-weight: 600; }
.muted { opacity: .75; } code { font-size: .9em; }
"""


@dataclass(frozen=True)
class Choice:
    """Which wording a report or text export presents, and the rule that chose it."""

    entry: ShelfEntry | None
    rule: str


def shelf_run_ids(project: Project) -> dict[int, dict[str, int | None]]:
    """Entry id -> {"tuning": run id, "held_out": run id} of the latest finished runs on
    the current set (the runs the shelf's scores come from)."""
    set_id, _ = project.current_set()
    return {e.id: {split: latest_run(project.store, e.text, e.placement, split, set_id)
                   for split in SPLITS} for e in project.store.shelf()}


def choose_wording(project: Project, chosen_id: int | None = None,
                   rows: list[ShelfRow] | None = None) -> Choice:
    """The given entry; else the confirmed best; else the kept entry with the top tuning
    score; else the most recently kept entry. Entry ids are ShelfEntry.id."""
    rows = project.shelf_rows() if rows is None else rows
    by_id = {r.entry.id: r for r in rows}
    if chosen_id is not None:
        if chosen_id not in by_id:
            known = ", ".join(f"{r.entry.label} (id {r.entry.id})" for r in rows) or "nothing"
            raise ValueError(f"no shelf entry with id {chosen_id}; the shelf holds {known}")
        entry = by_id[chosen_id].entry
        aside = " It is set aside on the shelf." if entry.decision == "set_aside" else ""
        return Choice(entry, f"Chosen by you: {entry.label}.{aside}")
    found = assess_shelf(rows)
    if found.best_id is not None:
        return Choice(by_id[found.best_id].entry,
                      "Chosen by the rule: the kept version with the top tuning score, once "
                      f"confirmed on held-out items. {found.best_reason}")
    if found.leader_id is not None:
        return Choice(by_id[found.leader_id].entry,
                      "Chosen as the kept version with the top tuning score; it is not "
                      f"confirmed on held-out items yet. {found.best_reason}")
    kept = [r.entry for r in rows if r.entry.decision == "kept"]
    if kept:
        return Choice(kept[-1], "No kept version has a tuning score yet, so this is the most "
                                "recently kept version.")
    return Choice(None, "Nothing is kept on the shelf yet, so no wording is chosen.")


def chosen_wording_text(project: Project, chosen_id: int | None = None) -> str:
    """The chosen wording's text alone (see choose_wording). LookupError if none."""
    choice = choose_wording(project, chosen_id)
    if choice.entry is None:
        raise LookupError(f"{project.path}: nothing is kept on the shelf yet; keep a wording "
                          "(or name a shelf entry) before exporting it")
    return choice.entry.text


# -- HTML --------------------------------------------------------------------------------
def _score(s: Score | None) -> str:
    return "not graded" if s is None else escape(s.text())


def _pre(text: str, css: str = "") -> str:
    """Preformatted, escaped text; a leading line break survives (browsers drop one)."""
    lead = "\n" if text.startswith(("\n", "\r")) else ""
    attr = f' class="{css}"' if css else ""
    return f"<pre{attr}>{lead}{escape(text)}</pre>"


def _section(sid: str, title: str, body: str) -> str:
    return f'<section id="{sid}">\n<h2>{escape(title)}</h2>\n{body}\n</section>'


def _task(project: Project) -> str:
    check = project.check()
    return (f"<p>Task: <strong>{escape(project.title())}</strong></p>"
            f"<p>Answer check: {escape(check.describe())}</p>"
            f'<p class="muted">Project file: <code>{escape(project.path.name)}</code></p>')


def _set(qset: QuestionSet) -> str:
    tuning, held = len(qset.tuning()), len(qset.held_out())
    rows = [("name", qset.name), ("content hash (sha256)", qset.content_hash),
            ("items", str(len(qset))), ("tuning items", str(tuning)),
            ("held-out items", str(held)), ("split seed", str(qset.split_seed)),
            ("held-out fraction", f"{qset.held_out_fraction:g}")]
    cells = "".join(f"<tr><th>{escape(k)}</th><td>{escape(v)}</td></tr>" for k, v in rows)
    return f"<table>{cells}</table>"


def _engine(project: Project, run_ids: list[int]) -> str:
    if not run_ids:
        return "<p>No finished grade runs on this set yet.</p>"
    seen: dict[str, list[str]] = {}
    for rid in run_ids:
        run = project.store.run(rid)
        label = f"{run_name(project.store, rid)} {run.split.replace('_', '-')} (run {rid})"
        seen.setdefault(run.fingerprint, []).append(label)
    items = "".join(f"<li><code>{escape(fp)}</code>: {escape(', '.join(runs))}</li>"
                    for fp, runs in seen.items())
    note = ("" if len(seen) == 1 else '<p class="warn">These scores come from more than one '
            "engine set-up; scores from different engines are not directly comparable.</p>")
    return f"<p>Engine fingerprints of the runs used in this report:</p><ul>{items}</ul>{note}"


def _shelf(rows: list[ShelfRow], found: ShelfAssessment) -> str:
    if not rows:
        return "<p>Nothing on the shelf yet.</p>"
    head = ("<tr><th>version</th><th>wording</th><th>placement</th><th>origin</th>"
            "<th>decision</th><th>tuning score (95% interval, n)</th>"
            "<th>held-out score (95% interval, n)</th><th>notes</th></tr>")
    body = []
    for r in rows:
        e = r.entry
        notes = [escape(e.note)] if e.note else []
        if e.id == found.best_id:
            notes.append("<strong>best</strong>: leads on tuning items, held-out measured")
        elif e.id == found.leader_id:
            notes.append("leads on tuning items; not confirmed on held-out items yet")
        notes += [f'<span class="warn">{escape(w)}</span>' for w in found.warnings.get(e.id, [])]
        css = ' class="setaside"' if e.decision == "set_aside" else ""
        body.append(
            f"<tr{css}><td>{escape(e.label)}</td><td>{_pre(e.text)}</td>"
            f"<td>{escape(PLACEMENT_LABELS.get(e.placement, e.placement))}</td>"
            f"<td>{escape(e.origin.replace('_', ' '))}</td>"
            f"<td>{escape(DECISIONS.get(e.decision, e.decision))}</td>"
            f"<td>{_score(r.tuning)}</td><td>{_score(r.held_out)}</td>"
            f"<td>{'<br>'.join(notes)}</td></tr>")
    extra = [f"<p>{escape(found.best_reason)}</p>"]
    if found.optimism_note:
        extra.append(f'<p class="warn">{escape(found.optimism_note)}</p>')
    extra.append(f'<p class="muted">Variants tried: {found.variants_tried} (shelf entries kept '
                 "or set aside).</p>")
    return f"<table>{head}{''.join(body)}</table>" + "".join(extra)


def _unfinished(project: Project) -> str:
    """A warning listing the interrupted runs, whose marks count in no score."""
    from .resume import unfinished_runs

    found = unfinished_runs(project.store)
    if not found:
        return ""
    listed = "".join(f"<li>{escape(u.text())}</li>" for u in found)
    return (f'<p class="warn">Interrupted grade runs (their marks are kept but count in no '
            f"score above):</p><ul>{listed}</ul><p class=\"muted\">Resume one with "
            f"<code>honebench resume {escape(project.path.name)} RUN</code> or from the "
            "window; answers it already received come from the cache.</p>")


def _chosen(choice: Choice, rows: list[ShelfRow]) -> str:
    if choice.entry is None:
        return f"<p>{escape(choice.rule)}</p>"
    e = choice.entry
    row = next(r for r in rows if r.entry.id == e.id)
    return (f"<p><strong>{escape(e.label)}</strong>, placement: "
            f"{escape(PLACEMENT_LABELS.get(e.placement, e.placement))}.</p>"
            f"{_pre(e.text, 'wording')}"
            f"<p>Tuning items: {_score(row.tuning)}. Held-out items: {_score(row.held_out)}.</p>"
            f"<p>{escape(choice.rule)}</p>")


def _fields_text(fields: dict) -> str:
    if len(fields) == 1:
        return next(iter(fields.values()))
    return "\n".join(f"{k}: {v}" for k, v in fields.items())


def _pair_table(title: str, pairs, comparison: Comparison) -> str:
    if not pairs:
        return f"<h3>{escape(title)}: none</h3>"
    a, b = escape(comparison.name_a), escape(comparison.name_b)
    head = (f"<tr><th>item</th><th>input</th><th>expected</th><th>{a} output</th>"
            f"<th>{b} output</th></tr>")
    body = "".join(
        f"<tr><td>{escape(p.item.id)}</td><td>{_pre(_fields_text(p.item.fields))}</td>"
        f"<td>{_pre(p.item.expected)}</td>"
        f"<td>{_pre(p.a.output)}<span class=\"muted\">{escape(p.a.why)}</span></td>"
        f"<td>{_pre(p.b.output)}<span class=\"muted\">{escape(p.b.why)}</span></td>"
        "</tr>" for p in pairs)
    return f"<h3>{escape(title)} ({len(pairs)})</h3><table>{head}{body}</table>"


def _comparison(project: Project, set_id: int, choice: Choice,
                rows: list[ShelfRow]) -> tuple[str, list[int]]:
    if choice.entry is None or not rows:
        return "<p>No chosen wording to compare.</p>", []
    first = rows[0].entry
    if first.id == choice.entry.id:
        return (f"<p>The chosen wording is {escape(first.label)}, the first version itself; "
                "there is nothing earlier to compare it with.</p>"), []
    try:
        found = compare_entries(project.store, set_id, first, choice.entry, "tuning")
    except ValueError as exc:
        return f"<p>{escape(str(exc))}</p>", []
    intro = (f"<p>{escape(found.name_b)} (chosen) against {escape(found.name_a)} (the first "
             "version), on the tuning items both were graded on. Fixed items were missed by "
             f"{escape(found.name_a)} and passed by {escape(found.name_b)}; broken items the "
             "reverse.</p>")
    body = (intro + f"<p><strong>{escape(found.text())}</strong></p>"
            + _pair_table("Fixed items", found.fixed, found)
            + _pair_table("Broken items", found.broken, found))
    return body, [found.run_a, found.run_b]


def _cautions(qset: QuestionSet, tried: int) -> str:
    n = len(qset.tuning())
    point = f"one item is {100 / n:.1f} points of score" if n else "there are no tuning items"
    items = [
        f"Small sets are noisy: with {n} tuning items, {point}. A gain of a few points is "
        "often chance; read the paired test and the intervals before trusting it.",
        f"Tuned wordings overfit: a wording kept because it scored best on the tuning items "
        f"usually scores lower on new items, and the more variants are tried ({tried} here), "
        "the larger that gap tends to be.",
        "Confirm on held-out items: they were not used to choose, so their score is the "
        "fairer estimate. Changing the wording again because of the held-out score turns "
        "those items into tuning items.",
        "Review the outputs, not just the score, before using this wording for anything "
        "that affects people: a score does not show how an answer goes wrong.",
    ]
    return "<ul>" + "".join(f"<li>{escape(t)}</li>" for t in items) + "</ul>"


def report_html(project: Project, *, chosen_id: int | None = None) -> str:
    """The report as one HTML document (text)."""
    set_id, qset = project.current_set()
    rows = project.shelf_rows()
    found = assess_shelf(rows)
    choice = choose_wording(project, chosen_id, rows)
    runs = shelf_run_ids(project)
    comparison, compared = _comparison(project, set_id, choice, rows)
    used = sorted({r for splits in runs.values() for r in splits.values() if r} | set(compared))
    when = datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    chart = (progress_chart_svg(rows) + '<p class="muted">Solid line: tuning items; dashed: '
             "held-out items. Circle: kept; cross: set aside; square: not decided.</p>")
    parts = [
        _section("task", "Task", _task(project)),
        _section("set", "Question set", _set(qset)),
        _section("engine", "Engine", _engine(project, used)),
        _section("shelf", "Shelf", _shelf(rows, found) + _unfinished(project)),
        _section("chosen", "Chosen wording", _chosen(choice, rows)),
        _section("comparison", "Chosen against the first version", comparison),
        _section("chart", "Progress chart", chart),
        cost_section(rows),
        transfer_section(project),  # "" when no transfer check was run
        importance_section(project),
        _section("cautions", "Cautions", _cautions(qset, found.variants_tried)),
    ]
    return ("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
            f"<title>{escape(project.title())}: honebench report</title>\n"
            f"<style>{STYLE}</style>\n</head>\n<body>\n"
            f"<h1>{escape(project.title())}</h1>\n"
            f'<p class="muted">honebench {escape(__version__)} report, written {when}.</p>\n'
            + "\n".join(parts) + "\n</body>\n</html>\n")


def write_html_report(project: Project, path: str | Path, *,
                      chosen_id: int | None = None) -> Path:
    """Write the self-contained HTML report; returns the path written."""
    path = Path(path)
    path.write_text(report_html(project, chosen_id=chosen_id), encoding="utf-8")
    return path


# -- CSV ---------------------------------------------------------------------------------
def marks_table(project: Project, run_id: int | None = None) -> pd.DataFrame:
    """All marks of all runs (or of one run), one row each, in run then item order."""
    store = project.store
    runs = [store.run(run_id)] if run_id is not None else store.runs()
    sets: dict[int, QuestionSet] = {}
    records = []
    for run in runs:
        qset = sets.setdefault(run.set_id, store.get_set(run.set_id))
        position = {it.id: i for i, it in enumerate(qset.items)}
        expected = {it.id: it.expected for it in qset.items}
        name = run_name(store, run.id)
        version = "" if name.startswith("run ") else name
        for m in sorted(store.marks(run.id), key=lambda m: position.get(m.item_id, 1 << 30)):
            records.append((run.id, version, run.split, m.item_id, expected.get(m.item_id, ""),
                            m.output, m.extracted, m.passed, m.score, m.why, m.error or "",
                            m.prompt_tokens + m.completion_tokens, m.seconds))
    return pd.DataFrame.from_records(records, columns=list(CSV_COLUMNS))


def write_marks_csv(project: Project, path: str | Path, run_id: int | None = None) -> Path:
    """Write marks as UTF-8 CSV with RFC 4180 quoting (fields with commas, quotes or line
    breaks quoted, quotes doubled, CRLF between records); returns the path written."""
    path = Path(path)
    marks_table(project, run_id).to_csv(path, index=False, quoting=csv.QUOTE_MINIMAL,
                                        lineterminator="\r\n", encoding="utf-8")
    return path
