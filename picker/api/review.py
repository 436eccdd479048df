"""`picker.review` and the `Review` of a BOM it returns."""

from __future__ import annotations

import os
from functools import cached_property

import pandas as pd

from picker.api.catalog import Catalog, as_catalog
from picker.api.design import Design, as_design
from picker.present import bom_review as _words
from picker.review import propose as _propose


class Review:
    """A BOM's cost-down review: per line the match and the proposal, the
    consolidations, the totals, the findings to check first.

    `to_dict()` is the document `picker review --format json` writes.

    >>> import picker
    >>> rv = picker.review("catalog/examples/kettlewick-bom.csv", picker.load_catalog(),
    ...                    volume=5000)
    >>> rv.volume, rv.totals["saving_per_board"] >= 0
    (5000, True)
    >>> {"refs", "bom_part", "status", "proposal"} <= set(rv.lines.columns)
    True
    """

    def __init__(self, reviewed: _propose.Review, catalog: Catalog, design: Design | None) -> None:
        self._rv = reviewed
        self.catalog = catalog
        self.design = design

    @cached_property
    def _doc(self) -> dict:
        return _words.review_json(self._rv)

    def to_dict(self) -> dict:
        """The review as `picker review --format json` writes it."""
        return _words.review_json(self._rv)

    @property
    def bom_path(self) -> str:
        return self._rv.bom.path

    @property
    def volume(self) -> int:
        """Boards per build the prices are taken at."""
        return self._rv.options.volume

    @property
    def volume_source(self) -> str:
        """Where the volume came from ('volume argument', 'build.volume of ...', 'assumed')."""
        return self._rv.volume_source

    @cached_property
    def lines(self) -> pd.DataFrame:
        """One row a BOM line (every line, transistors or not), indexed by the
        BOM's file line: refs, quantity, the BOM's part, the catalogue part it
        matched, the status ('proposal', 'kept', 'fix', ...), the proposal and
        the saving per board and per build."""
        rows = self._doc["lines"]
        frame = pd.DataFrame(rows) if rows else pd.DataFrame(columns=["line"])
        if "roles" in frame:
            frame["roles"] = frame["roles"].map(", ".join)
        return frame.set_index("line")

    @property
    def consolidation(self) -> pd.DataFrame:
        """Parts proposed for several lines at once (in the totals)."""
        return _groups(self._doc["consolidation"])

    @property
    def alternatives(self) -> pd.DataFrame:
        """One part for every line of a kind (not in the totals)."""
        return _groups(self._doc["alternatives"])

    @property
    def totals(self) -> dict:
        """Cost per board now and after, the saving per board and per build, lines counted."""
        return dict(self._doc["totals"])

    @property
    def findings(self) -> list[dict]:
        """What to check first: a part that fails its role, an eol or nrnd part."""
        return list(self._doc["findings"])

    @property
    def warnings(self) -> list:
        """The BOM's warnings (each with file, line, column, message)."""
        return list(self._rv.warnings)

    @property
    def found_anything(self) -> bool:
        """True when there is a proposal, a consolidation or a finding
        (`picker review` then exits 0)."""
        return self._rv.found_anything

    def revised_bom(self) -> bytes:
        """The BOM's bytes with the proposals applied (a replaced line describes
        its new part; lines one part now serves merged into one) and a
        `picker_change` column; every other line and column as it was. Read
        back before it is returned: BomError if it does not account for every
        reference designator and quantity (as `picker review --write-bom`)."""
        from picker.errors import BomError
        from picker.review.revised import check_revised, revised_bom

        changes = self._rv.changes()
        data = revised_bom(self._rv.bom, changes)
        problems = check_revised(self._rv.bom, data, changes)
        if problems:
            raise BomError(f"the revised BOM did not read back as planned: {problems[0]}")
        return data

    def changed_lines(self) -> int:
        """How many lines of `revised_bom()` are changed (lines merged into
        another are not counted: the line they joined is)."""
        return sum(not c.drop for c in self._rv.changes().values())

    def __repr__(self) -> str:
        t = self.totals
        return (f"<picker.Review {self.bom_path!r} at {self.volume:,} boards: "
                f"saving {t['saving_per_board']} per board>")


def review(bom_path: str | os.PathLike, catalog: Catalog | str | os.PathLike | None = None,
           design: Design | str | os.PathLike | None = None, volume: int | None = None, *,
           columns: dict[str, str] | None = None, packages_ok: tuple[tuple[str, ...], ...] = (),
           include_nrnd: bool = False, take_at: float = 95.0, confirm_at: float = 80.0,
           volume_source: str | None = None) -> Review:
    """Review a BOM (CSV, only read) for cheaper transistors at the build volume.

    Each transistor line is matched to the catalogue (a part-number score
    from `take_at` is taken; from `confirm_at` taken but marked to confirm).
    Without a design, a line gets the cheapest drop-in (same kind, an accepted
    package, at least as good on every rating and figure); with one, lines
    named by a role's refs get the cheapest part feasible for that role.
    `volume`: boards per build (default: the design's, else 1000, assumed);
    `columns`: BOM headers picker does not recognise, e.g. {"part": "MPN"};
    `packages_ok`: groups of interchangeable packages, e.g.
    (("SOT-23", "SOT-23-3"),); `include_nrnd`: also propose nrnd parts;
    `volume_source`: how the output names where an explicit volume came from.

    >>> import picker
    >>> rv = picker.review("catalog/examples/kettlewick-bom.csv",
    ...                    design=picker.load_design("catalog/examples/kettlewick-power.toml"))
    >>> rv.volume, rv.volume_source
    (5000, 'build.volume of catalog/examples/kettlewick-power.toml')
    """
    from picker.catalog.tabular import read_bytes
    from picker.errors import BomError, UsageError
    from picker.review.bom import read_bom

    if confirm_at > take_at:
        raise UsageError(f"confirm_at ({confirm_at:g}) must not be above take_at ({take_at:g})")
    path = os.fspath(bom_path)
    bom = read_bom(path, columns=dict(columns or {}), data=read_bytes(path, BomError, "BOM"))
    design = None if design is None else as_design(design)
    if volume is not None:
        n, source = volume, volume_source or "volume argument"
    elif design is not None:
        n, source = design.volume, f"build.volume of {design.source}"
    else:
        n, source = _propose.DEFAULT_VOLUME, "assumed"
    options = _propose.Options(volume=n, packages_ok=tuple(tuple(g) for g in packages_ok),
                               include_nrnd=include_nrnd, take_at=take_at, confirm_at=confirm_at)
    catalog = as_catalog(catalog)
    reviewed = _propose.review(bom, catalog.df, options,
                               None if design is None else design.requirements,
                               volume_source=source)
    return Review(reviewed, catalog, design)


def _groups(rows: list[dict]) -> pd.DataFrame:
    frame = pd.DataFrame(rows)
    for key in ("lines", "replaces"):
        if key in frame:
            frame[key] = frame[key].map(lambda v: ", ".join(str(x) for x in v))
    return frame
