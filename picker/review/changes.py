"""What the revised BOM changes, line by line (`revision`).

- A line whose part is replaced gets the new part number, maker and price,
  and a description of the new part (`describe.describe_part`: the
  catalogue's own description, else one from its catalogue figures). The old
  part number, maker, description and BOM price are kept in the change column
  only, so the description beside a part always describes that part.
- Lines that one part now serves together (consolidation) become one line, as
  a purchaser buys them: the first of them in BOM order keeps its place and
  takes the reference designators of all of them (their cells joined in BOM
  order, ranges such as Q4-Q7 as written) and the sum of their quantities;
  the others are left out of the revised BOM, and the change column of the
  merged line says what each of them was (refs, quantity, part, description,
  price and any other cell), so every reference designator and quantity of
  the original is accounted for.
- A line that keeps its part is not changed.

Nothing here prints.
"""

from __future__ import annotations

import math
import re

import numpy as np

from picker.catalog.load import normalise_part
from picker.review.describe import describe_part
from picker.review.revised import Change

# The cells a change may rewrite; every other cell of a merged-away line is named in the note.
_REWRITTEN = ("refs", "qty", "part", "maker", "price", "description")


def revision(rv) -> dict[int, Change]:
    """BOM data row -> its Change, for `revised.revised_bom`. `rv` is a
    `propose.Review` whose `catalog` is the catalogue it was reviewed against."""
    by_row = {r.line.row: r for r in rv.lines}
    out: dict[int, Change] = {}
    for g in rv.groups:
        rows = sorted(g.rows)
        members = [by_row[x] for x in rows]
        out[rows[0]] = _merged(rv, g, members)
        for x in rows[1:]:
            out[x] = Change(None, None, math.nan, "", drop=True, into=rows[0])
    for r in rv.lines:
        if r.line.row in out or not r.proposal or _same(r.proposal, r.part):
            continue
        out[r.line.row] = _replaced(rv, r)
    return out


def _same(a: str, b: str) -> bool:
    return normalise_part(a) == normalise_part(b)


def _description(rv, kind: str, part: str) -> str | None:
    """The catalogue's words for `part`, or None when the BOM has no description column."""
    if "description" not in rv.bom.columns or rv.catalog is None:
        return None
    kp = rv.kinds[kind]
    hits = np.flatnonzero(kp.part == part)
    return describe_part(rv.catalog, int(kp.positions[hits[0]])) if hits.size else None


def _was(rv, r) -> str:
    """What the line said before: part, maker, description and BOM price,
    the description quoted as it is free text."""
    bom, ln = rv.bom, r.line
    text = ln.part or "no part number"
    if ln.maker:
        text += f" by {ln.maker}"
    if ln.description:
        text += f', "{ln.description}"'
    price = bom.cells_of(ln, "price")
    if price:
        text += f", {price} each in the BOM"
    return text


def _other_cells(rv, ln) -> list[str]:
    """'Item 6': the cells of a line that no change rewrites, header first."""
    bom = rv.bom
    used = {bom.columns[c] for c in _REWRITTEN if c in bom.columns}
    return [f"{' '.join(bom.header[i].split())} {cell}" for i, cell in enumerate(ln.cells)
            if i not in used and i < len(bom.header) and cell.strip()]


def _confirm(r) -> str:
    if r.match is not None and r.match.status == "confirm":
        return f"; CONFIRM that {r.line.part} is {r.part}"
    return ""


def _replaced(rv, r) -> Change:
    if r.status == "fix":
        why = f"replaces it: {r.note}"
    else:
        why = "drop-in" if not r.roles else f"feasible for {', '.join(r.roles)}"
    note = (f"replaced; was {_was(rv, r)}; now {r.proposal}: {why}; "
            f"{r.unit_after:.4g} each vs {r.unit_now:.4g}{_confirm(r)}")
    return Change(r.proposal, r.proposal_maker, r.unit_after, note,
                  description=_description(rv, r.kind, r.proposal))


def _merged(rv, g, members) -> Change:
    bom = rv.bom
    first = members[0]
    refs_cells = [bom.cells_of(m.line, "refs") for m in members]
    refs = _joined([c for c in refs_cells if c.strip()])
    qty = sum(int(m.qty) for m in members)
    parts = []
    for k, m in enumerate(members):
        said = ([refs_cells[k]] if refs_cells[k].strip() else []) + (
            _other_cells(rv, m.line) if k else [])  # the merged line keeps its own other cells
        where = f"line {m.line.line}" + (f" ({'; '.join(said)})" if said else "")
        fate = "kept" if _same(m.part, g.part) else "replaced"
        left = "" if k == 0 else ", its line left out of this BOM"
        parts.append(f"{where}: {m.qty} of {_was(rv, m)}, {fate}{left}{_confirm(m)}")
    note = (f"merged {len(members)} lines into this one: one part, {g.part}, for all "
            f"{qty} ({qty * rv.options.volume:,} a build) at {g.unit_price:.4g} each; "
            + "; ".join(parts))
    replaced = not _same(first.part, g.part)
    return Change(g.part if replaced else None, g.maker if replaced else None, g.unit_price,
                  note, description=_description(rv, g.kind, g.part) if replaced else None,
                  refs=refs if "refs" in bom.columns else None,
                  qty=str(qty) if "qty" in bom.columns else None)


def _joined(cells: list[str]) -> str:
    """Reference designator cells joined in BOM order, each as written: with
    '; ' where the first cell separates by semicolons, with a space where it
    is a list separated by spaces only ('Q4 Q5 Q6' + 'Q9'), else with ', '
    ('Q2, Q3' + 'Q4-Q7' -> 'Q2, Q3, Q4-Q7')."""
    cells = [" ".join(c.split()) for c in cells]
    first = cells[0] if cells else ""
    if ";" in first:
        sep = "; "
    elif " " in first and not re.search(r"[,\-–—]|\.\.", first):
        sep = " "
    else:
        sep = ", "
    return sep.join(cells)
