"""Where each input of a design came from: the line of the requirement file
that set it, the option (or keyword) that overrode it, or the default in force.

A design review shows every value the evaluation used beside its source, so a
colleague can tell a number someone chose from one picker assumed. The table
is read back from the requirement file's own text (key by key, as written)
and completed with the values in force for the keys nobody wrote.
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass

from picker.catalog.quantities import format_quantity
from picker.design.keys import (COMMON_KEYS, FAMILY_KEYS, OPTION_KEYS, QUANTITIES, TABLE_KEYS,
                                TOP_KEYS)
from picker.design.requirements import Requirements
from picker.design.where import _FileWhere, spell

DEFAULT = "default"
_AS_WRITTEN = "as written"  # a key this module has no value in force for: the file's text
ASSUMED = "assumed (quick question)"
_QUICK = {"supply": ("min", "max"), "ambient": ("min", "max"), "build": ("volume",)}
UNSET = {  # what a key nobody set means (models/README.md §3, §5, §6)
    "max_tj": "each part's Tj max less the margin",
    "max_off_current": "no limit (not checked)",
    "max_vce_sat": "no limit (not checked)",
}


@dataclass(frozen=True)
class Input:
    """One value the evaluation used: `section` is a table (`supply`,
    `margins`, ...) or `role <name>`; `value` is as written (or, for a
    default, the value in force); `source` is `file:line`, `--option`,
    a keyword, `default` or `assumed (quick question)`."""

    section: str
    key: str
    value: str
    source: str


def written(value) -> str:
    """A TOML value as the user wrote it: text as is, a list joined, a number plainly."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (list, tuple)):
        return ", ".join(written(v) for v in value)
    if isinstance(value, float):
        return f"{value:g}"
    return str(value)


def in_force(obj, key: str) -> str:
    """The value `obj` (a Role or Margins) holds for requirement key `key`, formatted."""
    field, unit, rule, _ = QUANTITIES[key]
    value = getattr(obj, field, None)
    if value is None:
        return "supply" if rule == "drive" else UNSET.get(key, "not set")
    if isinstance(value, str):  # "auto" (models/README.md §10)
        return value
    return f"{value:g}" if unit == "1" else format_quantity(value, unit, 4)


def inputs(req: Requirements, *, text: str | None = None, given: dict | None = None,
           role: str | None = None, keyword: bool = False) -> list[Input]:
    """Every input of `req` with its source.

    `text`: the requirement file's text (`req.source` names the file), or None
    for a quick question; `given`: the options (or keywords) that were applied
    on top, as typed (None values are ignored), their role fields to the role
    named `role` (or the only one); `keyword`: name them as `picker.design`
    keywords rather than command-line options.
    """
    given = {k: v for k, v in (given or {}).items() if v is not None}
    doc = tomllib.loads(text.removeprefix("\ufeff")) if text is not None else {}
    where = _FileWhere(req.source, text, doc) if text is not None else None

    def from_file(path: tuple) -> str | None:
        if where is None:
            return None
        found = where._find(path)
        return f"{req.source}:{found[0]}" if found else req.source

    overridden = {}  # (table, key) or ("role", key) -> option label
    for key in given:
        table, name = OPTION_KEYS[key]
        for k in ((name,) if name else ("min", "max")):
            overridden[(table, k)] = spell(key, keyword)

    out: list[Input] = []
    tables = [t for t in TOP_KEYS if t != "role"] + [t for t in doc if t not in TOP_KEYS]
    for table in tables:
        keys = list(doc.get(table, {})) if isinstance(doc.get(table), dict) else []
        keys += [k for k in TABLE_KEYS.get(table, ()) if k not in keys]
        for key in keys:
            value = _table_value(req, table, key)
            if value is None or value is _AS_WRITTEN and key not in doc.get(table, {}):
                continue
            if (table, key) in overridden:
                source = overridden[(table, key)]
            elif key in doc.get(table, {}):
                value, source = written(doc[table][key]), from_file((table, key))
            elif text is None and key in _QUICK.get(table, ()):
                source = ASSUMED
            else:
                source = DEFAULT
            out.append(Input(table, key, value, source))
    raw_roles = doc.get("role", []) if isinstance(doc.get("role"), list) else []
    target = role if role is not None else (req.roles[0].name if len(req.roles) == 1 else None)
    for i, role in enumerate(req.roles):
        raw = next((r for r in raw_roles if isinstance(r, dict)
                    and str(r.get("name", "")).strip() == role.name), {})
        index = raw_roles.index(raw) if raw in raw_roles else i
        keys = [k for k in raw if k != "name"]
        keys += [k for k in ("refs", "use") + COMMON_KEYS[3:] + FAMILY_KEYS[role.is_pass_switch]
                 if k not in keys]
        for key in keys:
            value = _role_value(role, key)
            option = overridden.get(("role", key)) if role.name == target else None
            if option is not None:
                source = option
            elif key in raw:
                value, source = written(raw[key]), from_file(("role", index, key))
            elif text is None and key == "refs":
                source = ASSUMED
            else:
                source = DEFAULT
            if source == DEFAULT and value in (_AS_WRITTEN, "not set"):
                continue  # a key this role does not use (a link it does not make)
            out.append(Input(f"role {role.name}", key, value, source))
    return out


def _table_value(req: Requirements, table: str, key: str) -> str | None:
    """The value in force for a key of a table, formatted (None: not used)."""
    if table == "supply":
        value = {"min": req.supply.min_V, "max": req.supply.max_V,
                 "capacity": req.supply.capacity_Ah}.get(key)
        unit = "Ah" if key == "capacity" else "V"
        return None if value is None else format_quantity(value, unit, 4)
    if table == "ambient":
        return format_quantity(getattr(req.ambient, f"{key}_C"), "degC", 4)
    if table == "build" and key == "volume":
        return f"{req.volume:,}"
    if table == "margins" and key in QUANTITIES:
        return in_force(req.margins, key)
    return _AS_WRITTEN  # a table this module does not know yet: shown from the file


def _role_value(role, key: str) -> str:
    if key == "refs":
        return ", ".join(role.refs)
    if key == "use":
        return role.use
    if key == "qty":
        return str(role.parts_per_board)
    if key in QUANTITIES:
        return in_force(role, key)
    return _AS_WRITTEN
