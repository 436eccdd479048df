"""`picker curve` and picker/plot.py: the curves are the engine's figures.

What is checked against what:
- every plotted drop, read back from the matplotlib figure object, against the
  engine (`evaluate_role`, nothing replaced but supply.min) at that supply:
  equal to the last bit, in mV (x 1000);
- the datasheet points marked on the fit chart against the catalogue cells;
  with two points the least-squares line goes through both (models/README.md §1), so
  the fitted curve at a datasheet drive equals the datasheet value;
- the PNG's size from its IHDR chunk (PNG specification, ISO/IEC 15948: the
  8-byte signature, then IHDR with width and height as 4-byte big-endian
  integers at bytes 16-23) against FIGURE_SIZE_IN x FIGURE_DPI;
- files are written only with --force over an existing one; without
  matplotlib one line and exit 2.
"""

from __future__ import annotations

import dataclasses
import json
import struct
import sys

import numpy as np
import pytest

import importlib.util
import os

from conftest import EXAMPLES, invoke, run_cli, sha256
from picker.engine import headroom
from picker.present import plot
from picker.catalog.load import load_catalog
from picker.engine.evaluate import evaluate_role
from picker.design.requirements import load_requirements

# PNG and SVG need the optional extra (pip install "picker[plot]"); CI installs
# it, so there a missing matplotlib fails instead of skipping.
needs_matplotlib = pytest.mark.skipif(
    importlib.util.find_spec("matplotlib") is None and os.environ.get("CI") != "true",
    reason='matplotlib not installed (pip install "picker[plot]")')

POWER = str(EXAMPLES / "kettlewick-power.toml")
FINALISTS = ["VTQ24P15-3", "AGXP219-23", "BWF418P-A"]


@pytest.fixture(scope="module")
def demo():
    df = load_catalog(None).df
    req = load_requirements(POWER)
    return df, req


def _parts(df, names):
    from picker.present.lineup import find_parts

    return find_parts(df, names)


def _engine_at(df, role, req, v):
    trial = dataclasses.replace(req, supply=dataclasses.replace(req.supply, min_V=float(v)))
    return evaluate_role(df, role, trial).table.set_index("part")


@needs_matplotlib
def test_plotted_drop_equals_the_engine(demo):
    """Read the lines back from the Figure: for every 10th supply of the grid,
    y (mV) / 1000 equals the engine's drop_cold_V / drop_hot_V at that supply."""
    df, req = demo
    role = req.role("cell-switch")
    parts = _parts(df, FINALISTS)
    lowest = headroom.lowest_supply(parts, role, req)
    charts = [plot.supply_chart(parts, role, req, lowest)]
    fig = plot.figure(charts)
    ax = fig.axes[0]
    lines = {line.get_label(): line for line in ax.get_lines()}
    assert ax.get_xlabel() == "supply (V)" and ax.get_ylabel() == "drop (mV)"
    legend = [t.get_text() for t in ax.get_legend().get_texts()]
    assert "limit 60 mV" in legend
    checked = 0
    for name in FINALISTS:
        for corner, t in (("cold", "-20"), ("hot", "45")):
            label = next(k for k in lines if k.startswith(f"{name} {corner} {t} °C"))
            assert label in legend
            x, y = lines[label].get_xdata(), lines[label].get_ydata()
            for i in range(0, len(x), 10):
                table = _engine_at(df, role, req, x[i])
                expected = table.loc[name, f"drop_{corner}_V"]
                if np.isnan(expected):
                    assert np.isnan(y[i])
                else:
                    assert y[i] == expected * 1000.0
                    checked += 1
    assert checked > 80
    limit = [line for line in ax.get_lines() if line.get_label() == "limit 60 mV"][0]
    assert list(limit.get_ydata()) == [60.0, 60.0]


def test_grid_spans_the_cell_and_beyond(demo):
    """From below supply.min (3.0 V) to above supply.max (4.2 V), and down past
    the lowest working supply found at either corner."""
    df, req = demo
    role = req.role("cell-switch")
    parts = _parts(df, FINALISTS)
    lowest = headroom.lowest_supply(parts, role, req)
    grid = plot.supply_grid(req, lowest)
    assert grid[0] < 3.0 and grid[-1] > 4.2
    assert grid[0] < lowest[["lowest_supply_cold_V", "lowest_supply_hot_V"]].min().min()


@needs_matplotlib
def test_fit_chart_marks_the_datasheet_points(demo):
    """The markers are the catalogue's own Rds(on) cells (mΩ at their drive);
    for AGXP219-23 the fitted curve passes close to them (least squares of
    four points, models/README.md §1: within 3 % here)."""
    df, req = demo
    role = req.role("cell-switch")
    parts = _parts(df, FINALISTS)
    chart = plot.fit_chart(parts, role, req)
    fig = plot.figure([chart])
    ax = fig.axes[0]
    assert ax.get_xlabel() == "gate drive |Vgs| (V)" and ax.get_ylabel() == "Rds(on) (mΩ)"
    lines = {line.get_label(): line for line in ax.get_lines()}
    row = df[df["part"] == "AGXP219-23"].iloc[0]
    points = lines["AGXP219-23 datasheet max at 25 °C"]
    expected = {v: row[f"rds_on_mohm@{v:g}V"] for v in (1.5, 1.8, 2.5, 4.5)}
    assert dict(zip(points.get_xdata(), points.get_ydata())) == expected
    fit = next(line for k, line in lines.items() if k.startswith("AGXP219-23 fit"))
    for v, r in expected.items():
        assert np.interp(v, fit.get_xdata(), fit.get_ydata()) == pytest.approx(r, rel=0.03)


@needs_matplotlib
def test_png_written_with_the_expected_size(tmp_path):
    """PNG signature and IHDR (ISO/IEC 15948): 900 x 1000 pixels for a
    9 x 10 inch figure at 100 dpi."""
    out = tmp_path / "cell.png"
    result = invoke("curve", "--requirements", POWER, "--role", "cell-switch", "--png", str(out))
    assert result.exit_code == 0, result.output
    data = out.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n" and data[12:16] == b"IHDR"
    width, height = struct.unpack(">II", data[16:24])
    assert (width, height) == (plot.FIGURE_SIZE_IN[0] * plot.FIGURE_DPI,
                               plot.FIGURE_SIZE_IN[1] * plot.FIGURE_DPI) == (900, 1000)
    assert f"wrote {out}" in result.stderr


@needs_matplotlib
def test_svg_and_refusing_to_overwrite(tmp_path):
    out = tmp_path / "latch.svg"
    first = invoke("curve", "-R", POWER, "-r", "latch", "--svg", str(out))
    assert first.exit_code == 0, first.output
    assert b"<svg" in out.read_bytes()[:500]
    before = sha256(out)
    again = invoke("curve", "-R", POWER, "-r", "latch", "--svg", str(out))
    assert again.exit_code == 2
    assert again.stderr.strip() == f"Error: {out}: the file exists; choose another name or pass --force"
    assert sha256(out) == before
    forced = invoke("curve", "-R", POWER, "-r", "latch", "--svg", str(out), "--force")
    assert forced.exit_code == 0
    assert not (tmp_path / "latch.svg.bak").exists()


def test_without_matplotlib_one_line_and_exit_2(tmp_path, monkeypatch):
    monkeypatch.setitem(sys.modules, "matplotlib", None)  # import matplotlib -> ImportError
    out = tmp_path / "x.png"
    result = invoke("curve", "-R", POWER, "-r", "cell-switch", "--png", str(out))
    assert result.exit_code == 2
    assert result.stderr.strip() == "install picker[plot] for PNG/SVG output (pip install 'picker[plot]')"
    assert not out.exists()


def test_terminal_chart_has_axes_limit_and_legend():
    result = invoke("curve", "-R", POWER, "-r", "cell-switch")
    assert result.exit_code == 0, result.output
    out = result.stdout
    for text in ("drop (mV)", "supply (V)", "limit 60 mV", "cell empty 3 V; cell full 4.2 V",
                 "● AGXP219-23 cold -20 °C (2.167 V)", "○ AGXP219-23 hot 45 °C (2.612 V)",
                 "gate drive |Vgs| (V)", "Rds(on) (mΩ)", "AGXP219-23 datasheet max at 25 °C",
                 "AGXP219-23: meets 60 mV down to 2.612 V at 45 °C", "body diode"):
        assert text in out, text
    assert "┄" in out and "\x1b[" not in out


def test_json_curves_equal_the_engine(demo):
    """The JSON series are the plotted values: spot-check them against the engine."""
    df, req = demo
    role = req.role("sensor-feed")
    result = invoke("curve", "-R", POWER, "-r", "sensor-feed", "AGJ511-23", "QLB-4P60K",
                    "-f", "json")
    assert result.exit_code == 0, result.output
    doc = json.loads(result.stdout)
    assert doc["parts"] == ["AGJ511-23", "QLB-4P60K"]
    supply = doc["charts"][0]
    assert supply["y_label"] == "Ib·hFE / Ic (ratio)" and supply["limits"][0]["y"] == 2.0
    cold = next(s for s in supply["series"] if s["part"] == "QLB-4P60K" and s["corner"] == "cold")
    for i in (0, 40, 80, 160):
        table = _engine_at(df, role, req, cold["x"][i])
        assert cold["y"][i] == table.loc["QLB-4P60K", "overdrive"]
    gain = doc["charts"][1]
    assert gain["x_label"] == "collector current (mA)"
    low = doc["lowest_supply"]["QLB-4P60K"]
    assert low["status"] == "found" and low["corner"] == "cold"


def test_default_parts_are_the_top_feasible(demo):
    df, req = demo
    role = req.role("cell-switch")
    top = evaluate_role(df, role, req).feasible["part"].head(2).tolist()
    result = invoke("curve", "-R", POWER, "-r", "cell-switch", "--top", "2", "-f", "json")
    assert json.loads(result.stdout)["parts"] == top


@pytest.mark.parametrize("args, fragment", [
    (["-r", "cell-switch"], "curve needs --requirements"),
    (["-R", POWER], "the requirements have 6 roles"),
    (["-R", POWER, "-r", "cell-swich"], "did you mean 'cell-switch'?"),
    (["-R", POWER, "-r", "cell-switch", "HLP6125"], "did you mean HLP6125-T"),
    (["-R", POWER, "-r", "cell-switch", "QLB-4N60K"], "is an npn"),
])
def test_bad_input_is_one_line_and_exit_2(args, fragment):
    result = invoke("curve", *args)
    assert result.exit_code == 2
    errors = [line for line in result.stderr.splitlines() if line.startswith("Error:")]
    assert len(errors) == 1 and fragment in errors[0], result.stderr


@needs_matplotlib
def test_as_a_user_runs_it(tmp_path):
    """A subprocess, as a user runs it: no traceback; and `picker --help` pays
    for neither pandas nor matplotlib."""
    out = tmp_path / "c.png"
    run = run_cli("curve", "-R", POWER, "-r", "night-light", "--png", str(out))
    assert run.returncode == 0 and "Traceback" not in run.stderr and out.exists()
    code = ("import sys; from picker.cli import app\n"
            "try:\n    app(['--help'])\nexcept SystemExit:\n    pass\n"
            "print(sorted({'pandas', 'matplotlib', 'numpy'} & set(sys.modules)))")
    import subprocess

    from conftest import ROOT

    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          env={"PYTHONPATH": str(ROOT), "PATH": "/usr/bin:/bin"}, timeout=60)
    assert done.stdout.strip().splitlines()[-1] == "[]", done.stdout + done.stderr


def test_nice_ticks():
    """Steps of 1, 2, 2.5 or 5 times a power of ten (common practice for axes)."""
    assert plot.nice_ticks(0, 90, 4) == [0, 25, 50, 75]
    assert plot.nice_ticks(2.3, 4.32, 6) == [2.5, 3.0, 3.5, 4.0]


def test_curves_stop_where_the_figures_stop():
    """The hand warmer's heater, driven at 1.8 V from a pin (invented demo):
    QLM-2N12X runs away thermally there, so its supply curve has no point at
    all; AGXN233-23 is rated down to 2.5 V with a 1.0 V threshold, so its fit
    line stops below the depth limit (2.5 + 1.0)/2 = 1.75 V at 25 °C and is
    drawn above it (picker/models/README.md §1, §3)."""
    warmer = str(EXAMPLES / "kettlewick-warmer.toml")
    result = invoke("curve", "-R", warmer, "-r", "heater", "QLM-2N12X", "AGXN233-23", "-f", "json")
    assert result.exit_code == 0, result.output
    doc = json.loads(result.stdout)
    supply, fit = doc["charts"]
    runaway = [s for s in supply["series"] if s["part"] == "QLM-2N12X"]
    assert runaway and all(y is None for s in runaway for y in s["y"])
    line = next(s for s in fit["series"] if s["part"] == "AGXN233-23" and s["style"] == "fit")
    below = [y for x, y in zip(line["x"], line["y"]) if x < 1.75]
    above = [y for x, y in zip(line["x"], line["y"]) if x > 1.76]
    assert below and all(y is None for y in below)
    assert above and all(y is not None for y in above)
