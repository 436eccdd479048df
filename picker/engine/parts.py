"""Catalogue rows as the models read them (`PartData`), and the catalogue
columns a candidate row carries as they are."""

from __future__ import annotations

import numpy as np
import pandas as pd

from picker.catalog.load import points as _catalog_points
from picker.catalog.load import values as _catalog_values
from picker.models import mosfet

# The numeric catalogue columns the models read (besides the '@' point families).
MODEL_NUMBERS = {"vds_max_V", "vgs_max_V", "id_max_A", "vgs_th_max_V", "vgs_th_tc_mV/C",
                 "rds_tc_pct/C", "idss_uA", "idss_hot_uA", "idss_hot_C", "vceo_max_V", "ic_max_A",
                 "vbe_on_V", "vbe_sat_max_V", "hfe_max", "icbo_nA", "icbo_hot_nA", "icbo_hot_C",
                 "rth_ja_C/W", "tj_max_C"}


class PartData:
    """Catalogue rows as the models read them: each column turned into a float
    array once and kept, so repeated evaluations of the same parts (the
    lowest-supply search runs the engine some 40 times) pay for pandas once.

    `rows` (an index array or a slice of positions in `df`; None: every row)
    makes it the data of those parts only, read column by column as the
    models ask for it: the catalogue is never copied whole. `take(rows)` gives
    the same for a subset without going back to pandas."""

    def __init__(self, df: pd.DataFrame, memo: dict | None = None, rows=None) -> None:
        self.df = df
        self.rows = rows
        self.index = df.index if rows is None else df.index[rows]
        self._memo = memo if memo is not None else {}

    def __len__(self) -> int:
        return len(self.index)

    def __contains__(self, name: str) -> bool:
        return name in self.df

    def _get(self, key, make):
        if key not in self._memo:
            self._memo[key] = make()
        return self._memo[key]

    def _pick(self, column):
        """A whole-catalogue column cut down to these parts."""
        return column if self.rows is None else column[self.rows]

    def values(self, name: str) -> np.ndarray:
        return self._get(("values", name), lambda: self._pick(_catalog_values(self.df, name)))

    def points(self, prefix: str) -> tuple[np.ndarray, np.ndarray]:
        """A point family as `picker.catalog.load.points` gives it, but never zero
        columns wide: a catalogue without any such column (say, bipolar parts
        only, or no prices) gets one all-blank column, so the models see "no
        point" (unknown) instead of an empty array they cannot reduce."""
        def make():
            conditions, matrix = _catalog_points(self.df, prefix, self.values)
            if conditions.size == 0:
                return np.array([np.nan]), np.full((len(self), 1), np.nan)
            return conditions, matrix
        return self._get(("points", prefix), make)

    def identity(self) -> dict:
        """part, maker, package, preferred, status and the eol / nrnd flags."""
        def make():
            # Text columns stay in the catalogue's own arrays (no conversion
            # of a million strings); only the flags are computed.
            df, out = self.df, {}
            for name in ("part", "maker", "package", "status"):
                out[name] = self._pick(df[name].array if name in df
                                       else np.full(len(df), "", dtype=object))
            out["preferred"] = self._pick(df["preferred"].to_numpy(dtype=bool))
            out["eol"] = self._pick((df["status"] == "eol").to_numpy(dtype=bool))
            out["nrnd"] = self._pick((df["status"] == "nrnd").to_numpy(dtype=bool))
            return out
        return self._get(("identity",), make)

    def prefetch(self) -> None:
        """Every numeric column the models read as an array now (`take` then
        hands out slices of them)."""
        self.identity()
        for name in self.df.columns:
            if "@" in name or name in MODEL_NUMBERS:
                self.values(name)

    def fit(self) -> mosfet.OnResistanceFit:
        """The on-resistance fit (models/README.md §1) of these parts."""
        def make():
            drives_V, rds_mohm = self.points("rds_on_mohm")
            return mosfet.fit_on_resistance(drives_V, rds_mohm / 1000.0, self.values("vgs_th_max_V"))
        return self._get(("fit",), make)

    def take(self, rows) -> "PartData":
        """The same parts data for the parts at positions `rows` (an index
        array or a slice) of these."""
        memo = {}
        for key, value in self._memo.items():
            if key[0] == "values":
                memo[key] = value[rows]
            elif key[0] == "points":
                memo[key] = (value[0], value[1][rows])
            elif key[0] == "identity":
                memo[key] = {name: column[rows] for name, column in value.items()}
            elif key[0] == "fit":
                memo[key] = value.take(rows)
        if self.rows is None:
            within = rows
        else:
            mine = self.rows if not isinstance(self.rows, slice) else np.arange(len(self.df))[self.rows]
            within = mine[rows]
        return PartData(self.df, memo, within)


def _data(parts) -> PartData:
    return parts if isinstance(parts, PartData) else PartData(parts)


def values(parts, name: str) -> np.ndarray:
    return _data(parts).values(name)


def points(parts, prefix: str) -> tuple[np.ndarray, np.ndarray]:
    return _data(parts).points(prefix)


def catalogue_columns(parts: PartData, ratings: tuple[str, ...]) -> dict:
    """The columns a candidate row carries from the catalogue as they are:
    part, maker, package, preferred, status, the eol / nrnd flags and the
    given ratings (a fresh dict)."""
    out = dict(parts.identity())
    for name in ratings:
        out[name] = values(parts, name)
    return out
