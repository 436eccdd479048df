"""Fuzzing the requirement file reader (picker.design.requirements): any text gives
Requirements or a RequirementError naming the file (and, for a problem at a
key, its line), never another exception.

Inputs: random text; the example requirement files with up to four byte
edits each; and structured edits that keep the TOML valid but change what it
says (any value of any TOML type at any key, keys dropped or unknown, roles
and refs multiplied past the file's bounds), written out by a small TOML
writer here."""

from __future__ import annotations

import copy
import datetime
import math
import tomllib

import pytest
from hypothesis import given
from hypothesis import strategies as st

from conftest import EXAMPLES
from fuzzing import FUZZ, NASTY_CELLS, mutated, ours
from picker.errors import PickerError, RequirementError
from picker.design.requirements import (MAX_FILE_BYTES, MAX_REFS, MAX_ROLES, ROLE_KEYS, TABLE_KEYS,
                                 load_requirements, parse_requirements)

SOURCE = "fuzz/req.toml"
SEED_TEXTS = [p.read_text(encoding="utf-8") for p in sorted(EXAMPLES.glob("*.toml"))]
LANTERN_TEXT = (EXAMPLES / "kettlewick-power.toml").read_text(encoding="utf-8")
SEEDS = [t.encode("utf-8") for t in SEED_TEXTS]
DOCS = [tomllib.loads(t) for t in SEED_TEXTS]


# -- a small TOML writer (tables, arrays of tables, scalars, arrays, inline tables) --------

def _key(k: str) -> str:
    return k if k and all(c.isalnum() or c in "-_" for c in k) else _str(k)


def _str(s: str) -> str:
    out = s.replace("\\", "\\\\").replace('"', '\\"')
    out = "".join(c if c >= " " and c != "\x7f" else f"\\u{ord(c):04x}" for c in out)
    return f'"{out}"'


def _value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        return _str(v)
    if isinstance(v, (datetime.date, datetime.time, datetime.datetime)):
        return v.isoformat()
    if isinstance(v, list):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{_key(k)} = {_value(x)}" for k, x in v.items()) + "}"
    raise TypeError(type(v))


def to_toml(doc: dict) -> str:
    lines = [f"{_key(k)} = {_value(v)}" for k, v in doc.items()
             if not isinstance(v, dict) and not (isinstance(v, list) and v and
                                                 all(isinstance(x, dict) for x in v))]
    for k, v in doc.items():
        if isinstance(v, dict):
            lines.append(f"\n[{_key(k)}]")
            lines += [f"{_key(a)} = {_value(b)}" for a, b in v.items()]
        elif isinstance(v, list) and v and all(isinstance(x, dict) for x in v):
            for table in v:
                lines.append(f"\n[[{_key(k)}]]")
                lines += [f"{_key(a)} = {_value(b)}" for a, b in table.items()]
    return "\n".join(lines) + "\n"


def test_the_writer_round_trips_the_examples():
    for doc in DOCS:
        assert tomllib.loads(to_toml(doc)) == doc


# -- structured edits --------------------------------------------------------------------------

scalar = st.one_of(
    st.sampled_from(NASTY_CELLS), st.text(max_size=12), st.booleans(),
    st.integers(min_value=-(10**30), max_value=10**30), st.just(10**400),
    st.floats(allow_nan=True, allow_infinity=True),
    st.sampled_from(["3.0 V", "4.2V", "-20 degC", "1.5 A", "60 mV", "68 kohm", "supply",
                     "1 uA", "0.8", "2", "high-side-pmos", "npn-switch", "Q1"]),
    st.dates(), st.times(),
)
toml_value = st.one_of(scalar, st.lists(scalar, max_size=3),
                       st.dictionaries(st.text(max_size=5), scalar, max_size=2))
all_keys = sorted(set(ROLE_KEYS) | {k for keys in TABLE_KEYS.values() for k in keys}
                  | {"min", "max", "unknown", ""})


@st.composite
def edited_doc(draw) -> dict:
    doc = copy.deepcopy(draw(st.sampled_from(DOCS)))
    for _ in range(draw(st.integers(1, 4))):
        op = draw(st.sampled_from(["set", "set", "set", "drop", "table", "roles", "refs",
                                   "top"]))
        tables = [k for k, v in doc.items() if isinstance(v, dict)]
        roles = doc.get("role") if isinstance(doc.get("role"), list) else []
        roles = [r for r in roles if isinstance(r, dict)]
        targets = [doc[t] for t in tables] + roles
        if op in ("set", "drop") and targets:
            target = draw(st.sampled_from(targets))
            key = draw(st.sampled_from(all_keys + sorted(target)))
            if op == "set":
                target[key] = draw(toml_value)
            else:
                target.pop(key, None)
        elif op == "table":
            doc[draw(st.sampled_from(list(TABLE_KEYS) + ["role"]))] = draw(toml_value)
        elif op == "roles" and roles:
            count = draw(st.sampled_from([0, 2, MAX_ROLES, MAX_ROLES + 1]))
            doc["role"] = [dict(roles[k % len(roles)], name=f"r{k}", refs=[f"Q{k}"])
                           for k in range(count)]
        elif op == "refs" and roles:
            count = draw(st.sampled_from([0, 1, MAX_REFS, MAX_REFS + 1]))
            roles[0]["refs"] = [f"Q{k}" for k in range(1, count + 1)]
        elif op == "top":
            doc[draw(st.text(min_size=1, max_size=6))] = draw(toml_value)
    return doc


def _parse(text: str):
    try:
        return parse_requirements(text, SOURCE)
    except PickerError as exc:
        ours(exc, file=SOURCE)
        assert isinstance(exc, RequirementError), exc
        return None


def _sane(req) -> None:
    assert req.supply.min_V <= req.supply.max_V and req.ambient.min_C <= req.ambient.max_C
    assert 1 <= len(req.roles) <= MAX_ROLES
    for role in req.roles:
        assert 1 <= len(role.refs) <= MAX_REFS
        for name in ("load_A", "max_drop_V", "collector_current_A", "base_resistor_ohm"):
            value = getattr(role, name)
            if value == "auto":  # a resistor picker chooses (models/README.md §10)
                assert name == "base_resistor_ohm", (name, value)
                continue
            assert value is None or (math.isfinite(value) and value > 0), (name, value)


@FUZZ
@given(edited_doc())
def test_valid_toml_saying_anything(doc):
    """Every error names the file; one at a key names its line (the key's
    own, else its table's); only a table missing from the whole file has none."""
    text = to_toml(doc)
    try:
        req = parse_requirements(text, SOURCE)
    except PickerError as exc:
        ours(exc, file=SOURCE)
        assert isinstance(exc, RequirementError), exc
        whole_file = exc.message.startswith(("missing table", "no [[role]] tables"))
        assert exc.line is not None or whole_file, str(exc)
        return
    _sane(req)


@FUZZ
@given(mutated(SEEDS, delimiters=b'="[].'))
def test_mutated_requirement_files(tmp_path_factory, data):
    path = tmp_path_factory.mktemp("req") / "req.toml"
    path.write_bytes(data)
    try:
        req = load_requirements(path)
    except PickerError as exc:
        ours(exc, file=path)
        assert isinstance(exc, RequirementError), exc
        return
    _sane(req)


@FUZZ
@given(st.text(max_size=300) | st.text(alphabet=st.sampled_from(list('[]="\'\n #.,{}-_0123456789'
                                                                     'abcdefgh')),
                                       max_size=200))
def test_random_text(text):
    req = _parse(text)
    if req is not None:
        _sane(req)


# -- the bounds of a requirement file (see also tests/test_limits.py) ---------------------------

def test_regression_huge_integer_value_is_our_error():
    """Found by fuzzing: `load = 1000...0` (400 digits), an integer TOML
    allows, raised OverflowError (exit 3) in the quantity parser; now a
    RequirementError at the key's line."""
    text = LANTERN_TEXT.replace('load = "1.2 A"', "load = 1" + "0" * 400)
    with pytest.raises(RequirementError, match="not a finite number|out of range") as info:
        parse_requirements(text, SOURCE)
    lines = text.splitlines()
    assert info.value.line == next(n for n, ln in enumerate(lines, 1)
                                   if ln.startswith("load = 1000"))


def test_file_over_the_size_bound_is_refused_unread(tmp_path):
    path = tmp_path / "big.toml"
    path.write_bytes(SEEDS[0] + b"#" * (MAX_FILE_BYTES + 10))
    with pytest.raises(RequirementError, match="too large"):
        load_requirements(path)


def test_regression_integer_of_thousands_of_digits():
    """Found by fuzzing: an integer of over 4,300 digits makes tomllib raise a
    plain ValueError (Python's limit on reading long integers), which escaped
    as an internal error; now a RequirementError with its line and column."""
    text = LANTERN_TEXT.replace("volume = 5000", "volume = 5" + "0" * 5000)
    with pytest.raises(RequirementError, match="thousands of digits") as info:
        parse_requirements(text, SOURCE)
    line = next(n for n, ln in enumerate(text.splitlines(), 1) if ln.startswith("volume = 50"))
    assert (info.value.line, info.value.column) == (line, len("volume = ") + 1)


def test_regression_key_written_with_escapes_is_located():
    """Found by fuzzing: an unknown key written with an escape ("\\u001f")
    was not found by the line scan, so the error had no line."""
    text = SEED_TEXTS[0].replace("[supply]", '"\\u001f" = 1\n\n[supply]', 1)
    with pytest.raises(RequirementError, match="unknown top-level key") as info:
        parse_requirements(text, SOURCE)
    assert info.value.line == next(n for n, ln in enumerate(text.splitlines(), 1)
                                   if ln.startswith('"\\u001f"'))


def test_regression_table_name_with_a_hash_is_located():
    """Found by fuzzing: a table header ["#"] escaped the header scan (a '#'
    reads as a comment there), so 'unknown table' had no line."""
    text = SEED_TEXTS[0] + '\n["#"]\n'
    with pytest.raises(RequirementError, match="unknown table") as info:
        parse_requirements(text, SOURCE)
    assert info.value.line == len(text.splitlines())


def test_regression_triple_quote_inside_a_one_line_string():
    """Found by fuzzing: three single quotes inside a one-line string were
    taken for the start of a multi-line string, so every table header after
    them was skipped and later errors had no line."""
    three = "'" * 3
    text = LANTERN_TEXT.replace('name = "latch"', f'name = "latch {three}"', 1)
    text = text.replace('max_off_current = "0.1 uA"', 'max_off_current = "-1 uA"', 1)
    with pytest.raises(RequirementError, match="max_off_current") as info:
        parse_requirements(text, SOURCE)
    lines = text.splitlines()
    assert info.value.line == next(n for n, ln in enumerate(lines, 1) if '"-1 uA"' in ln)
