"""`picker choose`: exit codes, the JSON of interfaces.md field by field, and
one-line errors for bad requirement files and options.

In-process through typer's test runner (`invoke`, fast); one run as a user
would, through `python -m picker` (`run_cli`), to see that nothing prints a
traceback. The demo catalogue and the lantern's requirement file are invented
demo data; the expected JSON shape is the one fixed in interfaces.md.
"""

from __future__ import annotations

import json
import math

import pytest

from conftest import DEMO, EXAMPLES, invoke, run_cli
from picker.catalog.load import load_catalog

POWER = EXAMPLES / "kettlewick-power.toml"
WARMER = EXAMPLES / "kettlewick-warmer.toml"
OUTCOMES = {"pass", "fail", "unknown"}
USES = {"high-side-pmos": "pmos", "low-side-nmos": "nmos", "npn-switch": "npn", "pnp-switch": "pnp"}

# interfaces.md, "JSON output of picker choose": names and types
TOP_FIELDS = {"volume": int, "roles": list, "cost_per_board": (float, int, type(None)),
              "off_current_A": (float, int, type(None)),
              "on_drive_current_A": (float, int, type(None)),  # models/README.md §9
              "drain_per_year_pct": (float, int, type(None))}
ROLE_FIELDS = {"name": str, "use": str, "refs": list, "choice": (str, type(None)),
               "candidates": list}
CANDIDATE_FIELDS = {"part": str, "maker": str, "package": str, "feasible": bool,
                    "unit_price": (float, int, type(None)), "cost": (float, int, type(None)),
                    "figures": dict, "checks": dict, "notes": list}
PASS_FIGURES = ("vgs_V", "rds_on_ohm", "drop_V", "loss_W", "tj_C", "off_current_A", "corner")
SWITCH_FIGURES = ("ib_A", "hfe", "vce_sat_V", "off_current_A")
PASS_CHECKS = ("gate_drive", "ohmic", "drop", "tj", "off_current", "vds_rating", "vgs_rating",
               "id_rating")
SWITCH_CHECKS = ("saturation", "vce_sat", "off_current", "vceo_rating", "ic_rating")
HOURS_PER_YEAR = 8766  # 365.25 days

HEAD = """[supply]
min = "3.0 V"
max = "4.2 V"
[ambient]
min = "-20 degC"
max = "45 degC"
[build]
volume = 100
"""
ROLE = """[[role]]
name = "pass"
refs = ["Q1"]
use = "high-side-pmos"
load = "1 A"
max_drop = "60 mV"
"""


def _number(x) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool)


@pytest.fixture(scope="module")
def power_json():
    result = invoke("choose", str(POWER), "--catalog", str(DEMO), "--format", "json")
    assert result.exit_code == 0, result.stderr
    return json.loads(result.stdout)


@pytest.fixture(scope="module")
def demo_kinds():
    df = load_catalog(DEMO, source="test").df
    return df["kind"].value_counts().to_dict()


# -- exit codes ------------------------------------------------------------------------

def test_exit_0_for_the_lantern_on_the_demo_catalogue():
    """Every role of kettlewick-power.toml has a feasible part in the demo: exit 0.
    The table shows the usual cautions (body diode, lithium cells, local codes)."""
    result = invoke("choose", str(POWER), "--catalog", str(DEMO))
    assert result.exit_code == 0, result.stderr
    out = result.stdout
    assert "Design summary:" in out
    assert "body diode" in out and "Lithium-ion cells" in out and "local codes" in out
    assert "Traceback" not in result.output


def test_exit_1_when_a_role_has_no_feasible_part():
    """5 A through a low-side switch with at most 1 mV of drop: no demo part
    does it (5 mΩ even at 25 °C would be needed, the best is about 10 mΩ
    at 4.5 V). Exit 1; the JSON is still written, with choice null."""
    result = invoke("choose", "--use", "low-side-nmos", "--load", "5A", "--max-drop", "1mV",
                    "--catalog", str(DEMO), "--format", "json")
    assert result.exit_code == 1
    data = json.loads(result.stdout)
    (role,) = data["roles"]
    assert role["choice"] is None
    assert not any(c["feasible"] for c in role["candidates"])
    assert "no feasible part for: low-side-nmos" in result.stderr


def test_exit_1_names_the_role_in_a_file(tmp_path):
    """A file whose second role cannot be met: exit 1, the role named on stderr."""
    path = tmp_path / "two.toml"
    path.write_text(HEAD + ROLE + ROLE.replace('"pass"', '"impossible"').replace('"Q1"', '"Q2"')
                    .replace('"1 A"', '"5 A"').replace('"60 mV"', '"1 mV"'), encoding="utf-8")
    result = invoke("choose", str(path), "--catalog", str(DEMO))
    assert result.exit_code == 1
    assert result.stderr.strip().endswith("no feasible part for: impossible")


def _bad(tmp_path, text: str, name: str = "bad.toml"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path, invoke("choose", str(path), "--catalog", str(DEMO))


BAD_FILES = [
    # (what, text, key or place named in the message, line)
    # tomllib gives no key, only the place: line 3, column 11 (after `max = 4.2`)
    ("malformed TOML", HEAD.replace('max = "4.2 V"', "max = 4.2 V") + ROLE, ":3:11: not valid TOML", 3),
    ("unknown key", HEAD + ROLE + "colour = \"red\"\n", "unknown key 'colour'", 15),
    ("unknown table key", HEAD.replace("volume = 100", "volume = 100\nboards = 3") + ROLE,
     "[build]: unknown key 'boards'", 9),
    ("wrong unit", HEAD + ROLE.replace('"1 A"', '"1 V"'), '"pass" load', 13),
    ("min above max", HEAD.replace('"3.0 V"', '"4.5 V"') + ROLE, "[supply] min", 2),
    ("ambient min above max", HEAD.replace('"-20 degC"', '"60 degC"') + ROLE, "[ambient] min", 5),
    ("no refs key", HEAD + ROLE.replace('refs = ["Q1"]\n', ""), "missing key 'refs'", 9),
    ("empty refs", HEAD + ROLE.replace('["Q1"]', "[]"), '"pass" refs', 11),
    ("no roles", HEAD, "no [[role]] tables", None),
    ("missing required key", HEAD + ROLE.replace('max_drop = "60 mV"\n', ""), "max_drop", 9),
    ("unknown use", HEAD + ROLE.replace("high-side-pmos", "hi-side-pmos"), '"pass" use', 12),
]


@pytest.mark.parametrize("what, text, key, line", BAD_FILES, ids=[b[0] for b in BAD_FILES])
def test_exit_2_bad_requirement_file_one_line(tmp_path, what, text, key, line):
    """Each bad file: exit 2, nothing on stdout, one line on stderr naming the
    file, the line (where there is one) and the key (interfaces.md, exit codes)."""
    path, result = _bad(tmp_path, text)
    assert result.exit_code == 2, result.output
    assert result.stdout == ""
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    message = lines[0]
    assert message.startswith(f"Error: {path}")
    if line is not None:
        assert message.startswith(f"Error: {path}:{line}:")
    assert key in message
    assert "Traceback" not in result.output


def test_exit_2_missing_file(tmp_path):
    path = tmp_path / "absent.toml"
    result = invoke("choose", str(path))
    assert result.exit_code == 2
    assert result.stderr.strip() == f"Error: {path}: no such file"


@pytest.mark.parametrize("args, named", [
    (("--use", "low-side-nmos", "--load", "5V", "--max-drop", "1mV"), "--load"),
    (("--use", "hi-side"), "--use"),
    (("--use", "low-side-nmos", "--load", "2A"), "--max-drop"),
    (("--use", "low-side-nmos", "--load", "2A", "--max-drop", "50mV", "--ambient", "50..-20"),
     "--ambient"),
    ((str(POWER), "--role", "nosuch"), "nosuch"),
    ((str(POWER), "--load", "2A"), "--role"),
])
def test_exit_2_bad_options_one_line(args, named):
    """Bad quick-question options: exit 2 and one line naming the option."""
    result = invoke("choose", *args, "--catalog", str(DEMO))
    assert result.exit_code == 2
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("Error: ") and named in lines[0], result.stderr


@pytest.mark.parametrize("args", [
    (),                                               # neither file nor options
    ("--use", "low-side-nmos", "--format", "xml"),   # no such output
    (str(POWER), "--top", "0"),                       # below its minimum
])
def test_exit_2_usage_errors(args):
    """Usage errors end in exit 2 with an `Error:` line, never a traceback."""
    result = invoke("choose", *args)
    assert result.exit_code == 2
    assert "Error:" in result.stderr and "Traceback" not in result.output


# -- JSON, field by field against interfaces.md --------------------------------------------

def test_json_top_level_fields(power_json):
    assert set(power_json) == set(TOP_FIELDS)
    for name, kind in TOP_FIELDS.items():
        assert isinstance(power_json[name], kind), name
    assert power_json["volume"] == 5000
    assert [r["name"] for r in power_json["roles"]] == [
        "cell-switch", "latch", "gauge-leds", "sensor-feed", "night-light", "usb-sense"]


def test_json_roles_and_candidates(power_json, demo_kinds):
    """Per role: fields and types; every demo part of the role's kind present
    once; feasible ones first; `choice` the first feasible priced candidate;
    figures and checks named exactly as interfaces.md; check values
    pass/fail/unknown; feasible exactly when every check passes."""
    for role in power_json["roles"]:
        assert set(role) == set(ROLE_FIELDS)
        for name, kind in ROLE_FIELDS.items():
            assert isinstance(role[name], kind), (role["name"], name)
        assert role["use"] in USES and all(isinstance(r, str) for r in role["refs"])
        candidates = role["candidates"]
        assert len(candidates) == demo_kinds[USES[role["use"]]]
        assert len({c["part"] for c in candidates}) == len(candidates)

        feasible = [c["feasible"] for c in candidates]
        assert feasible == sorted(feasible, reverse=True), "feasible candidates first"
        priced = [c for c in candidates if c["feasible"] and c["cost"] is not None]
        assert role["choice"] == (priced[0]["part"] if priced else None)
        if priced:
            assert candidates[0]["part"] == role["choice"]

        is_pass = role["use"] in ("high-side-pmos", "low-side-nmos")
        figures = PASS_FIGURES if is_pass else SWITCH_FIGURES
        checks = PASS_CHECKS if is_pass else SWITCH_CHECKS
        has_vce_limit = role["name"] == "sensor-feed"  # the only role with max_vce_sat
        expected_checks = [c for c in checks if c != "vce_sat" or has_vce_limit]
        for c in candidates:
            assert set(c) == set(CANDIDATE_FIELDS)
            for name, kind in CANDIDATE_FIELDS.items():
                assert isinstance(c[name], kind), (c["part"], name)
            assert list(c["figures"]) == list(figures)
            for name, value in c["figures"].items():
                if name == "corner":
                    assert value in ("cold", "hot", None)
                else:
                    assert value is None or (_number(value) and math.isfinite(value)), (c["part"], name)
            assert list(c["checks"]) == expected_checks
            assert set(c["checks"].values()) <= OUTCOMES
            assert c["feasible"] == all(v == "pass" for v in c["checks"].values())
            assert all(isinstance(n, str) for n in c["notes"])


def test_json_feasible_ranked_by_cost(power_json):
    """Within the feasible priced candidates, cost never falls (models/README.md §8)."""
    for role in power_json["roles"]:
        costs = [c["cost"] for c in role["candidates"] if c["feasible"] and c["cost"] is not None]
        assert costs == sorted(costs), role["name"]


def test_json_costs_and_totals_add_up(power_json):
    """cost = unit price × parts per board; the totals as models/README.md §9:
    cost per board the sum of the choices' costs; off current the sum of
    each choice's off current × parts per board; drain = off · 8766 h /
    2.6 Ah · 100 (the lantern's cell)."""
    cost, off = 0.0, 0.0
    for role in power_json["roles"]:
        per_board = len(role["refs"])
        for c in role["candidates"]:
            if c["unit_price"] is not None:
                assert c["cost"] == pytest.approx(c["unit_price"] * per_board, rel=1e-12)
        chosen = next(c for c in role["candidates"] if c["part"] == role["choice"])
        cost += chosen["cost"]
        off += chosen["figures"]["off_current_A"] * per_board
    assert power_json["cost_per_board"] == pytest.approx(cost, rel=1e-12)
    assert power_json["off_current_A"] == pytest.approx(off, rel=1e-12)
    assert power_json["drain_per_year_pct"] == pytest.approx(off * HOURS_PER_YEAR / 2.6 * 100,
                                                             rel=1e-12)


def test_json_unknown_is_null_and_unknown(power_json):
    """A figure that cannot be computed is null; a check that cannot be
    decided is "unknown" (interfaces.md). In the demo: AGXN260-1010 has no
    threshold maximum, so its gate check is unknown and its on-state figures
    null; MWX5236S has no thermal data, so its tj check is unknown and tj_C null."""
    roles = {r["name"]: r for r in power_json["roles"]}
    night = {c["part"]: c for c in roles["night-light"]["candidates"]}
    no_vt = night["AGXN260-1010"]
    assert no_vt["checks"]["gate_drive"] == "unknown"
    assert no_vt["figures"]["drop_V"] is None and no_vt["figures"]["corner"] is None
    cell = {c["part"]: c for c in roles["cell-switch"]["candidates"]}
    no_rth = cell["MWX5236S"]
    assert no_rth["checks"]["tj"] == "unknown" and no_rth["figures"]["tj_C"] is None
    assert no_rth["figures"]["drop_V"] is not None  # computed at Tj = Ta
    assert not no_rth["feasible"]


def test_json_quick_question_one_role():
    """The quick question's JSON has the same shape, one role, refs ["Q?"]."""
    result = invoke("choose", "--use", "npn-switch", "--ic", "5mA", "--base-drive", "1.8V",
                    "--rb", "10k", "--catalog", str(DEMO), "--format", "json")
    assert result.exit_code == 0, result.stderr
    data = json.loads(result.stdout)
    (role,) = data["roles"]
    assert role["refs"] == ["Q?"] and role["use"] == "npn-switch"
    assert list(role["candidates"][0]["checks"]) == ["saturation", "vceo_rating", "ic_rating"]


# -- as a user runs it -------------------------------------------------------------------------

def test_subprocess_run_prints_json_and_no_traceback(tmp_path):
    """`python -m picker choose ... --format json` in a real process: exit 0,
    valid JSON on stdout, the catalogue line on stderr, no traceback; and a
    bad file in a real process: exit 2, one line."""
    proc = run_cli("choose", str(WARMER), "--catalog", str(DEMO), "--format", "json")
    assert "Traceback" not in proc.stdout + proc.stderr
    assert proc.returncode in (0, 1), proc.stderr
    data = json.loads(proc.stdout)
    assert data["volume"] == 2000
    assert [r["name"] for r in data["roles"]] == ["heater", "thermistor-bias", "buzzer"]
    assert proc.returncode == (0 if all(r["choice"] for r in data["roles"]) else 1)

    bad = tmp_path / "bad.toml"
    bad.write_text(HEAD + ROLE.replace('"1 A"', '"1 V"'), encoding="utf-8")
    proc = run_cli("choose", str(bad))
    assert proc.returncode == 2
    assert "Traceback" not in proc.stdout + proc.stderr
    assert proc.stderr.strip().splitlines() == [proc.stderr.strip()]
    assert str(bad) in proc.stderr and "load" in proc.stderr


def test_the_process_leaves_with_its_output_whole_and_its_status():
    """The console entry point skips Python's teardown (`cli._leave`): the
    answer must still reach a file or pipe whole, with the command's status;
    a reader that stops early gets no traceback."""
    import os
    import subprocess
    import sys

    from conftest import ROOT

    example = str(EXAMPLES / "kettlewick-power.toml")
    whole = run_cli("choose", example, "--format", "json")
    assert whole.returncode == 0
    assert json.loads(whole.stdout) == json.loads(invoke("choose", example, "--format", "json").stdout)
    assert run_cli("choose", str(EXAMPLES / "no-such-file.toml")).returncode == 2
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    reader = subprocess.Popen([sys.executable, "-m", "picker", "choose", example, "--format", "json"],
                              stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=env)
    assert reader.stdout.read(64)  # the first bytes, then stop reading
    reader.stdout.close()
    stderr = reader.stderr.read().decode()
    assert reader.wait(timeout=60) in (0, 1)
    assert "Traceback" not in stderr and "Exception ignored" not in stderr
