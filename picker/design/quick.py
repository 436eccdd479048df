"""Quick questions: command-line options (or `picker.design` keywords) into
Requirements, alone or over a requirement file.

A quick question (`from_options` without `base`) fills in what is not given:

- supply 3.0..4.2 V: one lithium-ion cell, empty to full, the scope of this tool;
- ambient -20..50 °C: our choice for a handheld product carried outdoors (a
  narrower default would flatter the parts);
- volume 1000 boards, refs ("Q?",), the role named after `role` or its use.
`assumed(options)` lists the defaults applied, for the CLI to print.

The options become a document like a file's, checked by the same
`requirements._build`; a problem names the option (`--max-drop: ...`) or the
keyword (`max_drop: ...`).
"""

from __future__ import annotations

import re

from picker.catalog.quantities import parse_range
from picker.design.keys import (FAMILY_KEYS, LINK_KEYS, OPTION_KEYS, PASS_USES, QUANTITIES,
                                QUICK_AMBIENT_C, QUICK_REFS, QUICK_SUPPLY_V, QUICK_VOLUME, USES)
from picker.design.requirements import Requirements, Role, _build
from picker.design.where import _OptionWhere, spell
from picker.errors import QuantityError, RequirementError


def _doc_of(req: Requirements) -> dict:
    """A Requirements as the document it could have been read from (plain SI numbers)."""
    def role(r: Role) -> dict:
        raw = {"name": r.name, "refs": list(r.refs), "use": r.use, "qty": r.qty}
        for key in ("max_off_current",) + FAMILY_KEYS[r.is_pass_switch]:
            if key in LINK_KEYS or key not in QUANTITIES:  # a role's name, or a word
                raw[key] = getattr(r, key)
                continue
            field, _, rule, _ = QUANTITIES[key]
            raw[key] = "supply" if rule == "drive" and getattr(r, field) is None else getattr(r, field)
        if r.gate_driver is not None:  # its gate drive comes from the driver
            raw.pop("gate_drive"), raw.pop("gate_drive_drop")
        if r.base_from is not None:
            raw.pop("base_drive")
        return {k: v for k, v in raw.items() if v is not None}

    s, a, m = req.supply, req.ambient, req.margins
    return {"supply": {k: v for k, v in (("min", s.min_V), ("max", s.max_V), ("capacity", s.capacity_Ah))
                       if v is not None},
            "ambient": {"min": a.min_C, "max": a.max_C}, "build": {"volume": req.volume},
            "margins": {"derate_v": m.derate_v, "derate_i": m.derate_i, "tj_margin": m.tj_margin_C,
                        "extrapolation": m.extrapolation, "rth_factor": m.rth_factor},
            **({} if req.resistors is None else {"resistors": {
                "series": req.resistors.series, "tolerance": req.resistors.tolerance,
                "max": req.resistors.max_ohm}}),
            "role": [role(r) for r in req.roles]}


def assumed(options: dict[str, str | None]) -> list[str]:
    """The defaults a quick question (no base) fills in, for the CLI to print."""
    notes = {"supply": f"supply {QUICK_SUPPLY_V[0]}..{QUICK_SUPPLY_V[1]} V (one lithium-ion cell)",
             "ambient": f"ambient {QUICK_AMBIENT_C[0]:g}..{QUICK_AMBIENT_C[1]:g} °C",
             "volume": f"volume {QUICK_VOLUME} boards"}
    return [note for key, note in notes.items() if options.get(key) is None]


def from_options(options: dict[str, str | None], base: Requirements | None = None,
                 role: str | None = None, *, keyword: bool = False) -> Requirements:
    """Requirements from command-line options (values as typed, None when not given).

    Without `base`: one role, with the defaults of the module docstring; --use is
    required, and `role` (if given) names the role. With `base`: a copy of it, the
    given values overriding; role fields go to the role named `role`, or to the only
    role. A new --use of the other family drops the role's old family's values.
    Messages name the options (`--max-drop`), or with `keyword` the keywords of
    `picker.design` (`max_drop`).
    """
    if set(options) - set(OPTION_KEYS):
        raise ValueError(f"from_options: unknown option keys {sorted(set(options) - set(OPTION_KEYS))}")
    given = {k: v for k, v in options.items() if v is not None}
    index = 0
    if base is None:
        if "use" not in given:
            raise RequirementError(f"{spell('use', keyword)} is required: one of {', '.join(USES)}")
        doc = {"supply": dict(zip(("min", "max"), QUICK_SUPPLY_V)), "build": {"volume": QUICK_VOLUME},
               "ambient": dict(zip(("min", "max"), QUICK_AMBIENT_C)),
               "role": [{"name": role or given["use"], "refs": list(QUICK_REFS)}]}
    else:
        doc, names = _doc_of(base), [r.name for r in base.roles]
        role_options = [k for k in given if OPTION_KEYS[k][0] == "role"]
        if role is not None:
            try:
                index = names.index(base.role(role).name)
            except RequirementError as err:
                raise RequirementError(f"{spell('role', keyword)}: {err.message}") from None
        elif role_options and len(names) > 1:
            raise RequirementError(f"{spell(role_options[0], keyword)}: the requirements have "
                                   f"{len(names)} roles; say which with {spell('role', keyword)} "
                                   f"({', '.join(names[:20])})")
        old = doc["role"][index]
        if given.get("use") in USES and (given["use"] in PASS_USES) != (old["use"] in PASS_USES):
            for key in FAMILY_KEYS[old["use"] in PASS_USES]:
                old.pop(key, None)
    for key, text in given.items():
        table, name = OPTION_KEYS[key]
        if name is None:
            try:
                doc[table]["min"], doc[table]["max"] = parse_range(text, "V" if table == "supply" else "degC")
            except QuantityError as err:
                raise RequirementError(f"{spell(table, keyword)}: {err.message}") from None
        elif table == "role":
            doc["role"][index][name] = [r for r in re.split(r"[,\s]+", text) if r] if name == "refs" else text
        else:
            doc.setdefault(table, {})[name] = text
    return _build(doc, _OptionWhere(doc, keyword), base.source if base else "command line")
