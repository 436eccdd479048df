"""The requirement file (TOML) and command-line quick questions -> frozen
dataclasses in SI units (V, A, ohm, Ah; temperatures in °C).

Quantities are strings with units ("60 mV", "68 kohm", "-20 degC") or plain
numbers in those units. Every problem is one `RequirementError` naming the
file, the line of the key (found by scanning the text: tomllib gives no key
positions) and the key path; for command-line options, the option
(`--max-drop: ...`).

Quick questions (command-line options, `picker.design` keywords) are
`picker.design.quick`'s: they become a document that `_build` checks like a
file's.
"""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass

from picker.catalog.quantities import format_quantity, parse_quantity
from picker.design.keys import (AUTO, AUTO_KEYS, BASE_OFF, CHOICES, COMMON_KEYS,  # noqa: F401 (QUICK_*, OPTION_KEYS: re-exported)
                                DRIVER_OF, EXAMPLES, FAMILY_KEYS, KIND_OF_USE,
                                LINK_KEYS, NEEDS_DRIVER, MAX_FILE_BYTES, MAX_MAGNITUDE, MAX_QTY,
                                MAX_REFS, MAX_ROLES, MAX_VOLUME, OPTION_KEYS, PASS_USES, QUANTITIES,
                                QUICK_AMBIENT_C, QUICK_REFS, QUICK_SUPPLY_V, QUICK_VOLUME, REQUIRED,
                                ROLE_KEYS, RULES, TABLE_KEYS, TOP_KEYS, USES, _a, _closest, _or)
from picker.design.resistors import Resistors, read_resistors  # noqa: F401 (Resistors: re-exported)
from picker.design.where import _FileWhere
from picker.errors import QuantityError, RequirementError

@dataclass(frozen=True)
class Supply:
    min_V: float
    max_V: float
    capacity_Ah: float | None = None


@dataclass(frozen=True)
class Ambient:
    min_C: float
    max_C: float


@dataclass(frozen=True)
class Margins:
    derate_v: float = 0.8      # common practice (models/README.md §6)
    derate_i: float = 0.5      # common practice (models/README.md §6)
    tj_margin_C: float = 25.0  # below the part's tj_max_C, common practice (models/README.md §3)
    extrapolation: str = "conservative"  # below the lowest rated drive (models/README.md §1)
    rth_factor: float = 1.0    # the real board's θJA over the JESD51 test board's (models/README.md §3)


@dataclass(frozen=True)
class Role:
    name: str
    refs: tuple[str, ...]
    use: str
    qty: int | None = None                    # overrides len(refs) as parts per board
    load_A: float | None = None               # pass switches (high-side-pmos, low-side-nmos)
    max_drop_V: float | None = None
    gate_drive_V: float | None = None         # None means "supply"
    gate_drive_drop_V: float = 0.1
    max_tj_C: float | None = None
    collector_current_A: float | None = None  # saturated switches (npn-switch, pnp-switch)
    base_drive_V: float | None = None         # None means "supply"
    base_resistor_ohm: float | str | None = None  # a value, or "auto" (models/README.md §10)
    base_off: str = "driven"                  # or "open": what holds the base while off
    overdrive: float = 2.0
    max_vce_sat_V: float | None = None
    base_pulldown_ohm: float | str | None = None  # base to emitter; a value or "auto"
    max_off_current_A: float | None = None    # both
    # Linked roles (models/README.md §10)
    gate_driver: str | None = None            # a pass switch: the role whose transistor pulls its gate
    gate_pullup_ohm: float | str | None = None  # holds the gate at its source; a value or "auto"
    max_turn_off_s: float | None = None
    max_drive_current_A: float | None = None
    off_load_ohm: float | None = None         # the load's resistance while off; None: open
    base_from: str | None = None              # a switch: the pass switch whose output feeds its base

    def __post_init__(self) -> None:
        object.__setattr__(self, "refs", tuple(self.refs))
        if self.use not in USES:
            raise RequirementError(f"role '{self.name}': unknown use '{self.use}'; one of {', '.join(USES)}")

    @property
    def kind(self) -> str:
        return KIND_OF_USE[self.use]

    @property
    def is_pass_switch(self) -> bool:
        return self.use in PASS_USES

    @property
    def parts_per_board(self) -> int:
        return self.qty if self.qty is not None else len(self.refs)

    @property
    def is_linked(self) -> bool:
        return self.gate_driver is not None or self.base_from is not None


@dataclass(frozen=True)
class Requirements:
    supply: Supply
    ambient: Ambient
    volume: int
    margins: Margins
    roles: tuple[Role, ...]
    source: str = ""  # the file path, or "command line"
    resistors: Resistors | None = None  # no [resistors] table: a value the user gives is exact

    @property
    def resistor_tolerance(self) -> float:
        """The fraction a resistor may be off its value (0 without a [resistors] table)."""
        return 0.0 if self.resistors is None else self.resistors.tolerance

    def driver_of(self, switch: Role) -> Role | None:
        """The role whose transistor pulls `switch`'s gate (models/README.md §10), if any."""
        return None if switch.gate_driver is None else self.role(switch.gate_driver)

    def driven_by(self, driver: Role) -> Role | None:
        """The pass switch whose gate `driver` pulls, if any."""
        return next((r for r in self.roles if r.gate_driver == driver.name), None)

    def in_link(self, role: Role) -> bool:
        """True where the role is chosen together with another (models/README.md §10)."""
        return role.is_linked or self.driven_by(role) is not None

    def role(self, name: str) -> Role:
        for r in self.roles:
            if r.name == name or r.name == name.strip():  # names are read stripped
                return r
        names = [r.name for r in self.roles]
        close = _closest(name, names)
        tip = f"did you mean {_or(close)}?" if close else f"the roles are {', '.join(names[:20])}"
        raise RequirementError(f"no role named '{name}'; {tip}",
                               file=self.source if self.source not in ("", "command line") else None)


# -- reading values ------------------------------------------------------------------------

def _quantity(where, path: tuple, value, unit: str, rule: str, example: str):
    if rule == "drive" and isinstance(value, str) and value.strip().lower() == "supply":
        return None
    if isinstance(value, bool) or not isinstance(value, (str, int, float)):
        what = {bool: "true/false", list: "a list", dict: "a table"}.get(type(value), "a date")
        where.fail(path, f'expected a value such as "{example}", not {what}')
    try:
        number = parse_quantity(value, unit)
    except QuantityError as err:
        where.fail(path, err.message + ('; or "supply"' if rule == "drive" else ""))
    test, need = RULES[rule]
    if not test(number):
        where.fail(path, f"'{value}' {need}")
    if abs(number) > MAX_MAGNITUDE:  # squared in the models: keep far from float overflow
        where.fail(path, f"'{value}' is out of range; picker takes values up to "
                         f"{MAX_MAGNITUDE:g} {unit}")
    return number


def _count(where, path: tuple, value, limit: int) -> int:
    if isinstance(value, str) and re.fullmatch(r"\s*\d+\s*", value):
        digits = value.strip().lstrip("0") or "0"
        if len(digits) > len(str(limit)):  # (int() refuses over 4,300 digits)
            where.fail(path, f"'{value.strip()[:20]}...' is over the limit of {limit:,}"
                       if len(digits) > 20 else f"{value.strip()} is over the limit of {limit:,}")
        value = int(digits)
    if isinstance(value, bool) or not isinstance(value, int) or value < 1:
        where.fail(path, f"'{value}' must be a whole number, 1 or more")
    if value > limit:
        where.fail(path, f"{value:,} is over the limit of {limit:,}")
    return value


def _table(where, doc: dict, name: str, required: tuple[str, ...]) -> dict:
    table = doc.get(name, None if required else {})
    if table is None:
        where.fail((), f"missing table [{name}]; e.g. [{name}] with "
                       + " and ".join(f"{k} = {EXAMPLES.get(f'{name}.{k}') or EXAMPLES[k]}" for k in required))
    if not isinstance(table, dict):
        where.fail((name,), f"must be a table: a line [{name}] followed by its keys")
    for key in table:
        if key not in TABLE_KEYS[name]:
            close = _closest(key, TABLE_KEYS[name])
            tip = f"did you mean {_or(close)}?" if close else f"the keys are {', '.join(TABLE_KEYS[name])}"
            where.fail((name,), f"unknown key '{key}'; {tip}", at=(name, key))
    for key in required:
        if key not in table:
            where.missing((name,), key)
    return table


def _range(where, table: dict, name: str, unit: str, rule: str) -> tuple[float, float]:
    low, high = (_quantity(where, (name, k), table[k], unit, rule, EXAMPLES[f"{name}.{k}"].strip('"'))
                 for k in ("min", "max"))
    if low > high:
        where.fail((name, "min"), f"{format_quantity(low, unit)} is above max ({format_quantity(high, unit)})")
    return low, high


# -- the document -> Requirements -----------------------------------------------------------

def _build(doc: dict, where, source: str) -> Requirements:
    for key, value in doc.items():
        if key not in TOP_KEYS:
            close = _closest(key, TOP_KEYS)
            what = f"table [{key}]" if isinstance(value, dict) else f"top-level key '{key}'"
            tip = f"did you mean {_or(close)}?" if close else f"the tables are {', '.join(TOP_KEYS)}"
            where.fail((), f"unknown {what}; {tip}", at=(key,))
    supply_t, ambient_t = _table(where, doc, "supply", ("min", "max")), _table(where, doc, "ambient", ("min", "max"))
    build_t, margins_t = _table(where, doc, "build", ("volume",)), _table(where, doc, "margins", ())
    capacity = supply_t.get("capacity")
    supply = Supply(*_range(where, supply_t, "supply", "V", "positive"),
                    None if capacity is None else
                    _quantity(where, ("supply", "capacity"), capacity, "Ah", "positive", "2.0 Ah"))
    ambient = Ambient(*_range(where, ambient_t, "ambient", "degC", "temperature"))
    volume = _count(where, ("build", "volume"), build_t["volume"], MAX_VOLUME)
    margins = Margins(**{QUANTITIES[k][0]: _quantity(where, ("margins", k), v, *QUANTITIES[k][1:])
                         for k, v in margins_t.items() if k in QUANTITIES},
                      **{CHOICES[k][0]: _choice(where, ("margins", k), v, CHOICES[k][1])
                         for k, v in margins_t.items() if k in CHOICES})
    resistors = (read_resistors(where, _table(where, doc, "resistors", ()), _quantity)
                 if "resistors" in doc else None)
    roles = doc.get("role")
    if not roles:
        where.fail((), "no [[role]] tables: describe at least one transistor role")
    if not isinstance(roles, list) or not all(isinstance(r, dict) for r in roles):
        where.fail(("role",), "write each role as a table headed [[role]] (two brackets)")
    if len(roles) > MAX_ROLES:
        where.fail(("role", MAX_ROLES), f"more than {MAX_ROLES} roles; split the design into several files")
    built: list[Role] = []
    owner: dict[str, str] = {}  # ref (upper case) -> role name
    drivers = frozenset(r["gate_driver"].strip() for r in roles  # named as some gate's driver
                        if isinstance(r.get("gate_driver"), str))
    for i, raw in enumerate(roles):
        role = _role(where, i, raw, drivers)
        if any(other.name.casefold() == role.name.casefold() for other in built):
            where.fail(("role", i, "name"), f"'{role.name}' names two roles; give each its own name")
        for ref in role.refs:
            if ref.upper() in owner:
                where.fail(("role", i, "refs"), f"'{ref}' is in roles '{owner[ref.upper()]}' and "
                                                f"'{role.name}'; a part belongs to one role")
            owner[ref.upper()] = role.name
        built.append(role)
    _links(where, built)
    return Requirements(supply, ambient, volume, margins, tuple(built), source, resistors)


def _links(where, roles: list[Role]) -> None:
    """The links between roles (models/README.md §10): each names a role of the
    right family, a driver pulls one gate and takes its collector current from the
    pull-up, and the only loop is the latch pair (a driver fed from its own switch)."""
    index = {r.name: i for i, r in enumerate(roles)}
    names = list(index)
    target = {}  # role name -> the role its link names
    for i, r in enumerate(roles):
        for key, (on_switch, names_switch) in LINK_KEYS.items():
            name = getattr(r, key)
            if name is None:
                continue
            other = next((o for o in roles if o.name == name), None)
            if other is None:
                close = _closest(name, [n for n in names if n != r.name])
                tip = f"did you mean {_or(close)}?" if close else f"the roles are {', '.join(names[:20])}"
                where.fail(("role", i, key), f"no role named '{name}'; {tip}")
            if other.is_pass_switch != names_switch:
                want = " or ".join(u for u in USES if (u in PASS_USES) == names_switch)
                where.fail(("role", i, key), f"'{name}' is {_a(other.use)} role; {key} names "
                                             f"{'a' if names_switch else 'an'} {want} role")
            switch, bipolar = (other, r) if names_switch else (r, other)
            if bipolar.use != DRIVER_OF[switch.use]:
                pair = (f"the gate of {_a(switch.use)} is pulled by {_a(DRIVER_OF[switch.use])}"
                        if key == "gate_driver" else
                        f"{_a(bipolar.use)}'s base is fed from "
                        f"{_a(next(u for u, d in DRIVER_OF.items() if d == bipolar.use))}")
                where.fail(("role", i, key), f"{pair}; '{name}' is {_a(other.use)} role")
            target[r.name] = name
    drivers = {}
    for i, r in enumerate(roles):
        if r.gate_driver is None:
            continue
        if r.gate_driver in drivers:
            where.fail(("role", i, "gate_driver"), f"'{r.gate_driver}' already drives the gate of "
                                                   f"'{drivers[r.gate_driver]}'; give each switch its own driver role")
        drivers[r.gate_driver] = r.name
    for i, r in enumerate(roles):  # loops: every role has one link at most, so follow it
        path, at = [r.name], target.get(r.name)
        while at is not None and at not in path:
            path.append(at)
            at = target.get(at)
        if at == r.name and len(path) > 2:
            loop = " -> ".join(path + [r.name])
            where.fail(("role", i, "gate_driver" if roles[i].is_pass_switch else "base_from"),
                       f"the links make a loop ({loop}); only a latch pair may loop: a switch's "
                       "gate driver fed from that switch's output")
    for i, r in enumerate(roles):
        if r.is_pass_switch:
            if r.off_load_ohm is not None and not any(o.base_from == r.name for o in roles):
                where.fail(("role", i, "off_load"), "is used where a role's base_from names this "
                                                    "switch (the latch_off check); no role does")
            continue
        if r.name in drivers and r.collector_current_A is not None:
            where.fail(("role", i, "collector_current"),
                       f"'{r.name}' drives the gate of '{drivers[r.name]}' and takes its collector "
                       "current from the gate pull-up; remove this key")
        if r.name not in drivers and r.collector_current_A is None:
            where.missing(("role", i), "collector_current", f" for {_a(r.use)} role that drives no gate")
        if r.name in drivers and r.base_from not in (None, drivers[r.name]):
            where.fail(("role", i, "base_from"),
                       f"'{r.name}' drives the gate of '{drivers[r.name]}' and is fed from "
                       f"'{r.base_from}': a gate driver may be fed from its own switch only (the latch pair)")


def _role(where, i: int, raw: dict, drivers: frozenset = frozenset()) -> Role:
    here = ("role", i)
    use = raw.get("use") if raw.get("use") in USES else None
    allowed = COMMON_KEYS + FAMILY_KEYS[use in PASS_USES] if use else ROLE_KEYS
    for key in raw:
        if key not in ROLE_KEYS:
            close = _closest(key, allowed)
            tip = f"did you mean {_or(close)}?" if close else f"the keys are {', '.join(allowed)}"
            where.fail(here, f"unknown key '{key}'; {tip}", at=(*here, key))
    for key in ("name", "refs", "use"):
        if key not in raw:
            where.missing(here, key)
    name, refs = raw["name"], raw["refs"]
    if not isinstance(name, str) or not name.strip():
        where.fail((*here, "name"), 'must be a non-empty text, e.g. name = "pass"')
    if use is None:
        text = raw["use"]
        close = [u for u in USES if KIND_OF_USE[u] == text] or _closest(str(text), USES, cutoff=0.5)
        tip = f"did you mean {_or(close)}?" if close else f"one of {', '.join(USES)}"
        where.fail((*here, "use"), f"unknown use '{text}'; {tip}")
    if not isinstance(refs, list) or not all(isinstance(r, str) and r.strip() for r in refs):
        where.fail((*here, "refs"), 'must be a list of reference designators, e.g. refs = ["Q2", "Q3"]')
    if not refs:
        where.fail((*here, "refs"), 'is empty; list the parts in this role, e.g. refs = ["Q1"]')
    if len(refs) > MAX_REFS:
        where.fail((*here, "refs"), f"more than {MAX_REFS} refs in one role")
    refs, seen = tuple(r.strip() for r in refs), set()
    for ref in refs:
        if re.search(r"[\s,;]", ref):
            where.fail((*here, "refs"), f"'{ref}': write each ref as its own text, e.g. [\"Q2\", \"Q3\"]")
        if ref.upper() in seen:
            where.fail((*here, "refs"), f"'{ref}' is listed twice")
        seen.add(ref.upper())
    is_pass = use in PASS_USES
    for key in raw:
        if key in FAMILY_KEYS[not is_pass]:
            others = " and ".join(u for u in USES if (u in PASS_USES) != is_pass)
            where.fail((*here, key), f"not used by {_a(use)} role; it is for {others} roles")
    for key in REQUIRED[is_pass]:
        if key not in raw and not (key == "collector_current" and drivers):  # see _links
            where.missing(here, key, f" for {_a(use)} role")
    _link_keys(where, here, raw, is_pass)
    values = {QUANTITIES[k][0]: AUTO if _is_auto(v) and k in AUTO_KEYS
              else _quantity(where, (*here, k), v, *QUANTITIES[k][1:])
              for k, v in raw.items() if k in QUANTITIES}
    if "base_off" in raw:
        values["base_off"] = _choice(where, (*here, "base_off"), raw["base_off"], BASE_OFF)
    links = {k: raw[k].strip() for k in LINK_KEYS if k in raw}
    qty = _count(where, (*here, "qty"), raw["qty"], MAX_QTY) if "qty" in raw else None
    return Role(name=name.strip(), refs=refs, use=use, qty=qty, **values, **links)


def _is_auto(value) -> bool:
    return isinstance(value, str) and value.strip().lower() == AUTO


def _link_keys(where, here: tuple, raw: dict, is_pass: bool) -> None:
    """The keys of models/README.md §10 that one role can be checked for alone."""
    for key in LINK_KEYS:
        if key in raw and (not isinstance(raw[key], str) or not raw[key].strip()):
            where.fail((*here, key), f"must name another role, e.g. {key} = {EXAMPLES[key]}")
    if is_pass:
        if "gate_driver" in raw:
            for key in ("gate_drive", "gate_drive_drop"):
                if key in raw:
                    where.fail((*here, key), "the gate driver's Vce(sat) sets the gate drive of a "
                                             "switch with a gate_driver; remove this key")
            if "gate_pullup" not in raw:
                where.missing(here, "gate_pullup", " with gate_driver (a value, or \"auto\")")
        else:
            for key in NEEDS_DRIVER:
                if key in raw:
                    where.fail((*here, key), "needs gate_driver: the role whose transistor pulls "
                                             f"this gate, e.g. gate_driver = {EXAMPLES['gate_driver']}")
    else:
        if "base_from" in raw and "base_drive" in raw:
            where.fail((*here, "base_drive"), "the switch's output drives the base of a role with "
                                              "base_from; remove this key")
        if _is_auto(raw.get("base_pulldown")) and "base_from" not in raw:
            where.fail((*here, "base_pulldown"), '"auto" is chosen against the leakage of the switch '
                                                 "that feeds the base: it needs base_from")


def _choice(where, path: tuple, value, choices: tuple[str, ...]) -> str:
    """A word out of `choices` (case and surrounding spaces ignored)."""
    word = value.strip().lower() if isinstance(value, str) else None
    if word not in choices:
        listed = " or ".join(f'"{c}"' for c in choices)
        close = _closest(word, choices, cutoff=0.5) if word else []
        tip = f"; did you mean {_or(close)}?" if close else ""
        where.fail(path, f"'{value}' must be {listed}{tip}")
    return word


# -- public entry points -----------------------------------------------------------------------

def load_requirements(path) -> Requirements:
    """Read and check a requirement file; every problem is a RequirementError."""
    return parse_requirements(read_requirements_text(path), str(path))


def read_requirements_text(path) -> str:
    """The text of a requirement file (UTF-8, a byte-order mark allowed, at
    most MAX_FILE_BYTES); a file that cannot be read is a RequirementError."""
    source = str(path)
    try:
        with open(path, "rb") as fh:
            data = fh.read(MAX_FILE_BYTES + 1)
    except FileNotFoundError:
        raise RequirementError("no such file", file=source) from None
    except IsADirectoryError:
        raise RequirementError("is a folder, not a requirement file", file=source) from None
    except OSError as err:
        raise RequirementError(f"cannot be read ({err.strerror or err})", file=source) from None
    if len(data) > MAX_FILE_BYTES:
        raise RequirementError(f"over {MAX_FILE_BYTES:,} bytes: too large for a requirement file", file=source)
    try:
        text = data.decode("utf-8-sig")  # a byte-order mark, as some editors write, is fine
    except UnicodeDecodeError as err:
        raise RequirementError(f"not UTF-8 text (byte 0x{data[err.start]:02x}); save the file as UTF-8",
                               file=source, line=data[:err.start].count(b"\n") + 1) from None
    return text


_TOML_AT = re.compile(r"\s*\((?:at line (\d+), column (\d+)|at end of document)\)$")
_TOML_TIPS = {"Expected newline or end of document after a statement":
              'unexpected text after a value (quote values with units: min = "3.0 V")',
              "Cannot overwrite a value": "a key is given twice"}


def parse_requirements(text: str, source: str) -> Requirements:
    """Check the text of a requirement file; `source` names it in messages."""
    text = text.removeprefix("\ufeff")
    if len(text.encode("utf-8", "surrogatepass")) > MAX_FILE_BYTES:
        raise RequirementError(f"over {MAX_FILE_BYTES:,} bytes: too large for a requirement file", file=source)
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        m = _TOML_AT.search(str(err))
        line, column = (int(m[1]), int(m[2])) if m and m[1] else (len(text.rstrip("\n").split("\n")), None)
        message = _TOML_AT.sub("", str(err))
        message = _TOML_TIPS.get(message, message[:1].lower() + message[1:])
        raise RequirementError(f"not valid TOML: {message}", file=source, line=line, column=column) from None
    except ValueError:  # an integer past Python's 4,300-digit limit for reading one
        line, column = _long_number(text)
        raise RequirementError("not valid TOML: a number with thousands of digits", file=source,
                               line=line, column=column) from None
    except RecursionError:
        raise RequirementError("not valid TOML: nested too deeply", file=source) from None
    return _build(doc, _FileWhere(source, text, doc), source)


def _long_number(text: str) -> tuple[int | None, int | None]:
    """(line, column) of the first run of thousands of digits in `text`."""
    m = re.search(r"\d{4000,}", text)
    if m is None:
        return None, None
    return text.count("\n", 0, m.start()) + 1, m.start() - (text.rfind("\n", 0, m.start()) + 1) + 1


def __getattr__(name: str):
    """`from_options` and `assumed` moved to picker.design.quick; kept here for
    code written before the move (import them from picker.design.quick)."""
    if name in ("from_options", "assumed", "_doc_of"):
        from picker.design import quick

        return getattr(quick, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
