"""Shared fixtures: a tiny inline catalogue, the demo files, a CLI runner."""

from __future__ import annotations

import hashlib
import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "catalog" / "demo.csv"
EXAMPLES = ROOT / "catalog" / "examples"

# A tiny catalogue (invented parts) for tests that need exact, small data.
TINY_CSV = """\
part,maker,kind,package,status,preferred,vds_max_V,vgs_max_V,id_max_A,vgs_th_min_V,vgs_th_max_V,rds_on_mohm@4.5V,rds_on_mohm@2.5V,idss_uA,rth_ja_C/W,tj_max_C,vceo_max_V,ic_max_A,hfe_min@1mA,hfe_min@10mA,vce_sat_mV@10mA,icbo_nA,price@1,price@1000,notes
TQP-100,Testa Parts,pmos,SOT-23,active,yes,-20,-8,-3,-0.4,-1.0,40,60,1,300,150,,,,,,,0.20,0.050,
TQP-200,Testa Parts,pmos,SOT-23,active,no,20,8,2,0.5,1.2,55,80,0.5,350,150,,,,,,,0.15,0.040,
TQN-300,Testa Parts,nmos,SOT-23,nrnd,no,20,8,3,0.4,0.9,30,42,1,300,150,,,,,,,0.12,0.030,
TQB-400,Testa Parts,npn,SOT-23,active,yes,,,,,,,,,400,150,40,0.2,100,150,60,10,0.05,0.010,
"""


@pytest.fixture
def tiny_catalog(tmp_path: Path) -> Path:
    path = tmp_path / "tiny.csv"
    path.write_text(TINY_CSV, encoding="utf-8")
    return path


def sha256(path: Path) -> str:
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()


def run_cli(*args: str, env: dict | None = None, input: str | None = None,
            timeout: float = 120) -> subprocess.CompletedProcess:
    """Run `python -m picker ARGS` as a user would, from the repository."""
    environment = dict(os.environ, PYTHONPATH=str(ROOT), COLUMNS="200")
    environment.pop("PICKER_CATALOG", None)
    environment.update(env or {})
    return subprocess.run([sys.executable, "-m", "picker", *args], capture_output=True,
                          text=True, env=environment, input=input, timeout=timeout)


def invoke(*args: str, env: dict | None = None):
    """Run the CLI in-process (fast), returning typer's Result."""
    from typer.testing import CliRunner

    from picker.cli import app

    environment = {"PICKER_CATALOG": "", "COLUMNS": "200", **(env or {})}
    return CliRunner().invoke(app, list(args), env=environment)
