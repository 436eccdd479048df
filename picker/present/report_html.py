"""The design review as one self-contained HTML file.

Nothing is fetched: the style is inline CSS, the curves inline SVG, the fonts
the reader's own; a Content-Security-Policy in the page forbids any request,
so the file opens the same on a laptop, a phone or a machine with no network.
Printed, each role starts a page. The look is the project's own: ink-blue
headings, an amber mark for the choice, plain ruled tables.
"""

from __future__ import annotations

from html import escape

from picker.present.render import Column, Report, table_cell
from picker.present.report import ReportDoc, RoleBlock

CSP = "default-src 'none'; style-src 'unsafe-inline'; img-src data:"

CSS = """
:root { --ink: #1f4e79; --text: #1b2430; --muted: #5b6470; --rule: #d9dde2;
        --amber: #c7781a; --amber-tint: #fdf1de; --paper: #fbfaf7;
        --ok: #2f6b2f; --bad: #b3261e; --unk: #7a5d00; }
* { box-sizing: border-box; }
html { -webkit-text-size-adjust: 100%; }
body { margin: 0 auto; max-width: 64rem; padding: 1.2rem 1.2rem 3rem; background: var(--paper);
       color: var(--text); font: 15px/1.45 system-ui, sans-serif; }
header.cover { border-top: 6px solid var(--ink); padding-top: .8rem; margin-bottom: 1.2rem; }
h1 { color: var(--ink); font-size: 1.7rem; margin: .2rem 0 .6rem; }
h2 { color: var(--ink); font-size: 1.25rem; margin: 2rem 0 .6rem; padding-left: .55rem;
     border-left: 6px solid var(--amber); }
h3 { font-size: 1.02rem; margin: 1.2rem 0 .4rem; }
p { margin: .4rem 0; }
.muted, caption, .note { color: var(--muted); }
dl.facts { display: grid; grid-template-columns: max-content 1fr; gap: .15rem 1rem; margin: 0; }
dl.facts dt { color: var(--muted); }
dl.facts dd { margin: 0; overflow-wrap: anywhere; }
code, .hash { font-family: ui-monospace, monospace; font-size: .92em; overflow-wrap: anywhere; }
.scroll { overflow-x: auto; -webkit-overflow-scrolling: touch; margin: .4rem 0 .8rem; }
table { border-collapse: collapse; font-size: .88rem; min-width: 60%; background: #fff; }
caption { text-align: left; font-size: .85rem; padding: .2rem 0; }
th, td { border-bottom: 1px solid var(--rule); padding: .28rem .55rem; text-align: left;
         vertical-align: top; }
th { background: #eef1f4; font-weight: 600; white-space: nowrap; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tr.chosen td { background: var(--amber-tint); }
td.part { white-space: nowrap; font-weight: 600; }
tr.group td { border-top: 2px solid #b9c0c8; }
.pass { color: var(--ok); } .fail { color: var(--bad); font-weight: 600; } .unknown { color: var(--unk); }
.choice { border: 1px solid var(--rule); border-left: 6px solid var(--amber); background: #fff;
          padding: .6rem .8rem; margin: .6rem 0; }
.choice .part { font-size: 1.15rem; }
figure.curve { margin: .6rem 0; background: #fff; border: 1px solid var(--rule); padding: .4rem; }
figure.curve svg { display: block; width: 100%; height: auto; }
figcaption { font-size: .85rem; color: var(--muted); padding: .3rem .2rem 0; }
ul.lowest { font-size: .9rem; padding-left: 1.2rem; }
section.cautions { border: 1px solid #e6c9a3; background: #fff8ee; padding: .2rem 1rem .8rem;
                   margin-top: 2rem; }
footer { margin-top: 2rem; font-size: .82rem; color: var(--muted); }
@media (max-width: 640px) {
  body { font-size: 14px; padding: .7rem .7rem 2rem; }
  h1 { font-size: 1.35rem; }
  dl.facts { grid-template-columns: 1fr; }
  dl.facts dd { margin-bottom: .3rem; }
  table { font-size: .8rem; }
}
@media print {
  @page { size: A4; margin: 14mm; }
  body { background: #fff; max-width: none; padding: 0; font-size: 10pt; }
  section.role { break-before: page; }
  .scroll { overflow: visible; }
  table { font-size: 8pt; }
  tr, figure.curve, .choice { break-inside: avoid; }
  h2, h3 { break-after: avoid; }
}
"""


def input_rows(doc: ReportDoc) -> list[dict]:
    """The inputs table: the section named where it starts, a line of the
    design file as 'line N'."""
    rows, last = [], None
    prefix = f"{doc.design_source}:"
    for i in doc.inputs:
        source = f"line {i.source[len(prefix):]}" if doc.design_source and i.source.startswith(prefix) \
            else i.source
        rows.append({"section": i.section if i.section != last else "", "key": i.key,
                     "value": i.value, "source": source, "_group": i.section != last})
        last = i.section
    return rows


def _table(columns: list[Column], rows: list[dict], *, caption: str | None = None,
           cls: str = "", chosen: int | None = None) -> str:
    head = "".join(f'<th class="{"num" if c.unit or c.numeric else ""}" scope="col">'
                   f"{escape(c.title)}</th>" for c in columns)
    body = []
    for i, row in enumerate(rows):
        cells = []
        for c in columns:
            text = table_cell(row.get(c.key), c)
            kind = "num" if c.unit or c.numeric else ""
            if c.key == "part":
                cells.append(f'<td class="part">{escape(text)}</td>')
            else:
                cells.append(f'<td class="{kind}">{_outcome(text)}</td>')
        tr = ' class="chosen"' if i == chosen else (' class="group"' if row.get("_group") and i else "")
        body.append(f"<tr{tr}>" + "".join(cells) + "</tr>")
    cap = f"<caption>{escape(caption)}</caption>" if caption else ""
    return (f'<div class="scroll"><table class="{cls}">{cap}<thead><tr>{head}</tr></thead>'
            f"<tbody>{''.join(body)}</tbody></table></div>")


def _outcome(text: str) -> str:
    """A check's outcome ('pass', 'fail +1 mV', 'unknown') in its colour."""
    word = text.split(" ", 1)[0]
    if word in ("pass", "fail", "unknown"):
        return f'<span class="{word}">{escape(text)}</span>'
    return escape(text)


def _facts(pairs: list[tuple[str, str]], cls: str = "facts") -> str:
    return f'<dl class="{cls}">' + "".join(f"<dt>{escape(k)}</dt><dd>{v}</dd>" for k, v in pairs) + "</dl>"


def _role(block: RoleBlock) -> str:
    out = [f'<section class="role" id="role-{escape(block.name)}" data-role="{escape(block.name)}">',
           f"<h2>Role {escape(block.name)}</h2>", f"<p>{escape(block.heading)}</p>"]
    c = block.choice_row
    if c is not None:
        out.append(f'<div class="choice" data-role="{escape(block.name)}">Chosen: '
                   f'<strong class="part">{escape(block.choice)}</strong> '
                   f'({escape(str(c["maker"]))}, {escape(str(c["package"]))}), unit price '
                   f'{table_cell(c["unit_price"], Column("u", numeric=True))}, '
                   f'{table_cell(c["cost"], Column("c", numeric=True))} per board'
                   f'<br><span class="muted">{block.n_feasible} of {block.n_candidates} '
                   f"{'part' if block.n_candidates == 1 else 'parts'} of this kind pass every "
                   "check; ranked by cost at the build volume (picker/models/README.md §8)</span></div>")
    else:
        out.append(f'<div class="choice none" data-role="{escape(block.name)}">No feasible part with '
                   f"a price among the {block.n_candidates} candidates.</div>")
    if block.finalists:
        out.append("<h3>The choice and the runners-up</h3>")
        out.append(_table(block.columns, block.finalists, cls="finalists", chosen=0,
                          caption="figures at the worst corner of the role's range"))
    if block.checks:
        parts = [k for k in block.checks[0] if k != "check"]
        cols = [Column("check")] + [Column(p, p) for p in parts]
        out.append("<h3>Every check</h3>")
        out.append(_table(cols, block.checks, cls="checks",
                          caption="outcome, and the margin to the limit where the output gives one"))
    if block.pair:
        out.append(_pair(block.pair))
    if block.curve_svg:
        out.append('<figure class="curve">' + block.curve_svg
                   + "<figcaption>Each line is the engine's own figure at that supply; solid: cold "
                   "corner, dashed: hot corner."
                   + "".join(f" {escape(n[:1].upper() + n[1:])}." for n in block.curve_chart.notes)
                   + "</figcaption></figure>")
    if block.lowest:
        out.append('<ul class="lowest">' + "".join(f"<li>{escape(t)}</li>" for t in block.lowest)
                   + "</ul>")
    if block.near:
        out.append("<h3>Near misses: the cheapest rejected parts, and why</h3>")
        out.append(_table([Column("part"), Column("maker"), Column("package"),
                           Column("cost", "cost/board", numeric=True), Column("why")],
                          block.near, cls="near"))
    out.append("</section>")
    return "\n".join(out)


def _pair(pair: dict) -> str:
    out = [f'<div class="pair"><h3>Linked roles: {escape(" and ".join(pair["roles"]))}</h3>',
           f"<p>Chosen together: {escape(' with '.join(str(p) for p in pair['parts']))}.</p>"]
    if pair["resistors"]:
        out.append(_table([Column("role"), Column("resistor"), Column("value")], pair["resistors"],
                          cls="resistors"))
    if pair["circuit"]:
        out.append(_table([Column("role"), Column("check"), Column("outcome"), Column("margin")],
                          pair["circuit"], cls="circuit"))
    out.append("</div>")
    return "\n".join(out)


def _review(review: Report, source: str | None, cautions: list[str]) -> str:
    out = ['<section class="review" id="review"><h2>Cost-down review of the BOM</h2>']
    if source:
        out.append(f"<p>BOM: <code>{escape(source)}</code></p>")
    for s in review.sections:
        if s.title:
            out.append(f"<h3>{escape(s.title.strip())}</h3>")
        if s.rows:
            out.append(_table(s.columns, s.rows, cls="review-table"))
        for line in s.caption:
            out.append(f'<p class="note">{escape(line)}</p>')
    notes = [n for n in review.notes if n and n not in cautions]
    if notes:
        out.append("<ul>" + "".join(f"<li>{escape(n)}</li>" for n in notes) + "</ul>")
    out.append("</section>")
    return "\n".join(out)


def write_html(doc: ReportDoc) -> str:
    """The report as the text of one HTML file."""
    cat = doc.catalogue
    inputs_rows = input_rows(doc)
    summary_cols = [Column("role"), Column("use"), Column("refs"), Column("choice"), Column("maker"),
                    Column("package"), Column("unit_price", "unit price", numeric=True),
                    Column("cost", "cost/board", numeric=True), Column("feasible")]
    left_out = cat["left_out"]
    cat_facts = [("path", f"<code>{escape(cat['path'])}</code> ({escape(cat['source'])})"),
                 ("content hash", f'<span class="hash">sha256 {escape(cat["content_hash"])}</span>'),
                 ("parts", f"{cat['part_count']:,} of {cat['rows_read']:,} rows read"),
                 ("left out", f"{len(left_out)} rows with errors (lines "
                  f"{escape(', '.join(map(str, left_out[:20])))}{' ...' if len(left_out) > 20 else ''})"
                  if left_out else "none"),
                 ("warnings", f"{cat['warnings_total']}")]
    warnings = "".join(f"<li><code>{escape(w)}</code></li>" for w in cat["warnings"])
    more = cat["warnings_total"] - len(cat["warnings"])
    if more > 0:
        warnings += f"<li>and {more} more: run <code>picker catalog check</code> to see them</li>"
    parts = [
        "<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f'<meta http-equiv="Content-Security-Policy" content="{CSP}">',
        f"<title>{escape(doc.title)}</title>", f"<style>{CSS}</style>", "</head>", "<body>",
        '<header class="cover">', f"<h1>{escape(doc.title)}</h1>",
        _facts([("made", escape(doc.made)), ("by", f"picker {escape(doc.version)}, "
                                                     f"{escape(doc.method)} (picker/models/README.md)"),
                ("design", f"<code>{escape(doc.design_source or 'quick question')}</code>"),
                ("catalogue", f"<code>{escape(cat['path'])}</code>, {cat['part_count']:,} parts")]),
        "</header>",
        '<section id="summary"><h2>The choice</h2>',
        _table(summary_cols, doc.summary, cls="summary"),
        _facts([(k, escape(v)) for k, v in doc.totals]), "</section>",
        '<section id="inputs"><h2>The design\'s inputs, and where each came from</h2>',
        (f'<p class="muted">"line N": a line of <code>{escape(doc.design_source)}</code></p>'
         if doc.design_source and doc.design_source != "command line" else ""),
        _table([Column("section"), Column("key"), Column("value"), Column("source")], inputs_rows,
               cls="inputs"), "</section>",
        '<section id="catalogue"><h2>The catalogue</h2>', _facts(cat_facts),
        (f'<ul class="warnings">{warnings}</ul>' if warnings else ""), "</section>",
    ]
    parts += [_role(b) for b in doc.roles]
    if doc.review is not None:
        parts.append(_review(doc.review, doc.review_source, doc.cautions))
    parts.append('<section class="cautions" id="cautions"><h2>Cautions</h2>'
                 + "".join(f"<p>{escape(c)}</p>" for c in doc.cautions) + "</section>")
    demo = (" The bundled demo catalogue is invented: never use it for a real design."
            if cat["source"] == "bundled demo" else "")
    parts.append(f"<footer>Written by picker {escape(doc.version)} on {escape(doc.made)}. "
                 f"Check every choice against the maker's current datasheet.{demo}</footer>")
    parts += ["</body>", "</html>", ""]
    return "\n".join(parts)
