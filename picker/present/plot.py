"""Curves: how each part behaves as the cell runs down, and how its fit looks.

Two charts per role, computed here as plain data (`Chart`) and drawn either in
the terminal (`text_chart`, drawn with rich, no plotting library) or to PNG/SVG
through matplotlib (`figure`, `figure_bytes`: the optional `plot` extra,
imported only there).

- `supply_chart`: for a pass switch the drop, for a saturated switch the base
  overdrive ``Ib·hFE / Ic``, against the supply voltage from below
  `supply.min` to a little above `supply.max`, one line per part and corner,
  with the role's limit drawn. Every point is the engine's own figure at that
  supply (`headroom.at_supply`, all points of all parts in one call).
- `fit_chart`: a MOSFET's fitted on-resistance against gate drive at 25 °C
  (models/README.md §1) with the datasheet points marked; a bipolar part's minimum
  gain against collector current (models/README.md §6) with its points.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from picker.engine import headroom
from picker.catalog.quantities import format_quantity
from picker.design.requirements import Requirements, Role

SUPPLY_POINTS = 161
FIT_POINTS = 200
FIGURE_SIZE_IN = (9.0, 10.0)  # width, height of the PNG/SVG, inches
FIGURE_DPI = 100  # so a PNG is 900 x 1000 pixels
PLOT_INSTALL_HINT = "install picker[plot] for PNG/SVG output (pip install 'picker[plot]')"

# Terminal glyphs per part: (line or cold corner, hot corner or datasheet points).
GLYPHS = [("●", "○"), ("■", "□"), ("▲", "△"), ("◆", "◇"), ("✚", "✢"), ("✖", "✕")]
COLOURS = ["cyan", "magenta", "yellow", "green", "blue", "bright_white"]


@dataclass
class Series:
    label: str
    x: np.ndarray
    y: np.ndarray
    part: int  # position of the part (its colour and glyph)
    style: str  # 'cold', 'hot' (lines by corner), 'fit' (a line), 'points' (markers only)
    part_name: str = ""
    corner: str | None = None
    mark_x: float | None = None  # where the line meets the limit (the lowest working supply)


@dataclass
class Chart:
    key: str  # 'supply', 'fit'
    title: str
    x_label: str  # with the unit, e.g. 'supply (V)'
    y_label: str
    series: list[Series]
    hlines: list[tuple[float, str]] = field(default_factory=list)  # (y, label): limits
    vlines: list[tuple[float, str]] = field(default_factory=list)  # (x, label): cell range, Ic
    x_scale: float = 1.0  # plotted x = model value * x_scale (e.g. 1000: A -> mA)
    y_scale: float = 1.0  # plotted y = model value * y_scale (e.g. 1000: V -> mV)
    log_x: bool = False
    y_top: float | None = None  # the view stops here (the data goes on)
    notes: list[str] = field(default_factory=list)


# -- the data ------------------------------------------------------------------------

def supply_grid(req: Requirements, lowest: pd.DataFrame | None = None,
                points: int = SUPPLY_POINTS) -> np.ndarray:
    """Supply voltages [V] from below supply.min (half the cell's span below it,
    or 10 % of the span below the lowest working supply found, whichever is
    lower; never below 0) to 10 % of the span above supply.max."""
    span = req.supply.max_V - req.supply.min_V or 0.5 * req.supply.max_V
    lo = req.supply.min_V - 0.5 * span
    if lowest is not None:
        found = lowest[[f"lowest_supply_{c}_V" for c in headroom.CORNERS]].to_numpy(dtype=float)
        found = found[np.isfinite(found)]
        if found.size:
            lo = min(lo, float(found.min()) - 0.1 * span)
    return np.linspace(max(lo, 0.0), req.supply.max_V + 0.1 * span, points)


def sweep(parts: pd.DataFrame, role: Role, req: Requirements, grid_V: np.ndarray,
          corner: str) -> pd.DataFrame:
    """The engine's figures for every part at every supply in grid_V, at one
    corner: one engine call over len(parts) x len(grid_V) rows (part-major),
    with columns `part_pos` and `supply_V` added."""
    n, g = len(parts), len(grid_V)
    tiled = parts.iloc[np.repeat(np.arange(n), g)].reset_index(drop=True)
    supply = np.tile(np.asarray(grid_V, dtype=float), n)
    table = headroom.at_supply(tiled, role, req, supply, headroom.corner_temperature(req, corner))
    table = table.reset_index(drop=True)
    table["part_pos"] = np.repeat(np.arange(n), g)
    table["supply_V"] = supply
    return table


def supply_chart(parts: pd.DataFrame, role: Role, req: Requirements,
                 lowest: pd.DataFrame | None = None, points: int = SUPPLY_POINTS) -> Chart:
    """Drop (pass switch) or overdrive (switch) against supply, per part and corner."""
    grid = supply_grid(req, lowest, points)
    names = parts["part"].astype(str).tolist()
    if role.is_pass_switch:
        figure, scale, y_label = "drop_V", 1000.0, "drop (mV)"
        limit = (role.max_drop_V * scale, f"limit {role.max_drop_V * 1000:g} mV")
        what = f"drop at {format_quantity(role.load_A, 'A')}"
    else:
        figure, scale, y_label = "overdrive", 1.0, "Ib·hFE / Ic (ratio)"
        limit = (role.overdrive, f"needed {role.overdrive:g}")
        what = ("base overdrive at the pull-up's current" if role.collector_current_A is None  # §10
                else f"base overdrive at Ic {format_quantity(role.collector_current_A, 'A')}")
    series = []
    for corner in headroom.CORNERS:
        table = sweep(parts, role, req, grid, corner)
        t_C = headroom.corner_temperature(req, corner)
        for i, name in enumerate(names):  # sorted by part below
            y = table.loc[table["part_pos"] == i, figure].to_numpy(dtype=float)
            label = f"{name} {corner} {t_C:g} °C"
            mark = None
            if lowest is not None:
                row = lowest.iloc[i]
                label += f" ({headroom.short(row, corner)})"
                if row[f"lowest_supply_{corner}_status"] == "found":
                    mark = float(row[f"lowest_supply_{corner}_V"])
            series.append(Series(label, grid.copy(), y * scale, i, corner, name, corner, mark))
    series.sort(key=lambda s: s.part)  # stable: cold before hot for each part
    drive = "gate" if role.is_pass_switch else "base"
    chart = Chart("supply", f"{role.name}: {what} against the cell's voltage",
                  "supply (V)", y_label, series, hlines=[limit],
                  vlines=[(req.supply.min_V, f"cell empty {req.supply.min_V:g} V"),
                          (req.supply.max_V, f"cell full {req.supply.max_V:g} V")],
                  y_scale=scale)
    if not headroom.supply_driven(role):
        chart.notes.append(f"the {drive} drive is a fixed voltage: the lines are flat, as "
                           "nothing depends on the cell's voltage")
    if lowest is not None:
        chart.notes.append("in brackets: the lowest working supply at that corner")
    finite = np.concatenate([s.y[s.x >= req.supply.min_V] for s in series] or [np.zeros(0)])
    finite = finite[np.isfinite(finite)]
    top = max(1.5 * limit[0], 1.15 * float(finite.max()) if finite.size else 0.0)
    if role.is_pass_switch:
        chart.y_top = top
    return chart


def fit_chart(parts: pd.DataFrame, role: Role, req: Requirements,
              points: int = FIT_POINTS) -> Chart:
    """The model through the datasheet points: on-resistance against gate drive
    at 25 °C (MOSFET), or minimum gain against collector current (bipolar)."""
    return (_rds_chart if role.is_pass_switch else _gain_chart)(parts, role, req, points)


def _rds_chart(parts, role, req, points) -> Chart:
    from picker.catalog.load import values
    from picker.engine.evaluate import points as point_family
    from picker.models import mosfet

    names = parts["part"].astype(str).tolist()
    vt25 = values(parts, "vgs_th_max_V")
    drives, rds_mohm = point_family(parts, "rds_on_mohm")
    fit = mosfet.fit_on_resistance(drives, rds_mohm / 1000.0, vt25)
    k_vt = mosfet.k_vt_of(values(parts, "vgs_th_tc_mV/C"), vt25)
    a = values(parts, "rds_tc_pct/C") / 100.0
    mode = req.margins.extrapolation
    used = np.isfinite(rds_mohm) & np.isfinite(np.broadcast_to(drives, rds_mohm.shape))
    vgs_lo = req.supply.min_V - role.gate_drive_drop_V
    vgs_hi = req.supply.max_V - role.gate_drive_drop_V
    if role.gate_drive_V is not None:
        vgs_lo = vgs_hi = role.gate_drive_V - role.gate_drive_drop_V
    # From a quarter of the way between Vt and the lowest datasheet drive (the
    # channel term is then 4x its value there) to past the highest drive.
    starts = vt25 + 0.25 * (fit.lowest_drive_V - vt25)
    top = max(np.nanmax(np.where(used, np.broadcast_to(drives, rds_mohm.shape), np.nan),
                        initial=0.0), vgs_hi)
    lo = float(np.nanmin(starts)) if np.isfinite(starts).any() else 0.5
    grid = np.linspace(min(lo, vgs_lo), 1.05 * top, points)
    series = []
    for i, name in enumerate(names):
        # as the engine reads the datasheet (§1): extrapolated below the lowest
        # rated drive, held above the highest, and no line below the depth limit
        r = mosfet.small_signal(grid, 25.0, fit.take([i]), vt25[i:i + 1], k_vt[i:i + 1],
                                a[i:i + 1], mode)
        rf, k = fit.r_fix_ohm[i] * 1000, fit.k_ohm_V[i] * 1000
        fit_text = (f"R = {rf:.3g} + {k:.3g}/(Vg − {vt25[i]:g}) mΩ" if np.isfinite(k)
                    else "no fit")
        series.append(Series(f"{name} fit: {fit_text}", grid.copy(), r * 1000.0, i, "fit", name))
        mask = used[i]
        series.append(Series(f"{name} datasheet max at 25 °C",
                             np.broadcast_to(drives, rds_mohm.shape)[i][mask],
                             rds_mohm[i][mask], i, "points", name))
    vlines = [(vgs_lo, f"Vgs at cell empty {vgs_lo:.3g} V")]
    if vgs_hi != vgs_lo:
        vlines.append((vgs_hi, f"Vgs at cell full {vgs_hi:.3g} V"))
    else:
        vlines = [(vgs_lo, f"Vgs {vgs_lo:.3g} V (fixed drive)")]
    known = rds_mohm[np.isfinite(rds_mohm)]
    chart = Chart("fit", f"{role.name}: on-resistance against gate drive at 25 °C, model "
                  "through the datasheet points", "gate drive |Vgs| (V)",
                  "Rds(on) (mΩ)", series, vlines=vlines, y_scale=1000.0,
                  y_top=1.6 * float(known.max()) if known.size else None)
    chart.notes.append("model: R = R_fix + K/(Vg − Vgs(th) max), least squares lifted onto the "
                       f"points; below the lowest rated drive the {mode} rule, above the highest "
                       "held at its value, no line below half-way to the threshold "
                       "(picker/models/README.md §1); the operating corners add the temperature "
                       "terms and the drop at the load the whole triode law")
    return chart


def _gain_chart(parts, role, req, points) -> Chart:
    from picker.engine.evaluate import points as point_family
    from picker.models import bipolar

    names = parts["part"].astype(str).tolist()
    currents_mA, hfe = point_family(parts, "hfe_min")
    cur = np.broadcast_to(currents_mA, hfe.shape)
    used = np.isfinite(hfe) & np.isfinite(cur)
    known = cur[used]
    # a gate driver's current is its pull-up's (models/README.md §10): no line for it
    ic_mA = (role.collector_current_A * 1000.0 if role.collector_current_A is not None
             else float(np.sqrt(known.min() * known.max())) if known.size else 1.0)
    lo = min(float(known.min()) if known.size else ic_mA, ic_mA) / 3.0
    hi = max(float(known.max()) if known.size else ic_mA, ic_mA) * 3.0
    grid_mA = np.geomspace(lo, hi, points)
    series = []
    for i, name in enumerate(names):
        xp = np.broadcast_to(cur[i] / 1000.0, (points, cur.shape[1]))
        fp = np.broadcast_to(hfe[i], (points, hfe.shape[1]))
        gain = bipolar.hfe_at_current(xp, fp, grid_mA / 1000.0).hfe
        series.append(Series(f"{name} hFE min, log-log between points", grid_mA, gain, i, "fit",
                             name))
        series.append(Series(f"{name} datasheet min at 25 °C", cur[i][used[i]], hfe[i][used[i]],
                             i, "points", name))
    chart = Chart("fit", f"{role.name}: minimum gain against collector current at 25 °C",
                  "collector current (mA)", "hFE min (ratio)", series,
                  vlines=[(ic_mA, f"Ic {ic_mA:g} mA")] if role.collector_current_A is not None else [],
                  x_scale=1000.0, log_x=True)
    chart.notes.append("past the end points the gain continues along an end segment that "
                       "falls toward that end, and is held where it does not; under a tenth of "
                       "the lowest point's current it is far below data (models/README.md §6)")
    return chart


def to_json(charts: list[Chart]) -> list[dict]:
    """The charts' data for scripts: plotted units, NaN as null."""
    from picker.cells import clean

    return clean([{
        "chart": c.key, "title": c.title, "x_label": c.x_label, "y_label": c.y_label,
        "limits": [{"y": y, "label": t} for y, t in c.hlines],
        "marks": [{"x": x, "label": t} for x, t in c.vlines],
        "series": [{"label": s.label, "part": s.part_name, "corner": s.corner, "style": s.style,
                    "x": [float(v) for v in s.x], "y": [float(v) for v in s.y]}
                   for s in c.series],
        "notes": c.notes,
    } for c in charts])


def csv_rows(charts: list[Chart]) -> list[dict]:
    """One row per plotted point: chart, part, corner, style, x, y."""
    rows = []
    for c in charts:
        for s in c.series:
            rows += [{"chart": c.key, "part": s.part_name, "corner": s.corner or "",
                      "style": s.style, "x": float(x), "y": float(y),
                      "x_label": c.x_label, "y_label": c.y_label} for x, y in zip(s.x, s.y)]
    return rows


# -- PNG / SVG through matplotlib -------------------------------------------------------

def figure(charts: list[Chart]):
    """A matplotlib Figure with one axes per chart (stacked), FIGURE_SIZE_IN at
    FIGURE_DPI. Raises ImportError when matplotlib is missing."""
    from matplotlib.figure import Figure

    fig = Figure(figsize=FIGURE_SIZE_IN, dpi=FIGURE_DPI, layout="constrained")
    axes = fig.subplots(len(charts), 1, squeeze=False)[:, 0]
    colours = [f"C{i}" for i in range(10)]
    for ax, chart in zip(axes, charts):
        for x, label in chart.vlines:
            ax.axvline(x, color="0.6", linestyle=":", linewidth=1.0, label=label)
        for y, label in chart.hlines:
            ax.axhline(y, color="red", linestyle="--", linewidth=1.2, label=label)
        for s in chart.series:
            colour = colours[s.part % len(colours)]
            if s.style == "points":
                ax.plot(s.x, s.y, linestyle="none", marker="o", markersize=6, color=colour,
                        markerfacecolor="white", markeredgewidth=1.5, label=s.label)
            else:
                ax.plot(s.x, s.y, color=colour, linewidth=1.6,
                        linestyle="--" if s.style == "hot" else "-", label=s.label)
            if s.mark_x is not None and chart.hlines:
                ax.plot([s.mark_x], [chart.hlines[0][0]], linestyle="none", marker="o",
                        markersize=5, color=colour, label="_lowest supply")
        if chart.log_x:
            ax.set_xscale("log")
        if chart.y_top is not None:
            ax.set_ylim(0.0, chart.y_top)
        else:
            ax.set_ylim(bottom=0.0)
        ax.set_xlabel(chart.x_label)
        ax.set_ylabel(chart.y_label)
        ax.set_title(chart.title, fontsize=10)
        ax.grid(True, color="0.9")
        ax.legend(fontsize=7, loc="best")
    return fig


def figure_bytes(fig, fmt: str) -> bytes:
    """Render a Figure to PNG or SVG bytes (no file is touched)."""
    import io

    from matplotlib.backends.backend_agg import FigureCanvasAgg

    FigureCanvasAgg(fig)
    buf = io.BytesIO()
    fig.savefig(buf, format=fmt, dpi=FIGURE_DPI, metadata=_metadata(fmt))
    return buf.getvalue()


def _metadata(fmt: str) -> dict:
    # No creation date: the same chart gives the same bytes.
    return {"Date": None} if fmt == "svg" else {}


# -- the terminal ------------------------------------------------------------------------

def nice_ticks(lo: float, hi: float, count: int = 5) -> list[float]:
    """Round tick values covering [lo, hi]: steps of 1, 2, 2.5 or 5 times a
    power of ten (the usual choice for chart axes)."""
    if not (math.isfinite(lo) and math.isfinite(hi)) or hi <= lo:
        return [lo]
    raw = (hi - lo) / max(count, 1)
    power = 10 ** math.floor(math.log10(raw))
    step = next(m * power for m in (1, 2, 2.5, 5, 10) if m * power >= raw)
    first = math.ceil(lo / step - 1e-9) * step
    ticks = []
    t = first
    while t <= hi + 1e-9 * step:
        ticks.append(round(t, 12))
        t += step
    return ticks


def _tick_text(v: float) -> str:
    return f"{v:.4g}"


def text_chart(chart: Chart, width: int = 100, height: int = 20, colour: bool = True):
    """The chart drawn with characters as a rich Text: one glyph per part and
    corner, the limit as a dashed red line, the cell's range as dotted columns,
    a legend below. Readable without colour (each line has its own glyph)."""
    from rich.text import Text

    finite_x = np.concatenate([s.x[np.isfinite(s.x)] for s in chart.series] or [np.zeros(0)])
    finite_y = np.concatenate([s.y[np.isfinite(s.y)] for s in chart.series] or [np.zeros(0)])
    if chart.log_x:
        finite_x = finite_x[finite_x > 0]
    out = Text(chart.title + "\n", style="bold")
    if finite_x.size == 0 or finite_y.size == 0:
        out.append("(nothing to draw: no part has the data)\n")
        return out
    x0, x1 = float(finite_x.min()), float(finite_x.max())
    y_values = [float(finite_y.max())] + [y for y, _ in chart.hlines]
    y1 = chart.y_top if chart.y_top is not None else max(y_values) * 1.05
    y0 = 0.0 if float(finite_y.min()) >= 0 else float(finite_y.min())
    if y1 <= y0:
        y1 = y0 + 1.0
    if x1 <= x0:
        x1 = x0 + 1.0
    label_w = 8
    w = max(20, width - label_w - 2)
    h = max(6, height)
    grid = [[(" ", "") for _ in range(w)] for _ in range(h)]

    def col(x):
        if chart.log_x:
            return (math.log(x) - math.log(x0)) / (math.log(x1) - math.log(x0)) * (w - 1)
        return (x - x0) / (x1 - x0) * (w - 1)

    def row(y):
        return (y1 - y) / (y1 - y0) * (h - 1)

    for x, _ in chart.vlines:
        if x0 <= x <= x1:
            c = int(round(col(x)))
            for r in range(h):
                grid[r][c] = ("┊", "dim")
    for y, _ in chart.hlines:
        if y0 <= y <= y1:
            r = int(round(row(y)))
            for c in range(w):
                grid[r][c] = ("┄", "red")
    # lines first, then the datasheet points over them
    for s in sorted(chart.series, key=lambda s: s.style == "points"):
        glyph = GLYPHS[s.part % len(GLYPHS)][0 if s.style in ("cold", "fit") else 1]
        style = COLOURS[s.part % len(COLOURS)] if colour else ""
        if s.style == "points":
            style = (style + " bold").strip()
        _draw(grid, [col(x) if (x > 0 or not chart.log_x) else math.nan for x in s.x],
              [row(y) for y in s.y], glyph, style, connect=s.style != "points")
    ticks = nice_ticks(y0, y1, 4)
    tick_rows = {int(round(row(t))): _tick_text(t) for t in ticks if 0 <= row(t) <= h - 1}
    out.append(chart.y_label + "\n", style="dim")
    for r in range(h):
        axis_cell = f"{tick_rows[r]:>{label_w}} ┤" if r in tick_rows else " " * label_w + " │"
        out.append(axis_cell)
        for ch, st in grid[r]:
            out.append(ch, style=st if colour or st in ("bold",) else "")
        out.append("\n")
    axis = [" "] * w
    labels = [" "] * (w + 8)
    if chart.log_x:
        xt = [10 ** e for e in range(math.floor(math.log10(x0)), math.ceil(math.log10(x1)) + 1)]
        xt = [t for t in xt if x0 <= t <= x1] or [x0, x1]
    else:
        xt = nice_ticks(x0, x1, 6)
    for t in xt:
        c = int(round(col(t)))
        if 0 <= c < w:
            axis[c] = "┬"
            text = _tick_text(t)
            start = max(0, min(c - len(text) // 2, w + 8 - len(text)))
            if all(ch == " " for ch in labels[max(0, start - 1):start + len(text) + 1]):
                labels[start:start + len(text)] = list(text)
    out.append(" " * label_w + " └" + "".join(a if a != " " else "─" for a in axis) + "\n")
    out.append(" " * (label_w + 2) + "".join(labels).rstrip() + "\n")
    out.append(" " * (label_w + 2) + chart.x_label + "\n", style="dim")
    for s in chart.series:
        glyph = GLYPHS[s.part % len(GLYPHS)][0 if s.style in ("cold", "fit") else 1]
        out.append("  ")
        out.append(glyph, style=COLOURS[s.part % len(COLOURS)] if colour else "")
        out.append(f" {s.label}\n")
    for y, label in chart.hlines:
        out.append("  ")
        out.append("┄", style="red" if colour else "")
        out.append(f" {label}\n")
    if chart.vlines:
        out.append("  ┊ " + "; ".join(label for _, label in chart.vlines) + "\n")
    for note in chart.notes:
        out.append(f"  {note}\n", style="dim")
    return out


def _draw(grid, cols, rows, glyph: str, style: str, connect: bool) -> None:
    """Mark the cells a series passes through; consecutive points in view are
    joined by filling the rows between them in the same column."""
    h, w = len(grid), len(grid[0])
    prev = None
    for c, r in zip(cols, rows):
        if not (math.isfinite(c) and math.isfinite(r)):
            prev = None
            continue
        ci, ri = int(round(c)), int(round(r))
        inside = 0 <= ci < w and 0 <= ri < h
        if inside:
            grid[ri][ci] = (glyph, style)
        if connect and prev is not None and inside:
            pc, pr = prev
            if 0 <= pr < h and abs(ri - pr) > 1 and abs(ci - pc) <= 1:
                step = 1 if ri > pr else -1
                for rr in range(pr + step, ri, step):
                    grid[rr][ci] = (glyph, style)
        prev = (ci, ri) if inside else None
