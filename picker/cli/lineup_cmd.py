"""`picker lineup` (finalists side by side) and `picker curve` (how they behave
as the cell runs down, and how their fit looks)."""

import sys
from enum import Enum
from typing import Annotated, List, Optional

import typer

from picker.cli import app
from picker.cli.common import (CatalogOpt, FormatOpt, Fmt, StrictOpt, emit, is_large,
                               open_catalog, progress, say)

RequirementsOpt = Annotated[Optional[str], typer.Option(
    "--requirements", "-R", metavar="REQ.toml",
    help="Requirement file: figures at its operating point and corners.")]
RoleOpt = Annotated[Optional[str], typer.Option(
    "--role", "-r", help="The role to evaluate (needed when the file has several).")]


def _role_and_requirements(requirements: str | None, role_name: str | None):
    from picker.errors import UsageError
    from picker.present.lineup import pick_role
    from picker.design.requirements import load_requirements

    if requirements is None:
        if role_name is not None:
            raise UsageError("--role needs --requirements: the role is read from that file")
        return None, None
    req = load_requirements(requirements)
    return req, pick_role(req, role_name)


@app.command("lineup")
def lineup(
    parts: Annotated[List[str], typer.Argument(
        metavar="PART", help="Part numbers to compare, one column each.")],
    requirements: RequirementsOpt = None,
    role: RoleOpt = None,
    catalog_path: CatalogOpt = None,
    strict: StrictOpt = False,
    fmt: FormatOpt = Fmt.table,
) -> None:
    """Compare parts side by side: every datasheet value and, with a requirement
    file, every figure at the role's operating point at both ambient corners,
    the lowest cell voltage each part still works at, the checks and the
    verdict. The best value in each row is in bold.

    Exit 0, or 2 on bad input (an unknown part answers with the closest names).
    """
    from picker.engine import headroom
    from picker.present.lineup import build_lineup, report

    req, chosen = _role_and_requirements(requirements, role)
    catalog = open_catalog(catalog_path, strict)
    steps = headroom.evaluations(chosen, req, n_parts=len(parts)) + 1 if chosen is not None else 1
    with progress("comparing the parts", total=steps,
                  show=is_large(rows=len(catalog.df))) as advance:
        result = build_lineup(catalog.df, parts, req, chosen, on_step=advance)
        advance()
    emit(report(result), fmt)


class ChartChoice(str, Enum):
    both = "both"
    supply = "supply"
    fit = "fit"
    latch = "latch"


@app.command("curve")
def curve(
    parts: Annotated[Optional[List[str]], typer.Argument(
        metavar="PART", help="Parts to draw (default: the top feasible ones).")] = None,
    requirements: RequirementsOpt = None,
    role: RoleOpt = None,
    top: Annotated[int, typer.Option("--top", "-n", min=1, max=6,
                                     help="How many parts to draw when none are named.")] = 3,
    chart: Annotated[ChartChoice, typer.Option(
        "--chart", help="supply: drop (or base overdrive) against the cell's voltage; fit: "
                        "on-resistance against gate drive (or gain against Ic) through the "
                        "datasheet points; latch: a linked pair's margins against the cell's "
                        "voltage; both (with latch for a linked role).")] = ChartChoice.both,
    png: Annotated[Optional[str], typer.Option(
        "--png", metavar="FILE", help="Write the charts as a PNG (needs picker[plot]).")] = None,
    svg: Annotated[Optional[str], typer.Option(
        "--svg", metavar="FILE", help="Write the charts as an SVG (needs picker[plot]).")] = None,
    force: Annotated[bool, typer.Option(
        "--force", help="Replace an existing PNG/SVG file.")] = False,
    catalog_path: CatalogOpt = None,
    strict: StrictOpt = False,
    fmt: FormatOpt = Fmt.table,
) -> None:
    """Draw how parts behave across the cell's range: the drop (or, for a
    bipolar switch, the base overdrive) against supply voltage from below the
    empty cell to above the full one, one line per part and corner, with the
    limit; and the model through each part's datasheet points. In the terminal
    by default; --png / --svg write image files.

    Exit 0, or 2 on bad input.
    """
    from picker.engine import headroom
    from picker.present import plot
    from picker.engine.evaluate import evaluate_role
    from picker.errors import UsageError, WriteRefused
    from picker.present.explain import CAUTIONS
    from picker.present.lineup import check_kinds, find_parts

    if requirements is None:
        raise UsageError("curve needs --requirements REQ.toml (and --role when the file has "
                         "several roles)")
    req, chosen = _role_and_requirements(requirements, role)
    targets = [(p, f) for p, f in ((png, "png"), (svg, "svg")) if p]
    for path, _ in targets:
        if not force and _exists(path):
            raise WriteRefused("the file exists; choose another name or pass --force", file=path)
    if targets:
        try:
            import matplotlib  # noqa: F401
        except ImportError:
            say(plot.PLOT_INSTALL_HINT)
            raise typer.Exit(2) from None
    catalog = open_catalog(catalog_path, strict)
    steps = 1 + headroom.evaluations(chosen, req, n_parts=len(parts) if parts else top) + 2
    with progress("computing the curves", total=steps,
                  show=is_large(rows=len(catalog.df))) as advance:
        if parts:
            chosen_parts = find_parts(catalog.df, parts)
            check_kinds(chosen_parts, chosen)
            advance()
        else:
            result = evaluate_role(catalog.df, chosen, req)
            advance()
            table = result.feasible if len(result.feasible) else result.table
            if not len(result.feasible):
                say(f"no feasible {chosen.kind} part for '{chosen.name}': drawing the "
                    f"{min(top, len(table))} best ranked")
            if table.empty:
                raise UsageError(f"no {chosen.kind} parts in the catalogue for '{chosen.name}'")
            chosen_parts = catalog.df.loc[table.head(top).index]
        lowest = headroom.lowest_supply(chosen_parts, chosen, req, on_step=advance)
        charts = []
        if chart in (ChartChoice.both, ChartChoice.supply):
            charts.append(plot.supply_chart(chosen_parts, chosen, req, lowest))
        advance()
        if chart in (ChartChoice.both, ChartChoice.fit):
            charts.append(plot.fit_chart(chosen_parts, chosen, req))
        advance()
        if chart in (ChartChoice.both, ChartChoice.latch):
            charts += _latch_charts(catalog.df, req, chosen, strict=chart is ChartChoice.latch)
    sentences = [f"{name}: {headroom.describe(row, chosen, req)}"
                 for name, (_, row) in zip(chosen_parts["part"], lowest.iterrows())]

    for path, kind in targets:
        from picker.safe_io import write_atomic

        data = plot.figure_bytes(plot.figure(charts), kind)
        write_atomic(path, data, overwrite=force, backup=False)
        say(f"wrote {path} ({len(data):,} bytes)")
    if targets and fmt is Fmt.table:
        for line in sentences:
            say(line)
        return
    if fmt is Fmt.table:
        _print_charts(charts, sentences, CAUTIONS)
        return
    from picker.present.render import Column, Report

    doc = {"role": {"name": chosen.name, "use": chosen.use, "requirements": req.source},
           "parts": [str(p) for p in chosen_parts["part"]],
           "lowest_supply": {str(name): {**headroom.to_json(row),
                                         **{c: headroom.to_json(row, c) for c in headroom.CORNERS}}
                             for name, (_, row) in zip(chosen_parts["part"], lowest.iterrows())},
           "charts": plot.to_json(charts)}
    columns = [Column("chart"), Column("part"), Column("corner"), Column("style"),
               Column("x", numeric=True), Column("y", numeric=True), Column("x_label"),
               Column("y_label")]
    emit(Report([], data=doc, csv_columns=columns, csv_rows=plot.csv_rows(charts)), fmt)


def _latch_charts(catalog_df, req, role, *, strict: bool) -> list:
    """The linked pairs' margins for a role in a link (models/README.md §10)."""
    from picker.engine.evaluate import evaluate
    from picker.errors import UsageError
    from picker.present import links_view

    if not req.in_link(role):
        if strict:
            raise UsageError(f"--chart latch: role '{role.name}' is not linked (no gate_driver "
                             "or base_from)")
        return []
    design = evaluate(catalog_df, req)
    charts = [links_view.latch_chart(catalog_df, design, lr) for lr in design.links
              if role in (lr.link.switch, lr.link.partner) and lr.chosen]
    if strict and not charts:
        raise UsageError(f"--chart latch: the link of '{role.name}' has no feasible pair to draw")
    return charts


def _exists(path: str) -> bool:
    import os

    return os.path.exists(path)


def _print_charts(charts, sentences: list[str], cautions: list[str]) -> None:
    from rich.console import Console
    from rich.text import Text

    from picker.present import plot

    terminal = sys.stdout.isatty()
    console = Console(file=sys.stdout, highlight=False, soft_wrap=True,
                      width=None if terminal else 10_000)
    width = min(console.width, 110) if terminal else 100
    for c in charts:
        console.print(plot.text_chart(c, width=width, height=18, colour=terminal), end="")
        console.print()
    for line in sentences:
        console.print(Text(line))
    console.print()
    for line in cautions:
        console.print(Text(line))
