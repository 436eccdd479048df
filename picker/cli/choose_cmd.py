"""`picker choose`: the main job."""

from typing import Annotated, Optional

import typer

from picker.cli import app
from picker.cli.common import CatalogOpt, FormatOpt, Fmt, StrictOpt, emit, open_catalog, say

_Q = "Quick question (or override the file)"


def _opt(*names: str, help: str, metavar: str = "VALUE"):
    return typer.Option(*names, help=help, metavar=metavar, rich_help_panel=_Q)


@app.command("choose")
def choose(
    requirements: Annotated[Optional[str], typer.Argument(
        metavar="[REQUIREMENTS.toml]", help="Requirement file; or describe one role with the options below.")] = None,
    catalog_path: CatalogOpt = None,
    strict: StrictOpt = False,
    fmt: FormatOpt = Fmt.table,
    top: Annotated[int, typer.Option("--top", "-n", min=1, help="Feasible and rejected parts shown per role.")] = 5,
    show_all: Annotated[bool, typer.Option("--all", "-a", help="Show every candidate of every role.")] = False,
    role: Annotated[Optional[str], typer.Option("--role", "-r", help="Only this role of the file (and the one the options override).")] = None,
    use: Annotated[Optional[str], _opt("--use", help="high-side-pmos, low-side-nmos, npn-switch or pnp-switch.", metavar="USE")] = None,
    supply: Annotated[Optional[str], _opt("--supply", help="Supply range, e.g. 3.0V..4.2V.", metavar="MIN..MAX")] = None,
    ambient: Annotated[Optional[str], _opt("--ambient", help="Ambient range in °C, e.g. -20..50.", metavar="MIN..MAX")] = None,
    capacity: Annotated[Optional[str], _opt("--capacity", help="Cell capacity, e.g. 2.6Ah (for the drain figure).")] = None,
    volume: Annotated[Optional[str], _opt("--volume", help="Boards per build.", metavar="N")] = None,
    refs: Annotated[Optional[str], _opt("--refs", help="Reference designators, e.g. Q1,Q2.", metavar="REFS")] = None,
    qty: Annotated[Optional[str], _opt("--qty", help="Parts per board (default: the number of refs).", metavar="N")] = None,
    load: Annotated[Optional[str], _opt("--load", help="Pass switch: load current, e.g. 1.5A.")] = None,
    max_drop: Annotated[Optional[str], _opt("--max-drop", help="Pass switch: largest drop allowed, e.g. 60mV.")] = None,
    gate_drive: Annotated[Optional[str], _opt("--gate-drive", help="Pass switch: 'supply' or a voltage.")] = None,
    gate_drive_drop: Annotated[Optional[str], _opt("--gate-drive-drop", help="Pass switch: what the gate driver loses (default 0.1V).")] = None,
    max_tj: Annotated[Optional[str], _opt("--max-tj", help="Pass switch: junction limit, e.g. 100degC.")] = None,
    collector_current: Annotated[Optional[str], _opt("--ic", "--collector-current", help="Switch: collector current, e.g. 40uA.")] = None,
    base_drive: Annotated[Optional[str], _opt("--base-drive", help="Switch: 'supply' or a voltage.")] = None,
    base_resistor: Annotated[Optional[str], _opt("--rb", "--base-resistor", help="Switch: base resistor, e.g. 68k or 4k7.")] = None,
    base_pulldown: Annotated[Optional[str], _opt("--rpd", "--base-pulldown", help="Switch: base-emitter pull-down, e.g. 1M.")] = None,
    base_off: Annotated[Optional[str], _opt("--base-off", help="Switch: what holds the base while off: 'driven' (default) or 'open'.", metavar="HOW")] = None,
    overdrive: Annotated[Optional[str], _opt("--overdrive", help="Switch: Ib·hFE over Ic needed (default 2).")] = None,
    max_vce_sat: Annotated[Optional[str], _opt("--max-vce-sat", help="Switch: largest Vce(sat), e.g. 0.2V.")] = None,
    max_off: Annotated[Optional[str], _opt("--max-off", help="Largest off-state current at the hot corner, e.g. 1uA.")] = None,
    derate_v: Annotated[Optional[str], _opt("--derate-v", help="Voltage derating (default 0.8).")] = None,
    derate_i: Annotated[Optional[str], _opt("--derate-i", help="Current derating (default 0.5).")] = None,
    tj_margin: Annotated[Optional[str], _opt("--tj-margin", help="Margin below the part's Tj max (default 25degC).")] = None,
    extrapolation: Annotated[Optional[str], _opt("--extrapolation", help="Below a part's lowest rated drive: conservative (default), fit or none (picker/models/README.md §1).", metavar="MODE")] = None,
    rth_factor: Annotated[Optional[str], _opt("--rth-factor", help="Multiplies every θJA: your board against the JESD51 test board's (default 1).", metavar="X")] = None,
) -> None:
    """Evaluate every catalogue part for each role at the worst-case corners and
    rank the feasible ones by cost at the build volume.

    The method behind every figure and note (formulas, defaults, sources,
    what is assumed outside a datasheet's rated drives) is
    picker/models/README.md, installed with the package.

    Exit 0 when every role has a feasible part, 1 when some role has none,
    2 on bad input.
    """
    from picker.engine.evaluate import design_json, evaluate
    from picker.present.explain import choose_csv, choose_report
    from picker.present.render import Report
    from picker.design.requirements import load_requirements
    from picker.design.quick import assumed, from_options

    options = {
        "use": use, "supply": supply, "ambient": ambient, "capacity": capacity,
        "volume": volume, "refs": refs, "qty": qty, "load": load, "max_drop": max_drop,
        "gate_drive": gate_drive, "gate_drive_drop": gate_drive_drop, "max_tj": max_tj,
        "collector_current": collector_current, "base_drive": base_drive,
        "base_resistor": base_resistor, "base_pulldown": base_pulldown, "base_off": base_off,
        "overdrive": overdrive, "max_vce_sat": max_vce_sat,
        "max_off": max_off, "derate_v": derate_v, "derate_i": derate_i, "tj_margin": tj_margin,
        "extrapolation": extrapolation, "rth_factor": rth_factor,
    }
    given = {k: v for k, v in options.items() if v is not None}
    if requirements is None and not given:
        raise typer.BadParameter("give a requirement file, or describe a role with --use, "
                                 "--supply, --load ... (see picker choose --help)")
    base = load_requirements(requirements) if requirements else None
    req = from_options(options, base, role) if given or base is None else base
    if base is None:
        for note in assumed(options):
            say(f"assumed: {note} (set it with --{note.split()[0]})")
    if role is not None:
        import dataclasses

        req = dataclasses.replace(req, roles=(req.role(role),))
    catalog = open_catalog(catalog_path, strict)
    design = evaluate(catalog.df, req)
    if fmt is Fmt.json:  # every candidate, as the interface specifies
        emit(Report([], data=design_json(design)), fmt)
    elif fmt is Fmt.csv:
        columns, rows = choose_csv(design)
        emit(Report([], csv_columns=columns, csv_rows=rows), fmt)
    else:
        emit(choose_report(design, top=top, show_all=show_all), fmt)
    if design.missing or any(r.feasible.empty for r in design.roles):
        say(f"no feasible part for: {', '.join(r.role.name for r in design.roles if r.choice is None)}")
        raise typer.Exit(1)
