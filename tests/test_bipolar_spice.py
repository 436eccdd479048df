"""The saturated switch against a simulated transistor: the simulator is the truth.

Source: ngspice (Debian package), run as `ngspice -b deck.cir` through
subprocess, `.op` analyses, its Gummel-Poon bipolar transistor. The
Gummel-Poon equations (ngspice manual, BJT model; Gummel & Poon, Bell System
Technical Journal 1970) that matter here:

- ideal collector current `IS exp(Vbe / (NF VT))`, divided by the base charge
  `qb`, which grows past the knee current IKF: the gain falls at high current,
  and no faster than 1/Ic (there the collector current grows like
  `exp(Vbe / 2VT)` and the base current like `exp(Vbe / VT)`);
- base current `Ic_ideal / BF + ISE exp(Vbe / (NE VT))`: the recombination
  term makes the gain fall at low current, and no faster than `Ic^(1 - 1/NE)`
  (its limit where that term is all of the base current);
- temperature: `BF` and the recombination term scale as `(T / TNOM)^XTB`, so
  at a fixed collector current the gain scales by `(T / TNOM)^XTB`.

The device is chosen here (parameters in DEVICE, invented, plausible for a
small-signal NPN, with gain roll-off at both ends). Picker never sees them:
its datasheet is measured by simulation at 25 °C (TNOM = 25 °C) as a maker
would: hFE at 0.1, 1, 10 and 100 mA with Vce = 1 V, Vce(sat) at Ic/Ib = 10 at
1, 10 and 100 mA, Vbe(sat) at 50 mA / 5 mA; gains rounded down and voltages
rounded up, so the simulated device is the worst part its datasheet allows.
Those numbers go into a catalogue row, and picker's `saturation` verdict,
base current, gain and Vce(sat) for a role are compared with the role's own
circuit simulated at the cold corner (`.options temp = -20`) with the cell at
its minimum, the base resistor at +tol and the pull-down at -tol.

Without ngspice these tests are skipped locally; under CI=true (set by
.ci/run, which installs ngspice) a missing simulator fails them.
"""

from __future__ import annotations

import functools
import math
import os
import re
import shutil
import subprocess

import numpy as np
import pytest

from picker.catalog.load import load_catalog
from picker.design.requirements import parse_requirements
from picker.engine.evaluate import FAIL, PASS, evaluate_role

NGSPICE = shutil.which("ngspice")
needs_ngspice = pytest.mark.skipif(
    NGSPICE is None and os.environ.get("CI") != "true",
    reason="ngspice not installed (apt-get install ngspice); required under CI=true")

# The device (Gummel-Poon). NE = 1.6 and ISE = 1 pA give a gain that falls to
# about 60 % of its peak at 0.1 mA; IKF = 0.15 A bends it down above 10 mA.
DEVICE = dict(IS=2e-14, BF=220, NF=1, VAF=60, IKF=0.15, ISE=1e-12, NE=1.6, BR=4, NR=1,
              RB=20, RE=0.4, RC=0.8, XTB=1.5, XTI=3, EG=1.11)
NE, XTB = DEVICE["NE"], DEVICE["XTB"]
# Tight tolerances: the simulator's own error is far below the differences checked.
OPTIONS = ".options tnom=25 reltol=1e-9 vntol=1e-12 abstol=1e-16"
COLD_C, HOT_C, CELL_MIN_V, CELL_MAX_V = -20.0, 45.0, 3.0, 4.2
TOL = 0.05  # [resistors] tolerance in the role (5 %, E24's usual one)

# Where the datasheet is measured (mA), and what its Vbe(sat) condition is.
HFE_POINTS_MA = (0.1, 1.0, 10.0, 100.0)
VCE_SAT_POINTS_MA = (1.0, 10.0, 100.0)
VBE_SAT_AT_MA = 50.0  # Ic = 50 mA, Ib = 5 mA

_VALUE = re.compile(r"^\s*[\w().,#/+*-]+\s*=\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*$")


def model_line(kind: str = "npn", ise: float = DEVICE["ISE"]) -> str:
    params = " ".join(f"{k}={v:g}" for k, v in dict(DEVICE, ISE=ise).items())
    return f".model SW {kind.upper()}({params})"


def simulate(body: str, t_C: float, kind: str = "npn", ise: float = DEVICE["ISE"]) -> list[float]:
    """Run one deck (`body`: netlist lines and a .control block's commands)
    through `ngspice -b` at t_C; the printed values in order.

    ngspice -b exits 1 on a deck whose analyses run only from a .control
    block, so the exit code is not used: the values must be in the output."""
    if NGSPICE is None:
        pytest.fail("ngspice is required under CI=true but is not installed")
    netlist, control = body.split("---")
    deck = (f"picker check\n{OPTIONS} temp={t_C:g}\n{netlist.strip()}\n{model_line(kind, ise)}\n"
            f".control\nset numdgt=12\n{control.strip()}\n.endc\n.end\n")
    import tempfile

    with tempfile.TemporaryDirectory() as folder:
        path = os.path.join(folder, "deck.cir")
        with open(path, "w", encoding="ascii") as fh:
            fh.write(deck)
        proc = subprocess.run([NGSPICE, "-b", path], capture_output=True, text=True,
                              timeout=120, cwd=folder)
    found = [float(m.group(1)) for m in map(_VALUE.match, proc.stdout.splitlines()) if m]
    if not found:
        pytest.fail(f"ngspice gave no values:\n{deck}\n{proc.stdout}\n{proc.stderr}")
    return found


@functools.lru_cache(maxsize=None)
def gain_curve(t_C: float, vce_V: float = 1.0, ise: float = DEVICE["ISE"]):
    """(Ic, hFE) of the device at t_C and Vce: a base current source stepped
    over 1 nA..30 mA, 50 steps a decade. Read at any Ic by log-log
    interpolation between steps 1/50 decade apart: the curve's curvature
    makes that error under 1e-4."""
    ib = np.geomspace(1e-9, 3e-2, 7 * 50 + 1)
    steps = "foreach ib " + " ".join(f"{x:.6e}" for x in ib) + "\nalter IB dc = $ib\nop\nprint -i(VC)\nend"
    ic = np.array(simulate(f"VC c 0 DC {vce_V:g}\nIB 0 b DC 1u\nQ1 c b 0 SW\n---\n{steps}", t_C,
                           ise=ise))
    assert ic.size == ib.size and np.all(np.diff(ic) > 0), "the gain sweep did not converge"
    return ic, ic / ib


def hfe_sim(ic_A: float, t_C: float, vce_V: float = 1.0, ise: float = DEVICE["ISE"]) -> float:
    ic, hfe = gain_curve(t_C, vce_V, ise)
    return math.exp(np.interp(math.log(ic_A), np.log(ic), np.log(hfe)))


def saturated(ic_A: float, ib_A: float, t_C: float = 25.0) -> tuple[float, float]:
    """(Vce, Vbe) with Ic and Ib forced by current sources (the datasheet's Ic/Ib condition)."""
    vce, vbe = simulate(f"IC 0 c DC {ic_A:.9g}\nIB 0 b DC {ib_A:.9g}\nQ1 c b 0 SW\n---\n"
                        "op\nprint v(c)\nprint v(b)", t_C)
    return vce, vbe


@functools.lru_cache(maxsize=None)
def datasheet() -> dict:
    """The device's datasheet, measured at 25 °C and written as a maker would."""
    row = {f"hfe_min@{i:g}mA": math.floor(hfe_sim(i / 1000.0, 25.0)) for i in HFE_POINTS_MA}
    for i in VCE_SAT_POINTS_MA:
        vce, _ = saturated(i / 1000.0, i / 10000.0)
        row[f"vce_sat_mV@{i:g}mA"] = math.ceil(vce * 1000.0)
    _, vbe = saturated(VBE_SAT_AT_MA / 1000.0, VBE_SAT_AT_MA / 10000.0)
    row["vbe_sat_max_V"] = math.ceil(vbe * 100.0) / 100.0
    return row


def catalog(tmp_path, kind: str = "npn"):
    """The datasheet as a catalogue row, loaded by picker's own loader."""
    row = {"part": "SIM-GP1", "maker": "Simulated", "kind": kind, "package": "SOT-23",
           "vceo_max_V": 40, "ic_max_A": 0.5, **datasheet(), "icbo_nA": 50, "price@1": 0.05}
    path = tmp_path / "sim.csv"
    path.write_text(",".join(row) + "\n" + ",".join(str(v) for v in row.values()) + "\n",
                    encoding="utf-8")
    loaded = load_catalog(path, source="test")
    assert not loaded.problems, [str(p) for p in loaded.problems]
    return loaded.df


def requirement(use: str, ic: str, drive: str, rb: str, rpd: str | None = None, extra: str = ""):
    text = (f'[supply]\nmin = "{CELL_MIN_V} V"\nmax = "{CELL_MAX_V} V"\n'
            f'[ambient]\nmin = "{COLD_C} degC"\nmax = "{HOT_C} degC"\n[build]\nvolume = 1000\n'
            f'[resistors]\ntolerance = "{TOL * 100:g} %"\n'
            f'[[role]]\nname = "s"\nrefs = ["Q1"]\nuse = "{use}"\ncollector_current = "{ic}"\n'
            f'base_drive = "{drive}"\nbase_resistor = "{rb}"\n'
            + (f'base_pulldown = "{rpd}"\n' if rpd else "") + extra)
    return parse_requirements(text, "spice.toml")


@needs_ngspice
def test_the_measured_datasheet_shows_the_roll_off_at_both_ends():
    """The device is the one the test means: its gain falls toward both ends of
    the datasheet's range (0.1 mA and 100 mA below the 10 mA peak), Vce(sat)
    rises with current above 1 mA, and Vbe(sat) at 50 mA is a small-signal
    part's 0.8-1.0 V (from memory). Measured: hFE 62 / 106 / 143 / 114,
    Vce(sat) 38 / 51 / 174 mV, Vbe(sat) 0.88 V."""
    d = datasheet()
    h = [d[f"hfe_min@{i:g}mA"] for i in HFE_POINTS_MA]
    assert h[0] < h[1] < h[2] > h[3] and h[0] < 0.7 * h[2]
    v = [d[f"vce_sat_mV@{i:g}mA"] for i in VCE_SAT_POINTS_MA]
    assert v[0] < v[1] < v[2]
    assert 0.8 <= d["vbe_sat_max_V"] <= 1.0


def _picker_gain(tmp_path, ic_A: float, t_C: float):
    """Picker's hFE for a role at collector current ic_A, both ambient corners at t_C."""
    req = parse_requirements(
        f'[supply]\nmin = "3 V"\nmax = "4.2 V"\n[ambient]\nmin = "{t_C} degC"\nmax = "{t_C} degC"\n'
        f'[build]\nvolume = 1\n[[role]]\nname = "s"\nrefs = ["Q1"]\nuse = "npn-switch"\n'
        f'collector_current = "{ic_A!r} A"\nbase_resistor = "1 kohm"\n', "gain.toml")
    row = evaluate_role(catalog(tmp_path), req.roles[0], req).table.iloc[0]
    return float(row["hfe"]), row


def gain_bound(ic_A: float) -> float:
    """How far above the simulated gain picker's may lie (models/README.md §6),
    from the Gummel-Poon equations (module docstring). Between the datasheet
    points: not at all (log-log chords under a curve bent down in log-log,
    points rounded down, and picker's 0.775 at -20 °C below the device's
    (253.15/298.15)^1.5 = 0.781). Past an end, picker continues the end
    segment (log slope s) while the device's slope is at most 1 - 1/NE below
    the data and at least -1 above it: picker can be high by at most
    (I_lo/Ic)^(1 - 1/NE - s) below, (Ic/I_hi)^(1 + s) above."""
    d = datasheet()
    lo, hi = HFE_POINTS_MA[0] / 1000.0, HFE_POINTS_MA[-1] / 1000.0
    if ic_A < lo:
        s = math.log(d["hfe_min@1mA"] / d["hfe_min@0.1mA"]) / math.log(10.0)
        return (lo / ic_A) ** (1.0 - 1.0 / NE - s)
    if ic_A > hi:
        s = math.log(d["hfe_min@100mA"] / d["hfe_min@10mA"]) / math.log(10.0)
        return (ic_A / hi) ** (1.0 + s)
    return 1.0


GAIN_CURRENTS_A = [5e-6, 8e-6, 20e-6, 45e-6, 0.1e-3, 0.3e-3, 1e-3, 3e-3, 10e-3, 30e-3, 0.1, 0.15,
                   0.2]


@needs_ngspice
@pytest.mark.parametrize("t_C", [25.0, COLD_C])
def test_gain_against_the_simulated_device(tmp_path, t_C):
    """Picker's hFE (from the four measured points) against the device's at 25 °C
    and at the cold corner, from 5 µA (a twentieth of the lowest point) to
    200 mA (twice the highest):
    - between the points picker is never above the device, and at most 15 %
      below it (the log-log chord's sag across the decade over the gain peak,
      plus rounding and the temperature law: measured up to 11.6 %, at 30 mA);
    - past the ends picker is above the device (gain falls faster there than
      the continued segment) but within the Gummel-Poon bound of `gain_bound`
      (measured: 23 % at 5 µA, 17 % at 8 µA, 12 % at 150 mA, 25 % at 200 mA,
      against bounds of 53 %, 43 %, 44 % and 87 %); the note says
      `extrapolated`, and `far below data` under 10 µA. Holding the end points
      flat instead would give 2.5x at 5 µA: the bound catches that."""
    for ic_A in GAIN_CURRENTS_A:
        ours, row = _picker_gain(tmp_path, ic_A, t_C)
        sim = hfe_sim(ic_A, t_C)
        said = f"Ic {ic_A:g} A at {t_C:g} °C: picker {ours:.2f}, simulator {sim:.2f}"
        inside = HFE_POINTS_MA[0] <= ic_A * 1000.0 <= HFE_POINTS_MA[-1]
        if inside:
            assert 0.85 * sim <= ours <= sim, said
            assert not (row["extrapolated"] or row["far_below_data"]), said
        else:
            assert sim < ours <= sim * gain_bound(ic_A), f"{said}, bound {gain_bound(ic_A):.3f}"
            far = ic_A < HFE_POINTS_MA[0] / 1000.0 / 10.0
            assert bool(row["far_below_data"]) == far and bool(row["extrapolated"]) != far, said


def simulate_role(req, kind: str = "npn") -> dict:
    """The role's circuit at the cold corner: the cell at its minimum drives the
    base through Rb (+tol), a pull-down (-tol) from base to emitter, the
    collector loaded by Rc = cell / Ic from the cell, so a saturated switch
    carries about the role's Ic. NPN: emitter at ground. PNP (a real PNP
    netlist): emitter at the cell, base pulled toward ground through Rb.
    Returns Vce, Vbe, the base current (Kirchhoff at the base node: what Rb
    brings less what the pull-down takes) and the collector current."""
    role = req.roles[0]
    drive = CELL_MIN_V if role.base_drive_V is None else role.base_drive_V
    rb = role.base_resistor_ohm * (1 + TOL)
    rpd = None if role.base_pulldown_ohm is None else role.base_pulldown_ohm * (1 - TOL)
    rc = CELL_MIN_V / role.collector_current_A
    if kind == "npn":
        net = (f"VD drv 0 DC {drive:.9g}\nVCC vcc 0 DC {CELL_MIN_V:.9g}\nRB drv b {rb:.9g}\n"
               f"RC vcc c {rc:.9g}\nQ1 c b 0 SW\n" + (f"RPD b 0 {rpd:.9g}\n" if rpd else ""))
        vc, vb = simulate(net + "---\nop\nprint v(c)\nprint v(b)", COLD_C, kind)
        vce, vbe, vcell = vc, vb, 0.0
    else:
        net = (f"VE e 0 DC {CELL_MIN_V:.9g}\nVD drv 0 DC {CELL_MIN_V - drive:.9g}\nRB drv b {rb:.9g}\n"
               f"RC c 0 {rc:.9g}\nQ1 c b e SW\n" + (f"RPD b e {rpd:.9g}\n" if rpd else ""))
        vc, vb = simulate(net + "---\nop\nprint v(c)\nprint v(b)", COLD_C, kind)
        vce, vbe, vcell = CELL_MIN_V - vc, CELL_MIN_V - vb, CELL_MIN_V
    ib = (drive - vbe) / rb - (vbe / rpd if rpd else 0.0)
    ic = (CELL_MIN_V - vce) / rc
    return {"vce": vce, "vbe": vbe, "ib": ib, "ic": ic, "vcell": vcell}


# (use, Ic, base drive, Rb, pull-down, what the case shows)
CASES = [
    ("npn-switch", "45 uA", "supply", "1 Mohm", "2.2 Mohm", "latch, below the data: both fail"),
    ("npn-switch", "45 uA", "supply", "470 kohm", "1 Mohm", "latch, below the data: passes"),
    ("npn-switch", "8 uA", "supply", "1 Mohm", None, "far below the data"),
    ("npn-switch", "20 uA", "supply", "4.7 Mohm", None, "starved: not saturated at all"),
    ("npn-switch", "100 uA", "supply", "47 kohm", "220 kohm", "at the lowest point"),
    ("npn-switch", "5 mA", "1.8 V", "10 kohm", None, "picker fails a part the device passes"),
    ("npn-switch", "10 mA", "supply", "470 ohm", None, "hard driven: forced gain 2"),
    ("npn-switch", "20 mA", "supply", "2.2 kohm", None, "forced gain 23: Vce(sat) not guaranteed"),
    ("npn-switch", "20 mA", "supply", "1 kohm", "4.7 kohm", "pull-down at 20 mA"),
    ("npn-switch", "150 mA", "supply", "100 ohm", None, "above the data and the Vbe(sat) condition"),
    ("npn-switch", "45 uA", "supply", "1 Mohm", "100 kohm", "the pull-down keeps it off"),
    ("pnp-switch", "100 uA", "supply", "220 kohm", "1 Mohm", "a PNP, as a real PNP netlist"),
]


@needs_ngspice
@pytest.mark.parametrize("use, ic, drive, rb, rpd, what", CASES, ids=[c[5] for c in CASES])
def test_saturation_verdict_against_the_simulated_circuit(tmp_path, use, ic, drive, rb, rpd, what):
    """Picker's verdict and figures against the role's circuit in ngspice at -20 °C.

    The truth for the question picker answers ("does Ib·hFE reach overdrive ×
    Ic at the cold corner?") is the simulated base current times the device's
    gain at Ic and -20 °C: `od_sim = Ib_sim · hFE_sim(Ic) / Ic`. Checks:

    1. Base current: picker's is at most the simulator's where the role's Ic
       and Ib are at most the Vbe(sat) condition's (50 mA, 5 mA): its Vbe is
       the datasheet maximum there, plus 2 mV/°C (the device moves 1.4-2.0
       mV/°C), above the real junction. Above it (150 mA) picker's is higher:
       the limit models/README.md §6 states.
    2. Overdrive: picker's ≤ the simulator's times `gain_bound` (1 inside the
       data) wherever (1) holds; and at least 0.7 of it: what picker gives away
       is Vbe(sat) at 50 mA used at micro-amps (up to 24 % less base current
       here) and the gain chord and rounding (up to 10 %); measured 0.76-0.99.
    3. Verdict: picker's pass means the simulated circuit passes too (od_sim ≥
       overdrive) and is saturated (Vce under 0.25 V, the collector current
       within 8 % of Ic); picker's fail where the base network cannot turn the
       transistor on means the simulated collector current is under 0.1 % of Ic.
    4. Vce(sat): where picker says the figure is guaranteed (forced gain ≤ 10),
       the simulated Vce is at most picker's figure; where it is not, the
       simulated Vce may exceed it, and does in two of these cases (the note
       `not guaranteed` is needed).
    """
    kind = "pnp" if use == "pnp-switch" else "npn"
    req = requirement(use, ic, drive, rb, rpd)
    role = req.roles[0]
    row = evaluate_role(catalog(tmp_path, kind), role, req).table.iloc[0]
    sim = simulate_role(req, kind)
    ic_A = role.collector_current_A
    od_sim = sim["ib"] * hfe_sim(ic_A, COLD_C) / ic_A
    said = (f"{what}: picker Ib {row['ib_A']:.4g} A, hFE {row['hfe']:.4g}, overdrive "
            f"{row['overdrive']:.4g}, {int(row['check_saturation'])}; simulator Ib {sim['ib']:.4g} A, "
            f"overdrive {od_sim:.4g}, Vce {sim['vce']:.4g} V, Ic {sim['ic']:.4g} A")

    if row["ib_A"] == 0:  # off: the pull-down holds the base below Vbe
        assert row["check_saturation"] == FAIL and row["not_guaranteed"], said
        assert sim["ic"] < 1e-3 * ic_A, said
        return
    within_vbe_sat = ic_A <= VBE_SAT_AT_MA / 1000.0 and sim["ib"] <= VBE_SAT_AT_MA / 10000.0
    if within_vbe_sat:
        assert row["ib_A"] <= sim["ib"], said
        assert row["overdrive"] <= od_sim * gain_bound(ic_A), said
    else:
        assert row["ib_A"] > sim["ib"], said
    assert row["overdrive"] >= 0.7 * od_sim, said
    if row["check_saturation"] == PASS:
        assert od_sim >= role.overdrive, said
        assert sim["vce"] < 0.25 and sim["ic"] >= 0.92 * ic_A, said
    if row["not_guaranteed"]:
        if what.startswith(("forced gain 23", "picker fails")):
            assert sim["vce"] > row["vce_sat_V"], said
    else:
        assert sim["vce"] <= row["vce_sat_V"], said


@needs_ngspice
def test_verdicts_agree_with_the_simulator_on_these_cases(tmp_path):
    """The cases above, as a table of verdicts: picker (overdrive 2) against the
    simulated od_sim >= 2. They agree everywhere except one, where picker is
    the more careful (5 mA from a 1.8 V pin: picker 1.60, the device 2.11)."""
    disagree = []
    for use, ic, drive, rb, rpd, what in CASES:
        kind = "pnp" if use == "pnp-switch" else "npn"
        req = requirement(use, ic, drive, rb, rpd)
        row = evaluate_role(catalog(tmp_path, kind), req.roles[0], req).table.iloc[0]
        sim = simulate_role(req, kind)
        ic_A = req.roles[0].collector_current_A
        sim_pass = sim["ib"] * hfe_sim(ic_A, COLD_C) / ic_A >= 2
        if (row["check_saturation"] == PASS) != sim_pass:
            disagree.append((what, int(row["check_saturation"]), sim_pass))
    assert disagree == [("picker fails a part the device passes", FAIL, True)]


# -- an open base's leakage (models/README.md §6) -------------------------------------------------

@needs_ngspice
@pytest.mark.parametrize("ise", [0.0, DEVICE["ISE"]], ids=["flat gain", "gain roll-off"])
def test_open_base_leakage_against_the_simulator(tmp_path, ise):
    """Iceo = (1 + hFE) Icbo (Sedra & Smith) with the simulator as the truth, at 45 °C.

    The Gummel-Poon model has no generation current in a reverse-biased
    junction, so the datasheet's collector-base leakage is added as a current
    source from collector to base: 200 nA, 50 nA at 25 °C doubled twice
    (models/README.md §4), the same in picker and in the deck, so what is
    compared is the amplification. The collector sits at the full cell, 4.2 V.
    The datasheet's `hfe_max` is the device's gain at 1 mA, Vce = 5 V, 25 °C,
    rounded up (a usual datasheet condition, from memory).
    - base open, gain roll-off off (ISE = 0: the worst case, the gain nearly
      flat down to nanoamps): picker's (1 + hfe_max (1 + 0.005·20)) × Icbo is
      at or above the simulator's and within 2 % of it (the gain law's 1.1
      against the device's (318.15/298.15)^1.5 = 1.102, the Early effect at
      4.2 V against 5 V, the gain at 52 µA against 1 mA: measured 0.5 %);
    - base open with the roll-off: the device's gain at tens of microamps is
      far lower, and picker's figure an over-estimate, never below it;
    - a pull-down at 1 % of the 0.15 V edge: the leakage flows out through it,
      and the collector current is Icbo within 1 %, as picker says;
    - a pull-down just inside the edge (0.149 V at +tol): picker still says
      Icbo; the simulated junction conducts a little (IS e^(0.149 V/VT),
      amplified): under 1 % more (measured 0.05 %). At twice the edge (0.3 V)
      the simulated current is already 9-11 % above Icbo, and at three times
      (0.45 V) 2.9-13 times it: there picker says Iceo, which is at or above
      the simulator's. The 0.15 V rule keeps a factor of two from where the
      junction starts to matter.
    """
    icbo_45 = 50e-9 * 2 ** ((HOT_C - 25.0) / 10.0)
    hfe_max = math.ceil(hfe_sim(1e-3, 25.0, vce_V=5.0, ise=ise))

    def leak(rpd_ohm: float | None) -> float:
        net = (f"VCC c 0 DC {CELL_MAX_V:g}\nILK c b DC {icbo_45:.9g}\nQ1 c b 0 SW\n"
               + (f"RPD b 0 {rpd_ohm:.9g}\n" if rpd_ohm else ""))
        return -simulate(net + "---\nop\nprint i(VCC)", HOT_C, ise=ise)[0]

    row = {"part": "SIM-GP2", "kind": "npn", "icbo_nA": 50, "hfe_max": hfe_max,
           "hfe_min@1mA": 50, "vbe_sat_max_V": 0.9}
    path = tmp_path / "leak.csv"
    path.write_text(",".join(row) + "\n" + ",".join(str(v) for v in row.values()) + "\n")
    df = load_catalog(path, source="test").df

    def picker_off(rpd: str | None) -> float:
        req = requirement("npn-switch", "1 mA", "supply", "1 kohm", rpd, 'base_off = "open"\n')
        return float(evaluate_role(df, req.roles[0], req).table.iloc[0]["off_current_A"])

    open_sim, ours = leak(None), picker_off(None)
    said = f"hfe_max {hfe_max}: picker {ours:.4g} A, simulator {open_sim:.4g} A"
    assert ours == pytest.approx((1 + hfe_max * 1.1) * icbo_45, rel=1e-12)
    assert ours >= open_sim, said
    if ise == 0.0:
        assert ours <= open_sim * 1.02, said
    else:
        assert ours > 3 * open_sim, said
    for volts in (0.0015, 0.149, 0.45):
        rpd_ohm = volts / icbo_45 / (1 + TOL)  # the value written; +tol reaches `volts`
        ours, sim = picker_off(f"{rpd_ohm:.9g} ohm"), leak(rpd_ohm * (1 + TOL))
        said = f"{volts} V: picker {ours:.4g} A, simulator {sim:.4g} A"
        if volts < 0.15:
            assert ours == pytest.approx(icbo_45, rel=1e-12), said
            assert icbo_45 * (1 - 1e-3) <= sim <= icbo_45 * 1.01, said
        else:
            assert sim > 2 * icbo_45 and ours >= sim, said


def test_ngspice_present_under_ci():
    """CI installs ngspice (.ci/run): there its absence is a failure, not a skip."""
    if os.environ.get("CI") != "true":
        pytest.skip("only enforced under CI=true")
    assert NGSPICE is not None, "ngspice missing under CI=true"
    out = subprocess.run([NGSPICE, "-v"], capture_output=True, text=True, timeout=30)
    assert "ngspice" in (out.stdout + out.stderr).lower()
