"""The design review as one Markdown file: the same document as the HTML,
in pipe tables (the table syntax most Markdown readers share), the curves
as SVG images inside the file (data URIs), nothing fetched."""

from __future__ import annotations

import base64

from picker.present.render import Column, Report, table_cell
from picker.present.report import ReportDoc, RoleBlock


def cell(text: str) -> str:
    """Text safe inside a pipe-table cell: pipes escaped, line breaks as spaces."""
    return str(text).replace("\\", "\\\\").replace("|", "\\|").replace("\n", " ").replace("\r", " ")


def table(columns: list[Column], rows: list[dict]) -> str:
    head = "| " + " | ".join(cell(c.title) for c in columns) + " |"
    rule = "| " + " | ".join("---:" if c.unit or c.numeric else "---" for c in columns) + " |"
    body = ["| " + " | ".join(cell(table_cell(r.get(c.key), c)) for c in columns) + " |" for r in rows]
    return "\n".join([head, rule, *body]) + "\n"


def _facts(pairs: list[tuple[str, str]]) -> str:
    return "\n".join(f"- **{k}**: {v}" for k, v in pairs) + "\n"


def _svg_image(svg: str, title: str) -> str:
    data = base64.b64encode(svg.encode("utf-8")).decode("ascii")
    return f"![{cell(title)}](data:image/svg+xml;base64,{data})\n"


def _role(block: RoleBlock) -> list[str]:
    out = [f"## Role {block.name}\n", f"{block.heading}\n"]
    c = block.choice_row
    if c is not None:
        out.append(f"**Chosen: {block.choice}** ({c['maker']}, {c['package']}), unit price "
                   f"{table_cell(c['unit_price'], Column('u', numeric=True))}, "
                   f"{table_cell(c['cost'], Column('c', numeric=True))} per board; "
                   f"{block.n_feasible} of {block.n_candidates} parts of this kind pass every check.\n")
    else:
        out.append(f"**No feasible part** with a price among the {block.n_candidates} candidates.\n")
    if block.finalists:
        out += ["### The choice and the runners-up\n", table(block.columns, block.finalists)]
    if block.checks:
        parts = [k for k in block.checks[0] if k != "check"]
        out += ["### Every check\n", table([Column("check")] + [Column(p, p) for p in parts], block.checks)]
    if block.pair:
        p = block.pair
        out.append(f"### Linked roles: {' and '.join(p['roles'])}\n")
        out.append(f"Chosen together: {' with '.join(str(x) for x in p['parts'])}.\n")
        if p["resistors"]:
            out.append(table([Column("role"), Column("resistor"), Column("value")], p["resistors"]))
        if p["circuit"]:
            out.append(table([Column("role"), Column("check"), Column("outcome"), Column("margin")],
                             p["circuit"]))
    if block.curve_svg and block.curve_chart is not None:
        out.append("### Across the cell's range\n")
        out.append(_svg_image(block.curve_svg, block.curve_chart.title))
    if block.lowest:
        out.append("\n".join(f"- {t}" for t in block.lowest) + "\n")
    if block.near:
        out += ["### Near misses: the cheapest rejected parts, and why\n",
                table([Column("part"), Column("maker"), Column("package"),
                       Column("cost", "cost/board", numeric=True), Column("why")], block.near)]
    return out


def _review(review: Report, source: str | None, cautions: list[str]) -> list[str]:
    out = ["## Cost-down review of the BOM\n"]
    if source:
        out.append(f"BOM: `{source}`\n")
    for s in review.sections:
        if s.title:
            out.append(f"### {s.title.strip()}\n")
        if s.rows:
            out.append(table(s.columns, s.rows))
        out += [f"{line}\n" for line in s.caption]
    out += [f"- {n}" for n in review.notes if n and n not in cautions]
    out.append("")
    return out


def write_markdown(doc: ReportDoc) -> str:
    """The report as the text of one Markdown file."""
    cat = doc.catalogue
    out = [f"# {doc.title}\n",
           _facts([("made", doc.made), ("by", f"picker {doc.version}, {doc.method} "
                                               "(picker/models/README.md)"),
                   ("design", f"`{doc.design_source or 'quick question'}`"),
                   ("catalogue", f"`{cat['path']}`, {cat['part_count']:,} parts")]),
           "## The choice\n",
           table([Column("role"), Column("use"), Column("refs"), Column("choice"), Column("maker"),
                  Column("package"), Column("unit_price", "unit price", numeric=True),
                  Column("cost", "cost/board", numeric=True), Column("feasible")], doc.summary),
           _facts(doc.totals),
           "## The design's inputs, and where each came from\n",
           table([Column("section"), Column("key"), Column("value"), Column("source")],
                 [{"section": i.section, "key": i.key, "value": i.value, "source": i.source}
                  for i in doc.inputs]),
           "## The catalogue\n",
           _facts([("path", f"`{cat['path']}` ({cat['source']})"),
                   ("content hash", f"sha256 `{cat['content_hash']}`"),
                   ("parts", f"{cat['part_count']:,} of {cat['rows_read']:,} rows read"),
                   ("left out", f"{len(cat['left_out'])} rows with errors" if cat["left_out"] else "none"),
                   ("warnings", str(cat["warnings_total"]))])]
    if cat["warnings"]:
        out.append("\n".join(f"- `{w}`" for w in cat["warnings"]) + "\n")
    for block in doc.roles:
        out += _role(block)
    if doc.review is not None:
        out += _review(doc.review, doc.review_source, doc.cautions)
    out.append("## Cautions\n")
    out += [f"{c}\n" for c in doc.cautions]
    out.append(f"Written by picker {doc.version} on {doc.made}. Check every choice against the "
               "maker's current datasheet.\n")
    return "\n".join(out)
