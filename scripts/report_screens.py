"""Screenshots of the design report at a phone's and a desktop's width, for a
person to look at (the tests check the DOM; only eyes judge the look).

    python scripts/report_screens.py [--out DIR] [REQ.toml] [--bom BOM.csv]

Writes the report (HTML) of the demo design with its BOM review into DIR
(default: a new temporary folder), opens it in headless chromium with the
network off, and saves whole-page PNGs: phone.png (390 px wide) and
desktop.png (1280 px)."""

from __future__ import annotations

import argparse
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from tests import browser  # noqa: E402


def main(argv: list[str]) -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("requirements", nargs="?", default=str(ROOT / "catalog/examples/kettlewick-power.toml"))
    parser.add_argument("--bom", default=str(ROOT / "catalog/examples/kettlewick-bom.csv"))
    parser.add_argument("--out", default=None)
    args = parser.parse_args(argv)
    why = browser.missing()
    if why:
        raise SystemExit(why)
    out = Path(args.out or tempfile.mkdtemp(prefix="picker-report-"))
    out.mkdir(parents=True, exist_ok=True)
    page = out / "design-review.html"
    subprocess.run([sys.executable, "-m", "picker", "report", args.requirements, "-o", str(page),
                    "--force"] + (["--bom", args.bom] if args.bom else []), check=True, cwd=ROOT)
    for name, size in (("phone", browser.PHONE), ("desktop", browser.DESKTOP)):
        with browser.browser(*size) as driver:
            browser.open_page(driver, page)
            (out / f"{name}.png").write_bytes(browser.full_page_png(driver))
            asked = [u for u in browser.requests(driver) if u != page.resolve().as_uri()]
            print(f"{out / (name + '.png')}: requests other than the page: {asked or 'none'}")
    print(f"report: {page}")


if __name__ == "__main__":
    main(sys.argv[1:])
