"""Fuzzing command-line option values: whatever is typed, a command ends
with exit 0, 1 or 2 and one of our messages, never an exception.

The bulk runs in-process: the option parser of quick questions
(`quick.from_options`) on random values, and the commands themselves
through typer's test runner on a four-part catalogue, so each example costs
milliseconds. (tests/test_fuzz_cli.py runs the real executable.)"""

from __future__ import annotations

import math
import shutil

import pytest
from hypothesis import given
from hypothesis import strategies as st

from conftest import EXAMPLES, ROOT, TINY_CSV, invoke
from fuzzing import FUZZ, nasty_cell, ours
from picker.errors import PickerError, RequirementError
from picker.design.requirements import OPTION_KEYS, USES, load_requirements
from picker.design.quick import from_options

BASE = load_requirements(EXAMPLES / "kettlewick-power.toml")

option_value = st.one_of(
    nasty_cell,
    st.sampled_from(list(USES) + ["3.0V..4.2V", "-20..50", "4.2..3.0", "3..", "..4", "1.5A",
                                  "60mV", "supply", "68k", "4k7", "1e309", "0", "-1", "Q1,Q2",
                                  "Q1 Q2", ",", "2.6Ah", "100degC", "0.8", "2"]),
)


@FUZZ
@given(options=st.dictionaries(st.sampled_from(sorted(OPTION_KEYS)), option_value, max_size=6),
       with_base=st.booleans(), role=st.none() | st.sampled_from(
           [r.name for r in BASE.roles] + ["nope", ""]))
def test_quick_question_options(options, with_base, role):
    if not with_base and "use" not in options and options:
        options["use"] = "high-side-pmos"
    try:
        req = from_options(options, BASE if with_base else None, role)
    except PickerError as exc:
        ours(exc)
        assert isinstance(exc, RequirementError)
        return
    assert req.supply.min_V <= req.supply.max_V
    for r in req.roles:
        assert r.load_A is None or (math.isfinite(r.load_A) and r.load_A > 0)


# -- the commands, in-process -------------------------------------------------------------

CHOOSE = ["--use", "--supply", "--ambient", "--capacity", "--volume", "--refs", "--qty",
          "--load", "--max-drop", "--gate-drive", "--gate-drive-drop", "--max-tj", "--ic",
          "--base-drive", "--rb", "--overdrive", "--max-vce-sat", "--max-off", "--derate-v",
          "--derate-i", "--tj-margin", "--top", "--role", "--format"]
REVIEW = ["--volume", "--column", "--take-at", "--confirm-at", "--package-ok", "--format"]
ADD = ["--maker", "--package", "--status", "--preferred", "--vds", "--vgs", "--id", "--vth",
       "--vth-typ", "--rds-on", "--idss", "--vceo", "--ic", "--hfe", "--vce-sat", "--vbe",
       "--icbo", "--rth", "--tj-max", "--price", "--notes", "--set", "--kind", "--format"]
SHOW = ["--kind", "--package", "--text", "--format"]
LINEUP = ["--role", "--format"]

cli_value = st.one_of(option_value, st.sampled_from(
    ["table", "csv", "json", "xml", "part=MPN", "refs=Ref", "qty=3", "x=y", "=", "SOT-23,SOT-323",
     "45mohm@2.5V", "200@10mA", "0.061@1000", "250mV@100mA", "@", "1@", "@1",
     "idss_hot_uA=10", "idss_hot_C=85", "price@1e999999=1", "nope=1", "95", "80", "101",
     "-5", "nan", "inf", "1e-311", "pmos", "npn", "P-channel", "yes", "maybe"]))


# Values each option takes when used well: most examples draw from these, so
# they reach the evaluation and the output, not only the first error.
GOOD = {
    "--use": list(USES), "--supply": ["3.0V..4.2V", "3..4.2", "2.5V..4.35V"],
    "--ambient": ["-20..50", "0..40 degC"], "--capacity": ["2.6Ah", "900 mAh"],
    "--volume": ["1000", "5 000", "25000"], "--refs": ["Q1", "Q1,Q2"], "--qty": ["1", "3"],
    "--load": ["1.5A", "200 mA"], "--max-drop": ["60mV", "0.1 V"],
    "--gate-drive": ["supply", "1.8V"], "--gate-drive-drop": ["0.1V", "0"],
    "--max-tj": ["100degC", "85"], "--ic": ["1mA", "40uA"], "--base-drive": ["supply", "1.8 V"],
    "--rb": ["4k7", "68k", "1 Mohm"], "--overdrive": ["2", "3"], "--max-vce-sat": ["0.2V"],
    "--max-off": ["1uA", "100 nA"], "--derate-v": ["0.8"], "--derate-i": ["0.5"],
    "--tj-margin": ["25degC"], "--top": ["1", "3"], "--role": ["cell-switch", "latch"],
    "--format": ["table", "csv", "json"], "--column": ["part=MPN", "refs=Ref Des", "qty=2"],
    "--take-at": ["95", "90"], "--confirm-at": ["80", "50"], "--package-ok": ["SOT-23,SOT-323"],
    "--maker": ["Testa Parts"], "--package": ["SOT-23"], "--status": ["active", "eol"],
    "--preferred": ["yes", "no"], "--vds": ["20V", "-30"], "--vgs": ["8V"], "--id": ["4.2A"],
    "--vth": ["0.45..1V", "-0.4..-1.0"], "--vth-typ": ["0.7"],
    "--rds-on": ["45mohm@2.5V", "0.03@4.5V"], "--idss": ["1uA"], "--vceo": ["45V"],
    "--hfe": ["200@10mA"], "--vce-sat": ["250mV@100mA"], "--vbe": ["0.65"], "--icbo": ["15nA"],
    "--rth": ["280C/W"], "--tj-max": ["150"], "--price": ["0.061@1000", "0.2@1"],
    "--notes": ["a note", "=1+1"], "--set": ["idss_hot_uA=10", "idss_hot_C=85"],
    "--kind": ["pmos", "nmos", "npn", "pnp"], "--text": ["testa", "SOT"],
}
PARTS = ["TQP-100", "TQP-200", "TQN-300", "TQB-400", "tqp100"]


def _value(name):
    good = st.sampled_from(GOOD.get(name, ["1"]))
    return st.one_of(good, good, good, cli_value)


def _args(names):
    pair = st.sampled_from(names).flatmap(lambda n: _value(n).map(lambda v: [n, v]))
    return st.lists(pair, max_size=5).map(lambda pairs: [x for p in pairs for x in p])


@st.composite
def command_line(draw):
    command = draw(st.sampled_from(["choose", "choose", "review", "add", "show", "lineup"]))
    part = st.sampled_from(PARTS) | cli_value
    if command == "choose":
        start = draw(st.sampled_from([["@REQ", "--role", "cell-switch"], ["@REQ", "-r", "latch"],
                                      ["@REQ"], ["--use", "high-side-pmos", "--load", "1A",
                                                 "--max-drop", "80mV"], []]))
        return ["choose"] + start + draw(_args(CHOOSE))
    if command == "review":
        return ["review", "@BOM"] + draw(_args(REVIEW))
    if command == "add":
        return ["catalog", "add", "--part", draw(st.sampled_from(["NEW-1", "TQP-100"]) | cli_value),
                "--kind", draw(_value("--kind")), "--dry-run", "--into", "@INTO"] + draw(_args(ADD))
    if command == "show":
        return ["catalog", "show"] + draw(st.lists(part, max_size=2)) + draw(_args(SHOW))
    with_req = st.sampled_from([[], ["-R", "@REQ", "-r", "cell-switch"]])
    return ["lineup", "TQP-100", draw(part)] + draw(with_req) + draw(_args(LINEUP))


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    folder = tmp_path_factory.mktemp("options")
    (folder / "tiny.csv").write_text(TINY_CSV, encoding="utf-8")
    (folder / "into.csv").write_text(TINY_CSV, encoding="utf-8")
    shutil.copy(EXAMPLES / "kettlewick-bom.csv", folder / "bom.csv")
    shutil.copy(EXAMPLES / "kettlewick-power.toml", folder / "req.toml")
    return folder


@FUZZ
@given(argv=command_line())
def test_commands_with_any_option_values(files, argv):
    """Exit 0, 1 or 2; a 2 says why in one line; never an exception; nothing
    written (add runs with --dry-run)."""
    places = {"@REQ": str(files / "req.toml"), "@BOM": str(files / "bom.csv"),
              "@INTO": str(files / "into.csv")}
    argv = [places.get(a, a) for a in argv]
    if argv[0] != "catalog" or argv[1] != "add":
        argv += ["--catalog", str(files / "tiny.csv")]
    result = invoke(*argv)
    assert result.exception is None or isinstance(result.exception, SystemExit), \
        f"{argv}: {type(result.exception).__name__}: {result.exception}"
    assert result.exit_code in (0, 1, 2), (argv, result.exit_code, result.output[-500:])
    assert "Traceback" not in result.output
    if result.exit_code == 2:
        assert result.output.strip(), argv
    assert (files / "into.csv").read_text(encoding="utf-8") == TINY_CSV
    assert sorted(p.name for p in files.iterdir()) == ["bom.csv", "into.csv", "req.toml",
                                                       "tiny.csv"]


def test_the_fixture_files_are_the_examples():
    assert (ROOT / "catalog" / "examples" / "kettlewick-bom.csv").exists()


def test_regression_text_filter_after_no_rows_are_left(files):
    """Found by fuzzing: `catalog show --package '' --text x` (the package
    filter leaves no rows) raised AttributeError from pandas (exit 3)."""
    result = invoke("catalog", "show", "--package", "", "--text", "x", "--format", "csv",
                    "--catalog", str(files / "tiny.csv"))
    assert result.exit_code == 0 and result.exception is None
    assert result.output.splitlines()[-1].startswith("part,")


@pytest.mark.parametrize("argv", [
    ["review", "@BOM", "--volume", "²"],
    ["review", "@BOM", "--volume", "9" * 5000],
    ["choose", "--use", "npn-switch", "--ic", "1mA", "--rb", "10k", "--volume", "9" * 5000],
    ["choose", "--use", "npn-switch", "--ic", "1mA", "--rb", "10k", "--qty", "0" * 4999 + "1"],
])
def test_regression_counts_python_cannot_convert(files, argv):
    """Found while testing the bounds: '²' passes str.isdigit() but not int();
    a count of 5,000 digits passes the pattern but int() refuses strings over
    4,300 digits. Both raised ValueError (exit 3); now exit 2 naming the option
    (and a long run of zeros before a 1 is still the number 1)."""
    argv = [str(files / "bom.csv") if a == "@BOM" else a for a in argv]
    result = invoke(*argv, "--catalog", str(files / "tiny.csv"))
    assert result.exception is None or isinstance(result.exception, SystemExit), result.exception
    if argv[-2] == "--qty":
        assert result.exit_code in (0, 1), result.output
    else:
        assert result.exit_code == 2 and "--volume" in result.output


def test_regression_reference_of_thousands_of_digits_in_a_review(tmp_path, files):
    """A BOM ref 'Q' + 5,000 digits (kept as written) made the review's ref
    list compaction call int() on it: ValueError, exit 3."""
    bom = tmp_path / "bom.csv"
    bom.write_text("Ref,Qty,MPN\nQ" + "1" * 5000 + ",1,TQP-100\n", encoding="utf-8")
    result = invoke("review", str(bom), "--catalog", str(files / "tiny.csv"), "--format", "json")
    assert result.exception is None or isinstance(result.exception, SystemExit), result.exception
    assert result.exit_code in (0, 1), result.output


@pytest.mark.parametrize("option, value", [("--load", "1.3407807929942597e+154"),
                                           ("--ic", "1e200"), ("--rb", "1e300")])
def test_regression_huge_quantities_are_refused(files, option, value):
    """Found by fuzzing: `choose --load 1.34e154` squared the load in the
    models (I^2 R) with Python floats: OverflowError, exit 3. Every quantity
    is now bounded at the edge (requirements.MAX_MAGNITUDE), in files and
    options alike."""
    use = "high-side-pmos" if option == "--load" else "npn-switch"
    base = {"high-side-pmos": ["--load", "1A", "--max-drop", "80mV"],
            "npn-switch": ["--ic", "1mA", "--rb", "10k"]}[use]
    result = invoke("choose", "--use", use, *base, option, value,
                    "--catalog", str(files / "tiny.csv"))
    assert result.exception is None or isinstance(result.exception, SystemExit), result.exception
    assert result.exit_code == 2 and "out of range" in result.output
