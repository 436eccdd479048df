"""Values with units: one small parser and formatter for the whole tool.

A value is read once, at the edge (catalogue cell, requirement file, command
line option), and converted to the unit its consumer asked for; inside picker
every number is a plain float with the unit in its name.

Accepted spellings (units and prefixes are data, in the tables below):

- plain numbers, in the unit asked for: ``25`` in a mΩ column is 25 mΩ;
- a number with an SI prefix and unit symbol: ``25mΩ``, ``25 mohm``,
  ``0.025 Ω``, ``1.2 µA`` (micro sign U+00B5, Greek mu U+03BC, or ``u``);
- a prefix alone, the unit implied: ``4.7k`` where a resistance is expected;
- the letter-and-digit code of IEC 60062 where the letter stands for the
  decimal point and the multiplier: ``4k7`` = 4.7 kΩ, ``2R2`` = 2.2 Ω,
  ``1M0`` = 1 MΩ, ``R47`` = 0.47 Ω, ``4n7`` = 4.7 nF;
- a decimal comma (``2,5 V``) where the caller says the source uses one;
- a leading ``±`` or a negative sign are kept as the caller decides: the
  parser returns the signed value (``±`` gives the magnitude).

Arithmetic is decimal: the digits and the power of ten are combined in a
string and converted once, so ``25 mΩ`` in a mΩ column is exactly 25.0.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from decimal import Decimal

from picker.errors import QuantityError, one_line

# SI prefixes as powers of ten: The International System of Units (SI Brochure),
# 9th edition, BIPM 2019, Table 7. `u` is the usual ASCII stand-in for micro.
PREFIX_EXP: dict[str, int] = {
    "p": -12, "n": -9, "u": -6, "µ": -6, "m": -3, "k": 3, "M": 6, "G": 9,
}

# Letter codes of IEC 60062 (marking codes for resistors and capacitors): the
# letter marks the decimal point and gives the multiplier.
IEC60062_RESISTANCE_EXP = {"R": 0, "K": 3, "k": 3, "M": 6, "G": 9, "T": 12}
IEC60062_CAPACITANCE_EXP = {"p": -12, "n": -9, "u": -6, "µ": -6, "m": -3}


@dataclass(frozen=True)
class Dimension:
    name: str  # 'a resistance'
    base: str  # the symbol shown in messages and tables


VOLTAGE = Dimension("a voltage", "V")
CURRENT = Dimension("a current", "A")
POWER = Dimension("a power", "W")
RESISTANCE = Dimension("a resistance", "Ω")
CAPACITANCE = Dimension("a capacitance", "F")
CHARGE = Dimension("a charge (battery capacity)", "Ah")
TEMPERATURE = Dimension("a temperature", "°C")
THERMAL_RESISTANCE = Dimension("a thermal resistance", "°C/W")
TIME = Dimension("a time", "s")
ELECTRIC_CHARGE = Dimension("an electric charge", "C")  # a gate charge, in coulombs
VOLTAGE_TC = Dimension("a voltage temperature coefficient", "V/°C")
FRACTION_TC = Dimension("a relative temperature coefficient", "%/°C")
NUMBER = Dimension("a plain number", "")


@dataclass(frozen=True)
class Symbol:
    dimension: Dimension
    exp: int  # power of ten from this symbol to the dimension's base unit
    prefixable: bool


def _symbols() -> dict[str, Symbol]:
    table: dict[str, Symbol] = {}

    def add(names: str, dim: Dimension, exp: int = 0, prefixable: bool = True) -> None:
        for name in names.split():
            table[name] = Symbol(dim, exp, prefixable)

    add("V", VOLTAGE)
    add("A", CURRENT)
    add("W", POWER)
    add("Ω Ω ohm ohms Ohm Ohms OHM R", RESISTANCE)
    add("F", CAPACITANCE)
    add("Ah", CHARGE)
    add("s", TIME)
    add("°C ºC degC deg°C C", TEMPERATURE, prefixable=False)
    add("°C/W ºC/W C/W K/W degC/W", THERMAL_RESISTANCE, prefixable=False)
    add("V/°C V/ºC V/C V/K V/degC", VOLTAGE_TC)
    add("%/°C %/ºC %/C %/K %/degC", FRACTION_TC, exp=-2, prefixable=False)
    add("ppm/°C ppm/C ppm/K", FRACTION_TC, exp=-6, prefixable=False)
    add("/°C /C /K", FRACTION_TC, prefixable=False)
    add("%", NUMBER, exp=-2, prefixable=False)
    return table


SYMBOLS = _symbols()
# Symbols with a second meaning, tried where the first does not fit the column:
# 'C' is a temperature (as '45 C' is written) or, prefixed, a charge ('12 nC').
ALTERNATE_SYMBOLS = {"C": Symbol(ELECTRIC_CHARGE, 0, True)}

# The units a caller may ask for, as (dimension, power of ten from the base).
UNITS: dict[str, tuple[Dimension, int]] = {
    "V": (VOLTAGE, 0), "mV": (VOLTAGE, -3),
    "A": (CURRENT, 0), "mA": (CURRENT, -3), "uA": (CURRENT, -6), "nA": (CURRENT, -9),
    "W": (POWER, 0), "mW": (POWER, -3),
    "ohm": (RESISTANCE, 0), "mohm": (RESISTANCE, -3), "kohm": (RESISTANCE, 3),
    "F": (CAPACITANCE, 0),
    "Ah": (CHARGE, 0), "mAh": (CHARGE, -3),
    "degC": (TEMPERATURE, 0),
    "s": (TIME, 0),
    "nC": (ELECTRIC_CHARGE, -9),
    "C/W": (THERMAL_RESISTANCE, 0),
    "V/C": (VOLTAGE_TC, 0), "mV/C": (VOLTAGE_TC, -3),
    "1/C": (FRACTION_TC, 0), "pct/C": (FRACTION_TC, -2),
    "1": (NUMBER, 0),
}

_SPACES = re.compile(r"[\s\u00a0\u2009\u202f]+")
_SPLIT_NUMBER = re.compile(r"[\d.,][\s\u00a0\u2009\u202f]+[\d.,]")
_NUMBER = re.compile(r"([+-]?)(\d+(?:\.\d*)?|\.\d+)(?:[eE]([+-]?\d+))?")
_IEC_CODE = re.compile(r"(\d*)([RKkMGTpnuµm])(\d+)")


def unit_label(unit: str) -> str:
    """How a unit asked for is written to people: 'mohm' -> 'mΩ'."""
    dim, exp = UNITS[unit]
    prefix = {v: k for k, v in PREFIX_EXP.items() if k not in ("u",)}.get(exp, "")
    if dim is FRACTION_TC:
        # Not '1/°C': with the space dropped on reading, '2.5 1/°C' would read as 2.51 /°C.
        return "%/°C" if exp == -2 else "/°C"
    if dim in (TEMPERATURE, THERMAL_RESISTANCE, NUMBER):
        return dim.base
    return prefix + dim.base


def _expected(unit: str) -> str:
    dim, _ = UNITS[unit]
    if dim is NUMBER:
        return "a plain number"
    return f"{dim.name} ({unit_label(unit)})"


def _normalise(text: str, decimal_comma: bool) -> tuple[str, bool]:
    """Strip spaces, unify minus and micro signs; return (text, magnitude_only).
    A space between two digits is refused: '4 2' is not 42."""
    if _SPLIT_NUMBER.search(text):
        raise QuantityError(f"'{one_line(text)}' has a space inside the number; write one "
                            "number (no thousands separators)")
    s = _SPACES.sub("", text).replace("\u2212", "-").replace("\u03bc", "µ")
    magnitude = False
    for mark in ("±", "+/-", "+-"):
        if s.startswith(mark):
            s, magnitude = s[len(mark):], True
    if "," in s:
        if not decimal_comma:
            raise QuantityError(
                f"'{text}' has a comma; write the decimal point as '.'"
                " (a semicolon-separated file may use decimal commas)")
        if "." in s:
            raise QuantityError(f"'{text}' mixes '.' and ','; write one decimal mark")
        s = s.replace(",", ".")
    return s, magnitude


def _split_unit(rest: str, unit: str, text: str) -> int | None:
    """Power of ten that the unit text `rest` contributes, relative to the base
    of `unit`'s dimension; raises when it is of another dimension."""
    dim, _ = UNITS[unit]
    if rest == "":
        return None  # a plain number: already in the unit asked for
    if dim is not NUMBER and (rest in PREFIX_EXP or (rest == "K" and dim is RESISTANCE)):
        return PREFIX_EXP.get(rest, 3)  # a prefix alone, the unit implied ('10K': kilo, as BOMs write it)
    candidates: list[tuple[Symbol, int]] = []
    if rest in SYMBOLS:
        candidates.append((SYMBOLS[rest], 0))
    if len(rest) > 1 and rest[0] in PREFIX_EXP and rest[1:] in SYMBOLS and SYMBOLS[rest[1:]].prefixable:
        candidates.append((SYMBOLS[rest[1:]], PREFIX_EXP[rest[0]]))
    if rest in ALTERNATE_SYMBOLS:
        candidates.append((ALTERNATE_SYMBOLS[rest], 0))
    if len(rest) > 1 and rest[0] in PREFIX_EXP and rest[1:] in ALTERNATE_SYMBOLS:
        candidates.append((ALTERNATE_SYMBOLS[rest[1:]], PREFIX_EXP[rest[0]]))
    if len(rest) > 1 and rest[0] == "K" and dim is RESISTANCE and rest[1:] in SYMBOLS:
        candidates.append((SYMBOLS[rest[1:]], 3))  # '10Kohm': capital K for kilo, common in BOMs
    for symbol, prefix_exp in candidates:
        if symbol.dimension is dim:
            return symbol.exp + prefix_exp
    if candidates:
        found = candidates[0][0].dimension.name
        raise QuantityError(f"'{text}' is {found}; expected {_expected(unit)}")
    raise QuantityError(f"'{text}': unknown unit '{rest}'; expected {_expected(unit)}")


def parse_quantity(text: str | float | int, unit: str = "1", *, decimal_comma: bool = False) -> float:
    """Read `text` and return its value expressed in `unit` (a key of UNITS).

    A plain number is taken to be in `unit` already; a number with a unit
    symbol is converted; a symbol of another dimension raises QuantityError
    naming what was expected. Non-finite results (overflow, 'nan', 'inf') are
    errors: picker never invents a number.
    """
    if unit not in UNITS:
        raise KeyError(unit)
    if isinstance(text, bool):
        raise QuantityError(f"'{text}' is not a number; expected {_expected(unit)}")
    if isinstance(text, (int, float)):
        try:
            value = float(text)
        except OverflowError:  # an int beyond a float's range (TOML allows any size)
            value = float("inf")
        if value != value or value in (float("inf"), float("-inf")):
            raise QuantityError(f"'{text}' is not a finite number; expected {_expected(unit)}")
        return value
    if not isinstance(text, str):
        raise QuantityError(f"{text!r} is not a number; expected {_expected(unit)}")
    s, magnitude = _normalise(text, decimal_comma)
    if not s:
        raise QuantityError(f"empty value; expected {_expected(unit)}")
    exp10 = _iec_code(s, unit, text)
    if exp10 is not None:
        digits_text, exp10 = exp10
        sign = ""
    else:
        m = _NUMBER.match(s)
        if not m:
            raise QuantityError(f"'{text}' is not a number; expected {_expected(unit)}"
                                + (f", e.g. '25 {unit_label(unit)}'" if UNITS[unit][0] is not NUMBER else ""))
        sign, digits_text, exp_text = m.group(1), m.group(2), m.group(3)
        if exp_text is not None and len(exp_text.lstrip("+-")) > 6:
            raise QuantityError(f"'{text}' is out of range; expected {_expected(unit)}")
        rest = s[m.end():]
        unit_exp = _split_unit(rest, unit, text)
        exp10 = int(exp_text or 0)
        if unit_exp is not None:
            exp10 += unit_exp - UNITS[unit][1]
    if magnitude:
        sign = ""
    value = float(f"{sign}{digits_text}e{exp10}")
    if value in (float("inf"), float("-inf")):
        raise QuantityError(f"'{text}' is out of range; expected {_expected(unit)}")
    return value


def _iec_code(s: str, unit: str, text: str) -> tuple[str, int] | None:
    """IEC 60062 letter-and-digit code ('4k7', '2R2', 'R47', '4n7', '4k7Ω'):
    the digits with the decimal point where the letter stands, and the power of
    ten to `unit`. None when `s` is not such a code for `unit`'s dimension."""
    dim, unit_exp = UNITS[unit]
    if dim is RESISTANCE:
        letters = IEC60062_RESISTANCE_EXP
        for suffix in ("Ω", "Ω", "ohms", "ohm", "Ohm"):
            if s.endswith(suffix) and len(s) > len(suffix):
                s = s[: -len(suffix)]
                break
        if re.fullmatch(r"\d+(?:\.\d+)?R", s):  # '100R': 100 ohm, the code with no fraction
            return s[:-1], -unit_exp
    elif dim is CAPACITANCE:
        letters = IEC60062_CAPACITANCE_EXP
        if s.endswith("F") and len(s) > 1:
            s = s[:-1]
    else:
        return None
    m = _IEC_CODE.fullmatch(s)
    if not m or m.group(2) not in letters or (m.group(1) == "" and m.group(2) != "R"):
        return None
    whole = m.group(1) or "0"
    return f"{whole}.{m.group(3)}", letters[m.group(2)] - unit_exp


def parse_range(text: str, unit: str) -> tuple[float, float]:
    """Read a range 'LOW..HIGH' (each side as parse_quantity; a unit on the high
    side applies to a bare low side: '3.0..4.2V'). Raises when LOW > HIGH."""
    if ".." not in text:
        raise QuantityError(f"'{text}' is not a range; write it LOW..HIGH, e.g. '3.0V..4.2V'")
    low_text, high_text = text.split("..", 1)
    high = parse_quantity(high_text, unit)
    try:
        low = parse_quantity(low_text, unit)
    except QuantityError:
        m = _NUMBER.fullmatch(_SPACES.sub("", high_text))
        unit_text = _SPACES.sub("", high_text)[m.end():] if m else ""
        low = parse_quantity(low_text + unit_text, unit)
    if low > high:
        raise QuantityError(f"'{text}': the low end is above the high end")
    return low, high


# -- formatting ---------------------------------------------------------------

_ENGINEERING = [(-12, "p"), (-9, "n"), (-6, "µ"), (-3, "m"), (0, ""), (3, "k"), (6, "M"), (9, "G")]


def format_quantity(value: float, unit: str, digits: int | None = 3) -> str:
    """Write `value` (in `unit`) with an engineering prefix: 0.025 'ohm' ->
    '25 mΩ'. `digits` significant figures, or None for every digit needed to
    read the same float back (parse_quantity(format_quantity(v, u, None), u) == v).
    NaN is written as '' (unknown)."""
    if value != value:
        return ""
    dim, unit_exp = UNITS[unit]
    if dim in (TEMPERATURE, THERMAL_RESISTANCE, NUMBER, FRACTION_TC) or value == 0 or value in (
            float("inf"), float("-inf")):
        symbol = unit_label(unit)
        number = repr(float(value)) if digits is None else f"{value:.{digits}g}"
        return f"{number} {symbol}".strip()
    exact = Decimal(repr(float(value))).scaleb(unit_exp)  # in the base unit
    exp3 = (exact.adjusted() // 3) * 3
    exp3 = min(max(exp3, -12), 9)
    mantissa = exact.scaleb(-exp3)
    prefix = dict(_ENGINEERING)[exp3]
    if digits is None:
        number = format(mantissa.normalize(), "f")
    else:
        number = f"{float(mantissa):.{digits}g}"
    return f"{number} {prefix}{dim.base}"


def resistor_code(ohm: float) -> str:
    """A resistance as a designer writes it on a schematic, in the letter-and-digit
    code of IEC 60062: the letter is the multiplier and stands where the decimal
    point would be (470000 -> '470k', 2.2e6 -> '2M2', 4700 -> '4k7', 100 -> '100R',
    0.47 -> 'R47'); up to three significant figures, as the E-series carry.
    NaN is written '' (unknown)."""
    if not math.isfinite(ohm) or ohm <= 0:
        return "" if ohm != ohm else f"{ohm:g}"
    exact = Decimal(f"{ohm:.3g}")
    exp3 = min(max((exact.adjusted() // 3) * 3, 0), 12)
    letter = {0: "R", 3: "k", 6: "M", 9: "G", 12: "T"}[exp3]
    whole, _, fraction = format(exact.scaleb(-exp3).normalize(), "f").partition(".")
    return f"{'' if whole == '0' and fraction else whole}{letter}{fraction}"
