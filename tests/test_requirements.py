"""The requirement file and command-line options -> Requirements (picker/requirements.py).

Outside references for the conversions checked here:
- SI prefixes: The International System of Units (SI Brochure), 9th edition,
  BIPM 2019, Table 7 (milli 1e-3, micro 1e-6, kilo 1e3, mega 1e6);
- absolute zero is -273.15 °C: SI Brochure, 9th edition, section 2.3.1
  (definition of the degree Celsius);
- TOML syntax and the tomllib parser: TOML v1.0.0 and the Python 3.11 standard
  library (the messages it gives for malformed files).
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

from picker.errors import PickerError, RequirementError
from picker.design.requirements import (
    KIND_OF_USE, MAX_REFS, MAX_ROLES, USES, Requirements, Role, assumed, from_options,
    load_requirements, parse_requirements,
)

ROOT = Path(__file__).resolve().parents[1]

# The requirement file of the interface note (design/interfaces.md), comments dropped.
# Line numbers matter: the bad-file table below edits single lines of it.
BASE = """\
[supply]
min = "3.0 V"
max = "4.2 V"
capacity = "2.0 Ah"

[ambient]
min = "-20 degC"
max = "45 degC"

[build]
volume = 5000

[margins]
derate_v = 0.8
derate_i = 0.5
tj_margin = "25 degC"

[[role]]
name = "pass"
refs = ["Q1"]
use = "high-side-pmos"
load = "1.5 A"
max_drop = "60 mV"
gate_drive = "supply"
gate_drive_drop = "0.1 V"
max_off_current = "1 uA"
max_tj = "100 degC"

[[role]]
name = "latch"
refs = ["Q2", "Q3"]
use = "npn-switch"
collector_current = "40 uA"
base_drive = "supply"
base_resistor = "68 kohm"
max_off_current = "0.1 uA"
"""
LINES = BASE.split("\n")
ONE_ROLE = "\n".join(LINES[:27]) + "\n"  # BASE without the latch role


def edit(line: int, new: str, text: str = BASE) -> str:
    """`text` with its line `line` (1-based) replaced by `new` (which may hold several lines)."""
    lines = text.split("\n")
    lines[line - 1] = new
    return "\n".join(lines)


def drop(line: int, text: str = BASE) -> str:
    """`text` with its line `line` turned into a comment, so no other line moves."""
    return edit(line, "# " + text.split("\n")[line - 1], text)


def roles_text(n: int) -> str:
    return "\n".join(LINES[:17]) + "".join(
        f'\n[[role]]\nname = "r{i}"\nrefs = ["Q{i}"]\nuse = "npn-switch"\n'
        f'collector_current = "1 mA"\nbase_resistor = "10 kohm"\n' for i in range(n))


# -- good files ----------------------------------------------------------------------------

def test_interface_example_in_si_units(tmp_path):
    """Every quantity of the interface note's example, converted with the SI prefixes of
    the SI Brochure (9th ed., Table 7): 60 mV = 0.06 V, 68 kohm = 68000 ohm, 1 uA = 1e-6 A."""
    path = tmp_path / "power.toml"
    path.write_text(BASE, encoding="utf-8")
    req = load_requirements(path)
    assert (req.supply.min_V, req.supply.max_V, req.supply.capacity_Ah) == (3.0, 4.2, 2.0)
    assert (req.ambient.min_C, req.ambient.max_C) == (-20.0, 45.0)
    assert req.volume == 5000 and req.source == str(path)
    assert (req.margins.derate_v, req.margins.derate_i, req.margins.tj_margin_C) == (0.8, 0.5, 25.0)
    pas, latch = req.roles
    assert pas == Role(name="pass", refs=("Q1",), use="high-side-pmos", load_A=1.5, max_drop_V=0.06,
                       gate_drive_V=None, gate_drive_drop_V=0.1, max_off_current_A=1e-6, max_tj_C=100.0)
    assert latch == Role(name="latch", refs=("Q2", "Q3"), use="npn-switch", collector_current_A=40e-6,
                         base_drive_V=None, base_resistor_ohm=68000.0, max_off_current_A=1e-7)
    assert (pas.kind, pas.is_pass_switch, pas.parts_per_board) == ("pmos", True, 1)
    assert (latch.kind, latch.is_pass_switch, latch.parts_per_board) == ("npn", False, 2)
    assert req.role("latch") is latch


def test_plain_numbers_are_base_units_and_defaults_apply():
    """Plain numbers are V, A, ohm, Ah and °C (interfaces.md); unset margins and role
    fields take the defaults of models/README.md §6 (derate 0.8 / 0.5, margin 25 °C, drive drop
    0.1 V, overdrive 2)."""
    text = ("[supply]\nmin = 3\nmax = 4.2\n[ambient]\nmin = -20\nmax = 50\n[build]\nvolume = 10\n"
            '[[role]]\nname = "s"\nrefs = ["Q1"]\nuse = "pnp-switch"\ncollector_current = 0.02\n'
            'base_resistor = 1000\nbase_drive = 1.8\nqty = 3\n')
    req = parse_requirements(text, "plain.toml")
    assert (req.supply.min_V, req.supply.capacity_Ah, req.ambient.min_C) == (3.0, None, -20.0)
    assert req.margins.derate_v == 0.8 and req.margins.derate_i == 0.5 and req.margins.tj_margin_C == 25.0
    role = req.roles[0]
    assert (role.collector_current_A, role.base_resistor_ohm, role.base_drive_V) == (0.02, 1000.0, 1.8)
    assert (role.overdrive, role.gate_drive_drop_V, role.parts_per_board) == (2.0, 0.1, 3)


@pytest.mark.parametrize("path", sorted((ROOT / "catalog" / "examples").glob("*.toml")), ids=lambda p: p.name)
def test_bundled_examples_parse(path):
    req = load_requirements(path)
    assert req.roles and req.volume >= 1 and 0 < req.supply.min_V <= req.supply.max_V
    assert all(r.use in USES and r.refs for r in req.roles)


def test_lantern_example_values():
    """A few values of the lantern example, with the prefixes of the SI Brochure."""
    req = load_requirements(ROOT / "catalog" / "examples" / "kettlewick-power.toml")
    assert (req.supply.min_V, req.supply.max_V, req.ambient.min_C) == (3.0, 4.2, -20.0)
    assert req.role("cell-switch").max_drop_V == 0.06
    assert req.role("gauge-leds").refs == ("Q4", "Q5", "Q6", "Q7")


def test_byte_order_mark_crlf_indent_and_quoted_keys_are_read(tmp_path):
    """Editors on some systems write a byte-order mark and CRLF line ends; keys may be
    indented or quoted (TOML v1.0.0). Line numbers still count from the first line."""
    good, bad = tmp_path / "good.toml", tmp_path / "bad.toml"
    good.write_bytes(b"\xef\xbb\xbf" + BASE.replace("\n", "\r\n").encode("utf-8"))
    bad.write_bytes(b"\xef\xbb\xbf" + edit(22, '  "load" = "1.5 V"').replace("\n", "\r\n").encode("utf-8"))
    assert load_requirements(good).volume == 5000
    with pytest.raises(RequirementError) as err:
        load_requirements(bad)
    assert (err.value.line, err.value.column) == (22, 3)


def test_inline_table_is_located_by_its_key():
    """A table written inline (TOML v1.0.0 inline tables): the error points at its line."""
    text = 'supply = { min = "4.5 V", max = "4.2 V" }\n' + BASE.split("\n", 4)[4]
    with pytest.raises(RequirementError) as err:
        parse_requirements(text, "inline.toml")
    assert str(err.value).startswith("inline.toml:1:1: [supply] min: 4.5 V is above max (4.2 V)")


def test_import_stays_light():
    """Start-up time: reading a requirement file pulls in neither pandas nor rapidfuzz."""
    code = "import sys, picker.design.requirements; print(sorted({'pandas', 'rapidfuzz'} & set(sys.modules)))"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT,
                         env={**os.environ, "PYTHONPATH": str(ROOT)}, timeout=60)
    assert out.stdout.strip() == "[]", out.stderr


def test_exact_message_of_a_misspelt_key(tmp_path):
    path = tmp_path / "power.toml"
    path.write_text(edit(33, 'colector_current = "40 uA"'), encoding="utf-8")
    with pytest.raises(RequirementError) as err:
        load_requirements(path)
    assert str(err.value) == (f"{path}:33:1: [[role]] #2 \"latch\": unknown key 'colector_current'; "
                              "did you mean 'collector_current'?")
    assert isinstance(err.value, PickerError) and err.value.file == str(path)


# -- bad files: (file text, expected line or None, a fragment of the message) -----------------

BAD = {
    # malformed TOML: tomllib's position becomes file:line:column
    "unquoted unit": (edit(2, "min = 3.0 V"), 2, "not valid TOML: unexpected text after a value"),
    "key twice": (edit(3, 'min = "3.1 V"'), 3, "a key is given twice"),
    "unclosed header": (edit(29, "[[role]"), 29, "not valid TOML: expected ']]'"),
    "role as one table": (edit(29, "[role]"), 29, "not valid TOML"),
    "only single bracket role": (edit(18, "[role]", ONE_ROLE), 18, "two brackets"),
    "not utf-8": (edit(5, "# caf\xe9").encode("latin-1"), 5, "not UTF-8"),
    "nested too deep": ("x = " + "[" * 5000 + "]" * 5000 + "\n", None, "nested too deeply"),
    # unknown keys at every level, with the closest valid key
    "top-level key": ('title = "lantern"\n' + BASE, 1, "unknown top-level key 'title'"),
    "top-level table": (edit(1, "[suply]"), 1, "unknown table [suply]; did you mean 'supply'?"),
    "supply key": (edit(4, 'capacty = "2.0 Ah"'), 4, "[supply]: unknown key 'capacty'; did you mean 'capacity'?"),
    "ambient key": (edit(8, 'maxi = "45 degC"'), 8, "[ambient]: unknown key 'maxi'; did you mean 'max'?"),
    "build key": (edit(11, "volumes = 5000"), 11, "[build]: unknown key 'volumes'; did you mean 'volume'?"),
    "margins key": (edit(14, "derate_vv = 0.8"), 14, "unknown key 'derate_vv'; did you mean 'derate_v'"),
    "role key": (edit(33, 'colector_current = "40 uA"'), 33, "did you mean 'collector_current'?"),
    "role key, nothing close": (edit(26, 'colour = "red"'), 26, "unknown key 'colour'; the keys are"),
    # missing required keys: the line of the table that lacks them
    "no supply.min": (drop(2), 1, "[supply]: missing key 'min'"),
    "no supply.max": (drop(3), 1, "[supply]: missing key 'max'"),
    "no ambient.min": (drop(7), 6, "[ambient]: missing key 'min'"),
    "no ambient.max": (drop(8), 6, "[ambient]: missing key 'max'"),
    "no build.volume": (drop(11), 10, "[build]: missing key 'volume'; e.g. volume = 5000"),
    "no build table": (drop(11, drop(10)), None, "missing table [build]"),
    "no roles": (ONE_ROLE.split("[[role]]")[0], None, "no [[role]] tables"),
    "no role name": (drop(30), 29, '[[role]] #2: missing key \'name\''),
    "no role refs": (drop(20), 18, "missing key 'refs'"),
    "no role use": (drop(32), 29, "missing key 'use'"),
    "pass without load": (drop(22), 18, "missing key 'load', required for a high-side-pmos role"),
    "pass without max_drop": (drop(23), 18, "missing key 'max_drop', required for a high-side-pmos role"),
    "switch without current": (drop(33), 29, "missing key 'collector_current', required for an npn-switch"),
    "switch without resistor": (drop(35), 29, "missing key 'base_resistor', required for an npn-switch"),
    # wrong unit, not a number, out of range
    "load in volts": (edit(22, 'load = "1.5 V"'), 22, "load: '1.5 V' is a voltage; expected a current (A)"),
    "drop unknown unit": (edit(23, 'max_drop = "60 mQ"'), 23, "unknown unit 'mQ'"),
    "drop not a number": (edit(23, 'max_drop = "low"'), 23, "'low' is not a number"),
    "off current true": (edit(26, "max_off_current = true"), 26, "not true/false"),
    "load a date": (edit(22, "load = 1979-05-27"), 22, "not a date"),
    "load a list": (edit(22, 'load = ["1 A"]'), 22, "not a list"),
    "capacity in volts": (edit(4, 'capacity = "2 V"'), 4, "expected a charge"),
    "gate drive word": (edit(24, 'gate_drive = "suply"'), 24, 'or "supply"'),
    "negative base drive": (edit(34, 'base_drive = "-1.8 V"'), 34, "write magnitudes"),
    "negative drive drop": (edit(25, 'gate_drive_drop = "-0.1 V"'), 25, "must not be negative"),
    "zero load": (edit(22, 'load = "0 A"'), 22, "must be above zero"),
    "tj below absolute zero": (edit(27, 'max_tj = "-300 degC"'), 27, "below absolute zero"),
    "negative tj margin": (edit(16, 'tj_margin = "-5 degC"'), 16, "must not be negative"),
    "volume zero": (edit(11, "volume = 0"), 11, "whole number, 1 or more"),
    "volume fractional": (edit(11, "volume = 12.5"), 11, "whole number"),
    "volume text": (edit(11, 'volume = "many"'), 11, "whole number"),
    "volume huge": (edit(11, "volume = 10_000_000_000"), 11, "over the limit"),
    "qty zero": (edit(27, "qty = 0"), 27, "qty: '0' must be a whole number"),
    "derate_v above 1": (edit(14, "derate_v = 1.2"), 14, "at most 1"),
    "derate_i zero": (edit(15, "derate_i = 0"), 15, "above 0"),
    "overdrive below 1": (edit(34, "overdrive = 0.5"), 34, "must be 1 or more"),
    # ranges and structure
    "supply min above max": (edit(2, 'min = "4.5 V"'), 2, "[supply] min: 4.5 V is above max (4.2 V)"),
    "ambient min above max": (edit(7, 'min = "60 degC"'), 7, "[ambient] min: 60 °C is above max"),
    "supply min zero": (edit(2, 'min = "0 V"'), 2, "must be above zero"),
    "supply not a table": (drop(4, drop(3, drop(2, edit(1, 'supply = "3 V"')))), 1, "must be a table"),
    "empty refs": (edit(20, "refs = []"), 20, "is empty"),
    "refs numbers": (edit(31, "refs = [2, 3]"), 31, "list of reference designators"),
    "refs one string": (edit(20, 'refs = "Q1"'), 20, "list of reference designators"),
    "refs joined": (edit(31, 'refs = ["Q2, Q3"]'), 31, "its own text"),
    "ref twice in a role": (edit(31, 'refs = ["Q2", "q2"]'), 31, "'q2' is listed twice"),
    "empty name": (edit(19, 'name = " "'), 19, "non-empty"),
    "duplicate role names": (edit(30, 'name = "pass"'), 30, "'pass' names two roles"),
    "ref in two roles": (edit(31, 'refs = ["Q1", "Q3"]'), 31, "'Q1' is in roles 'pass' and 'latch'"),
    "unknown use": (edit(21, 'use = "hi-side-pmos"'), 21, "unknown use 'hi-side-pmos'; did you mean 'high-side-pmos'"),
    "use as a kind": (edit(32, 'use = "npn"'), 32, "did you mean 'npn-switch'?"),
    "pass key on a switch": (edit(36, 'load = "1 A"'), 36,
                             "load: not used by an npn-switch role; it is for high-side-pmos and low-side-nmos"),
    "switch key on a pass": (edit(27, 'base_resistor = "1 kohm"'), 27, "not used by a high-side-pmos role"),
    # bounds
    "too many roles": (roles_text(MAX_ROLES + 1), 18 + 7 * MAX_ROLES, f"more than {MAX_ROLES} roles"),
    "too many refs": (edit(20, "refs = [" + ", ".join(f'"Q{i}"' for i in range(MAX_REFS + 1)) + "]"), 20,
                      f"more than {MAX_REFS} refs"),
    "file over 1 MB": (BASE + "#" * 1_000_001 + "\n", None, "too large"),
}


@pytest.mark.parametrize("text, line, fragment", list(BAD.values()), ids=list(BAD))
def test_bad_file(tmp_path, text, line, fragment):
    path = tmp_path / "power.toml"
    path.write_bytes(text if isinstance(text, bytes) else text.encode("utf-8"))
    with pytest.raises(RequirementError) as err:
        load_requirements(path)
    assert err.value.file == str(path)
    assert err.value.line == line, str(err.value)
    assert fragment in str(err.value)
    assert "\n" not in str(err.value)
    where = f"{path}:{line}:" if line else f"{path}: "
    assert str(err.value).startswith(where)


def test_role_counts_at_the_bounds_are_accepted():
    assert len(parse_requirements(roles_text(MAX_ROLES), "x.toml").roles) == MAX_ROLES


@pytest.mark.parametrize("make, fragment", [
    (lambda p: p / "absent.toml", "no such file"),
    (lambda p: p, "is a folder"),
], ids=["missing", "folder"])
def test_unreadable(tmp_path, make, fragment):
    with pytest.raises(RequirementError, match=fragment) as err:
        load_requirements(make(tmp_path))
    assert err.value.line is None


def test_unknown_role_name_suggests():
    req = parse_requirements(BASE, "power.toml")
    with pytest.raises(RequirementError) as err:
        req.role("lach")
    assert str(err.value) == "power.toml: no role named 'lach'; did you mean 'latch'?"


def test_role_checks_its_use():
    with pytest.raises(RequirementError, match="unknown use"):
        Role(name="x", refs=["Q1"], use="pmos")
    assert Role(name="x", refs=["Q1", "Q2"], use="pnp-switch", qty=4).refs == ("Q1", "Q2")
    assert {KIND_OF_USE[u] for u in USES} == {"pmos", "nmos", "npn", "pnp"}


# -- quick questions on the command line ----------------------------------------------------------

def opts(**given) -> dict:
    """The options dict as the CLI passes it: every key, None where not given."""
    keys = ("use supply ambient capacity volume name refs qty load max_drop gate_drive gate_drive_drop "
            "max_tj collector_current base_drive base_resistor base_pulldown base_off overdrive "
            "max_vce_sat max_off "
            "derate_v derate_i tj_margin").split()
    return {k: given.get(k) for k in keys}


def test_quick_question_defaults():
    req = from_options(opts(use="high-side-pmos", load="1.5A", max_drop="60mV"))
    assert (req.supply.min_V, req.supply.max_V) == (3.0, 4.2)  # one lithium-ion cell
    assert (req.ambient.min_C, req.ambient.max_C) == (-20.0, 50.0)
    assert req.volume == 1000 and req.source == "command line" and req.margins.derate_v == 0.8
    (role,) = req.roles
    assert (role.name, role.refs, role.use, role.load_A, role.max_drop_V) == (
        "high-side-pmos", ("Q?",), "high-side-pmos", 1.5, 0.06)
    assert assumed(opts(use="high-side-pmos", ambient="0..40")) == [
        "supply 3.0..4.2 V (one lithium-ion cell)", "volume 1000 boards"]
    assert from_options(opts(use="npn-switch", collector_current="1mA", base_resistor="10k"),
                        role="led").roles[0].name == "led"


def test_quick_question_every_option():
    req = from_options(opts(
        use="low-side-nmos", supply="3.3V..5V", ambient="-40..85", capacity="2.6Ah", volume="5000",
        name="heater", refs="Q1, Q2", qty="3", load="2A", max_drop="75mV", gate_drive="1.8V",
        gate_drive_drop="0", max_tj="100degC", max_off="10uA", derate_v="0.9", derate_i="60%",
        tj_margin="20"))
    assert (req.supply.min_V, req.supply.max_V, req.supply.capacity_Ah) == (3.3, 5.0, 2.6)
    assert (req.ambient.min_C, req.ambient.max_C, req.volume) == (-40.0, 85.0, 5000)
    assert (req.margins.derate_v, req.margins.derate_i, req.margins.tj_margin_C) == (0.9, 0.6, 20.0)
    assert req.role("heater") == Role(
        name="heater", refs=("Q1", "Q2"), use="low-side-nmos", qty=3, load_A=2.0, max_drop_V=0.075,
        gate_drive_V=1.8, gate_drive_drop_V=0.0, max_tj_C=100.0, max_off_current_A=1e-5)
    switch = from_options(opts(use="pnp-switch", collector_current="20mA", base_drive="supply",
                               base_resistor="4k7", overdrive="3", max_vce_sat="0.2V")).roles[0]
    assert (switch.collector_current_A, switch.base_drive_V, switch.base_resistor_ohm) == (0.02, None, 4700.0)
    assert (switch.overdrive, switch.max_vce_sat_V) == (3.0, 0.2)  # 4k7: IEC 60062 letter code


@pytest.mark.parametrize("given, message", [
    ({}, "--use is required"),
    ({"use": "pmos"}, "--use: unknown use 'pmos'; did you mean 'high-side-pmos'?"),
    ({"use": "high-side-pmos", "load": "1A", "max_drop": "60 mQ"}, "--max-drop: '60 mQ': unknown unit 'mQ'"),
    ({"use": "high-side-pmos", "load": "1A"}, "--max-drop is required for a high-side-pmos role; e.g. --max-drop 60 mV"),
    ({"use": "npn-switch", "base_resistor": "1k"}, "--collector-current is required for an npn-switch role"),
    ({"use": "npn-switch", "collector_current": "1mA", "base_resistor": "1k", "load": "1A"},
     "--load: not used by an npn-switch role"),
    ({"use": "npn-switch", "collector_current": "1mA", "base_resistor": "1k", "max_off": "1V"},
     "--max-off: '1V' is a voltage; expected a current (A)"),
    ({"use": "npn-switch", "collector_current": "1mA", "base_resistor": "1k", "supply": "4.2..3.0V"},
     "--supply: '4.2..3.0V': the low end is above the high end"),
    ({"use": "npn-switch", "collector_current": "1mA", "base_resistor": "1k", "supply": "0..3V"},
     "--supply: '0.0' must be above zero"),
    ({"use": "npn-switch", "collector_current": "1mA", "base_resistor": "1k", "ambient": "cold"},
     "--ambient: 'cold' is not a range"),
    ({"use": "npn-switch", "collector_current": "1mA", "base_resistor": "1k", "volume": "0"},
     "--volume: '0' must be a whole number"),
    ({"use": "npn-switch", "collector_current": "1mA", "base_resistor": "1k", "qty": "two"},
     "--qty: 'two' must be a whole number"),
    ({"use": "npn-switch", "collector_current": "1mA", "base_resistor": "1k", "refs": " , "},
     "--refs: is empty"),
    ({"use": "npn-switch", "collector_current": "1mA", "base_resistor": "1k", "refs": "Q1,q1"},
     "--refs: 'q1' is listed twice"),
    ({"use": "npn-switch", "collector_current": "1mA", "base_resistor": "1k", "derate_v": "1.5"},
     "--derate-v: '1.5' must be above 0 and at most 1"),
    ({"use": "npn-switch", "collector_current": "1mA", "base_resistor": "1k", "overdrive": "0.5"},
     "--overdrive: '0.5' must be 1 or more"),
], ids=lambda v: str(v)[:40] if isinstance(v, str) else None)
def test_quick_question_errors(given, message):
    with pytest.raises(RequirementError) as err:
        from_options(opts(**given))
    assert str(err.value).startswith(message), str(err.value)
    assert err.value.file is None and err.value.line is None


def test_unknown_option_key_is_a_programming_error():
    with pytest.raises(ValueError, match="unknown option keys"):
        from_options({"use": "npn-switch", "colour": "red"})


# -- options overriding a file --------------------------------------------------------------------

@pytest.fixture
def two_roles() -> Requirements:
    return parse_requirements(BASE, "power.toml")


@pytest.fixture
def one_role() -> Requirements:
    return parse_requirements(ONE_ROLE, "one.toml")


def test_no_options_give_the_same_requirements(two_roles, one_role):
    """The file -> plain SI numbers -> Requirements round trip loses nothing."""
    assert from_options(opts(), two_roles) == two_roles
    assert from_options(opts(), one_role, "pass") == one_role


def test_overrides_on_the_only_role(one_role):
    req = from_options(opts(load="2 A", supply="3.3V..4.35V", volume="200", derate_i="0.4",
                            capacity="3Ah", gate_drive="2.5V"), one_role)
    assert req.source == "one.toml"
    assert (req.supply.min_V, req.supply.max_V, req.supply.capacity_Ah, req.volume) == (3.3, 4.35, 3.0, 200)
    assert (req.margins.derate_v, req.margins.derate_i) == (0.8, 0.4)
    role = req.roles[0]
    assert (role.load_A, role.gate_drive_V, role.max_drop_V, role.max_tj_C) == (2.0, 2.5, 0.06, 100.0)
    assert one_role.roles[0].load_A == 1.5  # the base is untouched
    assert from_options(opts(gate_drive="supply"), req).roles[0].gate_drive_V is None


def test_overrides_on_a_named_role(two_roles):
    req = from_options(opts(base_resistor="47k", refs="Q2", qty="2"), two_roles, role="latch")
    assert req.role("latch").base_resistor_ohm == 47000.0 and req.role("latch").refs == ("Q2",)
    assert req.role("latch").parts_per_board == 2
    assert req.role("pass") == two_roles.role("pass")


def test_use_of_the_other_family_drops_the_old_values(one_role):
    req = from_options(opts(use="npn-switch", collector_current="5mA", base_resistor="10k"), one_role)
    role = req.roles[0]
    assert (role.use, role.load_A, role.max_drop_V, role.max_tj_C) == ("npn-switch", None, None, None)
    assert (role.collector_current_A, role.max_off_current_A, role.name) == (0.005, 1e-6, "pass")
    same_family = from_options(opts(use="low-side-nmos"), one_role).roles[0]
    assert (same_family.use, same_family.load_A) == ("low-side-nmos", 1.5)


@pytest.mark.parametrize("given, role, message", [
    ({"load": "2A"}, None, "--load: the requirements have 2 roles; say which with --role (pass, latch)"),
    ({"load": "2A"}, "lach", "--role: no role named 'lach'; did you mean 'latch'?"),
    ({"load": "2A"}, "latch", "--load: not used by an npn-switch role"),
    ({"use": "npn-switch"}, "pass", "--collector-current is required for an npn-switch role"),
    ({"name": "latch"}, "pass", "--name: 'latch' names two roles"),
    ({"refs": "Q3"}, "pass", "--refs: 'Q3' is in roles 'pass' and 'latch'"),
    ({"ambient": "50..-20"}, None, "--ambient: '50..-20': the low end is above the high end"),
    ({"max_drop": "60 mQ"}, "pass", "--max-drop: '60 mQ': unknown unit 'mQ'"),
], ids=["several roles", "unknown role", "other family", "new use", "name clash", "ref clash",
        "ambient", "unit"])
def test_override_errors(two_roles, given, role, message):
    with pytest.raises(RequirementError) as err:
        from_options(opts(**given), two_roles, role)
    assert str(err.value).startswith(message), str(err.value)


# -- method v2: [resistors], base_pulldown, base_off (interfaces.md, models/README.md §6) -----

V2_BASE = """[supply]
min = "3.0 V"
max = "4.2 V"
[ambient]
min = "-20 degC"
max = "45 degC"
[build]
volume = 100
[resistors]
series = "E24"
tolerance = "5 %"
max = "2.2 Mohm"
[[role]]
name = "latch"
refs = ["Q2"]
use = "npn-switch"
collector_current = "45 uA"
base_resistor = "1 Mohm"
base_pulldown = "2.2 Mohm"
base_off = "open"
"""


def v2_edit(line: int, text: str | None) -> str:
    lines = V2_BASE.split("\n")
    if text is None:
        del lines[line - 1]
    else:
        lines[line - 1] = text
    return "\n".join(lines)


def test_v2_keys_read_in_si():
    """The interface's example values: E24, 5 % (a fraction 0.05), 2.2 MΩ;
    the pull-down in ohms; base_off as written."""
    req = parse_requirements(V2_BASE, "v2.toml")
    assert (req.resistors.series, req.resistors.tolerance, req.resistors.max_ohm) == ("E24", 0.05, 2.2e6)
    assert req.resistor_tolerance == 0.05
    role = req.roles[0]
    assert (role.base_pulldown_ohm, role.base_off) == (2.2e6, "open")


@pytest.mark.parametrize("series, tolerance", [("E6", 0.20), ("E12", 0.10), ("E24", 0.05),
                                               ("e48", 0.01), ("E96", 0.01), ("E192", 0.01)])
def test_series_default_tolerance(series, tolerance):
    """models/README.md §6: without a tolerance the series' usual one (common practice)."""
    req = parse_requirements(v2_edit(11, None).replace('"E24"', f'"{series}"'), "v2.toml")
    assert (req.resistors.series, req.resistors.tolerance) == (series.upper(), tolerance)


def test_defaults_without_the_table_or_its_keys():
    """No [resistors] table: a value given is exact (tolerance 0); an empty table:
    E24, 5 %, 2.2 MΩ (models/README.md §6); no base_off: "driven"; no pull-down: None."""
    plain = "\n".join(line for i, line in enumerate(V2_BASE.split("\n"), 1) if not 9 <= i <= 12)
    req = parse_requirements(plain.replace('base_pulldown = "2.2 Mohm"\n', "")
                             .replace('base_off = "open"\n', ""), "v2.toml")
    assert req.resistors is None and req.resistor_tolerance == 0.0
    assert (req.roles[0].base_pulldown_ohm, req.roles[0].base_off) == (None, "driven")
    empty = parse_requirements(v2_edit(10, "").replace('tolerance = "5 %"', "").replace(
        'max = "2.2 Mohm"', ""), "v2.toml")
    assert (empty.resistors.series, empty.resistors.tolerance, empty.resistors.max_ohm) == (
        "E24", 0.05, 2.2e6)


V2_BAD = {
    "series unknown": (10, 'series = "E36"', "[resistors] series: 'E36' is not an IEC 60063 series; "
                                               "did you mean 'E6' or 'E96'?"),
    "series a number": (10, "series = 24", "did you mean 'E24'?"),
    "tolerance as a plain 5": (11, "tolerance = 5", "a tolerance is under 100 %"),
    "tolerance negative": (11, 'tolerance = "-1 %"', "must not be negative"),
    "tolerance a resistance": (11, 'tolerance = "5 ohm"', "is a resistance"),
    "max too small": (12, 'max = "47 ohm"', "below 100 Ω"),
    "max a voltage": (12, 'max = "2 V"', "is a voltage; expected a resistance"),
    "resistors key": (12, 'maximum = "2.2 Mohm"', "[resistors]: unknown key 'maximum'; did you mean 'max'?"),
    "pull-down a voltage": (19, 'base_pulldown = "1 V"', "base_pulldown: '1 V' is a voltage"),
    "pull-down zero": (19, 'base_pulldown = "0 ohm"', "base_pulldown: '0 ohm' must be above zero"),
    "base_off misspelt": (20, 'base_off = "opne"', "base_off: 'opne' must be \"driven\" or \"open\"; "
                                                    "did you mean 'open'?"),
    "base_off a number": (20, "base_off = 1", "base_off: '1' must be \"driven\" or \"open\""),
}


@pytest.mark.parametrize("line, text, fragment", list(V2_BAD.values()), ids=list(V2_BAD))
def test_v2_bad_values_name_file_line_and_key(tmp_path, line, text, fragment):
    """One line naming the file, the line and the key; exit 2 comes from the
    CLI's handling of RequirementError (tests/test_cli_choose.py)."""
    path = tmp_path / "v2.toml"
    path.write_text(v2_edit(line, text), encoding="utf-8")
    with pytest.raises(RequirementError) as err:
        load_requirements(path)
    assert (err.value.file, err.value.line) == (str(path), line), str(err.value)
    assert fragment in str(err.value) and "\n" not in str(err.value)


def test_v2_keys_on_a_pass_switch_are_refused():
    """base_pulldown and base_off belong to npn-switch and pnp-switch roles."""
    text = V2_BASE.replace('use = "npn-switch"', 'use = "high-side-pmos"\nload = "1 A"\nmax_drop = "60 mV"')
    with pytest.raises(RequirementError, match="base_pulldown: not used by a high-side-pmos role"):
        parse_requirements(text.replace('collector_current = "45 uA"\n', "")
                           .replace('base_resistor = "1 Mohm"\n', ""), "v2.toml")


def test_v2_quick_question_and_override():
    """--base-pulldown and --base-off on the command line, alone and over a file;
    the file's [resistors] table survives an override."""
    req = from_options(opts(use="npn-switch", collector_current="45uA", base_resistor="1M",
                            base_pulldown="2M2", base_off="open"))
    assert (req.roles[0].base_pulldown_ohm, req.roles[0].base_off) == (2.2e6, "open")
    base = parse_requirements(V2_BASE, "v2.toml")
    over = from_options(opts(base_off="driven", base_pulldown="1 Mohm"), base)
    assert (over.roles[0].base_pulldown_ohm, over.roles[0].base_off) == (1e6, "driven")
    assert over.resistors == base.resistors
    with pytest.raises(RequirementError, match="--base-off: 'shut' must be"):
        from_options(opts(base_off="shut"), base)
