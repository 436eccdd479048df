"""The engine's figures against a general-purpose circuit simulator.

Source: ngspice 39 (Debian package), run as `ngspice -b deck.cir` through
subprocess, `.op` analysis, its level-1 (Shichman-Hodges) MOSFET. (The
bipolar switch is checked against a simulated device in
tests/test_bipolar_spice.py.) The simulator knows nothing of picker: the
decks are built from the engine's own result table for demo parts picked by
name (catalog/demo.csv: invented parts), at the corner the engine reports.

Temperature is put into the model parameters (threshold and on-resistance at
the junction temperature) and the simulator runs at its nominal temperature
(TEMP = TNOM = 27 °C), so it applies no temperature scaling of its own.

Without ngspice these tests are skipped locally; under CI=true (set by
.ci/run, which installs ngspice) a missing simulator fails them.
"""

from __future__ import annotations

import math
import os
import re
import shutil
import subprocess

import pytest

from conftest import DEMO, EXAMPLES
from picker.catalog.load import load_catalog, points, values
from picker.engine.evaluate import PASS, evaluate_role
from picker.models import mosfet
from picker.design.requirements import load_requirements

NGSPICE = shutil.which("ngspice")
needs_ngspice = pytest.mark.skipif(
    NGSPICE is None and os.environ.get("CI") != "true",
    reason="ngspice not installed (apt-get install ngspice); required under CI=true")

# Simulator accuracy: tight enough that its own convergence error (reltol of
# the node voltages) is far below the differences checked here.
SIM_OPTIONS = ".options reltol=1e-9 vntol=1e-12 abstol=1e-15"  # values printed to 12 digits
SIM_SLACK = 1e-4  # relative: the engine's iteration stops within 0.01 °C (see below)

_VALUE = re.compile(r"^\s*([\w().,#-]+)\s*=\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*$")


def run_deck(deck: str, tmp_path, name: str) -> dict[str, float]:
    """Run one deck through `ngspice -b`; return the `print`ed values by name.

    ngspice -b exits 1 on a deck whose analysis runs only from a .control block
    ("no simulations run" for the batch part), so the exit code is not used:
    the values must be in the output, else the test fails with the output."""
    if NGSPICE is None:
        pytest.fail("ngspice is required under CI=true but is not installed")
    path = tmp_path / f"{name}.cir"
    path.write_text(deck, encoding="ascii")
    proc = subprocess.run([NGSPICE, "-b", str(path)], capture_output=True, text=True, timeout=60,
                          cwd=tmp_path)
    found = {}
    for line in proc.stdout.splitlines():
        m = _VALUE.match(line)
        if m:
            found[m.group(1).lower()] = float(m.group(2))
    if not found:
        pytest.fail(f"ngspice gave no values for {name}:\n{proc.stdout}\n{proc.stderr}")
    return found


def demo_catalog():
    return load_catalog(DEMO, source="test").df


def lantern():
    return load_requirements(EXAMPLES / "kettlewick-power.toml")


# -- MOSFETs: level-1 triode against R = R_fix + K/(Vg - Vt) ---------------------------

MOSFET_CASES = [
    # (role in the lantern file, part): P-channel cell switch (1.2 A, gate 3.0 - 0.3 V)
    ("cell-switch", "HLP6125-T"),     # four points, hot leakage point
    ("cell-switch", "BWF431P-F"),     # lowest on-resistance
    ("cell-switch", "VTQ20P30-3"),    # one point only: R_fix = 0
    ("cell-switch", "VTQ12P06-6"),    # its own coefficients: 2.5 mV/°C, 0.4 %/°C
    ("cell-switch", "QLM-2P18X"),     # high on-resistance, hot junction (about 198 °C)
    ("cell-switch", "VTQ30P08-3"),    # 2.4 V threshold: the cold corner is the worse
    # N-channel night light (0.4 A, gate 1.8 V from a pin)
    ("night-light", "HLN6126-T"),
    ("night-light", "MWX5390D"),      # its own coefficients: 2.8 mV/°C, 0.45 %/°C
    ("night-light", "QLM-2N12X"),
]


def _mosfet_deck(kind: str, vgs_V: float, vt_V: float, kp: float, rd_ohm: float,
                 load_A: float, supply_V: float) -> str:
    """A level-1 deck: W = L = 1 so KP is the device's k; RD the fixed part.

    N-channel (low side): source at ground, gate at vgs, a current source
    pushing the load into the drain; the drop is v(d).
    P-channel (high side), a real PMOS netlist: source at the supply, gate
    pulled to supply - vgs, the load drawn out of the drain; the drop is
    v(s) - v(d). Bulk tied to source, so no body effect (GAMMA = 0 anyway)."""
    if kind == "nmos":
        return f"""nmos pass switch
VG g 0 DC {vgs_V:.12g}
IL 0 d DC {load_A:.12g}
M1 d g 0 0 SW L=1 W=1
.model SW NMOS(LEVEL=1 VTO={vt_V:.12g} KP={kp:.12g} RD={rd_ohm:.12g} LAMBDA=0)
{SIM_OPTIONS}
.control
set numdgt=12
op
print v(d)
.endc
.end
"""
    return f"""pmos pass switch
VS s 0 DC {supply_V:.12g}
VG g 0 DC {supply_V - vgs_V:.12g}
IL d 0 DC {load_A:.12g}
M1 d g s s SW L=1 W=1
.model SW PMOS(LEVEL=1 VTO={-vt_V:.12g} KP={kp:.12g} RD={rd_ohm:.12g} LAMBDA=0)
{SIM_OPTIONS}
.control
set numdgt=12
op
print v(s)
print v(d)
.endc
.end
"""


@needs_ngspice
@pytest.mark.parametrize("role_name, part", MOSFET_CASES, ids=[p for _, p in MOSFET_CASES])
def test_mosfet_drop_against_level1_simulation(tmp_path, role_name, part):
    """The engine's drop at its reported corner against ngspice's level-1 MOSFET.

    Operating point from the engine's table: vgs_V, the corner (cold/hot) and
    the drop there; the junction temperature at that corner from the energy
    balance the engine solved, Tj = Ta + load · drop · θJA (JEDEC JESD51).
    Fit from `picker.models.mosfet.fit_on_resistance` on the part's row.
    At Tj: Vt = vgs_th_max - k_vt (Tj - 25), m = 1 + a (Tj - 25),
    K' = K m, R_fix' = R_fix m; deck: VTO = Vt, KP = 1/K' (W = L = 1), RD = R_fix'.

    Why they differ, and by how much (Sedra & Smith, triode region):
    the level-1 triode current is I = KP (Vov - Vch/2) Vch with Vov = vgs - Vt,
    while our model drops the Vch/2 term: Vch0 = I K'/Vov. Solving the
    quadratic, Vch = Vov (1 - sqrt(1 - 2x)) with x = I K'/Vov² = Vch0/Vov, so
        Vch / Vch0 = 1 + x/2 + x²/2 + 5x³/8 + ...
    The simulator's drop is therefore larger, and relative to our whole drop
    D = I R_fix' + Vch0 (channel share f = Vch0/D) the excess is
        (sim - D)/D = f (x/2 + x²/2 + ...)  in  [f x/2, f x/2 (1 + 2x)]  for x < 0.1
    (the series after x/2 is below x·x/2·(1 + 1.5x) < x²).
    Checks, each widened by SIM_SLACK = 1e-4 relative (the engine's fixed-point
    iteration stops within 0.01 °C, which moves R by 0.01 · 0.5 %/°C = 5e-5
    and Vt by 0.03 mV, 2e-5 of a 1.5 V overdrive):
    - every case: the excess is the whole Vds/2 term, f (Vch/Vch0 - 1) with
      the exact quadratic root above;
    - where x < 0.1 (all but VTQ30P08-3): the excess lies in the first-order
      band [f x/2, f x/2 (1 + 2x)].
    The excess runs from about 0.1 % to 3 % where x < 0.1. VTQ30P08-3 at the
    cold corner has only 0.37 V of overdrive at 1.2 A (x = 0.46): there the
    simulator's drop is about 45 % above ours, all of it the Vds/2 term -
    our model is the small-Vds triode and says so; the part fails the 60 mV
    drop either way.
    """
    df = demo_catalog()
    req = lantern()
    role = req.role(role_name)
    result = evaluate_role(df, role, req)
    row = result.table[result.table["part"] == part].iloc[0]
    assert row["check_gate_drive"] == PASS, "pick a part the gate turns on"

    corner = row["corner"]
    ta_C = req.ambient.min_C if corner == "cold" else req.ambient.max_C
    ours_V = float(row[f"drop_{corner}_V"])
    load_A = role.load_A
    tj_C = ta_C + load_A * ours_V * float(row["rth_ja_C/W"])
    if corner == "hot":  # the hot corner's Tj is the one the table reports
        assert tj_C == pytest.approx(float(row["tj_C"]), abs=0.01)

    parts = df[df["part"] == part]
    drives_V, rds_mohm = points(parts, "rds_on_mohm")
    vt25_V = values(parts, "vgs_th_max_V")
    fit = mosfet.fit_on_resistance(drives_V, rds_mohm / 1000.0, vt25_V)
    k_vt = values(parts, "vgs_th_tc_mV/C")[0] / 1000.0
    k_vt = mosfet.K_VT_V_PER_C if math.isnan(k_vt) else k_vt
    a = values(parts, "rds_tc_pct/C")[0] / 100.0
    a = mosfet.RDS_TC_PER_C if math.isnan(a) else a
    vt_V = float(vt25_V[0]) - k_vt * (tj_C - 25.0)
    m = 1.0 + a * (tj_C - 25.0)
    k_ohm_V = float(fit.k_ohm_V[0]) * m
    r_fix_ohm = float(fit.r_fix_ohm[0]) * m
    vgs_V = float(row["vgs_V"])
    vov_V = vgs_V - vt_V

    deck = _mosfet_deck(role.kind, vgs_V, vt_V, 1.0 / k_ohm_V, r_fix_ohm, load_A, req.supply.min_V)
    sim = run_deck(deck, tmp_path, part)
    sim_V = sim["v(d)"] if role.kind == "nmos" else sim["v(s)"] - sim["v(d)"]

    vch0_V = load_A * k_ohm_V / vov_V
    x = vch0_V / vov_V
    f = vch0_V / ours_V
    assert vch0_V + load_A * r_fix_ohm == pytest.approx(ours_V, rel=SIM_SLACK)  # same model
    excess = (sim_V - ours_V) / ours_V
    said = (f"{part}: simulator {sim_V * 1e3:.4f} mV, ours {ours_V * 1e3:.4f} mV, "
            f"excess {excess:.5f} (x = {x:.4f}, f = {f:.3f})")
    vds2_term = f * ((1 - math.sqrt(1 - 2 * x)) / x - 1)
    assert excess == pytest.approx(vds2_term, abs=SIM_SLACK), said
    if x < 0.1:
        low, high = f * x / 2, f * x / 2 * (1 + 2 * x)
        assert low - SIM_SLACK <= excess <= high + SIM_SLACK, f"{said} outside [{low:.5f}, {high:.5f}]"
    else:
        assert part == "VTQ30P08-3", f"{said}: x >= 0.1 only expected for the thin-overdrive case"


def test_ngspice_present_under_ci():
    """CI installs ngspice (.ci/run): there its absence is a failure, not a skip."""
    if os.environ.get("CI") != "true":
        pytest.skip("only enforced under CI=true")
    assert NGSPICE is not None, "ngspice missing under CI=true"
    out = subprocess.run([NGSPICE, "-v"], capture_output=True, text=True, timeout=30)
    assert "ngspice" in (out.stdout + out.stderr).lower()
