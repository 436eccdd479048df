"""`picker report`: one file to share, checked as its readers will see it.

The HTML report is opened in a real browser (Debian's chromium, headless,
through chromedriver and selenium) with the network off: the rendered DOM
must show every role's choice as the JSON of `picker choose` gives it, every
curve drawn with a size, and no request made to anywhere. The Markdown report
is read with a Markdown parser from PyPI (markdown-it-py, CommonMark with its
table extension): each table holds the same rows as the JSON."""

from __future__ import annotations

import base64
import json
import os
import re
import xml.etree.ElementTree as ET

import pytest

import picker
from tests import browser
from tests.conftest import DEMO, EXAMPLES, run_cli

POWER = EXAMPLES / "kettlewick-power.toml"
BOM = EXAMPLES / "kettlewick-bom.csv"
SVG_NS = "{http://www.w3.org/2000/svg}"


@pytest.fixture(scope="module")
def made(tmp_path_factory):
    """The report of the demo design, with its BOM review, written by the CLI;
    and the JSON of `picker choose` on the same files."""
    folder = tmp_path_factory.mktemp("report")
    html, md = folder / "design-review.html", folder / "design-review.md"
    for out in (html, md):
        done = run_cli("report", str(POWER), "-o", str(out), "--bom", str(BOM), "--catalog", str(DEMO))
        assert done.returncode == 0, done.stderr
        assert f"wrote {out}" in done.stderr
    choose = run_cli("choose", str(POWER), "--catalog", str(DEMO), "--format", "json")
    review = run_cli("review", str(BOM), "-R", str(POWER), "--catalog", str(DEMO), "--format", "json")
    return {"html": html, "md": md, "json": json.loads(choose.stdout),
            "review": json.loads(review.stdout)}


# -- in a real browser -----------------------------------------------------------------------

def _need_browser():
    why = browser.missing()
    if why is not None:
        if os.environ.get("CI") == "true":
            pytest.fail(f"under CI=true the browser must be there: {why}")
        pytest.skip(why)


def test_the_browser_shows_every_choice_and_every_curve_and_fetches_nothing(made):
    _need_browser()
    with browser.browser(*browser.DESKTOP) as driver:
        browser.open_page(driver, made["html"])
        asked = browser.requests(driver)
        # the page itself is the only thing loaded: no script, font, style or image from anywhere
        assert asked == [made["html"].resolve().as_uri()]
        assert driver.execute_script("return performance.getEntriesByType('resource').length") == 0
        for role in made["json"]["roles"]:
            shown = driver.execute_script(
                "const c = document.querySelector(`.choice[data-role='${arguments[0]}'] .part`);"
                "return c ? c.textContent : null;", role["name"])
            assert shown == role["choice"], role["name"]
        boxes = driver.execute_script(
            "return [...document.querySelectorAll('svg.curve')].map(s => {"
            "  const r = s.getBoundingClientRect();"
            "  const lines = [...s.querySelectorAll('polyline.series')].map(p => p.getBBox());"
            "  return {w: r.width, h: r.height, lines: lines.length,"
            "          drawn: lines.filter(b => b.width > 0 && b.height >= 0).length};});")
        assert len(boxes) == len(made["json"]["roles"])  # one chart a role
        for box in boxes:
            assert box["w"] > 300 and box["h"] > 200
            assert box["lines"] >= 2 and box["drawn"] == box["lines"]
        assert browser.requests(driver) == []  # nothing asked for after the load either


def test_on_a_phone_the_page_does_not_scroll_sideways(made):
    """At a phone's width the text reflows; wide tables scroll inside their own box."""
    _need_browser()
    with browser.browser(*browser.PHONE) as driver:
        browser.open_page(driver, made["html"])
        width = driver.execute_script("return [document.documentElement.scrollWidth, innerWidth]")
        assert width[0] <= width[1]
        svg = driver.execute_script(
            "const r = document.querySelector('svg.curve').getBoundingClientRect();"
            "return [r.width, innerWidth]")
        assert 0 < svg[0] <= svg[1]


def test_printed_each_role_starts_a_page(made):
    _need_browser()
    with browser.browser(*browser.DESKTOP) as driver:
        browser.open_page(driver, made["html"])
        driver.execute_cdp_cmd("Emulation.setEmulatedMedia", {"media": "print"})
        breaks = driver.execute_script(
            "return [...document.querySelectorAll('section.role')]"
            ".map(s => getComputedStyle(s).breakBefore)")
        assert breaks == ["page"] * len(made["json"]["roles"])


def test_the_page_names_no_outside_address(made):
    """Belt and braces beside the browser's own record: no attribute of the page
    points anywhere (the SVG namespace is a name, not a request)."""
    text = made["html"].read_text(encoding="utf-8")
    addresses = set(re.findall(r"(?:src|href|url)\s*[=(]\s*[\"']?([^\"') >]+)", text))
    assert all(a.startswith("#") for a in addresses), addresses
    assert "Content-Security-Policy" in text and "default-src 'none'" in text


# -- the Markdown report, read by a Markdown parser ----------------------------------------------

def _tables(text: str) -> list[dict]:
    """Every table of a Markdown text as {'heading', 'header', 'rows'} (cells as text)."""
    from markdown_it import MarkdownIt

    tokens = MarkdownIt("commonmark").enable("table").parse(text)
    tables, heading, current, row, in_head = [], None, None, None, False
    for i, t in enumerate(tokens):
        if t.type == "heading_open":
            heading = tokens[i + 1].content
        elif t.type == "table_open":
            current = {"heading": heading, "header": [], "rows": []}
        elif t.type == "thead_open":
            in_head = True
        elif t.type == "thead_close":
            in_head = False
        elif t.type == "tr_open":
            row = []
        elif t.type in ("th_open", "td_open"):
            row.append(tokens[i + 1].content if tokens[i + 1].type == "inline" else "")
        elif t.type == "tr_close":
            (current["header"].extend(row) if in_head else current["rows"].append(row))
        elif t.type == "table_close":
            tables.append(current)
    return tables


def _column(table: dict, name: str) -> list[str]:
    return [r[table["header"].index(name)] for r in table["rows"]]


def test_markdown_tables_hold_the_rows_of_the_json(made):
    doc, text = made["json"], made["md"].read_text(encoding="utf-8")
    tables = _tables(text)
    summary = next(t for t in tables if t["heading"] == "The choice")
    assert _column(summary, "role") == [r["name"] for r in doc["roles"]]
    assert _column(summary, "choice") == [r["choice"] for r in doc["roles"]]
    result = picker.choose(picker.load_design(POWER), picker.load_catalog(DEMO))
    by_heading: dict[str, list[dict]] = {}
    for t in tables:
        by_heading.setdefault(t["heading"], []).append(t)
    finalists = by_heading["The choice and the runners-up"]
    checks = by_heading["Every check"]
    near = by_heading["Near misses: the cheapest rejected parts, and why"]
    assert len(finalists) == len(checks) == len(near) == len(doc["roles"])
    for role, fin, chk, nm in zip(doc["roles"], finalists, checks, near):
        feasible = [c for c in role["candidates"] if c["feasible"]][:5]
        assert _column(fin, "part") == [c["part"] for c in feasible]
        assert _column(fin, "maker") == [c["maker"] for c in feasible]
        assert _column(chk, "check") == list(role["candidates"][0]["checks"])
        for c in feasible:  # each finalist's column of outcomes is the JSON's
            assert [cell.split()[0] for cell in _column(chk, c["part"])] == list(c["checks"].values())
        assert _column(nm, "part") == list(result.roles[role["name"]].near_misses(5).index)
    inputs = next(t for t in tables if t["heading"].startswith("The design's inputs"))
    assert len(inputs["rows"]) == len(result.design.inputs)
    lines = next(t for t in tables if t["heading"].startswith("Transistor lines at"))
    review = made["review"]
    assert _column(lines, "line") == [str(r["line"]) for r in review["lines"]
                                      if r["category"] == "transistor"]


def test_markdown_curves_are_svg_images_inside_the_file(made):
    text = made["md"].read_text(encoding="utf-8")
    images = re.findall(r"!\[[^\]]*\]\(data:image/svg\+xml;base64,([A-Za-z0-9+/=]+)\)", text)
    assert len(images) == len(made["json"]["roles"])
    for data in images:
        svg = ET.fromstring(base64.b64decode(data))
        assert svg.tag == f"{SVG_NS}svg"
        assert len(svg.findall(f".//{SVG_NS}polyline")) >= 2
    assert "http" not in re.sub(r'xmlns="http://www.w3.org/2000/svg"', "", text.split("## Cautions")[0]
                                .replace("data:image", ""))


# -- what the report says --------------------------------------------------------------------

def test_the_report_names_its_inputs_catalogue_date_version_and_cautions(made):
    html = made["html"].read_text(encoding="utf-8")
    import hashlib  # SHA-256 of the catalogue's bytes (FIPS 180-4), computed here independently

    assert hashlib.sha256(DEMO.read_bytes()).hexdigest() in html
    assert f"picker {picker.__version__}" in html and "method v" in html
    assert re.search(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d[+-]\d\d:\d\d", html)
    for caution in ("body diode", "Lithium-ion cells", "licensed engineering practice",
                    "burn a finger"):
        assert caution in html
    assert "line 32" in html and "1.2 A" in html  # the cell switch's load, with its line


def test_the_python_report_is_the_file_the_command_writes(made):
    """to_html() with the date of the file: the same text as `picker report` wrote."""
    html = made["html"].read_text(encoding="utf-8")
    date = re.search(r"<dt>made</dt><dd>([^<]+)</dd>", html).group(1)
    catalog = picker.load_catalog(DEMO)
    design = picker.load_design(POWER)
    result = picker.choose(design, catalog)
    review = picker.review(BOM, catalog, design=design)
    page = result.to_html(review=review, made=date)
    # the one difference: how the catalogue's path was given (an argument here, --catalog there)
    assert page == html.replace("</code> (--catalog)</dd>", "</code> (argument)</dd>")


# -- the write rule ----------------------------------------------------------------------------

def test_an_existing_file_is_refused_without_force_and_kept_as_bak_with_it(tmp_path):
    out = tmp_path / "r.md"
    out.write_text("my notes\n", encoding="utf-8")
    done = run_cli("report", str(POWER), "-o", str(out))
    assert done.returncode == 2 and "pass --force" in done.stderr
    assert out.read_text(encoding="utf-8") == "my notes\n"
    done = run_cli("report", str(POWER), "-o", str(out), "--force")
    assert done.returncode == 0, done.stderr
    assert (tmp_path / "r.md.bak").read_text(encoding="utf-8") == "my notes\n"
    assert out.read_text(encoding="utf-8").startswith("# Design review")


def test_never_onto_an_input_even_with_force(tmp_path):
    bom = tmp_path / "bom.md"  # a BOM is read by its content, whatever its name
    bom.write_bytes(BOM.read_bytes())
    before = bom.read_bytes()
    done = run_cli("report", str(POWER), "--bom", str(bom), "-o", str(bom), "--force")
    assert done.returncode == 2 and "never writes over its own input" in done.stderr
    assert bom.read_bytes() == before


def test_the_suffix_sets_the_format(tmp_path):
    done = run_cli("report", str(POWER), "-o", str(tmp_path / "r.pdf"))
    assert done.returncode == 2 and "name a .html or a .md file" in done.stderr


def test_a_role_with_no_feasible_part_is_reported_and_exits_1(tmp_path):
    hard = tmp_path / "hard.toml"
    hard.write_text(POWER.read_text(encoding="utf-8").replace('max_drop = "60 mV"', 'max_drop = "1 mV"'),
                    encoding="utf-8")
    out = tmp_path / "hard.html"
    done = run_cli("report", str(hard), "-o", str(out))
    assert done.returncode == 1 and "no feasible part for: cell-switch" in done.stderr
    assert "No feasible part with a price" in out.read_text(encoding="utf-8")


def test_linked_roles_are_shown_together():
    """The slot for two roles that drive each other (models/README.md §10): the
    pair, the resistors chosen with them and the circuit's checks, read from
    the figure and check names the output interface gives linked roles
    (gate_pullup_ohm, base_resistor_ohm; held_off, pair, latch_off). Until
    the engine evaluates linked roles, a candidate written in that shape."""
    from types import SimpleNamespace

    from picker.present.report import RoleBlock, pair_block

    def block(name, part, figures, checks, margins):
        row = {"part": part, "figures": figures, "checks": checks, "margins": margins}
        return RoleBlock(name, "", "", [], part, row, [], [], [], [], 1, 1, None, None, [])

    switch = block("cell-switch", "PSW-1", {"drop_V": 0.05, "gate_pullup_ohm": 470e3},
                   {"drop": "pass", "held_off": "pass", "pair": "pass"},
                   {"held_off": {"margin": 0.21, "unit": "V", "fraction": 0.3}})
    latch = block("latch", "NLT-2", {"base_resistor_ohm": 1e6, "base_pulldown_ohm": 2.2e6},
                  {"saturation": "pass", "latch_off": "pass"}, {})
    design = SimpleNamespace(roles=[SimpleNamespace(role=SimpleNamespace(name="cell-switch", gate_driver="latch")),
                                    SimpleNamespace(role=SimpleNamespace(name="latch", gate_driver=None,
                                                                         base_from=None))])
    pair = pair_block(switch, {"cell-switch": switch, "latch": latch}, design)
    assert pair["parts"] == ["PSW-1", "NLT-2"]
    assert [(r["resistor"], r["value"]) for r in pair["resistors"]] == [
        ("gate pullup", "470 kΩ"), ("base resistor", "1 MΩ"), ("base pulldown", "2.2 MΩ")]
    assert [(c["check"], c["margin"]) for c in pair["circuit"]] == [
        ("held_off", "+210 mV"), ("pair", ""), ("latch_off", "")]
    assert pair_block(latch, {"cell-switch": switch, "latch": latch}, design) is None
