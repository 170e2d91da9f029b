"""The report's "Phrase importance" section: for each shelf version with a saved analysis,
the wording with its phrases shaded by their effect, a table with n, intervals, fixed /
broken items and the exact paired test, and the cautions. Empty when nothing was analysed.

Fills are translucent blue (the phrase helps: leaving it out lowers the score) and orange
(it hurts), so the text keeps the page's own colour on light and dark pages alike.
"""
from __future__ import annotations

from html import escape

from .importance import CAUTION, ImportanceResult, points

HELPS, HURTS = (40, 110, 220), (235, 120, 20)


def _fill(delta: float, scale: float) -> str:
    r, g, b = HELPS if delta < 0 else HURTS
    alpha = 0.15 + 0.35 * min(1.0, abs(delta) / scale)
    return f"rgba({r},{g},{b},{alpha:.2f})"


def shaded_wording(result: ImportanceResult) -> str:
    """The wording as preformatted text, each phrase in a span with its fill (or a dotted
    underline when it has no measurable effect) and its numbers as the title."""
    scale = max([abs(e.delta) for e in result.effects if e.measurable] + [0.05])
    out, at = [], 0
    for e in sorted(result.effects, key=lambda e: e.start):
        out.append(escape(result.text[at:e.start]))
        style = (f"background:{_fill(e.delta, scale)}" if e.measurable
                 else "text-decoration:underline dotted")
        out.append(f'<span style="{style}" title="{escape(e.tip())}">'
                   f"{escape(result.text[e.start:e.end])}</span>")
        at = e.end
    out.append(escape(result.text[at:]))
    return f'<pre class="wording">{"".join(out)}</pre>'


def _table(result: ImportanceResult) -> str:
    head = ("<tr><th>#</th><th>phrase</th><th>change when left out</th><th>95% interval</th>"
            "<th>fixed</th><th>broken</th><th>exact paired p</th><th>n</th><th>effect</th></tr>")
    rows = []
    for e in result.effects:
        early = " (stopped early)" if e.stopped_early else ""
        rows.append(f"<tr><td>{e.index + 1}</td><td>{escape(e.phrase)}</td>"
                    f"<td>{points(e.delta)}</td><td>{points(e.low)} to {points(e.high)}</td>"
                    f"<td>{e.fixed}</td><td>{e.broken}</td><td>{e.p_value:.3g}</td>"
                    f"<td>{e.n}{early}</td><td>{escape(e.verdict())}</td></tr>")
    return f"<table>{head}{''.join(rows)}</table>"


def importance_section(project) -> str:
    """The section's HTML, or "" when no version has a saved phrase importance."""
    results = project.saved_importances()
    if not results:
        return ""
    parts = ['<section id="importance">\n<h2>Phrase importance</h2>',
             "<p>Each phrase (split after . ! ? and ;) was left out alone and the rest graded "
             "on the tuning items, then compared item by item with the whole wording: the "
             "change in score, its 95% paired interval (Newcombe's hybrid score interval), "
             "the items leaving it out fixes and breaks, and the exact McNemar test. "
             "<span style=\"background:rgba(40,110,220,.4)\">Blue</span>: the phrase helps "
             "(leaving it out lowers the score); <span style=\"background:rgba(235,120,20,"
             ".4)\">orange</span>: it hurts; dotted underline: no measurable effect (the "
             "interval holds 0); paler means a smaller change.</p>"]
    for r in results:
        rate = r.base_passed / r.n_items if r.n_items else 0.0
        early = (" Phrases marked “stopped early” clearly mattered after fewer items and "
                 "were not graded further; their size may be overstated."
                 if any(e.stopped_early for e in r.effects) else "")
        parts.append(f"<h3>{escape(r.label)}</h3>"
                     f"<p>{r.base_passed}/{r.n_items} = {rate:.1%} on the tuning items "
                     f"(n = {r.n_items}).{escape(early)}</p>"
                     + shaded_wording(r) + _table(r))
    parts.append(f'<p class="warn">{escape(CAUTION)} Tuning items chose these wordings, so '
                 "the effects are measured where the wording was tuned.</p>\n</section>")
    return "\n".join(parts)
