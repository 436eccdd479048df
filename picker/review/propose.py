"""Cost-down review of a BOM: which transistor lines could be cheaper at the
build volume, without giving anything up.

For each transistor line found in the catalogue (`picker.review.bom`), a mask over
every catalogue part of the same kind says which parts may replace it:

- without a requirement file, the **drop-in rule** (`KindParts.drop_in`): same
  kind, an accepted package, and at least as good on every rating and figure
  the incumbent has data for;
- with one, the roles whose refs name the line: the engine's feasible parts
  (`engine.evaluate_role`), in an accepted package.

The cheapest part of the mask at the line's quantity (volume x qty per board,
models/README.md §7) is proposed when it is cheaper than the incumbent. Then lines of
one kind that one part could all serve are consolidated where the combined
quantity's price break pays (`picker.review.consolidate`). Prices are the catalogue's at
the build quantity, for the incumbent and the proposal alike; the BOM's own
price column is shown beside them, never used for a saving.

The screen is vectorised over the catalogue: one pass of numpy comparisons
per BOM line (a loop over BOM lines, none over parts).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from picker.catalog.load import Problem, normalise_part
from picker.review.bom import Bom, BomLine
from picker.review.consolidate import EPS_MONEY, Group, consolidate
from picker.review.kinds import (DEFAULT_VOLUME, REL_TOL, KindParts, Options,  # noqa: F401
                                 package_groups, package_key)
from picker.review.match import Match, PartIndex
from picker.review.revised import Change



def drop_ins(catalog_df: pd.DataFrame, part: str, options: Options = Options()) -> pd.DataFrame:
    """Every other part of `part`'s kind with the drop-in verdict: columns
    `part`, `package`, `status`, `qualifies` and `why` (the first reason it
    does not, '' when it does). CatalogError when `part` is not in the
    catalogue (case, spaces and punctuation ignored)."""
    from picker.catalog.load import closest_parts
    from picker.errors import CatalogError

    df = catalog_df if catalog_df.index.is_unique else catalog_df.reset_index(drop=True)
    keys = df["part"].astype(str).map(normalise_part).to_numpy()
    hits = np.flatnonzero(keys == normalise_part(part))
    if not hits.size:
        close = closest_parts(df, part)
        raise CatalogError(f"no part '{part}' in the catalogue"
                           + (f"; closest: {', '.join(close)}" if close else ""))
    kind = str(df["kind"].iat[hits[0]])
    positions = np.flatnonzero(df["kind"].astype(str).to_numpy() == kind)
    kp = KindParts(df, positions, kind)
    inc = int(np.searchsorted(positions, hits[0]))
    groups = package_groups(options.packages_ok)
    fits, allowed = kp.drop_in(inc), kp.allowed(inc, options, groups)
    key = kp.package_key[inc]
    accepted = groups.get(key, {key}) if key else set()
    why = []
    for j in range(kp.n):  # words for each part: this table is for people, not for speed
        if kp.package_key[j] not in accepted:
            why.append(f"package {kp.package[j] or 'unknown'}")
        elif not allowed[j]:
            why.append(f"status {kp.status[j]}")
        else:
            why.append("" if fits[j] else (kp.why_not(inc, j) or "not a drop-in"))
    out = pd.DataFrame({"part": kp.part, "package": kp.package, "status": kp.status,
                        "qualifies": fits & allowed, "why": why})
    return out.drop(index=inc).reset_index(drop=True)


# -- the review ----------------------------------------------------------------------------

@dataclass
class LineResult:
    """The review of one BOM line."""

    line: BomLine
    category: str  # 'transistor', 'other', 'dnp'
    match: Match | None = None
    part: str = ""  # the catalogue part matched
    kind: str = ""
    package: str = ""
    # 'other', 'not fitted', 'not in catalogue', 'no price', 'kept', 'proposal', 'fix', 'no fix'
    status: str = ""
    roles: tuple[str, ...] = ()
    unit_now: float = math.nan
    proposal: str = ""
    proposal_maker: str = ""
    proposal_package: str = ""
    unit_after: float = math.nan  # of the proposal, or of the incumbent when kept
    qualifying: int = 0  # other parts that may replace it
    note: str = ""
    _kind_pos: int = -1  # incumbent's position in its KindParts
    _proposal_pos: int = -1
    _mask: np.ndarray | None = None

    @property
    def qty(self) -> int | None:
        return self.line.qty

    @property
    def cost_now(self) -> float:
        return self.unit_now * self.qty if self.qty else math.nan

    @property
    def cost_after(self) -> float:
        return self.unit_after * self.qty if self.qty else math.nan

    @property
    def saving(self) -> float:
        return self.cost_now - self.cost_after


@dataclass
class Review:
    bom: Bom
    options: Options
    lines: list[LineResult]
    groups: list[Group]
    findings: list[dict]
    warnings: list[Problem]
    volume_source: str
    requirements: object = None
    kinds: dict[str, KindParts] = field(default_factory=dict)
    alternatives: list[Group] = field(default_factory=list)
    catalog: pd.DataFrame | None = None  # the catalogue reviewed against (unique index)

    def final(self) -> dict[int, tuple[str, str, str, float]]:
        """row -> (part, maker, package, unit price) after line proposals and consolidation."""
        out = {}
        for r in self.lines:
            if r.proposal:
                out[r.line.row] = (r.proposal, r.proposal_maker, r.proposal_package, r.unit_after)
        for g in self.groups:
            for row in g.rows:
                out[row] = (g.part, g.maker, g.package, g.unit_price)
        return out

    def totals(self) -> dict:
        costed = [r for r in self.lines if r.category == "transistor" and math.isfinite(r.cost_now)]
        now = sum(r.cost_now for r in costed)
        line_by_line = sum(r.cost_after if math.isfinite(r.cost_after) else r.cost_now for r in costed)
        grouped = {row for g in self.groups for row in g.rows}
        after = sum((r.cost_after if math.isfinite(r.cost_after) else r.cost_now)
                    for r in costed if r.line.row not in grouped) + sum(g.cost for g in self.groups)
        v = self.options.volume
        return {
            "volume": v, "cost_per_board_now": now, "cost_per_board_line_by_line": line_by_line,
            "cost_per_board_after": after, "saving_per_board": now - after,
            "saving_per_build": (now - after) * v,
            "lines_costed": len(costed),
            "lines_not_costed": sum(1 for r in self.lines if r.category == "transistor") - len(costed),
            "lines_removed": sum(g.lines_removed for g in self.groups),
        }

    @property
    def found_anything(self) -> bool:
        return bool(self.findings or self.groups or any(r.status in ("proposal", "fix") for r in self.lines))

    def changes(self) -> dict[int, Change]:
        """row -> the change for a revised BOM (`picker.review.changes.revision`):
        a replaced part, described anew; lines one part now serves merged."""
        from picker.review.changes import revision

        return revision(self)


def review(bom: Bom, catalog_df: pd.DataFrame, options: Options, requirements=None,
           *, volume_source: str = "--volume", index: PartIndex | None = None) -> Review:
    """Review every line of `bom` against the catalogue (see the module docstring)."""
    df = catalog_df if catalog_df.index.is_unique else catalog_df.reset_index(drop=True)
    index = index or PartIndex(df["part"])
    warnings = list(bom.warnings)
    findings: list[dict] = []
    results: list[LineResult] = []
    for ln in bom.lines:
        category = "dnp" if ln.qty == 0 else ("other" if ln.transistor is False else "transistor")
        results.append(LineResult(ln, category, status="other" if category == "other" else ""))
    matches = index.match([ln.part for ln in bom.lines],
                          fuzzy=np.array([r.category == "transistor" for r in results], dtype=bool),
                          take_at=options.take_at, confirm_at=options.confirm_at)
    kind_arr = df["kind"].astype(str).to_numpy()
    kinds: dict[str, KindParts] = {}
    local = np.full(len(df), -1, dtype=np.int64)  # catalogue position -> position in its KindParts

    def kind_parts(kind: str) -> KindParts:
        if kind not in kinds:
            positions = np.flatnonzero(kind_arr == kind)
            kinds[kind] = KindParts(df, positions, kind)
            local[positions] = np.arange(len(positions))
        return kinds[kind]

    groups_of = package_groups(options.packages_ok)
    for r, m in zip(results, matches):
        if r.category == "other" and m.found:  # the catalogue knows it: a transistor after all
            r.category, r.status = "transistor", ""
        if r.category == "dnp":
            r.status = "not fitted"
            continue
        if r.category != "transistor":
            continue
        r.match = m
        if not m.found:
            if r.line.transistor is None:  # no refs, no description: nothing says it is one
                r.category, r.status = "other", "other"
            else:
                r.status = "not in catalogue"
            continue
        r.part, r.kind = str(df["part"].iat[m.position]), kind_arr[m.position]
        kp = kind_parts(r.kind)
        r._kind_pos = int(local[m.position])
        r.package = str(kp.package[r._kind_pos])
        if m.status == "confirm":
            also = ", ".join(str(df["part"].iat[p]) for p in m.also)
            warnings.append(Problem("warning", bom.path, r.line.line, bom.columns["part"] + 1,
                                    f"'{r.line.part}' read as catalogue part {r.part} (score "
                                    f"{m.score:g}{'; also ' + also if also else ''}): confirm"))
        if r.line.kind_hint and r.line.kind_hint != r.kind:
            warnings.append(Problem("warning", bom.path, r.line.line, None,
                                    f"the description says {r.line.kind_hint}, catalogue part "
                                    f"{r.part} is {r.kind}: check the match"))
        status = kp.status[r._kind_pos]
        if status == "eol":
            findings.append(_finding(r, "status", f"{r.part} is end of life (eol) in the "
                                     "catalogue: the line needs a replacement"))
        elif status == "nrnd":
            findings.append(_finding(r, "status", f"{r.part} is not recommended for new designs "
                                     "(nrnd) in the catalogue"))

    role_masks = _roles(requirements, df, results, kind_parts, local, findings, warnings, bom) \
        if requirements is not None else {}
    for r in results:
        if r.category != "transistor" or r._kind_pos < 0:
            continue
        _propose(r, kinds[r.kind], options, groups_of, role_masks.get(r.line.row))
    review_ = Review(bom, options, results, [], findings, warnings, volume_source, requirements, kinds,
                     catalog=df)
    review_.groups, review_.alternatives = consolidate(results, kinds, options.volume)
    review_.findings.sort(key=lambda f: (f["type"] != "role", f["line"]))
    return review_


def _finding(r: LineResult, type_: str, text: str, role: str = "") -> dict:
    return {"type": type_, "line": r.line.line, "refs": list(r.line.refs), "part": r.part or r.line.part,
            "role": role, "finding": text}


def _roles(req, df, results, kind_parts, local, findings, warnings, bom) -> dict:
    """For each BOM row that roles name: {'roles': names, 'mask': parts feasible
    for every one of them, 'fails': why the incumbent fails (empty: it meets
    them), 'uncovered': refs of the line no role names, 'wrong_kind': set
    where the incumbent is not of a role's kind}. Findings and warnings are
    appended as found."""
    from picker.engine.evaluate import evaluate_role
    from picker.engine.reasons import reasons

    line_of_ref = {}
    for r in results:
        for ref in r.line.refs:
            line_of_ref.setdefault(ref.upper(), r)
    covered: dict[int, set[str]] = {}
    out: dict[int, dict] = {}
    for role in req.roles:
        lines = []
        for ref in role.refs:
            r = line_of_ref.get(ref.upper())
            if r is None:
                continue
            if r not in lines:
                lines.append(r)
            covered.setdefault(r.line.row, set()).add(ref.upper())
        missing = [ref for ref in role.refs if ref.upper() not in line_of_ref]
        if missing:
            warnings.append(Problem("warning", str(req.source), None, None,
                                    f"role '{role.name}': refs {', '.join(missing)} are not in the BOM"))
        usable = [r for r in lines if r.category == "transistor" and r._kind_pos >= 0]
        for r in lines:
            if r.category == "transistor" and r._kind_pos < 0:
                warnings.append(Problem("warning", bom.path, r.line.line, None,
                                        f"role '{role.name}' cannot be checked: '{r.line.part}' "
                                        "is not in the catalogue"))
        if not usable:
            continue
        result = evaluate_role(df, role, req)
        kp = kind_parts(role.kind)
        feasible = result.table["feasible"].reindex(kp.labels, fill_value=False).to_numpy(dtype=bool)
        for r in usable:
            entry = out.setdefault(r.line.row, {"mask": None, "fails": [], "roles": []})
            entry["roles"].append(role.name)
            if r.kind != role.kind:
                findings.append(_finding(r, "role", f"{r.part} is {r.kind} but role '{role.name}' "
                                         f"({role.use}) needs {role.kind}", role.name))
                entry["wrong_kind"] = True
                continue
            entry["mask"] = feasible if entry["mask"] is None else entry["mask"] & feasible
            label = df.index[r.match.position]
            if not bool(result.table.at[label, "feasible"]):
                why = "; ".join(reasons(result.table.loc[label], result, req)) or "no price"
                entry["fails"].append(f"{role.name}: {why}")
                findings.append(_finding(r, "role", f"{r.part} fails role '{role.name}' "
                                         f"({role.use}): {why}", role.name))
    for row, entry in out.items():
        r = results[row]
        entry["uncovered"] = [x for x in r.line.refs if x.upper() not in covered.get(row, set())]
    return out


def _propose(r: LineResult, kp: KindParts, options: Options, groups_of, role) -> None:
    """The cheapest part of the line's mask, when it is cheaper (or a fix)."""
    inc = r._kind_pos
    if not r.qty:
        r.status, r.note = "no price", "no quantity per board"
        return
    price = kp.price_at(float(options.volume * r.qty))
    r.unit_now = float(price[inc])
    if role is not None and role.get("wrong_kind"):
        r.status, r.unit_after = "kept", r.unit_now
        r.note = "the BOM part is not of its role's kind (see findings)"
        return
    allowed = kp.allowed(inc, options, groups_of)
    if role is not None and role["mask"] is not None:
        r.roles = tuple(role["roles"])
        mask = role["mask"] & allowed
        if role["uncovered"]:  # refs on this line that no role describes: drop-in for them
            mask = kp.drop_in(inc, among=mask)
    else:
        mask = kp.drop_in(inc, among=allowed)
    r._mask = mask
    r.qualifying = int(mask.sum() - mask[inc])
    fails = list(role["fails"]) if role is not None else []
    if kp.status[inc] == "eol":  # a part that cannot be bought must be replaced, whatever the cost
        fails.append(f"{r.part} is end of life")
    if not math.isfinite(r.unit_now) and not fails:
        r.status, r.note = "no price", f"{r.part} has no catalogue price"
        return
    pick = _cheapest(kp, mask, price)
    if fails:
        r.note = "; ".join(fails)
        if pick < 0:
            r.status = "no fix"
            r.note += "; no part qualifies in an accepted package"
            return
        r.status = "fix"
    elif pick >= 0 and pick != inc and price[pick] < r.unit_now - EPS_MONEY:
        r.status = "proposal"
    else:
        r.status, r.unit_after = "kept", r.unit_now
        r.note = _why_kept(r, kp, mask, allowed, price, role)
        return
    r._proposal_pos = pick
    r.proposal, r.proposal_maker = str(kp.part[pick]), str(kp.maker[pick])
    r.proposal_package, r.unit_after = str(kp.package[pick]), float(price[pick])


def _cheapest(kp: KindParts, mask: np.ndarray, price: np.ndarray) -> int:
    """Lowest price in the mask; ties: preferred first, then part number."""
    ok = np.flatnonzero(mask & np.isfinite(price))
    if not ok.size:
        return -1
    order = np.lexsort((kp.part[ok], ~kp.preferred[ok], price[ok]))
    return int(ok[order[0]])


def _why_kept(r, kp, mask, allowed, price, role) -> str:
    """Why no cheaper part: the cheapest cheaper part in an accepted package, and what it lacks."""
    cheaper = np.flatnonzero(allowed & (price < r.unit_now - EPS_MONEY) & ~mask)
    if not cheaper.size:
        return "no cheaper part in an accepted package"
    j = int(cheaper[np.lexsort((kp.part[cheaper], price[cheaper]))[0]])
    if role is not None and role.get("mask") is not None and not role["mask"][j]:
        why = "not feasible for " + ", ".join(role["roles"])
    else:
        why = kp.why_not(r._kind_pos, j) or "not a drop-in"
    return f"{len(cheaper)} cheaper part(s) do not qualify; cheapest {kp.part[j]}: {why}"
