"""`picker lineup`: finalists side by side, every figure the engine's.

What is checked against what:
- the JSON's figures, checks, notes and price against `picker choose`'s JSON
  for the same parts (the engine, models/README.md §5-§8): they must be equal, not
  close;
- each corner's drop against the engine's own drop_cold_V / drop_hot_V;
- the lowest working supply against the engine's pass/fail 1 mV either side
  (the closed forms are in tests/test_headroom.py);
- the emphasis of the best value against the smallest catalogue value, read
  from the demo catalogue by hand (invented demo data: this checks the wiring,
  not the physics);
- the progress bar: shown on a terminal for large work, nothing on a pipe.
"""

from __future__ import annotations

import csv
import dataclasses
import io
import json
import re

import pytest

from conftest import EXAMPLES, invoke, run_cli
from picker.engine import headroom
from picker.catalog.load import load_catalog
from picker.engine.evaluate import FAIL, PASS, evaluate_role
from picker.present.lineup import build_lineup, report
from picker.design.requirements import load_requirements

POWER = str(EXAMPLES / "kettlewick-power.toml")
FINALISTS = ["VTQ24P15-3", "AGXP219-23", "BWF418P-A"]


def _json(*args):
    result = invoke(*args)
    assert result.exit_code == 0, result.output
    return json.loads(result.stdout)


def test_json_equals_the_engine_for_the_same_parts():
    """Each part's candidate in lineup's JSON is exactly the candidate `choose`
    writes for it: figures, checks, notes, feasible, unit price, cost."""
    lineup = _json("lineup", *FINALISTS, "AGXP305-23", "--requirements", POWER,
                   "--role", "cell-switch", "--format", "json")
    choose = _json("choose", POWER, "--role", "cell-switch", "--format", "json")
    by_part = {c["part"]: c for c in choose["roles"][0]["candidates"]}
    assert [p["part"] for p in lineup["parts"]] == FINALISTS + ["AGXP305-23"]
    for rank, part in enumerate(lineup["parts"], start=1):
        engine = by_part[part["part"]]
        for key in ("maker", "package", "feasible", "unit_price", "cost", "figures", "checks",
                    "notes"):
            assert part[key] == engine[key], (part["part"], key)
        order = [c["part"] for c in choose["roles"][0]["candidates"]]
        assert part["rank"] == order.index(part["part"]) + 1
    # AGXP305-23 is rejected by the engine on gate drive: lineup says why.
    rejected = lineup["parts"][3]
    assert rejected["feasible"] is False and rejected["checks"]["gate_drive"] == "fail"
    # 2.5 V + 0.3 %·2.5 V/°C · 45 °C + 0.1 V = 2.9375 V (picker/models/README.md §2, §6)
    assert any(w.startswith("gate drive 2.7 V < 2.94 V") for w in rejected["why"])


def test_corner_figures_are_the_engines_per_corner_figures():
    """The engine computes the drop at each corner itself (drop_cold_V,
    drop_hot_V, models/README.md §5); lineup's per-corner rows must equal them."""
    doc = _json("lineup", *FINALISTS, "-R", POWER, "-r", "cell-switch", "-f", "json")
    df = load_catalog(None).df
    req = load_requirements(POWER)
    table = evaluate_role(df, req.role("cell-switch"), req).table.set_index("part")
    for part in doc["parts"]:
        for corner in ("cold", "hot"):
            assert part["corners"][corner]["drop_V"] == table.loc[part["part"], f"drop_{corner}_V"]
        assert part["corners"]["hot"]["ambient_C"] == 45.0
        assert part["corners"]["cold"]["ambient_C"] == -20.0


def test_lowest_supply_in_lineup_holds_either_side():
    """The lowest working supply lineup reports: the engine passes gate drive,
    drop and Tj 1 mV above it, and not 1 mV below (models/README.md §5-§6)."""
    doc = _json("lineup", *FINALISTS, "-R", POWER, "-r", "cell-switch", "-f", "json")
    df = load_catalog(None).df
    req = load_requirements(POWER)
    role = req.role("cell-switch")
    for part in doc["parts"]:
        low = part["lowest_supply"]
        assert low["status"] == "found" and low["limit"] == "drop"
        assert low["V"] == max(low["cold"]["V"], low["hot"]["V"])
        one = df[df["part"] == part["part"]]
        for dv, ok in ((1e-3, True), (-1e-3, False)):
            trial = dataclasses.replace(req, supply=dataclasses.replace(req.supply,
                                                                        min_V=low["V"] + dv))
            row = evaluate_role(one, role, trial).table.iloc[0]
            works = (row["check_gate_drive"] == PASS and row["check_drop"] == PASS
                     and row["check_tj"] != FAIL)
            assert works == ok


def test_table_shows_best_values_in_bold():
    """Demo catalogue, by hand: Rds(on) max at 4.5 V is 34, 31 and 30 mΩ for
    the three finalists, so BWF418P-A's is the best; Vds max is 20 V for all
    three, so nothing is emphasised in that row; the lowest cost per board is
    VTQ24P15-3's 0.044. Bold is rich's bold (SGR 1, ECMA-48), nothing else."""
    df = load_catalog(None).df
    req = load_requirements(POWER)
    lineup = build_lineup(df, FINALISTS, req, req.role("cell-switch"))
    rep = report(lineup)
    section = rep.sections[0]
    labels = [r["label"] for r in section.rows]

    def bold_in(label):
        i = labels.index(label)
        return sorted(key for (row, key) in section.bold if row == i)

    assert bold_in("Rds(on) max @ 4.5 V") == ["p2"]
    assert bold_in("Vds max") == []
    assert bold_in("cost per board") == ["p0"]
    assert bold_in("lowest supply, worse corner") == ["p2"]  # 2.424 V, the lowest

    class Terminal(io.StringIO):
        def isatty(self):
            return True

    from picker.present.render import render

    out = Terminal()
    render(rep, "table", out, width=200)
    text = out.getvalue()
    assert re.search(r"\x1b\[1m *30 mΩ\x1b\[0m", text)  # bold, padded to the column
    assert not re.search(r"\x1b\[1m *34 mΩ", text)


def test_table_output_rows_and_verdict():
    result = invoke("lineup", *FINALISTS, "AGXP305-23", "-R", POWER, "-r", "cell-switch")
    assert result.exit_code == 0, result.output
    out = result.stdout
    for text in ("Rds(on) max @ 4.5 V", "drop, cold (-20 °C)", "drop, hot (45 °C)",
                 "lowest supply, hot (45 °C)", "verdict", "REJECTED (1 failing)",
                 "REJECTED (2 failing)",
                 "VTQ24P15-3: meets 60 mV only from 3.045 V up at 45 °C, above the 3 V of an "
                 "empty cell",
                 "AGXP219-23: meets 60 mV down to 2.612 V at 45 °C",
                 "body diode"):
        assert text in out, text
    assert "FAIL" in out  # the failing check of AGXP305-23
    assert "\x1b[" not in out  # no escape codes on a pipe


def test_switch_role_and_fixed_drive():
    """npn latch: base overdrive rows and the lowest supply it saturates at;
    gauge LEDs: a base driven from a 1.8 V pin, so the figure is 'any'."""
    doc = _json("lineup", "QLB-4N60K", "HLG614B-T", "-R", POWER, "-r", "latch", "-f", "json")
    assert {p["lowest_supply"]["limit"] for p in doc["parts"]} == {"saturation"}
    assert doc["best"]["overdrive.cold"] == ["QLB-4N60K"]  # 5.84 against 5.81 (choose's table)
    fixed = _json("lineup", "QLB-4N60K", "-R", POWER, "-r", "gauge-leds", "-f", "json")
    assert fixed["parts"][0]["lowest_supply"]["status"] == "any"
    assert fixed["parts"][0]["lowest_supply"]["V"] is None


def test_csv_has_one_column_per_part():
    result = invoke("lineup", *FINALISTS, "-R", POWER, "-r", "cell-switch", "-f", "csv")
    assert result.exit_code == 0
    rows = list(csv.DictReader(io.StringIO(result.stdout)))
    assert list(rows[0]) == ["row", "label", "unit"] + FINALISTS
    by_key = {r["row"]: r for r in rows}
    assert by_key["rds_on_mohm@4.5V"]["BWF418P-A"] == "30"
    assert by_key["rds_on_mohm@4.5V"]["unit"] == "mohm"
    assert by_key["lowest_supply_status"]["VTQ24P15-3"] == "found"
    df = load_catalog(None).df
    req = load_requirements(POWER)
    table = evaluate_role(df, req.role("cell-switch"), req).table.set_index("part")
    assert float(by_key["drop_V.hot"]["VTQ24P15-3"]) == pytest.approx(
        table.loc["VTQ24P15-3", "drop_hot_V"], rel=1e-12)


def test_without_requirements_datasheet_only_and_mixed_kinds():
    result = invoke("lineup", "VTQ24P15-3", "QLB-4N60K", "-f", "json")
    assert result.exit_code == 0, result.output
    doc = json.loads(result.stdout)
    assert doc["role"] is None
    assert doc["parts"][0]["datasheet"]["rds_on_mohm@4.5V"] == 34.0
    assert doc["parts"][1]["datasheet"]["hfe_min@1mA"] is not None
    assert "figures" not in doc["parts"][0]


@pytest.mark.parametrize("args, fragment", [
    (["VTQ24P15", "-R", POWER, "-r", "cell-switch"],
     "no part 'VTQ24P15' in the catalogue; did you mean VTQ24P15-3"),
    (["VTQ24P15-3", "-R", POWER, "-r", "cel-switch"], "did you mean 'cell-switch'?"),
    (["VTQ24P15-3", "-R", POWER], "the requirements have 6 roles; say which with --role"),
    (["VTQ24P15-3", "QLB-4N60K", "-R", POWER, "-r", "cell-switch"],
     "part 'QLB-4N60K' is an npn; role 'cell-switch' (high-side-pmos) takes pmos parts"),
    (["VTQ24P15-3", "-r", "cell-switch"], "--role needs --requirements"),
])
def test_bad_input_is_one_line_and_exit_2(args, fragment):
    result = invoke("lineup", *args)
    assert result.exit_code == 2
    errors = [line for line in result.stderr.splitlines() if line.startswith("Error:")]
    assert len(errors) == 1 and fragment in errors[0], result.stderr
    assert "Traceback" not in result.output


def test_as_a_user_runs_it_no_traceback():
    ok = run_cli("lineup", *FINALISTS, "--requirements", POWER, "--role", "cell-switch")
    assert ok.returncode == 0 and "Traceback" not in ok.stderr and "verdict" in ok.stdout
    bad = run_cli("lineup", "NOPE-1", "--requirements", POWER, "--role", "cell-switch")
    assert bad.returncode == 2 and "Traceback" not in bad.stderr
    assert bad.stderr.strip().splitlines()[-1].startswith("Error: no part 'NOPE-1'")


# -- progress (picker/cli/common.py) ---------------------------------------------

class _Tty(io.StringIO):
    def isatty(self):
        return True


def test_progress_bar_on_a_terminal_for_large_work_only():
    from picker.cli.common import LARGE_BOM_LINES, LARGE_CATALOGUE_ROWS, is_large, progress

    assert not is_large(rows=LARGE_CATALOGUE_ROWS) and is_large(rows=LARGE_CATALOGUE_ROWS + 1)
    assert is_large(bom_lines=LARGE_BOM_LINES + 1) and not is_large(bom_lines=10)
    tty = _Tty()
    with progress("solving the lowest supply", total=3, show=True, stream=tty) as advance:
        for _ in range(3):
            advance()
    assert "solving the lowest supply" in tty.getvalue()
    for stream, show in ((io.StringIO(), True), (_Tty(), False)):  # a pipe; small work
        with progress("quiet", total=3, show=show, stream=stream) as advance:
            advance()
        assert stream.getvalue() == ""


def test_commands_print_no_progress_on_a_pipe():
    result = invoke("lineup", *FINALISTS, "-R", POWER, "-r", "cell-switch", "-f", "json")
    lines = result.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("catalogue: ")
    assert "━" not in result.stderr and "\r" not in result.stderr


def test_choose_table_shows_the_lowest_supply():
    """The `lowest supply` column of choose: AGXP219-23 at 2.612 V, set by the
    hot corner (the same figure as lineup's and headroom's)."""
    result = invoke("choose", POWER, "--role", "cell-switch")
    assert result.exit_code == 0
    line = next(line for line in result.stdout.splitlines() if "AGXP219-23 " in line)
    assert "2.612 V hot" in line
    df = load_catalog(None).df
    req = load_requirements(POWER)
    role = req.role("cell-switch")
    low = headroom.lowest_supply(df[df["part"] == "AGXP219-23"], role, req).iloc[0]
    assert headroom.short(low) == "2.612 V"
