"""The report's cost section: the score-vs-cost trade-off table and chart, with cautions."""
from __future__ import annotations

from html import escape
from typing import Sequence

from .chart_cost_svg import cost_chart_svg
from .cost import SECONDS_CAUTION, CostPoint, cost_points

DECISIONS = {"kept": "kept", "set_aside": "set aside", "": "not decided"}


def _num(x: float | None, places: int) -> str:
    return "—" if x is None else f"{x:,.{places}f}"


def tradeoff_table(points: Sequence[CostPoint]) -> str:
    """One row per version, cheapest first: score, tokens, seconds and the front."""
    head = ("<tr><th>version</th><th>decision</th><th>tuning score (95% interval, n)</th>"
            "<th>prompt tokens per item</th><th>answer tokens per item</th>"
            "<th>tokens per item</th><th>seconds each item waited (items timed)</th>"
            "<th>Pareto front</th></tr>")
    body = []
    for p in sorted(points, key=lambda p: (p.cost_value, -p.score.rate, p.label)):
        c = p.cost
        seconds = f"{_num(c.mean_seconds, 3)} ({c.timed})"
        body.append(
            f"<tr><td>{escape(p.label)}</td>"
            f"<td>{escape(DECISIONS.get(p.decision, p.decision))}</td>"
            f"<td>{escape(p.score.text())}</td><td>{_num(c.mean_prompt_tokens, 1)}</td>"
            f"<td>{_num(c.mean_answer_tokens, 1)}</td><td>{_num(c.mean_tokens, 1)}</td>"
            f"<td>{seconds}</td><td>{'<strong>on the front</strong>' if p.on_front else ''}"
            "</td></tr>")
    return f"<table>{head}{''.join(body)}</table>"


def cautions(points: Sequence[CostPoint]) -> list[str]:
    """The cautions that apply to these points, as plain sentences."""
    n = max(p.score.total for p in points)
    out = [f"The front compares point scores: with {n} tuning items one item is "
           f"{100 / n:.1f} points, and a version beaten by a few points may be as good; read "
           "the intervals and compare the versions on the same items before dropping a "
           "cheaper one.",
           SECONDS_CAUTION,
           "Token counts come from the engine's own tokenizer: they compare wordings on one "
           "engine, not one engine with another."]
    if any(p.cost.total_answer_tokens == 0 for p in points):
        out.append("Answer tokens of 0: the answers were chosen by scoring the labels, which "
                   "generates nothing; their cost is in the prompt tokens.")
    out.append("Answers taken from the cache count with the tokens and seconds measured when "
               "the model first gave them, so a re-graded wording does not look free.")
    return out


def cost_section(rows: Sequence) -> str:
    """The whole <section id="cost"> for the shelf rows (core.views.ShelfRow)."""
    points = cost_points(rows)
    if not points:
        body = ("<p>No shelf version has a tuning score with a measured cost yet; grade a "
                "wording on the tuning items to start the trade-off.</p>")
    else:
        on_front = ", ".join(p.label for p in points if p.on_front)
        body = (
            "<p>Each version's tuning score beside what answering one item costs on its "
            "latest tuning run: prompt and answer tokens (the cost the front is drawn on) and "
            f"seconds. The Pareto front ({escape(on_front)}) holds the versions no other "
            "version beats on both: none scores at least as high for at most the same tokens "
            "with one of the two strictly better. Versions with equal score and cost both "
            "stay on it.</p>"
            + tradeoff_table(points) + cost_chart_svg(points)
            + '<p class="muted">Marker shape: the decision (circle kept, cross set aside, '
            "square not decided); whisker: 95% interval of the score; ringed versions joined "
            "by the step line: the Pareto front.</p>"
            + "<ul>" + "".join(f"<li>{escape(t)}</li>" for t in cautions(points)) + "</ul>")
    return f'<section id="cost">\n<h2>Cost beside score</h2>\n{body}\n</section>'
