"""The catalogue's columns (names fixed by the interface specification).

Each column has a unit (a key of `quantities.UNITS`, or None for text) and a
sign rule. Point columns carry their condition after an '@':
`rds_on_mohm@2.5V`, `hfe_min@1mA`, `vce_sat_mV@10mA`, `qg_nC@4.5V`, `price@1000`.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from decimal import Decimal, InvalidOperation

KINDS = ("pmos", "nmos", "npn", "pnp")
MOSFET_KINDS = ("pmos", "nmos")
BIPOLAR_KINDS = ("npn", "pnp")
P_TYPE_KINDS = ("pmos", "pnp")  # datasheets print their values negative
STATUSES = ("active", "nrnd", "eol")


@dataclass(frozen=True)
class ColumnSpec:
    name: str
    unit: str | None  # None: text
    sign: str = "positive"  # 'positive', 'magnitude' (negative allowed on P types), 'any'
    rating: bool = False
    meaning: str = ""


def _specs() -> list[ColumnSpec]:
    S = ColumnSpec
    return [
        S("part", None, meaning="maker's part number; unique (case and spacing ignored)"),
        S("maker", None, meaning="maker's name"),
        S("kind", None, meaning="pmos, nmos, npn or pnp"),
        S("package", None, meaning="outline name as the trade writes it"),
        S("status", None, meaning="active (default), nrnd or eol"),
        S("preferred", None, meaning="yes / no: already on the team's approved list"),
        S("vds_max_V", "V", "magnitude", True, "drain-source rating"),
        S("vgs_max_V", "V", "magnitude", True, "gate-source rating"),
        S("id_max_A", "A", "magnitude", True, "continuous drain current rating"),
        S("vgs_th_min_V", "V", "magnitude", meaning="gate threshold, minimum"),
        S("vgs_th_typ_V", "V", "magnitude", meaning="gate threshold, typical"),
        S("vgs_th_max_V", "V", "magnitude", meaning="gate threshold, maximum"),
        S("idss_uA", "uA", "magnitude", meaning="max drain leakage at 25 °C"),
        S("idss_hot_uA", "uA", "magnitude", meaning="drain leakage at idss_hot_C"),
        S("idss_hot_C", "degC", "any", meaning="temperature of idss_hot_uA"),
        S("vceo_max_V", "V", "magnitude", True, "collector-emitter rating"),
        S("ic_max_A", "A", "magnitude", True, "collector current rating"),
        S("vbe_on_V", "V", "magnitude", meaning="base-emitter voltage, typical, low current"),
        S("vbe_sat_max_V", "V", "magnitude",
          meaning="max base-emitter saturation voltage (datasheet condition)"),
        S("hfe_max", "1", meaning="max DC current gain (for an open base's leakage)"),
        S("icbo_nA", "nA", "magnitude", meaning="max collector cutoff current at 25 °C"),
        S("icbo_hot_nA", "nA", "magnitude", meaning="collector cutoff current at icbo_hot_C"),
        S("icbo_hot_C", "degC", "any", meaning="temperature of icbo_hot_nA"),
        S("rth_ja_C/W", "C/W", meaning="junction-to-ambient thermal resistance"),
        S("tj_max_C", "degC", meaning="maximum junction temperature"),
        # A threshold always falls as the die warms; datasheets print the
        # coefficient as -3 mV/°C or 3 mV/°C, so its magnitude is used.
        S("vgs_th_tc_mV/C", "mV/C", "any", meaning="threshold fall per °C (magnitude)"),
        S("rds_tc_pct/C", "pct/C", "any", meaning="on-resistance rise, % per °C"),
        S("notes", None, meaning="free text"),
    ]


COLUMNS: dict[str, ColumnSpec] = {c.name: c for c in _specs()}
_BY_LOWER = {name.lower(): name for name in COLUMNS}


@dataclass(frozen=True)
class PointFamily:
    """A family of point columns: `<prefix>@<value><unit>`."""

    prefix: str  # 'rds_on_mohm'
    unit: str | None  # unit of the cells
    condition_unit: str  # 'V', 'mA' or '' (a quantity: price breaks)
    sign: str
    meaning: str


POINT_FAMILIES: dict[str, PointFamily] = {
    f.prefix: f for f in (
        PointFamily("rds_on_mohm", "mohm", "V", "positive", "max on-resistance at 25 °C at this gate drive"),
        PointFamily("hfe_min", "1", "mA", "positive", "min DC current gain at this collector current"),
        PointFamily("vce_sat_mV", "mV", "mA", "magnitude", "max saturation voltage at this Ic, Ic/Ib = 10"),
        PointFamily("qg_nC", "nC", "V", "positive", "total gate charge at this gate drive (models/README.md §10)"),
        PointFamily("price", "1", "", "positive", "unit price at this quantity and above"),
    )
}

_POINT = re.compile(r"^(rds_on_mohm|hfe_min|vce_sat_mv|qg_nc|price)@(.*)$")
_CONDITION = re.compile(r"^([+-]?)(\d+(?:\.\d*)?|\.\d+)(?:e([+-]?\d+))?\s*(v|ma|ua|a|k)?$")
_CURRENT_EXP = {"a": 3, "ma": 0, "ua": -3}  # power of ten to mA


MAX_CONDITION = Decimal(10) ** 12  # a point column's condition: 1e-12..1e12 (V, mA, parts)
_EXAMPLE = {"rds_on_mohm": "rds_on_mohm@2.5V", "hfe_min": "hfe_min@1mA",
            "vce_sat_mv": "vce_sat_mV@10mA", "qg_nc": "qg_nC@4.5V", "price": "price@1000"}


def _clip(text: str, length: int = 60) -> str:
    return text if len(text) <= length else text[:length - 3] + "..."


def _plain(d: Decimal) -> str:
    return format(d.normalize(), "f")


class HeaderProblem(ValueError):
    """A header that looks like a point column but whose condition is unusable."""


def canonical(header: str) -> str | None:
    """The interface name of a header (case and spaces ignored), None if unknown.

    Point columns are normalised: `RDS_ON_MOHM@-2.50V` -> `rds_on_mohm@2.5V`,
    `hfe_min@100uA` -> `hfe_min@0.1mA`, `price@1k` -> `price@1000`.
    Raises HeaderProblem for a point column whose condition cannot be used
    (e.g. a price break that is not a whole number).
    """
    key = "".join(header.split()).lower()
    if key in _BY_LOWER:
        return _BY_LOWER[key]
    m = _POINT.match(key)
    if not m:
        return None
    family, condition = m.group(1), m.group(2)
    c = _CONDITION.match(condition)
    if c and (len(c.group(2)) > 20 or len((c.group(3) or "").lstrip("+-")) > 3):
        raise HeaderProblem(f"'{_clip(header)}': the condition is out of range; write e.g. "
                            f"{_EXAMPLE[family]}")
    if family == "price":
        if not c or c.group(1) or c.group(4) not in (None, "k"):
            raise HeaderProblem(f"price break '{header}' is not a whole quantity; write e.g. price@1000")
        qty = Decimal(c.group(2)) * (1000 if c.group(4) == "k" else 1) * Decimal(10) ** int(c.group(3) or 0)
        if qty != qty.to_integral_value() or qty < 1 or qty > MAX_CONDITION:
            raise HeaderProblem(f"price break '{_clip(header)}' is not a whole quantity of 1 or "
                                f"more (up to {MAX_CONDITION:.0e}); write e.g. price@1000")
        return f"price@{int(qty)}"
    try:
        value = Decimal(c.group(2)) * Decimal(10) ** int(c.group(3) or 0) if c else None
    except InvalidOperation:
        value = None
    if value and not 1 / MAX_CONDITION <= abs(value) <= MAX_CONDITION:
        raise HeaderProblem(f"'{_clip(header)}': the condition is out of range; write e.g. "
                            f"{_EXAMPLE[family]}")
    if family in ("rds_on_mohm", "qg_nc"):
        name = "rds_on_mohm" if family == "rds_on_mohm" else "qg_nC"
        if value is None or c.group(4) not in ("v", None) or value == 0:
            raise HeaderProblem(f"'{header}': the gate drive must be a voltage, e.g. {_EXAMPLE[family]}")
        return f"{name}@{_plain(value)}V"
    if value is None or c.group(4) not in _CURRENT_EXP or value == 0:
        raise HeaderProblem(f"'{header}': the collector current must be a current, e.g. {family.replace('mv', 'mV')}@1mA")
    value = value.scaleb(_CURRENT_EXP[c.group(4)])
    name = "hfe_min" if family == "hfe_min" else "vce_sat_mV"
    return f"{name}@{_plain(value)}mA"


def family_of(name: str) -> PointFamily | None:
    """The point family of a canonical column name, or None."""
    if "@" not in name:
        return None
    return POINT_FAMILIES.get(name.split("@", 1)[0])


def condition_of(name: str) -> float:
    """The numeric condition of a canonical point column: 2.5 for
    `rds_on_mohm@2.5V`, 0.1 (mA) for `hfe_min@0.1mA`, 1000 for `price@1000`."""
    condition = name.split("@", 1)[1]
    for unit in ("mA", "V"):
        if condition.endswith(unit):
            condition = condition[: -len(unit)]
            break
    return float(condition)


def spec_of(name: str) -> tuple[str | None, str]:
    """(unit, sign rule) of a canonical column name, point columns included."""
    if name in COLUMNS:
        return COLUMNS[name].unit, COLUMNS[name].sign
    family = family_of(name)
    if family is None:
        raise KeyError(name)
    return family.unit, family.sign


def point_columns(names, prefix: str) -> list[tuple[float, str]]:
    """[(condition, column)] of one family among `names`, by condition ascending."""
    found = [(condition_of(n), n) for n in names if n.startswith(prefix + "@")]
    return sorted(found)


_SHORT = {
    "vds_max_V": "Vds V", "vgs_max_V": "Vgs V", "id_max_A": "Id A",
    "vgs_th_min_V": "Vth min", "vgs_th_typ_V": "Vth typ", "vgs_th_max_V": "Vth max",
    "idss_uA": "Idss µA", "idss_hot_uA": "Idss hot µA", "idss_hot_C": "at °C",
    "vceo_max_V": "Vceo V", "ic_max_A": "Ic A", "vbe_on_V": "Vbe V",
    "vbe_sat_max_V": "Vbe(sat) V", "hfe_max": "hFE max", "icbo_nA": "Icbo nA",
    "icbo_hot_nA": "Icbo hot nA", "icbo_hot_C": "at °C", "rth_ja_C/W": "θja °C/W",
    "tj_max_C": "Tj max °C", "vgs_th_tc_mV/C": "Vth tc mV/°C", "rds_tc_pct/C": "Rds tc %/°C",
    "preferred": "pref",
}


def short_header(name: str) -> str:
    """A compact header for terminal tables: 'rds_on_mohm@2.5V' -> 'Rds mΩ @2.5V'."""
    if name in _SHORT:
        return _SHORT[name]
    family = family_of(name)
    if family is None:
        return name
    label = {"rds_on_mohm": "Rds mΩ", "hfe_min": "hFE", "vce_sat_mV": "Vce(sat) mV",
             "qg_nC": "Qg nC", "price": "price"}[family.prefix]
    return f"{label} @{name.split('@', 1)[1]}"
