"""A `plot.Chart` drawn as SVG text, with no plotting library.

For the design report: the SVG is written inline in the HTML (and as a data
URI in the Markdown), so it must be self-contained: no fonts, scripts or
images of its own, colours given as attributes (a report printed in black and
white still tells the corners apart, by the dash of the line). The drawing
scales with its container (`viewBox`, width 100 %); its size in the page
comes from the container, never from a fixed pixel size.
"""

from __future__ import annotations

import math
from html import escape

import numpy as np

from picker.present.plot import Chart, nice_ticks

WIDTH, PLOT_HEIGHT = 720, 300  # viewBox units (about pixels at full width)
LEFT, RIGHT, TOP, BOTTOM = 62, 18, 34, 44  # room for the ticks, labels and title
LEGEND_ROW = 18
# Our own palette: ink blue, amber, moss, plum, rust, slate; dark enough on white and in print.
PART_COLOURS = ["#1f4e79", "#c7781a", "#4f7a28", "#7b3f84", "#a23b2a", "#4a5a6a"]
LIMIT_COLOUR = "#b3261e"
GUIDE_COLOUR = "#8a8f98"
DASH = {"cold": None, "hot": "7 4", "fit": None}


def _fmt(v: float) -> str:
    return f"{v:.4g}"


def y_range(chart: Chart) -> tuple[float, float]:
    """0 to the chart's own top (`y_top`), else to a little above the data,
    never below 1.5 x the limit line (so the limit is always in view)."""
    if chart.y_top is not None and math.isfinite(chart.y_top) and chart.y_top > 0:
        return 0.0, float(chart.y_top)
    ys = np.concatenate([np.asarray(s.y, dtype=float) for s in chart.series] or [np.zeros(0)])
    ys = ys[np.isfinite(ys)]
    top = float(ys.max()) * 1.1 if ys.size else 1.0
    limits = [y for y, _ in chart.hlines if math.isfinite(y)]
    if limits:
        top = min(max(top, 1.5 * max(limits)), 4.0 * max(limits)) if top > 0 else 1.5 * max(limits)
    return 0.0, top if top > 0 else 1.0


def chart_svg(chart: Chart, *, ident: str = "chart", title: str | None = None) -> str:
    """The chart as one `<svg>` element (text); `ident` makes its ids unique in a page."""
    parts = sorted({s.part: s.part_name for s in chart.series}.items())
    legend_rows = len(parts) + 1 + len(chart.hlines)
    height = TOP + PLOT_HEIGHT + BOTTOM + LEGEND_ROW * legend_rows + 8
    x0, x1 = LEFT, WIDTH - RIGHT
    y0, y1 = TOP + PLOT_HEIGHT, TOP  # y grows downwards in SVG
    xs = np.concatenate([np.asarray(s.x, dtype=float) * chart.x_scale for s in chart.series]
                        or [np.array([0.0, 1.0])])
    xs = xs[np.isfinite(xs)]
    lo_x, hi_x = (float(xs.min()), float(xs.max())) if xs.size else (0.0, 1.0)
    if hi_x <= lo_x:
        hi_x = lo_x + 1.0
    lo_y, hi_y = y_range(chart)

    def px(x: float) -> float:
        return x0 + (x - lo_x) / (hi_x - lo_x) * (x1 - x0)

    def py(y: float) -> float:
        return y0 - (y - lo_y) / (hi_y - lo_y) * (y0 - y1)

    clip = f"clip-{ident}"
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {WIDTH} {height}" '
           f'width="100%" role="img" aria-label="{escape(title or chart.title)}" '
           f'class="curve" font-family="sans-serif" font-size="12">',
           f"<title>{escape(title or chart.title)}</title>",
           f'<defs><clipPath id="{clip}"><rect x="{x0}" y="{y1}" width="{x1 - x0}" '
           f'height="{y0 - y1}"/></clipPath></defs>',
           f'<rect x="0" y="0" width="{WIDTH}" height="{height}" fill="#ffffff"/>',
           f'<text x="{x0}" y="20" font-size="13" font-weight="bold" fill="#1b2430">'
           f"{escape(chart.title)}</text>"]
    # grid, ticks and axis labels
    for t in nice_ticks(lo_x, hi_x, 8):
        out.append(f'<line x1="{px(t):.1f}" y1="{y1}" x2="{px(t):.1f}" y2="{y0}" stroke="#e3e6ea"/>')
        out.append(f'<text x="{px(t):.1f}" y="{y0 + 16}" text-anchor="middle" fill="#333">{_fmt(t)}</text>')
    for t in nice_ticks(lo_y, hi_y, 6):
        out.append(f'<line x1="{x0}" y1="{py(t):.1f}" x2="{x1}" y2="{py(t):.1f}" stroke="#e3e6ea"/>')
        out.append(f'<text x="{x0 - 6}" y="{py(t) + 4:.1f}" text-anchor="end" fill="#333">{_fmt(t)}</text>')
    out.append(f'<rect x="{x0}" y="{y1}" width="{x1 - x0}" height="{y0 - y1}" fill="none" stroke="#9aa1a9"/>')
    out.append(f'<text x="{(x0 + x1) / 2:.1f}" y="{y0 + 34}" text-anchor="middle" fill="#1b2430">'
               f"{escape(chart.x_label)}</text>")
    out.append(f'<text x="14" y="{(y0 + y1) / 2:.1f}" text-anchor="middle" fill="#1b2430" '
               f'transform="rotate(-90 14 {(y0 + y1) / 2:.1f})">{escape(chart.y_label)}</text>')
    # the cell's range and the limit
    for x, label in chart.vlines:
        if lo_x <= x * chart.x_scale <= hi_x:
            X = px(x * chart.x_scale)
            out.append(f'<line x1="{X:.1f}" y1="{y1}" x2="{X:.1f}" y2="{y0}" stroke="{GUIDE_COLOUR}" '
                       f'stroke-dasharray="2 3"/>')
            anchor = ("end", X - 3) if X > x1 - 90 else ("start", X + 3)
            out.append(f'<text x="{anchor[1]:.1f}" y="{y1 + 12}" font-size="10" fill="#555" '
                       f'text-anchor="{anchor[0]}">{escape(label)}</text>')
    for y, label in chart.hlines:
        if lo_y <= y <= hi_y:
            out.append(f'<line x1="{x0}" y1="{py(y):.1f}" x2="{x1}" y2="{py(y):.1f}" '
                       f'stroke="{LIMIT_COLOUR}" stroke-width="1.4" stroke-dasharray="9 4"/>')
    # the curves
    out.append(f'<g clip-path="url(#{clip})" fill="none" stroke-width="2">')
    for s in chart.series:
        colour = PART_COLOURS[s.part % len(PART_COLOURS)]
        x = np.asarray(s.x, dtype=float) * chart.x_scale
        y = np.asarray(s.y, dtype=float)
        if s.style == "points":
            for a, b in zip(x, y):
                if math.isfinite(a) and math.isfinite(b):
                    out.append(f'<circle cx="{px(a):.1f}" cy="{py(b):.1f}" r="3.5" fill="#fff" '
                               f'stroke="{colour}"/>')
            continue
        for run in _runs(x, y):
            d = " ".join(f"{px(a):.1f},{py(min(b, hi_y * 1.05)):.1f}" for a, b in run)
            dash = DASH.get(s.style)
            out.append(f'<polyline class="series" data-part="{escape(s.part_name)}" '
                       f'data-corner="{escape(s.corner or "")}" points="{d}" stroke="{colour}"'
                       + (f' stroke-dasharray="{dash}"' if dash else "") + "/>")
        if s.mark_x is not None and chart.hlines and math.isfinite(s.mark_x):
            out.append(f'<circle cx="{px(s.mark_x * chart.x_scale):.1f}" cy="{py(chart.hlines[0][0]):.1f}" '
                       f'r="4" fill="{colour}" stroke="#fff"/>')
    out.append("</g>")
    # the legend: one row a part, the corners' dashes, the limit
    y = y0 + BOTTOM + 6
    for pos, name in parts:
        colour = PART_COLOURS[pos % len(PART_COLOURS)]
        out.append(f'<line x1="{x0}" y1="{y - 4}" x2="{x0 + 26}" y2="{y - 4}" stroke="{colour}" stroke-width="3"/>')
        out.append(f'<text x="{x0 + 34}" y="{y}" fill="#1b2430">{escape(name)}</text>')
        y += LEGEND_ROW
    corners = [s for s in chart.series if s.style in ("cold", "hot")]
    if corners:
        cold = next((s.label for s in corners if s.style == "cold"), "")
        hot = next((s.label for s in corners if s.style == "hot"), "")
        out.append(f'<line x1="{x0}" y1="{y - 4}" x2="{x0 + 26}" y2="{y - 4}" stroke="#333" stroke-width="2"/>')
        out.append(f'<text x="{x0 + 34}" y="{y}" fill="#333">cold corner{_corner_of(cold)}</text>')
        out.append(f'<line x1="{x0 + 250}" y1="{y - 4}" x2="{x0 + 276}" y2="{y - 4}" stroke="#333" '
                   f'stroke-width="2" stroke-dasharray="7 4"/>')
        out.append(f'<text x="{x0 + 284}" y="{y}" fill="#333">hot corner{_corner_of(hot)}</text>')
        y += LEGEND_ROW
    for _, label in chart.hlines:
        out.append(f'<line x1="{x0}" y1="{y - 4}" x2="{x0 + 26}" y2="{y - 4}" stroke="{LIMIT_COLOUR}" '
                   f'stroke-width="1.4" stroke-dasharray="9 4"/>')
        out.append(f'<text x="{x0 + 34}" y="{y}" fill="{LIMIT_COLOUR}">{escape(label)}'
                   + ("; dots: the lowest working supply" if any(s.mark_x is not None for s in chart.series)
                      else "") + "</text>")
        y += LEGEND_ROW
    out.append("</svg>")
    return "\n".join(out)


def _corner_of(label: str) -> str:
    """' -20 °C' from a series label 'PART cold -20 °C (...)'."""
    words = label.split(" (")[0].split()
    return f" {words[-2]} {words[-1]}" if len(words) >= 3 else ""


def _runs(x: np.ndarray, y: np.ndarray) -> list[list[tuple[float, float]]]:
    """The stretches of finite points (a NaN breaks the line)."""
    runs, run = [], []
    for a, b in zip(x, y):
        if math.isfinite(a) and math.isfinite(b):
            run.append((float(a), float(b)))
        elif run:
            runs.append(run)
            run = []
    if run:
        runs.append(run)
    return runs
