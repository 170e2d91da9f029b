"""The report's "Transfer" section: the saved transfer checks (core/transfer.py), the newest
per other engine. Each shows both engines, n, per version both scores with 95% Wilson
intervals, ranks, the paired test between engines and the flags, then the caution.
Returns "" when no transfer check was run, so the report leaves the section out."""
from __future__ import annotations

from html import escape

from .transfer import CAUTION, TransferResult, engine_test_text

SHOWN = 3  # the newest checks on this many other engines


def _score(s) -> str:
    return escape(s.text())


def _table(result: TransferResult) -> str:
    of = len(result.versions)
    head = ("<tr><th>version</th><th>here: score (95% interval, n)</th><th>rank here</th>"
            "<th>there: score (95% interval, n)</th><th>rank there</th>"
            "<th>paired test between engines</th><th>flag</th></tr>")
    rows = []
    for v in result.versions:
        errors = ""
        if v.errors_here or v.errors_there:
            errors = (f'<br><span class="warn">{v.errors_here} error marks here, '
                      f"{v.errors_there} there (each counts as a miss)</span>")
        flags = "; ".join(v.flags)
        if v.flips:
            flags += f" (against {', '.join(v.flips)})"
        rows.append(
            f"<tr><td>{escape(v.label)}</td><td>{_score(v.here)}</td>"
            f"<td>{v.rank_here} of {of}</td><td>{_score(v.there)}{errors}</td>"
            f"<td>{v.rank_there} of {of}</td><td>{escape(engine_test_text(v.paired))}</td>"
            f'<td class="warn">{escape(flags)}</td></tr>')
    return f"<table>{head}{''.join(rows)}</table>"


def transfer_section(project) -> str:
    """The whole <section>, or "" when the project holds no transfer check."""
    saved = project.store.analyses("transfer")
    if not saved:
        return ""
    newest: dict[str, dict] = {}
    for analysis in saved:  # oldest first: a later check on the same engine replaces it
        newest.pop(analysis["subject"], None)
        newest[analysis["subject"]] = analysis
    parts = []
    for analysis in list(newest.values())[::-1][:SHOWN]:
        result = TransferResult.from_dict(analysis["result"])
        split = result.split.replace("_", "-")
        parts.append(
            f"<h3>On {escape(result.there_engine)}</h3>"
            f"<p>Here: {escape(result.here_engine)}; there: {escape(result.there_engine)}; "
            f"the same {result.n} {escape(split)} items on both, checked "
            f"{escape(str(analysis['created_at'])[:16].replace('T', ' '))}.</p>"
            + _table(result))
    more = len(newest) - SHOWN
    if more > 0:
        parts.append(f'<p class="muted">{more} older checks on other engines are saved in '
                     "the project and not shown.</p>")
    parts.append(
        '<p class="muted">Rank: 1 + the number of versions that pass more items on that '
        "engine (ties share a rank). “wins here, not there”: first here, beaten there; "
        "“order changes”: it passes more items than another version on one engine and "
        "fewer on the other. The paired test is the exact McNemar test on the items the "
        "two engines judge differently.</p>")
    parts.append(f'<p class="warn">{escape(CAUTION)}</p>')
    return ('<section id="transfer">\n<h2>Transfer to another engine</h2>\n'
            + "\n".join(parts) + "\n</section>")
