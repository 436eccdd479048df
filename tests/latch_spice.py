"""A soft-latch power switch in ngspice: its two transistors as simulator models,
their datasheets measured by simulation, and the circuit netlisted with the
values picker chooses.

Source of truth: ngspice 39 (Debian package), `ngspice -b` through subprocess.
The device models are general-purpose textbook models with parameters chosen
here, not fitted to anything picker computes: a level-1 (Shichman-Hodges)
P-channel MOSFET with Meyer gate capacitances and overlap capacitances (so it
has a Miller plateau), and a Gummel-Poon NPN with low-current recombination
(ISE, NE), a collector-base generation current (ISC, NC = 2: its leakage) and
the simulator's own temperature laws (EG, XTI, XTB). Both are referred to
25 °C (TNOM).

Their datasheets are what a maker would print for the simulated device:
each figure measured in the simulator at the datasheet's own test condition
(25 °C, the test currents and voltages named beside it) and written the way
a datasheet writes a limit, rounded outward (a maximum up, a minimum down) to
the figures shown; leakage maxima are round figures well above the measured
device, as datasheets guarantee them. Ratings (Vds, Vceo, Ic, thermal
resistance) are not measurable in these models and are stated. picker reads
only these datasheets.

The circuit (a high-side P-channel switch whose gate an NPN pulls down; the
NPN's base fed from the switched output, so the circuit holds itself on):

    cell ──┬──────────┬─────────── source of M1
           R_pu       │
           │          M1 (gate g)
           g ─────────┘     drain ── out ──┬── load (and R_off while off)
           │                              R_b
           Q1 collector                    │
           Q1 base b ──────────────────────┘
           │         R_pd (b to ground)
           Q1 emitter ── ground
"""

from __future__ import annotations

import math
import os
import re
import shutil
import subprocess
from dataclasses import dataclass
from decimal import ROUND_CEILING, ROUND_FLOOR, Decimal

import pytest

NGSPICE = shutil.which("ngspice")
needs_ngspice = pytest.mark.skipif(
    NGSPICE is None and os.environ.get("CI") != "true",
    reason="ngspice not installed (apt-get install ngspice); required under CI=true")

# Parameters chosen for this test (round textbook-style values, no real part's model).
PMOS_MODEL = (".model PSW PMOS(LEVEL=1 VTO=-1.5 KP=1.5e-5 LAMBDA=0.02 RD=0.002 RS=0.002 "
              "TOX=40n CGSO=2e-10 CGDO=1e-10 CBD=300p IS=1e-12 PHI=0.7 GAMMA=0)")
PMOS_SIZE = "W=1 L=1u"
NPN_MODEL = (".model QSW NPN(IS=5e-15 BF=250 NF=1 VAF=80 IKF=0.08 ISE=2e-14 NE=1.5 BR=4 NR=1 "
             "VAR=20 IKR=0.05 ISC=1e-11 NC=2 RB=20 RE=0.5 RC=1.5 CJE=10p CJC=5p TF=0.4n "
             "TR=40n XTB=1.5 EG=1.11 XTI=3)")
OPTIONS = ".options gmin=1e-15 reltol=1e-7 abstol=1e-15 vntol=1e-9 tnom=25"

_VALUE = re.compile(r"^\s*([\w().,#\[\]-]+)\s*=\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\b")


def run(deck: str, tmp_path, name: str) -> dict[str, float]:
    """Run one deck through `ngspice -b`; the `print`ed and `meas`ured values by name.

    The values must be in the output (ngspice -b's exit code is 1 for decks that
    run their analysis from a .control block), else the test fails showing it."""
    if NGSPICE is None:
        pytest.fail("ngspice is required under CI=true but is not installed")
    path = tmp_path / f"{name}.cir"
    path.write_text(deck, encoding="ascii")
    proc = subprocess.run([NGSPICE, "-b", str(path)], capture_output=True, text=True, timeout=120,
                          cwd=tmp_path)
    found = {}
    for line in proc.stdout.splitlines():
        m = _VALUE.match(line)
        if m:
            found[m.group(1).lower()] = float(m.group(2))
    if not found:
        pytest.fail(f"ngspice gave no values for {name}:\n{proc.stdout}\n{proc.stderr}")
    return found


def _deck(title: str, body: str, control: str, temp_C: float = 25.0) -> str:
    return (f"{title}\n{PMOS_MODEL}\n{NPN_MODEL}\n{body}\n{OPTIONS} temp={temp_C:g}\n"
            f".control\nset numdgt=10\n{control}\n.endc\n.end\n")


def up(x: float, step: str) -> float:
    """x rounded up to a multiple of `step` (a datasheet maximum)."""
    q = Decimal(step)
    return float((Decimal(repr(x)) / q).to_integral_value(ROUND_CEILING) * q)


def down(x: float, step: str) -> float:
    """x rounded down to a multiple of `step` (a datasheet minimum)."""
    q = Decimal(step)
    return float((Decimal(repr(x)) / q).to_integral_value(ROUND_FLOOR) * q)


def sig_up(x: float, figures: int = 2) -> float:
    """x rounded up to `figures` significant figures."""
    step = Decimal(1).scaleb(math.floor(math.log10(abs(x))) - figures + 1)
    return up(x, str(step))


def sig_down(x: float, figures: int = 2) -> float:
    step = Decimal(1).scaleb(math.floor(math.log10(abs(x))) - figures + 1)
    return down(x, str(step))


# -- the P-channel switch's datasheet -------------------------------------------------------

def pmos_threshold(tmp_path, temp_C: float = 25.0) -> float:
    """|Vgs(th)| [V] at |Id| = 250 uA with the drain tied to the gate (the usual
    datasheet test condition)."""
    out = run(_deck("pmos threshold", f"VG g 0 DC -1\nM1 g g 0 0 PSW {PMOS_SIZE}",
                    "dc VG 0 -2 -0.0002\nmeas dc vth when i(VG)=250e-6", temp_C), tmp_path,
              f"pmos_vth_{temp_C:g}")
    return -out["vth"]


def pmos_rds_on(tmp_path, vgs_V: float, temp_C: float = 25.0) -> float:
    """Rds(on) [ohm] at |Vgs| = vgs_V, |Id| = 1 A (a resistor to the drain, 20 mV
    drop), 25 °C."""
    out = run(_deck("pmos rds(on)", f"VG g 0 DC {-vgs_V:.10g}\nVD d 0 DC -0.02\n"
                                    f"M1 d g 0 0 PSW {PMOS_SIZE}", "op\nprint i(VD)", temp_C),
              tmp_path, f"pmos_rds_{vgs_V:g}_{temp_C:g}")
    return 0.02 / out["i(vd)"]


def pmos_gate_charge(tmp_path, vgs_V: float = 4.5) -> float:
    """Total gate charge [C] to |Vgs| = vgs_V: the gate pulled by a constant 1 mA
    from off, source at 10 V, a 10 ohm load (|Vds| = 10 V, |Id| = 1 A once on), the
    usual datasheet gate-charge test; Q = I t."""
    body = (f"VDD s 0 DC 10\nRL d 0 10\nM1 d g s s PSW {PMOS_SIZE}\nRG g s 1e9\n"
            "IG g 0 DC 0 PULSE(0 1m 1u 1n)")
    out = run(_deck("pmos gate charge", body,
                    f"tran 2n 40u\nmeas tran tq when v(g)={10 - vgs_V:.10g} cross=1"), tmp_path,
              f"pmos_qg_{vgs_V:g}")
    return 1e-3 * (out["tq"] - 1e-6)


def pmos_datasheet(tmp_path) -> dict:
    """The simulated P-channel switch as a catalogue row (values in the columns' units)."""
    vth = pmos_threshold(tmp_path)
    row = {"vgs_th_min_V": down(vth - 0.25, "0.05"), "vgs_th_typ_V": round(vth, 2),
           "vgs_th_max_V": up(vth + 0.3, "0.05")}
    for v in (4.5, 2.5, 1.8):
        row[f"rds_on_mohm@{v:g}V"] = up(pmos_rds_on(tmp_path, v) * 1000.0, "1")
    row["qg_nC@4.5V"] = up(pmos_gate_charge(tmp_path) * 1e9, "0.1")
    row.update({"vds_max_V": 20, "vgs_max_V": 8, "id_max_A": 4.0, "idss_uA": 1.0,
                "rth_ja_C/W": 250, "tj_max_C": 150})
    return row


# -- the NPN driver's datasheet -------------------------------------------------------------

def npn_gain(tmp_path, ic_A: float, vce_V: float = 5.0, temp_C: float = 25.0) -> float:
    """DC gain Ic/Ib at collector current ic_A, Vce = vce_V: the emitter current
    forced, the base held at 0 V through a source that measures its current."""
    ie = ic_A * (1 + 1 / 250.0)
    for _ in range(3):  # the emitter current that gives ic_A at the collector
        body = f"VC c 0 DC {vce_V:g}\nVB b 0 DC 0\nQ1 c b e QSW\nIE e m DC {ie:.12g}\nVM m 0 DC -10"
        out = run(_deck("npn gain", body, "op\nprint i(VC) i(VB)", temp_C), tmp_path,
                  f"npn_hfe_{ic_A:g}_{temp_C:g}")
        ic, ib = -out["i(vc)"], -out["i(vb)"]
        ie *= ic_A / ic
    return ic / ib


def npn_saturation(tmp_path, ic_A: float, forced_gain: float = 10.0, temp_C: float = 25.0):
    """(Vce(sat), Vbe(sat)) [V] at ic_A with Ib = Ic / forced_gain (datasheet
    condition Ic/Ib = 10)."""
    body = (f"VCC cc 0 DC 10\nIC cc c DC {ic_A:.12g}\nIB 0 b DC {ic_A / forced_gain:.12g}\n"
            "Q1 c b 0 QSW\nRC c 0 1e12")
    out = run(_deck("npn saturation", body, "op\nprint v(c) v(b)", temp_C), tmp_path,
              f"npn_sat_{ic_A:g}_{temp_C:g}")
    return out["v(c)"], out["v(b)"]


def npn_cutoff(tmp_path, vcb_V: float = 30.0, temp_C: float = 25.0) -> float:
    """Collector cutoff current Icbo [A]: emitter open, Vcb = vcb_V."""
    out = run(_deck("npn icbo", f"VC c 0 DC {vcb_V:g}\nQ1 c 0 e QSW\nRE e 0 1e12", "op\nprint i(VC)",
                    temp_C), tmp_path, f"npn_icbo_{temp_C:g}")
    return -out["i(vc)"]


def npn_datasheet(tmp_path) -> dict:
    """The simulated NPN as a catalogue row (values in the columns' units)."""
    row = {}
    gains = {}
    for ic_mA in (0.01, 0.1, 1.0, 10.0, 100.0):
        gains[ic_mA] = npn_gain(tmp_path, ic_mA / 1000.0)
        row[f"hfe_min@{ic_mA:g}mA"] = sig_down(gains[ic_mA], 2)
    row["hfe_max"] = sig_up(max(gains.values()), 2)
    for ic_mA in (0.1, 1.0, 10.0, 100.0):
        vce, vbe = npn_saturation(tmp_path, ic_mA / 1000.0)
        row[f"vce_sat_mV@{ic_mA:g}mA"] = sig_up(vce * 1000.0, 2)
        if ic_mA == 10.0:
            row["vbe_sat_max_V"] = up(vbe, "0.01")
    row["icbo_nA"] = sig_up(npn_cutoff(tmp_path) * 1e9, 1)  # Vcb = 30 V
    row.update({"vceo_max_V": 45, "ic_max_A": 0.1, "rth_ja_C/W": 350, "tj_max_C": 150})
    return row


# -- the circuit ----------------------------------------------------------------------------

@dataclass(frozen=True)
class Latch:
    """The latch's resistor values [ohm] as netlisted (already at the tolerance end the
    test needs) and its load."""

    r_pullup: float
    r_base: float
    r_pulldown: float | None  # None: no pull-down fitted
    r_off_load: float | None  # the load's resistance while off; None: open


def _network(latch: Latch) -> str:
    lines = [f"M1 out g cell cell PSW {PMOS_SIZE}", f"RPU g cell {latch.r_pullup:.10g}",
             "Q1 g b 0 QSW", f"RB out b {latch.r_base:.10g}"]
    if latch.r_pulldown is not None:
        lines.append(f"RPD b 0 {latch.r_pulldown:.10g}")
    if latch.r_off_load is not None:
        lines.append(f"ROFF out 0 {latch.r_off_load:.10g}")
    return "\n".join(lines)


def latch_on(tmp_path, latch: Latch, cell_V: float, load_A: float, temp_C: float) -> dict:
    """The latch held on (operating point from the on state) with the load drawing
    load_A: node voltages of the gate, the base and the output, and the cell."""
    body = (f"VCELL cell 0 DC {cell_V:.10g}\n{_network(latch)}\nILOAD out 0 DC {load_A:.10g}\n"
            f".nodeset v(g)=0.05 v(out)={cell_V - 0.05:.10g} v(b)=0.7")
    return run(_deck("latch on", body, "op\nprint v(g) v(b) v(out) v(cell)", temp_C), tmp_path,
               f"latch_on_{temp_C:g}")


def latch_power_up(tmp_path, latch: Latch, cell_V: float, leak_A: float, temp_C: float,
                   name: str) -> dict:
    """A cell put in (0 to cell_V in 1 ms) with the product off and the switch
    leaking leak_A from the cell into the output (in proportion to the cell's
    voltage as it rises): the gate, base and output 200 ms later."""
    body = (f"VCELL cell 0 DC 0 PWL(0 0 1m {cell_V:.10g})\n{_network(latch)}\n"
            f"BLEAK cell out I=({leak_A:.10g})*v(cell)/{cell_V:.10g}")
    control = ("tran 20u 200m 0 50u\nlet n = length(v(out)) - 1\n"
               "print v(g)[n] v(b)[n] v(out)[n] v(cell)[n]")
    return run(_deck("latch power-up", body, control, temp_C), tmp_path, name)


def latch_turn_off(tmp_path, latch: Latch, cell_V: float, load_ohm: float, vt_V: float,
                   temp_C: float) -> float:
    """Time [s] from the base being pulled to ground (a switch of 1 ohm at t = 1 ms,
    as a pushbutton or a microcontroller pin does) until the gate is within vt_V of
    the source, the latch on before it with a resistive load."""
    body = (f"VCELL cell 0 DC {cell_V:.10g}\n{_network(latch)}\nRLOAD out 0 {load_ohm:.10g}\n"
            "VOFF ctl 0 DC 0 PULSE(0 1 1m 1u 1u 1 2)\nSOFF b 0 ctl 0 SWOFF\n"
            ".model SWOFF SW(VT=0.5 VH=0.1 RON=1 ROFF=1e12)\n"
            f".nodeset v(g)=0.05 v(out)={cell_V - 0.05:.10g} v(b)=0.7")
    control = (f"tran 1u 60m 0 20u\nmeas tran t_vt when v(g)={cell_V - vt_V:.10g} rise=1\n"
               "print t_vt")
    out = run(_deck("latch turn-off", body, control, temp_C), tmp_path, f"latch_off_{temp_C:g}")
    return out["t_vt"] - 1e-3
