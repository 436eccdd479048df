"""`picker.choose`, `picker.lowest_supply` and the `Result` of a choice."""

from __future__ import annotations

import copy
import os
from functools import cached_property

import pandas as pd

from picker.api.catalog import Catalog, as_catalog
from picker.api.design import Design, as_design
from picker.engine import evaluate as _engine


class RoleChoice:
    """One role's answer: `choice` (the part number, or None), `candidates`
    (every part of the role's kind, best first, one row a part), the role's
    `checks` and `figures`, and its requirements as `role`.

    >>> import picker
    >>> result = picker.choose(picker.design(use="npn-switch", collector_current="40 uA",
    ...                                      base_resistor="68k"), picker.load_catalog())
    >>> latch = result.roles["npn-switch"]
    >>> latch.choice == latch.candidates.index[0]
    True
    >>> list(latch.candidates.columns[:6])
    ['rank', 'line', 'maker', 'package', 'feasible', 'unit_price']
    """

    def __init__(self, result: "Result", engine_role: _engine.RoleResult, doc: dict) -> None:
        self._result = result
        self._engine = engine_role
        self._doc = doc

    @property
    def name(self) -> str:
        return self._engine.role.name

    @property
    def role(self):
        """The role's requirements (use, refs, load_A, max_drop_V, ...)."""
        return self._engine.role

    @property
    def choice(self) -> str | None:
        """The chosen part number: the cheapest feasible part with a price, or None."""
        return self._doc["choice"]

    @property
    def checks(self) -> tuple[str, ...]:
        """The checks that decide this role (the `check_<name>` columns)."""
        return self._engine.checks

    @property
    def figures(self) -> tuple[str, ...]:
        """The figures reported for each candidate (columns of `candidates`)."""
        return self._engine.figures

    @cached_property
    def candidates(self) -> pd.DataFrame:
        """Every catalogue part of the role's kind in rank order, indexed by part
        number: `rank` (1 = best), `line` (of the catalogue file), `maker`,
        `package`, `feasible`, `unit_price`, `cost` (per board), each figure
        in SI units (`drop_V`, `tj_C`, ...), `check_<name>` ('pass', 'fail',
        'unknown'), `margin_<name>` where the output carries margins, and
        `notes`. The same values as the role's candidates in `to_dict()`."""
        rows = [_flat(c) for c in self._doc["candidates"]]
        frame = pd.DataFrame(rows)
        if frame.empty:
            frame = pd.DataFrame(columns=["part", "maker", "package", "feasible"])
        frame.insert(0, "rank", range(1, len(frame) + 1))
        frame.insert(1, "line", list(self._engine.table.index[:len(frame)]))
        return frame.set_index("part")

    @property
    def feasible(self) -> pd.DataFrame:
        """The candidates that pass every check, best first."""
        c = self.candidates
        return c[c["feasible"].astype(bool)]

    def near_misses(self, limit: int = 5) -> pd.DataFrame:
        """The cheapest rejected parts (no price last), with the checks they
        fail and why in words: `maker`, `package`, `cost`, `failed`, `why`.

        >>> import picker
        >>> result = picker.choose(picker.load_design("catalog/examples/kettlewick-power.toml"),
        ...                        picker.load_catalog())
        >>> list(result.roles["latch"].near_misses(3).columns)
        ['maker', 'package', 'cost', 'failed', 'why']
        """
        from picker.engine.reasons import reasons

        r, req = self._engine, self._result.design.requirements
        rows = []
        for _, row in r.cheapest_rejected(limit).iterrows():
            failed = [c for c in r.checks if int(row[f"check_{c}"]) != _engine.PASS]
            rows.append({"part": row["part"], "maker": row["maker"], "package": row["package"],
                         "cost": row["cost"], "failed": ", ".join(failed),
                         "why": "; ".join(reasons(row, r, req))})
        frame = pd.DataFrame(rows, columns=["part", "maker", "package", "cost", "failed", "why"])
        return frame.set_index("part")

    def lowest_supply(self, parts: list[str] | int | None = 5) -> pd.DataFrame:
        """The lowest working supply of the best `parts` candidates (a number),
        or of the parts named (a list), or of every candidate (None); see
        `picker.lowest_supply`."""
        if isinstance(parts, int) or parts is None:
            names = list(self.candidates.index[:parts] if parts is not None else self.candidates.index)
        else:
            names = list(parts)
        return _lowest(self._engine.catalog_df, self.role, self._result.design.requirements, names)

    def __repr__(self) -> str:
        n = int(self.candidates["feasible"].astype(bool).sum())
        return (f"<picker.RoleChoice {self.name!r} ({self.role.use}): choice {self.choice!r}, "
                f"{n} feasible of {len(self.candidates)}>")


class Result:
    """The answer of `picker.choose`: per role the choice and the ranked
    candidates (`roles[name]`), and the design's totals.

    `to_dict()` is the document `picker choose --format json` writes.

    >>> import picker
    >>> result = picker.choose(picker.load_design("catalog/examples/kettlewick-power.toml"),
    ...                        picker.load_catalog())
    >>> list(result.roles)
    ['cell-switch', 'latch', 'gauge-leds', 'sensor-feed', 'night-light', 'usb-sense']
    >>> result.cost_per_board > 0, result.complete
    (True, True)
    >>> sorted(result.to_dict())
    ['cost_per_board', 'drain_per_year_pct', 'off_current_A', 'on_drive_current_A', 'roles', 'volume']
    """

    def __init__(self, design: Design, catalog: Catalog, engine: _engine.DesignResult) -> None:
        self.design = design
        self.catalog = catalog
        self._engine = engine

    @cached_property
    def _doc(self) -> dict:
        return _engine.design_json(self._engine)

    def to_dict(self) -> dict:
        """The whole answer as `picker choose --format json` writes it (a new copy each call)."""
        return copy.deepcopy(self._doc)

    @cached_property
    def roles(self) -> dict[str, RoleChoice]:
        """Each role's answer by name, in the design's order."""
        return {r.role.name: RoleChoice(self, r, doc)
                for r, doc in zip(self._engine.roles, self._doc["roles"])}

    @property
    def volume(self) -> int:
        return self._engine.requirements.volume

    @property
    def cost_per_board(self) -> float:
        """Cost per board of the chosen parts (roles without a choice not counted)."""
        return float(self._engine.cost_per_board)

    @property
    def off_current_A(self) -> float:
        """Off-state current of the chosen parts at the hot corner, in A."""
        return float(self._engine.off_current_A)

    @property
    def drain_per_year_pct(self) -> float | None:
        """That current as a percentage of the cell's capacity a year (None without one)."""
        return self._engine.drain_per_year_pct

    @property
    def missing(self) -> list[str]:
        """The roles with no feasible part that has a price."""
        return list(self._engine.missing)

    @property
    def complete(self) -> bool:
        """True when every role has a choice (`picker choose` then exits 0)."""
        return not self._engine.missing and all(not r.feasible.empty for r in self._engine.roles)

    def to_html(self, *, review=None, top: int = 5, made: str | None = None) -> str:
        """The design review as one self-contained HTML page (what `picker report
        -o FILE.html` writes): the inputs and where each came from, the
        catalogue's identity, per role the choice, the runners-up, every check,
        the near misses and the curves, the totals and the cautions. `review`
        (a `picker.review(...)`) adds the BOM's cost-down review; `top` sets the
        runners-up and near misses shown; `made` the date shown (default: now).

        >>> import picker
        >>> result = picker.choose(picker.load_design("catalog/examples/kettlewick-power.toml"))
        >>> page = result.to_html()
        >>> page.startswith("<!DOCTYPE html>") and result.roles["latch"].choice in page
        True
        """
        from picker.api.report import report_text

        return report_text(self, fmt="html", review=review, top=top, made=made)

    def to_markdown(self, *, review=None, top: int = 5, made: str | None = None) -> str:
        """The design review as Markdown (what `picker report -o FILE.md` writes);
        the same content as `to_html`, the curves as SVG images inside the file.

        >>> import picker
        >>> text = picker.choose(picker.design(use="npn-switch", collector_current="40 uA",
        ...                                    base_resistor="68k")).to_markdown()
        >>> text.splitlines()[0]
        '# Design review: quick question'
        """
        from picker.api.report import report_text

        return report_text(self, fmt="markdown", review=review, top=top, made=made)

    def _repr_html_(self) -> str:  # a notebook shows the summary table
        from html import escape

        rows = "".join(f"<tr><td>{escape(n)}</td><td>{escape(str(r.choice))}</td></tr>"
                       for n, r in self.roles.items())
        return (f"<table><tr><th>role</th><th>choice</th></tr>{rows}</table>"
                f"<p>cost per board {self.cost_per_board:.4g}</p>")

    def __repr__(self) -> str:
        choices = ", ".join(f"{n}: {r.choice}" for n, r in self.roles.items())
        return f"<picker.Result {choices}; {self.cost_per_board:.4g} per board>"


def choose(design: Design | str | os.PathLike, catalog: Catalog | str | os.PathLike | None = None
           ) -> Result:
    """Evaluate every catalogue part for each role of `design` at the
    worst-case corners, and rank the feasible ones by cost at the build volume.

    `design`: a Design (or a requirement file's path); `catalog`: a Catalog
    (or a path; None: the bundled demo).

    >>> import picker
    >>> result = picker.choose(picker.design(use="high-side-pmos", load="1.2 A",
    ...                                      max_drop="60 mV", volume=5000))
    >>> role = result.roles["high-side-pmos"]
    >>> role.candidates.loc[role.choice, "check_drop"]
    'pass'
    """
    design, catalog = as_design(design), as_catalog(catalog)
    return Result(design, catalog, _engine.evaluate(catalog.df, design.requirements))


def lowest_supply(design: Design | str | os.PathLike, catalog: Catalog | str | os.PathLike | None = None,
                  *, role: str | None = None, parts: list[str] | None = None) -> pd.DataFrame:
    """The lowest cell voltage at which each part still does the role's job
    (meets the drop and gate drive, or still saturates), at both corners.

    `role`: the role's name (needed when the design has several); `parts`:
    part numbers (default: every catalogue part of the role's kind). Returns
    one row a part, indexed by part number: `lowest_supply_V`, `..._status`
    ('found', 'any', 'never', 'unknown'), `..._limit` (the check that fails
    just below), `..._corner`, the same per corner (`lowest_supply_cold_V`,
    ...), and `description` in words.

    >>> import picker
    >>> d = picker.design(use="high-side-pmos", load="1.2 A", max_drop="60 mV")
    >>> low = picker.lowest_supply(d, picker.load_catalog())
    >>> set(low["lowest_supply_status"]) <= {"found", "any", "never", "unknown"}
    True
    """
    from picker.present.lineup import pick_role

    design, catalog = as_design(design), as_catalog(catalog)
    req = design.requirements
    chosen = pick_role(req, role)
    if parts is None:
        parts = catalog.df.loc[catalog.df["kind"] == chosen.kind, "part"].astype(str).tolist()
    return _lowest(catalog.df, chosen, req, list(parts))


def _lowest(catalog_df: pd.DataFrame, role, req, names: list[str]) -> pd.DataFrame:
    from picker.engine import headroom
    from picker.present.lineup import check_kinds, find_parts

    rows = find_parts(catalog_df, names) if names else catalog_df.iloc[:0]
    check_kinds(rows, role)
    low = headroom.lowest_supply(rows, role, req)
    low["description"] = [headroom.describe(row, role, req) for _, row in low.iterrows()]
    low.index = pd.Index(rows["part"].astype(str).tolist(), name="part")
    return low


def _flat(candidate: dict) -> dict:
    """One candidate of the JSON as a flat row: figures by name, `check_<name>`,
    `margin_<name>` (and `margin_<name>_fraction`), lists joined."""
    row = {}
    for key, value in candidate.items():
        if key == "figures":
            row.update(value)
        elif key == "checks":
            row.update({f"check_{c}": v for c, v in value.items()})
        elif key == "margins":
            for c, m in value.items():
                if isinstance(m, dict):
                    row[f"margin_{c}"] = m.get("margin")
                    if "fraction" in m:
                        row[f"margin_{c}_fraction"] = m["fraction"]
                else:
                    row[f"margin_{c}"] = m
        elif isinstance(value, list):
            row[key] = (", " if key == "notes" else "; ").join(str(v) for v in value)
        elif isinstance(value, dict):
            row.update({f"{key}_{k}": v for k, v in value.items()})
        else:
            row[key] = value
    return row
