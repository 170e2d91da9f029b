"""The score-vs-cost view of the progress chart as a hand-built inline SVG.

Each shelf version with a tuning score and a measured cost is a marker at (cost, score),
with its 95% interval as a whisker and its label beside it; the marker's shape gives the
decision as on the progress chart. The Pareto front (core/cost.py) is a step line through
its versions, each ringed. Text and axes use currentColor, so the chart follows the page.
"""
from __future__ import annotations

from html import escape
from math import ceil, floor, log10
from typing import Sequence

from .chart_svg import SHAPES, _f, _marker, percent_axis, shape_legend, svg_start
from .cost import MEASURES, CostPoint, front_of, front_steps

POINT = "#2b7bb9"
FRONT = "#d9661f"


def nice_ticks(low: float, high: float, count: int = 5) -> list[float]:
    """About ``count`` round tick values covering [low, high] (steps of 1, 2 or 5 x 10^k;
    common practice)."""
    if high <= low:
        high = low + 1.0
    raw = (high - low) / max(count, 1)
    power = 10 ** floor(log10(raw))
    step = next(m * power for m in (1, 2, 5, 10) if m * power >= raw)
    first = floor(low / step) * step
    return [first + i * step for i in range(int(ceil((high - first) / step - 1e-9)) + 1)]


def _tick_text(x: float, step: float) -> str:
    places = max(0, -floor(log10(step) + 1e-9)) if step > 0 else 0
    return f"{x:,.{places}f}"


def cost_chart_svg(points: Sequence[CostPoint], *, measure: str = "tokens", width: int = 720,
                   height: int = 360, title: str = "Score against cost") -> str:
    """An <svg> element (text) for the points of core.cost.cost_points."""
    left, right, top, bottom = 62, 24, 40, 58
    plot_w, plot_h = width - left - right, height - top - bottom
    values = [p.cost_value for p in points]
    ticks = nice_ticks(min(values, default=0.0), max(values, default=1.0))
    x0, x1 = ticks[0], ticks[-1]

    def x_at(v: float) -> float:
        return left + 12 + (v - x0) / (x1 - x0) * (plot_w - 24)

    def y_at(rate: float) -> float:
        return top + (1 - rate) * plot_h

    desc = (f"{title}: tuning score against {MEASURES[measure]} for {len(points)} shelf "
            f"version{'s' if len(points) != 1 else ''}")
    out = svg_start(width, height, desc) + percent_axis(y_at, left, top, plot_w, plot_h)
    base = top + plot_h
    for tick in ticks:
        x = x_at(tick)
        out.append(f'<line x1="{_f(x)}" y1="{base}" x2="{_f(x)}" y2="{base + 4}" '
                   'stroke="currentColor" stroke-opacity="0.6"/>')
        out.append(f'<text x="{_f(x)}" y="{base + 18}" text-anchor="middle" '
                   f'fill="currentColor">{_tick_text(tick, ticks[1] - ticks[0])}</text>')
    cy = top + plot_h / 2
    out.append(f'<text x="16" y="{_f(cy)}" text-anchor="middle" fill="currentColor" '
               f'transform="rotate(-90 16 {_f(cy)})">tuning score (% of items passed)</text>')
    out.append(f'<text x="{_f(left + plot_w / 2)}" y="{height - 10}" text-anchor="middle" '
               f'fill="currentColor">cost: {escape(MEASURES[measure])} (lower is cheaper)</text>')
    if not points:
        out.append(f'<text x="{_f(left + plot_w / 2)}" y="{_f(cy - 8)}" text-anchor="middle" '
                   'fill="currentColor" font-style="italic">No version has both a tuning score '
                   'and a measured cost yet.</text>')
    front = front_of(points)
    steps = front_steps([(p.cost_value, p.score.rate) for p in front])
    if len(steps) > 1:
        line = " ".join(f"{_f(x_at(c))},{_f(y_at(s))}" for c, s in steps)
        out.append(f'<polyline points="{line}" fill="none" stroke="{FRONT}" stroke-width="2" '
                   'stroke-linejoin="round" class="front"/>')
    for p in points:
        x, s = x_at(p.cost_value), p.score
        out.append(f'<line x1="{_f(x)}" y1="{_f(y_at(s.low))}" x2="{_f(x)}" '
                   f'y2="{_f(y_at(s.high))}" stroke="{POINT}" stroke-opacity="0.35" '
                   'stroke-width="5" class="whisker"/>')
    for p in points:
        x, y = x_at(p.cost_value), y_at(p.score.rate)
        if p.on_front:
            out.append(f'<circle cx="{_f(x)}" cy="{_f(y)}" r="9" fill="none" stroke="{FRONT}" '
                       f'stroke-width="2" class="front-ring"/>')
        tip = (f"{p.label}: tuning {p.score.text()}; {p.cost.text()}"
               + ("; on the Pareto front" if p.on_front else ""))
        out.append(_marker(SHAPES.get(p.decision, "square"), x, y, POINT, tip))
        out.append(f'<text x="{_f(x + 12)}" y="{_f(y - 8)}" fill="currentColor" '
                   f'class="point-label">{escape(p.label)}</text>')
    out.extend(_legend(left))
    out.append("</svg>")
    return "\n".join(out)


def _legend(x: float) -> list[str]:
    y = 18
    out = ['<g class="legend">',
           f'<line x1="{_f(x)}" y1="{y}" x2="{_f(x + 26)}" y2="{y}" stroke="{FRONT}" '
           'stroke-width="2"/>',
           f'<circle cx="{_f(x + 13)}" cy="{y}" r="7" fill="none" stroke="{FRONT}" '
           'stroke-width="2"/>',
           f'<text x="{_f(x + 32)}" y="{y + 4}" fill="currentColor">Pareto front</text>']
    out += shape_legend(x + 40 + 7.0 * len("Pareto front") + 8, y)
    out.append("</g>")
    return out
