"""`picker catalog check` and `picker catalog show` as a user runs them."""

import csv
import io
import json

import pandas as pd
import pytest

from conftest import DEMO, ROOT, TINY_CSV, invoke, run_cli, sha256
from picker.catalog.load import load_catalog


def test_demo_catalogue_checks_clean():
    result = invoke("catalog", "check", str(DEMO))
    assert result.exit_code == 0, result.output
    assert f"{DEMO}: no errors; " in result.stdout
    assert "0 errors" in result.stderr


def test_check_reports_each_problem_and_exits_2(tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text(TINY_CSV.replace("TQN-300,Testa Parts,nmos", "TQN-300,Testa Parts,triac"))
    result = invoke("catalog", "check", str(bad))
    assert result.exit_code == 2
    assert f"{bad}:4:3: error: unknown kind 'triac'; expected pmos, nmos, npn or pnp" in result.stdout


def test_check_as_json_lists_problems(tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text(TINY_CSV.replace(",0.5,1.2,55,80,", ",1.5,1.2,55,80,"))
    result = invoke("catalog", "check", str(bad), "--format", "json")
    assert result.exit_code == 2
    problems = json.loads(result.stdout)
    assert problems == [{"file": str(bad), "line": 3, "column": 10, "column_name": "vgs_th_min_V",
                         "severity": "error",
                         "message": "vgs_th_min_V 1.5 V is above vgs_th_max_V 1.2 V; swap or correct them"}]


def test_a_point_at_the_threshold_is_a_warning_and_the_part_stays(tmp_path):
    """TQP-200's threshold raised to 2.5 V puts its 2.5 V point at the
    threshold: `catalog check` lists a warning at line 3, column 13 (the
    rds_on_mohm@2.5V cell), exits 0, and the part is still evaluated from its
    4.5 V point (picker/models/README.md §1): R_fix = 0, K = 0.055·(4.5 -
    2.5) = 0.11 Ω·V, so at 4.5 V drive its small-current figure is 55 mΩ."""
    path = tmp_path / "edge.csv"
    path.write_text(TINY_CSV.replace(",0.5,1.2,55,80,", ",0.5,2.5,55,80,"))
    result = invoke("catalog", "check", str(path))
    assert result.exit_code == 0, result.output
    assert (f"{path}:3:13: warning: on-resistance given at 2.5 V gate drive, at or below "
            "vgs_th_max_V 2.5 V") in result.stdout
    catalog = load_catalog(path, source="test")
    assert "TQP-200" in set(catalog.df["part"])
    from picker.engine.parts import PartData

    fit = PartData(catalog.df[catalog.df["part"] == "TQP-200"]).fit()
    assert fit.n_points[0] == 1 and fit.left_out[0] == 1
    assert fit.k_ohm_V[0] == pytest.approx(0.11, rel=1e-12) and fit.r_fix_ohm[0] == 0.0


def test_other_commands_leave_bad_rows_out_and_say_so(tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text(TINY_CSV.replace("TQN-300,Testa Parts,nmos", "TQN-300,Testa Parts,triac"))
    result = invoke("catalog", "show", "--catalog", str(bad), "--format", "csv")
    assert result.exit_code == 0
    assert f"1 catalogue row left out for errors; run `picker catalog check {bad}`" in result.stderr
    assert "TQN-300" not in result.stdout
    strict = invoke("catalog", "show", "--catalog", str(bad), "--strict")
    assert strict.exit_code == 2 and "unknown kind 'triac'" in strict.stderr


def test_show_filters_and_formats(tiny_catalog):
    table = invoke("catalog", "show", "--catalog", str(tiny_catalog), "--kind", "pmos")
    assert table.exit_code == 0
    assert "TQP-100" in table.stdout and "TQB-400" not in table.stdout
    assert "2 of 4 parts" in table.stdout
    rows = list(csv.DictReader(io.StringIO(invoke(
        "catalog", "show", "--catalog", str(tiny_catalog), "--package", "sot-23", "--text", "TQB",
        "--format", "csv").stdout)))
    assert [r["part"] for r in rows] == ["TQB-400"]
    assert rows[0]["hfe_min@10mA"] == "150" and rows[0]["preferred"] == "yes"
    parts = json.loads(invoke("catalog", "show", "TQP-100", "--catalog", str(tiny_catalog),
                              "--format", "json").stdout)
    assert parts[0]["part"] == "TQP-100" and parts[0]["vds_max_V"] == 20.0
    assert parts[0]["idss_uA"] == 1.0 and parts[0]["hfe_min@1mA"] is None  # blank -> null


def test_unknown_part_answers_with_the_closest_names(tiny_catalog):
    result = invoke("catalog", "show", "TQP-1O0", "--catalog", str(tiny_catalog))
    assert result.exit_code == 2
    assert "no part 'TQP-1O0' in the catalogue; closest: TQP-100" in result.stderr


def test_show_csv_round_trips_to_the_same_dataframe(tmp_path):
    out = tmp_path / "again.csv"
    out.write_text(invoke("catalog", "show", "--catalog", str(DEMO), "--format", "csv").stdout)
    first = load_catalog(DEMO, source="test").df.reset_index(drop=True)
    again = load_catalog(out, source="test").df.reset_index(drop=True)
    pd.testing.assert_frame_equal(first, again)


def test_which_catalogue_is_used(tiny_catalog, monkeypatch):
    bundled = invoke("catalog", "show", "--format", "csv")
    assert "(bundled demo, " in bundled.stderr
    env = invoke("catalog", "show", "--format", "csv", env={"PICKER_CATALOG": str(tiny_catalog)})
    assert f"catalogue: {tiny_catalog} (PICKER_CATALOG, 4 parts)" in env.stderr
    option = invoke("catalog", "show", "--catalog", str(tiny_catalog), "--format", "csv")
    assert f"catalogue: {tiny_catalog} (--catalog, 4 parts)" in option.stderr


@pytest.mark.parametrize("args,fragment", [
    (["catalog", "check", "missing.csv"], "missing.csv: no such catalogue file; check the path"),
    (["catalog", "show", "--catalog", "missing.csv"], "no such catalogue file"),
    (["catalog", "show", "--kind", "triode"], "unknown kind 'triode'"),
])
def test_bad_input_is_one_line_and_exit_2(args, fragment):
    result = run_cli(*args)
    assert result.returncode == 2
    assert fragment in result.stderr
    assert "Traceback" not in result.stderr + result.stdout
    errors = [line for line in result.stderr.splitlines() if not line.startswith("catalogue: ")]
    assert len(errors) == 1 and errors[0].startswith("Error: ")


def test_input_files_are_never_modified(tiny_catalog):
    before = sha256(tiny_catalog)
    for args in (["catalog", "check", str(tiny_catalog)],
                 ["catalog", "show", "--catalog", str(tiny_catalog), "--format", "csv"]):
        invoke(*args)
    assert sha256(tiny_catalog) == before


def test_every_command_has_help_text():
    import typer.main

    from picker.cli import app

    def walk(command, path=()):
        yield path, command
        for name, sub in getattr(command, "commands", {}).items():
            yield from walk(sub, path + (name,))

    for path, command in walk(typer.main.get_command(app)):
        assert (command.help or "").strip(), f"picker {' '.join(path)} has no help text"


def test_quick_top_level_help_is_the_full_help():
    """`picker --help` is built from a copy of the commands without their
    options (`cli._listing`: typer is quicker to build that); it must print
    exactly what the full command tree prints, and the console entry point
    must take that path for both spellings."""
    from typer.testing import CliRunner

    from picker.cli import _listing, app

    full = CliRunner().invoke(app, ["--help"], env={"COLUMNS": "200"})
    quick = CliRunner().invoke(_listing(app), ["--help"], env={"COLUMNS": "200"})
    assert full.exit_code == quick.exit_code == 0
    assert quick.output == full.output
    long, short = run_cli("--help"), run_cli("-h")
    assert long.returncode == short.returncode == 0 and long.stdout == short.stdout
    for name in ("choose", "lineup", "curve", "review", "catalog", "--no-cache"):
        assert name in long.stdout


def test_console_script_entry_point_is_declared():
    text = (ROOT / "pyproject.toml").read_text()
    assert 'picker = "picker.cli:main"' in text
