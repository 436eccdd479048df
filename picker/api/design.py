"""`picker.load_design`, `picker.design` and the `Design` they return."""

from __future__ import annotations

import dataclasses
import os
from typing import Any

from picker.design import requirements as _req
from picker.design import quick as _quick
from picker.design.inputs import Input, inputs
from picker.design.keys import OPTION_KEYS, _closest

Value = str | int | float
RANGES = tuple(k for k, (_, name) in OPTION_KEYS.items() if name is None)  # supply, ambient


class Design:
    """What the parts must do: the supply, the ambient range, the build volume,
    the margins and the roles, in SI units (read-only).

    `roles` maps each role's name to its settings (`use`, `refs`, `load_A`,
    `max_drop_V`, ...); `inputs` lists every value the evaluation uses with
    where it came from (a file line, a keyword, or the default).

    >>> import picker
    >>> d = picker.design(use="npn-switch", collector_current="40 uA", base_resistor="68k")
    >>> d.roles["npn-switch"].base_resistor_ohm
    68000.0
    >>> d.supply.min_V, d.supply.max_V, d.volume
    (3.0, 4.2, 1000)
    """

    def __init__(self, requirements: _req.Requirements, *, text: str | None = None,
                 given: dict | None = None, role: str | None = None,
                 keyword: bool = True) -> None:
        self._req = requirements
        self._text = text
        self._given = dict(given or {})
        self._role = role
        self._keyword = keyword

    @property
    def requirements(self) -> _req.Requirements:
        """The frozen dataclass the engine reads."""
        return self._req

    @property
    def source(self) -> str:
        """The requirement file's path, or 'command line' for a quick question."""
        return self._req.source

    @property
    def roles(self) -> dict[str, _req.Role]:
        return {r.name: r for r in self._req.roles}

    @property
    def supply(self) -> _req.Supply:
        return self._req.supply

    @property
    def ambient(self) -> _req.Ambient:
        return self._req.ambient

    @property
    def margins(self) -> _req.Margins:
        return self._req.margins

    @property
    def volume(self) -> int:
        """Boards per build."""
        return self._req.volume

    @property
    def inputs(self) -> list[Input]:
        """Every input with its source: `section`, `key`, `value`, `source`.

        >>> import picker
        >>> d = picker.design(use="high-side-pmos", load="1.5 A", max_drop="60 mV")
        >>> [(i.key, i.source) for i in d.inputs if i.section.startswith("role")][:4]
        [('refs', 'assumed (quick question)'), ('use', 'use'), ('qty', 'default'), ('max_off_current', 'default')]
        """
        found = inputs(self._req, text=self._text, given=self._given, role=self._role,
                       keyword=self._keyword)
        names = {f"role {r.name}" for r in self._req.roles}
        return [i for i in found if not i.section.startswith("role ") or i.section in names]

    def only(self, *names: str) -> "Design":
        """This design with only the roles named (a `RequirementError` names
        the closest role for a name that is not one).

        >>> import picker
        >>> d = picker.load_design("catalog/examples/kettlewick-power.toml")
        >>> list(d.only("latch").roles)
        ['latch']
        """
        roles = tuple(self._req.role(n) for n in names)
        req = dataclasses.replace(self._req, roles=roles)
        return Design(req, text=self._text, given=self._given, role=self._role,
                      keyword=self._keyword)

    def __repr__(self) -> str:
        return (f"<picker.Design {self.source!r}: {len(self._req.roles)} roles "
                f"({', '.join(self.roles)}), {self.volume:,} boards>")


def load_design(path: str | os.PathLike) -> Design:
    """Read and check a requirement file (TOML).

    Every problem raises `RequirementError` naming the file, the line and the
    column of the key.

    >>> import picker
    >>> d = picker.load_design("catalog/examples/kettlewick-power.toml")
    >>> d.volume, list(d.roles)[:2]
    (5000, ['cell-switch', 'latch'])
    """
    text = _req.read_requirements_text(path)
    req = _req.parse_requirements(text, str(path))
    return Design(req, text=text)


def design(base: Design | str | os.PathLike | None = None, /, *, role: str | None = None,
           **fields: Value | tuple | list) -> Design:
    """A design from keywords: the command line's quick question.

    Without `base`, one role described by the keywords (`use` is required;
    the supply, ambient range, volume and refs not given are assumed: one
    lithium-ion cell 3.0..4.2 V, -20..50 °C, 1000 boards, ref "Q?"). With
    `base` (a Design or a requirement file's path), a copy of it with the
    keywords overriding; role keywords go to the role named `role`, or to the
    only role.

    Keywords are the command-line options' names with underscores (`load`,
    `max_drop`, `gate_drive`, `collector_current`, `base_resistor`,
    `max_off`, `derate_v`, `volume`, ...). Values are text with units
    (`"1.5 A"`, `"68k"`) or plain numbers in SI units; `supply` and `ambient`
    take `"3.0V..4.2V"` or a pair `(3.0, 4.2)`; `refs` a list or `"Q1,Q2"`.
    A value that does not fit raises `RequirementError` naming the keyword.

    >>> import picker
    >>> d = picker.design(use="high-side-pmos", load="1.5 A", max_drop="60 mV",
    ...                   supply=(3.3, 4.2), volume=5000)
    >>> d.roles["high-side-pmos"].max_drop_V, d.supply.min_V, d.volume
    (0.06, 3.3, 5000)
    >>> picker.design(use="high-side-pmos", load="fast", max_drop="60 mV")
    Traceback (most recent call last):
    picker.errors.RequirementError: load: 'fast' is not a number; expected a current (A), e.g. '25 A'
    """
    if base is not None and not isinstance(base, Design):
        base = load_design(base)
    options = {}
    for key, value in fields.items():
        if key not in OPTION_KEYS:
            close = _closest(key, OPTION_KEYS)
            tip = f"; did you mean {close[0]!r}?" if close else ""
            raise TypeError(f"design() got an unexpected keyword argument {key!r}{tip}")
        options[key] = _text(key, value)
    if base is None:
        req = _quick.from_options(options, None, role, keyword=True)
        return Design(req, given=fields, role=req.roles[0].name)
    if not options:
        return base
    req = _quick.from_options(options, base._req, role, keyword=True)
    given = {**base._given, **fields}
    return Design(req, text=base._text, given=given, role=role if role is not None else base._role)


def _text(key: str, value: Any):
    """A keyword's value as `from_options` takes it."""
    if key in RANGES and isinstance(value, (tuple, list)):
        if len(value) != 2:
            from picker.errors import RequirementError

            raise RequirementError(f"{key}: give a pair (min, max), e.g. {key}=(3.0, 4.2)")
        return f"{_plain(value[0])}..{_plain(value[1])}"
    if key == "refs" and isinstance(value, (tuple, list)):
        return ",".join(str(v) for v in value)
    return value


def _plain(value) -> str:
    return repr(float(value)) if isinstance(value, (int, float)) and not isinstance(value, bool) \
        else str(value)


def as_design(design) -> Design:
    """A Design from a Design or a requirement file's path."""
    if isinstance(design, Design):
        return design
    if isinstance(design, (str, os.PathLike)):
        return load_design(design)
    raise TypeError(f"expected a picker.Design or a requirement file's path, "
                    f"not {type(design).__name__}")
