"""Side by side: a few parts, one column each, at one role's operating point.

`build_lineup` takes the parts named on the command line, in that order, and
gives one row per datasheet value and, with a role, per computed figure at each
ambient corner, then the checks and the verdict. Every figure is the engine's:

- the role is evaluated over the whole catalogue (`engine.evaluate_role`), so
  a part's figures, checks, notes and rank are exactly those `picker choose`
  gives it (the JSON carries them unchanged);
- the per-corner rows come from the same engine with both ambient corners set
  to one temperature (`headroom.at_supply`), so each corner's own figures are
  shown, not only the worse one;
- the lowest working supply is `headroom.lowest_supply`.

In each row with a better direction (lower on-resistance, higher rating...) the
best value is marked; the renderer shows it in bold.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from picker.catalog import columns as cols
from picker.engine import headroom
from picker.catalog.load import closest_parts, normalise_part
from picker.errors import CatalogError, RequirementError
from picker.catalog.quantities import format_quantity
from picker.design.requirements import Requirements, Role

LOW, HIGH = "low", "high"  # which way a row is better

# Datasheet columns: (label, better). Point families are labelled below.
_DATASHEET = {
    "vds_max_V": ("Vds max", HIGH), "vgs_max_V": ("Vgs max", HIGH), "id_max_A": ("Id max", HIGH),
    "vgs_th_min_V": ("Vgs(th) min", None), "vgs_th_typ_V": ("Vgs(th) typ", None),
    # The maximum threshold sets the worst-case drive a cell can give: lower is better here.
    "vgs_th_max_V": ("Vgs(th) max", LOW),
    "idss_uA": ("Idss at 25 °C", LOW), "idss_hot_uA": ("Idss hot", LOW),
    "idss_hot_C": ("Idss hot: at", None),
    "vgs_th_tc_mV/C": ("Vgs(th) fall per °C", None), "rds_tc_pct/C": ("Rds(on) rise per °C", LOW),
    "vceo_max_V": ("Vceo max", HIGH), "ic_max_A": ("Ic max", HIGH),
    "vbe_on_V": ("Vbe on (typ)", LOW), "icbo_nA": ("Icbo at 25 °C", LOW),
    "icbo_hot_nA": ("Icbo hot", LOW), "icbo_hot_C": ("Icbo hot: at", None),
    "rth_ja_C/W": ("θja", LOW), "tj_max_C": ("Tj max", HIGH),
}
_FAMILY = {  # prefix: (label, better)
    "rds_on_mohm": ("Rds(on) max @ {c} V", LOW), "hfe_min": ("hFE min @ {c} mA", HIGH),
    "vce_sat_mV": ("Vce(sat) max @ {c} mA", LOW), "qg_nC": ("Qg @ {c} V", LOW),
    "price": ("price @ {c}", LOW),
}
_TEXT = ("maker", "kind", "package", "status", "preferred")


@dataclass
class Row:
    """One row of the lineup: a value per part."""

    key: str  # stable name: 'vds_max_V', 'drop_V.cold', 'check.drop'
    label: str
    unit: str | None  # quantities unit of `values` (None: text or plain number)
    values: list  # raw, one per part (NaN / None unknown)
    group: str  # 'part', 'datasheet', 'operating point', 'checks'
    better: str | None = None
    cells: list[str] | None = None  # how the table shows it (default: formatted values)
    order: list[float] | None = None  # numbers to compare for `better` (default: values)
    digits: int = 3

    @property
    def best(self) -> list[int]:
        """Positions of the best value, where the row has a direction and at
        least two parts have a value and they differ."""
        if self.better is None:
            return []
        compared = self.order if self.order is not None else self.values
        nums = np.array([_number(v) for v in compared])
        known = ~np.isnan(nums)
        if known.sum() < 2 or np.nanmax(nums) == np.nanmin(nums):
            return []
        target = np.nanmin(nums) if self.better == LOW else np.nanmax(nums)
        return [i for i in range(len(nums)) if known[i] and nums[i] == target]

    def cell(self, i: int) -> str:
        if self.cells is not None:
            return self.cells[i]
        v = self.values[i]
        if v is None or (isinstance(v, float) and math.isnan(v)):
            return "–"
        if isinstance(v, (bool, np.bool_)):
            return "yes" if v else "no"
        if isinstance(v, (int, float, np.integer, np.floating)):
            if self.unit and self.unit != "1":
                return format_quantity(float(v), self.unit, self.digits)
            return f"{float(v):.{self.digits}g}"
        return str(v)


def _number(v) -> float:
    try:
        f = float(v)
    except (TypeError, ValueError):
        return math.nan
    return f


@dataclass
class Lineup:
    parts: pd.DataFrame  # catalogue rows, in the order asked
    rows: list[Row]
    role: Role | None = None
    req: Requirements | None = None
    candidates: pd.DataFrame | None = None  # the engine's rows for these parts
    result: object = None  # the engine's RoleResult for the whole role
    corners: dict = field(default_factory=dict)  # 'cold'/'hot' -> at_supply table
    lowest: pd.DataFrame | None = None  # headroom.lowest_supply for these parts
    notes: list[str] = field(default_factory=list)

    @property
    def names(self) -> list[str]:
        return [str(p) for p in self.parts["part"]]


# -- finding the parts -------------------------------------------------------------

def find_parts(df: pd.DataFrame, names: list[str]) -> pd.DataFrame:
    """The catalogue rows of `names`, in that order, each once (case, spaces and
    punctuation ignored). An unknown name raises CatalogError with the closest
    catalogue names."""
    keys = df["part"].astype(str).map(normalise_part).to_numpy()
    positions: list[int] = []
    for name in names:
        hit = np.flatnonzero(keys == normalise_part(name))
        if hit.size == 0:
            close = closest_parts(df, name)
            hint = f"did you mean {', '.join(close)}?" if close else "no similar part numbers"
            raise CatalogError(f"no part '{name}' in the catalogue; {hint}")
        if hit[0] not in positions:
            positions.append(int(hit[0]))
    return df.iloc[positions]


def pick_role(req: Requirements, name: str | None) -> Role:
    """The role named, or the only one; several roles and no name is an error."""
    if name is not None:
        return req.role(name)
    if len(req.roles) == 1:
        return req.roles[0]
    names = ", ".join(r.name for r in req.roles[:20])
    raise RequirementError(f"the requirements have {len(req.roles)} roles; say which with "
                           f"--role ({names})", file=req.source or None)


def check_kinds(parts: pd.DataFrame, role: Role) -> None:
    wrong = parts[parts["kind"] != role.kind]
    if len(wrong):
        row = wrong.iloc[0]
        raise RequirementError(f"part '{row['part']}' is {_a(row['kind'] or 'of no kind')}; "
                               f"role '{role.name}' ({role.use}) takes {role.kind} parts")


def _a(word: str) -> str:
    return f"an {word}" if word[:1] in "aeiou" or word == "npn" or word == "nmos" else f"a {word}"


# -- building ------------------------------------------------------------------------

def build_lineup(catalog_df: pd.DataFrame, names: list[str], req: Requirements | None = None,
                 role: Role | None = None, *, on_step=None) -> Lineup:
    """The lineup of `names` (datasheet rows only without a role)."""
    parts = find_parts(catalog_df, names)
    lineup = Lineup(parts, [], role, req)
    lineup.rows += _identity_rows(parts)
    lineup.rows += _datasheet_rows(parts)
    if role is None or req is None:
        lineup.notes.append("datasheet values only: give --requirements (and --role) to compare "
                            "the parts at your operating point")
        return lineup
    check_kinds(parts, role)
    from picker.engine.evaluate import evaluate_role

    result = evaluate_role(catalog_df, role, req)
    lineup.result = result
    lineup.candidates = result.table.loc[parts.index]
    for corner in headroom.CORNERS:
        lineup.corners[corner] = headroom.at_supply(parts, role, req, req.supply.min_V,
                                                    headroom.corner_temperature(req, corner))
    lineup.lowest = headroom.lowest_supply(parts, role, req, on_step=on_step)
    lineup.rows += _figure_rows(lineup)
    lineup.rows += _check_rows(lineup)
    lineup.notes += _notes(lineup)
    return lineup


def _identity_rows(parts: pd.DataFrame) -> list[Row]:
    rows = []
    for name in _TEXT:
        if name in parts:
            values = parts[name].tolist()
            rows.append(Row(name, name, None, values, "part"))
    return rows


def _datasheet_label(name: str) -> tuple[str, str | None] | None:
    if name in _DATASHEET:
        return _DATASHEET[name]
    family = cols.family_of(name)
    if family is None:
        return None
    label, better = _FAMILY[family.prefix]
    return label.format(c=f"{cols.condition_of(name):g}"), better


def _datasheet_rows(parts: pd.DataFrame) -> list[Row]:
    """One row per numeric catalogue column with a value for any of the parts,
    in the catalogue's column order, values in the column's own unit."""
    rows = []
    for name in parts.columns:
        try:
            unit, _ = cols.spec_of(name)
        except KeyError:
            continue
        labelled = _datasheet_label(name)
        if unit is None or labelled is None:
            continue
        values = parts[name].to_numpy(dtype=float)
        if not np.isfinite(values).any():
            continue
        label, better = labelled
        rows.append(Row(name, label, unit, [float(v) for v in values], "datasheet", better))
    return rows


def _corner_label(req: Requirements, corner: str) -> str:
    return f"{corner} ({headroom.corner_temperature(req, corner):g} °C)"


def _figure_rows(lineup: Lineup) -> list[Row]:
    role, req, cand = lineup.role, lineup.req, lineup.candidates
    rows: list[Row] = []
    group = "operating point"

    def single(key: str, label: str, unit: str | None, better: str | None, digits: int = 3):
        rows.append(Row(key, label, unit, [_plain(v) for v in cand[key]], group, better,
                        digits=digits))

    def per_corner(column: str, label: str, unit: str | None, better: str | None,
                   key: str | None = None):
        for corner in headroom.CORNERS:
            values = [_plain(v) for v in lineup.corners[corner][column]]
            rows.append(Row(f"{key or column}.{corner}", f"{label}, {_corner_label(req, corner)}",
                            unit, values, group, better))

    if role.is_pass_switch:
        single("vgs_V", "gate drive Vgs", "V", None)
        per_corner("vt_cold_V", "Vgs(th) max", "V", LOW, key="vt_V")
        per_corner("gate_margin_V", "gate margin", "V", HIGH)
        per_corner("rds_on_ohm", "Rds(on)", "ohm", LOW)
        per_corner("drop_V", "drop", "V", LOW)
        per_corner("loss_W", "loss", "W", LOW)
        per_corner("tj_C", "Tj", "degC", LOW)
        rows.append(Row("corner", "worse corner (drop)", None, cand["corner"].tolist(), group))
    else:
        per_corner("vbe_cold_V", "Vbe", "V", None, key="vbe_V")
        per_corner("ib_A", "Ib", "A", HIGH)
        per_corner("hfe", "hFE at Ic", "1", HIGH)
        per_corner("overdrive", "Ib·hFE / Ic", "1", HIGH)
        single("forced_gain", "forced gain Ic/Ib (cold)", "1", None)
        single("vce_sat_V", "Vce(sat)", "V", LOW)
    per_corner("off_current_A", "off current", "A", LOW)
    low = lineup.lowest
    for corner in (*headroom.CORNERS, None):
        records = low.to_dict("records")
        key = "lowest_supply_V" + (f".{corner}" if corner else "")
        where = _corner_label(req, corner) if corner else "worse corner"
        label = f"lowest supply, {where}"
        rows.append(Row(key, label, "V",
                        [r[f"lowest_supply_{corner}_V" if corner else "lowest_supply_V"]
                         for r in records], group, LOW,
                        cells=[headroom.short(r, corner) for r in records],
                        order=[headroom.sort_value(r, corner) for r in records]))
    single("unit_price", f"unit price at {int(cand['quantity'].iloc[0]):,}", "1", LOW, digits=4)
    single("cost", "cost per board", "1", LOW, digits=4)
    total = len(lineup.result.table)
    rows.append(Row("rank", f"rank of {total} {role.kind} parts", None,
                    [int(v) for v in cand["rank"]], group, LOW))
    return rows


def _plain(v):
    """A DataFrame cell as a plain Python value (NaN stays NaN)."""
    if isinstance(v, (np.floating, np.integer)):
        return v.item()
    return v


def _check_rows(lineup: Lineup) -> list[Row]:
    from picker.engine.evaluate import OUTCOME

    cand, result = lineup.candidates, lineup.result
    rows = []
    for check in result.checks:
        outcome = [OUTCOME[int(v)] for v in cand[f"check_{check}"]]
        rows.append(Row(f"check.{check}", check, None, outcome, "checks",
                        cells=[o.upper() if o == "fail" else o for o in outcome]))
    from picker.engine.evaluate import notes

    rows.append(Row("notes", "notes", None,
                    [", ".join(notes(c)) for _, c in cand.iterrows()], "checks"))
    verdict = ["feasible" if f else "rejected" for f in cand["feasible"]]
    rows.append(Row("verdict", "verdict", None, verdict, "checks",
                    cells=["feasible" if f else f"REJECTED ({int(n)} failing)"
                           for f, n in zip(cand["feasible"], cand["n_fail"])]))
    return rows


def _notes(lineup: Lineup) -> list[str]:
    from picker.engine.reasons import reasons

    role, req = lineup.role, lineup.req
    out = []
    for (idx, cand), (_, low) in zip(lineup.candidates.iterrows(), lineup.lowest.iterrows()):
        out.append(f"{cand['part']}: {headroom.describe(low, role, req)}")
        out += [f"  - {why}" for why in reasons(cand, lineup.result, req)]
    return out


# -- output ----------------------------------------------------------------------------

def to_json(lineup: Lineup) -> dict:
    """The lineup for scripts: per part the engine's candidate (as `choose`
    writes it), its rank, each corner's figures, the lowest working supply and
    the datasheet values; plus which parts are best in each row."""
    from picker.engine.evaluate import candidate_json
    from picker.engine.reasons import reasons
    from picker.cells import clean

    role, req = lineup.role, lineup.req
    datasheet = [r for r in lineup.rows if r.group == "datasheet"]
    parts = []
    for i, (_, part) in enumerate(lineup.parts.iterrows()):
        entry = {"part": part["part"], "maker": part.get("maker"), "package": part.get("package"),
                 "kind": part["kind"]}
        if lineup.candidates is not None:
            cand = lineup.candidates.iloc[i]
            low = lineup.lowest.iloc[i]
            entry.update(candidate_json(cand, lineup.result))
            entry["rank"] = int(cand["rank"])
            entry["why"] = reasons(cand, lineup.result, req)
            entry["corners"] = {
                c: {"ambient_C": headroom.corner_temperature(req, c),
                    **{f: _plain(lineup.corners[c][f].iloc[i]) for f in _corner_figures(role)}}
                for c in headroom.CORNERS}
            entry["lowest_supply"] = {**headroom.to_json(low),
                                      **{c: headroom.to_json(low, c) for c in headroom.CORNERS}}
        entry["datasheet"] = {r.key: r.values[i] for r in datasheet}
        parts.append(entry)
    best = {r.key: [lineup.names[i] for i in r.best] for r in lineup.rows if r.best}
    doc = {"role": None if role is None else {
        "name": role.name, "use": role.use, "refs": list(role.refs),
        "requirements": req.source, "supply_min_V": req.supply.min_V,
        "supply_max_V": req.supply.max_V,
        "ambient_C": {c: headroom.corner_temperature(req, c) for c in headroom.CORNERS}},
        "parts": parts, "best": best}
    return clean(doc)


def _status(low: pd.Series, key: str) -> str:
    corner = key.partition(".")[2]
    return low[f"lowest_supply_{corner}_status" if corner else "lowest_supply_status"]


def _corner_figures(role: Role) -> tuple[str, ...]:
    if role.is_pass_switch:
        return ("vgs_V", "rds_on_ohm", "drop_V", "loss_W", "tj_C", "off_current_A",
                "gate_margin_V")
    return ("vbe_cold_V", "ib_A", "hfe", "overdrive", "off_current_A")


def report(lineup: Lineup):
    """The lineup as a renderer Report: table (best values bold), CSV, JSON."""
    from picker.present.explain import CAUTIONS
    from picker.present.render import Column, Report, Section

    names = lineup.names
    keys = [f"p{i}" for i in range(len(names))]
    columns = [Column("label", "part")] + [Column(k, n, numeric=True) for k, n in zip(keys, names)]
    table_rows, bold = [], set()
    group = None
    for row in lineup.rows:
        if row.group != group and row.group != "part":
            table_rows.append({"label": f"── {row.group} ──", **{k: "" for k in keys}})
            group = row.group
        table_rows.append({"label": row.label, **{k: row.cell(i) for i, k in enumerate(keys)}})
        for i in row.best:
            bold.add((len(table_rows) - 1, keys[i]))
    if lineup.role is not None:
        role = lineup.role
        title = (f"{role.name} ({role.use}) at supply {lineup.req.supply.min_V:g}-"
                 f"{lineup.req.supply.max_V:g} V, ambient {lineup.req.ambient.min_C:g} to "
                 f"{lineup.req.ambient.max_C:g} °C; best value in each row in bold")
    else:
        title = "datasheet values; best value in each row in bold"
    section = Section(title, columns, table_rows, bold=bold)
    notes = list(lineup.notes)
    if lineup.role is not None:
        from picker.engine.evaluate import notes as notes_of
        from picker.present.explain import legend

        shown = [n for _, cand in lineup.candidates.iterrows() for n in notes_of(cand)]
        key = legend(shown, lineup.notes)
        notes += ([""] + key if key else []) + [""] + CAUTIONS
    csv_columns = [Column("row"), Column("label"), Column("unit")] + \
        [Column(n, numeric=True) for n in names]
    csv_rows = []
    for r in lineup.rows:
        csv_rows.append({"row": r.key, "label": r.label, "unit": r.unit or "",
                         **{n: r.values[i] for i, n in enumerate(names)}})
        if r.key.startswith("lowest_supply_V"):  # what an empty voltage means
            csv_rows.append({"row": r.key.replace("_V", "_status"), "label": r.label + ": status",
                             "unit": "", **{n: _status(lineup.lowest.iloc[i], r.key)
                                            for i, n in enumerate(names)}})
    return Report([section], notes=notes, data=to_json(lineup), csv_columns=csv_columns,
                  csv_rows=csv_rows)
