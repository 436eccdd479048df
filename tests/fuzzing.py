"""Shared pieces of the fuzz tests: the example budget, mutations of valid
files, and the check that an outcome is a result or one of our own errors.

The budget: under CI (CI set in the environment) every fuzz test runs
`CI_EXAMPLES` (2,000) generated inputs, derandomised so a run is repeatable;
on a developer's machine `PICKER_FUZZ_EXAMPLES` (default 200) random ones, so
the whole suite stays quick while a long campaign is one variable away:

    PICKER_FUZZ_EXAMPLES=20000 python -m pytest tests/test_fuzz_*.py

The settings are applied per test with `@FUZZ` (never loaded as the global
profile, which would change the other modules' property tests too).
"""

from __future__ import annotations

import os
from pathlib import Path

from hypothesis import HealthCheck, settings
from hypothesis import strategies as st

from picker.errors import PickerError

CI = os.environ.get("CI", "").lower() not in ("", "0", "false", "no")
CI_EXAMPLES = 2000

_COMMON = dict(deadline=None, print_blob=True,
               suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                      HealthCheck.function_scoped_fixture,
                                      HealthCheck.filter_too_much, HealthCheck.large_base_example])
settings.register_profile("picker-fuzz-ci", max_examples=CI_EXAMPLES, derandomize=True,
                          database=None, **_COMMON)
settings.register_profile("picker-fuzz-dev",
                          max_examples=int(os.environ.get("PICKER_FUZZ_EXAMPLES", "200")),
                          **_COMMON)
PROFILE = "picker-fuzz-ci" if CI else "picker-fuzz-dev"
FUZZ = settings(settings.get_profile(PROFILE))
EXAMPLES = FUZZ.max_examples


# -- the outcome -------------------------------------------------------------------

def ours(exc: BaseException, *, file: str | os.PathLike | None = None) -> PickerError:
    """Assert `exc` is one of our errors, one line, naming `file` when given."""
    assert isinstance(exc, PickerError), f"{type(exc).__name__}: {exc}"
    text = str(exc)
    assert text and "\n" not in text and "Traceback" not in text, repr(text)
    if file is not None:
        assert exc.file == str(file), f"error names {exc.file!r}, not {file!r}: {text}"
    return exc


def outcome(call, *args, file=None, **kwargs):
    """`call(*args, **kwargs)`: its result, or None after checking the error is ours."""
    try:
        return call(*args, **kwargs)
    except PickerError as exc:
        ours(exc, file=file)
        return None


# -- values that break parsers -------------------------------------------------------

NASTY_CELLS = [
    "", " ", "-", "?", "n/a", "nan", "NaN", "NAN", "-nan", "inf", "-inf", "+inf", "Inf",
    "Infinity", "-Infinity", "infinity", "∞", "-∞", "1e308", "1e309", "-1e309", "1e-400",
    "9" * 400, "0." + "0" * 400 + "1", "1e999999", "1e" + "9" * 30, "0x1F", "1_000", "١٢٣",
    "²", "½", "1e", "e5", ".", "..", "+", "--1", "1..2", "1,5", "1.5.6", "1,000.5",
    "25 mΩ", "25mohm", "4k7", "R47", "1M0", "2R2", "±8", "+/-8", "−5", "1 µA", "1 μA",
    "1.2uA", "100 degC", "-40 °C", "0,5", "=1+1", "+SUM(A1)", "-2+3", "@cmd", "\t=x",
    "\r=x", '"', '""', '"a,b"', "a\nb", "a\rb", "\x00", "\ufeff", "\u200b", "\ud7ff",
    "x" * 5000, "Q1-Q99999999", "Q1-Q5", "Q1..Q3", "Q5-Q1", "Q" + "1" * 50, "1.8V",
    "pmos", "nmos", "npn", "pnp", "PMOS ", "yes", "no", "eol", "nrnd", "active",
]

nasty_cell = st.one_of(st.sampled_from(NASTY_CELLS), st.text(max_size=12),
                       st.floats(allow_nan=True, allow_infinity=True).map(repr),
                       st.integers(min_value=-(10**40), max_value=10**40).map(str))


# -- mutations of valid files -----------------------------------------------------------

DELIMITERS = b",;\t"
ENCODINGS = ("utf-8", "utf-8-sig", "utf-16", "cp1252", "latin-1")


def _positions(data: bytes, chars: bytes) -> list[int]:
    return [i for i, b in enumerate(data) if b in chars]


def _at(draw, items):
    return items[draw(st.integers(0, len(items) - 1))] if items else None


def _mutate_once(draw, data: bytes, delimiters: bytes = DELIMITERS) -> bytes:
    """One edit of the kinds files suffer on the way between people."""
    op = draw(st.sampled_from([
        "drop_delim", "double_delim", "truncate_line", "truncate_file", "nul", "reencode",
        "cell", "cell", "cell", "dup_line", "drop_line", "quote", "line_ends", "insert_text",
        "random_bytes", "long_line", "blank_lines", "swap_delim",
    ]))
    if op in ("drop_delim", "double_delim"):
        i = _at(draw, _positions(data, delimiters))
        if i is None:
            return data
        if op == "drop_delim":
            return data[:i] + data[i + 1:]
        return data[:i] + data[i:i + 1] + data[i:]
    if op == "swap_delim":
        i = _at(draw, _positions(data, delimiters))
        if i is None:
            return data
        return data[:i] + bytes([draw(st.sampled_from(list(delimiters)))]) + data[i + 1:]
    lines = data.split(b"\n")
    if op == "truncate_line":
        k = draw(st.integers(0, len(lines) - 1))
        lines[k] = lines[k][:draw(st.integers(0, max(0, len(lines[k]))))]
        return b"\n".join(lines)
    if op == "truncate_file":
        return data[:draw(st.integers(0, len(data)))]
    if op == "nul":
        i = draw(st.integers(0, len(data)))
        return data[:i] + b"\x00" + data[i:]
    if op == "reencode":
        encoding = draw(st.sampled_from(ENCODINGS))
        try:
            text = data.decode("utf-8")
        except UnicodeDecodeError:
            return data
        return text.encode(encoding, errors="replace")
    if op == "cell":
        cuts = [-1] + _positions(data, delimiters + b"\n") + [len(data)]
        k = draw(st.integers(0, len(cuts) - 2))
        value = draw(nasty_cell).encode("utf-8", "surrogatepass")
        return data[:cuts[k] + 1] + value + data[cuts[k + 1]:]
    if op in ("dup_line", "drop_line"):
        k = draw(st.integers(0, len(lines) - 1))
        if op == "dup_line":
            lines.insert(k, lines[k])
        else:
            del lines[k]
        return b"\n".join(lines)
    if op == "quote":
        i = draw(st.integers(0, len(data)))
        return data[:i] + b'"' + data[i:]
    if op == "line_ends":
        ending = draw(st.sampled_from([b"\r\n", b"\r", b"\n\n", b"\r\r\n"]))
        if draw(st.booleans()):
            return data.replace(b"\n", ending)
        k = draw(st.integers(0, max(0, data.count(b"\n") - 1)))
        parts = data.split(b"\n")
        if len(parts) <= k + 1:
            return data
        return b"\n".join(parts[:k + 1]) + ending + b"\n".join(parts[k + 1:])
    if op == "insert_text":
        i = draw(st.integers(0, len(data)))
        return data[:i] + draw(st.text(max_size=20)).encode("utf-8", "surrogatepass") + data[i:]
    if op == "random_bytes":
        i = draw(st.integers(0, len(data)))
        return data[:i] + draw(st.binary(min_size=1, max_size=8)) + data[i:]
    if op == "long_line":
        k = draw(st.integers(0, len(lines) - 1))
        lines[k] = lines[k] + draw(st.sampled_from([b"9", b"x", b",", b" ", b"\xc3\xa9"])) * \
            draw(st.sampled_from([1000, 20_000, 200_000]))
        return b"\n".join(lines)
    if op == "blank_lines":
        k = draw(st.integers(0, len(lines)))
        lines.insert(k, draw(st.sampled_from([b"", b" ", b",,,", b";;", b"\t"])))
        return b"\n".join(lines)
    raise AssertionError(op)


@st.composite
def mutated(draw, seeds: list[bytes], max_edits: int = 4, delimiters: bytes = DELIMITERS) -> bytes:
    """A valid seed file with 0 to `max_edits` edits applied; `delimiters` are
    the bytes that separate fields (for a TOML file: '=', quotes, brackets)."""
    data = draw(st.sampled_from(seeds))
    for _ in range(draw(st.integers(0, max_edits))):
        data = _mutate_once(draw, data, delimiters)
    return data


def csv_like(header: list[str], cell=nasty_cell, max_rows: int = 6):
    """Text with the given header and rows of random cells, any delimiter and line end."""
    @st.composite
    def build(draw) -> bytes:
        delimiter = draw(st.sampled_from([",", ";", "\t"]))
        ending = draw(st.sampled_from(["\n", "\r\n"]))
        rows = draw(st.lists(st.lists(cell, min_size=1, max_size=len(header) + 2),
                             max_size=max_rows))
        lines = [delimiter.join(header)] + [delimiter.join(r) for r in rows]
        encoding = draw(st.sampled_from(("utf-8", "utf-8", "utf-8-sig", "utf-16", "cp1252")))
        return ending.join(lines).encode(encoding, errors="replace") if encoding != "utf-8" \
            else ending.join(lines).encode("utf-8", "surrogatepass")
    return build()


def write(tmp: Path, name: str, data: bytes) -> Path:
    path = tmp / name
    path.write_bytes(data)
    return path
