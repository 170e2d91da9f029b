"""The progress chart as a hand-built inline SVG: score per shelf version, in order of creation.

Tuning scores are a solid line, held-out scores a dashed line (joining the versions graded
on those items), each with its 95% interval as a whisker at every point and a shaded band
between neighbouring versions that were both graded. The decision is shown by the marker's
shape: a circle for kept, a cross for set aside, a hollow square for not yet decided.
Text and axes use currentColor, so the chart follows the page's colours.
"""
from __future__ import annotations

from html import escape
from math import ceil
from typing import Sequence

from .project import ShelfRow
from .stats import Score

SERIES = (  # (attribute on ShelfRow, legend name, colour, dash pattern, x offset)
    ("tuning", "tuning items", "#2b7bb9", "", -3.0),
    ("held_out", "held-out items", "#d9661f", "6 4", 3.0),
)
SHAPES = {"kept": "circle", "set_aside": "cross"}  # anything else: square
SHAPE_NAMES = (("circle", "kept"), ("cross", "set aside"), ("square", "not decided"))
MAX_TICK_LABELS = 20


def _f(x: float) -> str:
    return f"{x:.1f}".rstrip("0").rstrip(".")


def _marker(shape: str, x: float, y: float, colour: str, tip: str = "") -> str:
    title = f"<title>{escape(tip)}</title>" if tip else ""
    if shape == "circle":
        return (f'<circle cx="{_f(x)}" cy="{_f(y)}" r="4.5" fill="{colour}" '
                f'stroke="{colour}" class="marker kept">{title}</circle>')
    if shape == "cross":
        d = 4.5
        return (f'<path d="M{_f(x - d)},{_f(y - d)} L{_f(x + d)},{_f(y + d)} '
                f'M{_f(x - d)},{_f(y + d)} L{_f(x + d)},{_f(y - d)}" stroke="{colour}" '
                f'stroke-width="2.2" fill="none" class="marker set-aside">{title}</path>')
    d = 4.0
    return (f'<rect x="{_f(x - d)}" y="{_f(y - d)}" width="{_f(2 * d)}" height="{_f(2 * d)}" '
            f'fill="none" stroke="{colour}" stroke-width="1.8" class="marker undecided">'
            f'{title}</rect>')


def _runs_of_points(points: list[tuple[float, Score] | None]) -> list[list[tuple[float, Score]]]:
    """Split a series into stretches of consecutive versions that have a score."""
    stretches, current = [], []
    for point in points:
        if point is None:
            if current:
                stretches.append(current)
            current = []
        else:
            current.append(point)
    if current:
        stretches.append(current)
    return stretches


def svg_start(width: int, height: int, desc: str, standalone: bool = False) -> list[str]:
    """The opening <svg> tag and its <title>; ``standalone`` adds the SVG namespace."""
    namespace = ' xmlns="http://www.w3.org/2000/svg"' if standalone else ""
    return [f'<svg{namespace} width="{width}" height="{height}" '
            f'viewBox="0 0 {width} {height}" role="img" aria-label="{escape(desc)}" '
            f'font-family="sans-serif" font-size="12">',
            f"<title>{escape(desc)}</title>"]


def percent_axis(y_at, left: float, top: float, plot_w: float, plot_h: float) -> list[str]:
    """The 0-100% grid lines, their labels and the y axis line."""
    out = []
    for pct in (0, 25, 50, 75, 100):
        y = y_at(pct / 100)
        out.append(f'<line x1="{left}" y1="{_f(y)}" x2="{left + plot_w}" y2="{_f(y)}" '
                   f'stroke="currentColor" stroke-opacity="{0.6 if pct == 0 else 0.15}"/>')
        out.append(f'<text x="{left - 8}" y="{_f(y + 4)}" text-anchor="end" '
                   f'fill="currentColor">{pct}%</text>')
    out.append(f'<line x1="{left}" y1="{top}" x2="{left}" y2="{top + plot_h}" '
               'stroke="currentColor" stroke-opacity="0.6"/>')
    return out


def progress_chart_svg(rows: Sequence[ShelfRow], *, width: int = 720, height: int = 340,
                       title: str = "Progress chart", standalone: bool = False) -> str:
    """An <svg> element (text) for the shelf rows, in the order given (order of creation).
    ``standalone`` adds the SVG namespace, needed for a separate .svg file, not inside HTML."""
    left, right, top, bottom = 62, 18, 40, 58
    plot_w, plot_h = width - left - right, height - top - bottom
    n = len(rows)

    def x_at(i: int) -> float:
        return left + (i + 0.5) * plot_w / max(n, 1)

    def y_at(rate: float) -> float:
        return top + (1 - rate) * plot_h

    desc = f"{title}: scores of {n} shelf version{'s' if n != 1 else ''}"
    out = svg_start(width, height, desc, standalone)
    out += percent_axis(y_at, left, top, plot_w, plot_h)
    cy = top + plot_h / 2
    out.append(f'<text x="16" y="{_f(cy)}" text-anchor="middle" fill="currentColor" '
               f'transform="rotate(-90 16 {_f(cy)})">score (% of items passed)</text>')
    out.append(f'<text x="{_f(left + plot_w / 2)}" y="{height - 10}" text-anchor="middle" '
               'fill="currentColor">shelf version, in order of creation</text>')
    # x ticks
    step = max(1, ceil(n / MAX_TICK_LABELS))
    for i, row in enumerate(rows):
        x = x_at(i)
        out.append(f'<line x1="{_f(x)}" y1="{top + plot_h}" x2="{_f(x)}" '
                   f'y2="{top + plot_h + 4}" stroke="currentColor" stroke-opacity="0.6"/>')
        if (n - 1 - i) % step == 0:  # the newest version is always labelled
            out.append(f'<text x="{_f(x)}" y="{top + plot_h + 18}" text-anchor="middle" '
                       f'fill="currentColor">{escape(row.entry.label)}</text>')
    scored = any(getattr(r, attr) is not None and getattr(r, attr).total > 0
                 for r in rows for attr, *_ in SERIES)
    if not scored:
        out.append(f'<text x="{_f(left + plot_w / 2)}" y="{_f(cy - 8)}" text-anchor="middle" '
                   'fill="currentColor" font-style="italic">No version has a score yet: '
                   'grade a wording to start the chart.</text>')
    for attr, name, colour, dash, shift in SERIES:
        out.extend(_series(rows, attr, name, colour, dash, shift, x_at, y_at))
    out.extend(_legend(left))
    out.append(f'<text x="{width - right}" y="{height - 10}" text-anchor="end" '
               'fill="currentColor" fill-opacity="0.75">bands: 95% interval</text>')
    out.append("</svg>")
    return "\n".join(out)


def _series(rows, attr, name, colour, dash, shift, x_at, y_at) -> list[str]:
    points = []
    for i, row in enumerate(rows):
        s = getattr(row, attr)
        points.append(None if s is None or s.total == 0 else (x_at(i) + shift, s))
    out = [f'<g class="series {attr.replace("_", "-")}">']
    dash_attr = f' stroke-dasharray="{dash}"' if dash else ""
    for stretch in _runs_of_points(points):  # bands only where neighbours were both graded
        if len(stretch) > 1:
            upper = " ".join(f"{_f(x)},{_f(y_at(s.high))}" for x, s in stretch)
            lower = " ".join(f"{_f(x)},{_f(y_at(s.low))}" for x, s in reversed(stretch))
            out.append(f'<polygon points="{upper} {lower}" fill="{colour}" '
                       f'fill-opacity="0.15" stroke="none" class="band"/>')
    graded = [p for p in points if p is not None]
    if len(graded) > 1:  # the line joins graded versions, passing over ungraded ones
        line = " ".join(f"{_f(x)},{_f(y_at(s.rate))}" for x, s in graded)
        out.append(f'<polyline points="{line}" fill="none" stroke="{colour}" '
                   f'stroke-width="2"{dash_attr} class="line"/>')
    for x, s in graded:
        out.append(f'<line x1="{_f(x)}" y1="{_f(y_at(s.low))}" x2="{_f(x)}" '
                   f'y2="{_f(y_at(s.high))}" stroke="{colour}" stroke-opacity="0.45" '
                   'stroke-width="5" class="whisker"/>')
    for row, point in zip(rows, points):
        if point is not None:
            x, s = point
            tip = f"{row.entry.label} on {name}: {s.text()}"
            out.append(_marker(SHAPES.get(row.entry.decision, "square"), x, y_at(s.rate),
                               colour, tip))
    out.append("</g>")
    return out


def _legend(x0: float) -> list[str]:
    out = ['<g class="legend">']
    x, y = x0, 18
    for _, name, colour, dash, _ in SERIES:
        dash_attr = f' stroke-dasharray="{dash}"' if dash else ""
        out.append(f'<line x1="{_f(x)}" y1="{y}" x2="{_f(x + 26)}" y2="{y}" stroke="{colour}" '
                   f'stroke-width="2"{dash_attr}/>')
        out.append(f'<text x="{_f(x + 32)}" y="{y + 4}" fill="currentColor">{name}</text>')
        x += 40 + 7.0 * len(name)
    out += shape_legend(x + 8, y)
    out.append("</g>")
    return out


def shape_legend(x: float, y: float) -> list[str]:
    """The marker shapes (decisions) and their names in a row from ``x``."""
    out = []
    for shape, name in SHAPE_NAMES:
        out.append(_marker(shape, x + 5, y, "currentColor"))
        out.append(f'<text x="{_f(x + 15)}" y="{y + 4}" fill="currentColor">{name}</text>')
        x += 28 + 7.0 * len(name)
    return out
