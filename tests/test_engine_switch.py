"""The saturated switch through the engine, method v2 (models/README.md §4, §6),
worked by hand.

Each test writes a small catalogue of invented parts, reads a requirement
file from TOML text with the real parser and runs `evaluate_role`, so what is
checked is the wiring of the new keys and columns: Vbe(sat), the base
pull-down and the resistor tolerance, a base network that cannot turn the
switch on, an open base's leakage, gain far below the data and the reasons
and notes a user reads.

Sources, named again beside each check: Vbe falls about 2 mV/°C (Horowitz &
Hill); hFE rises about 0.5 %/°C (from memory); leakage doubles every 10 °C
(common practice); the base node by Kirchhoff's current law; an open base
leaks (1 + hFE)·Icbo (Sedra & Smith).
"""

from __future__ import annotations

from dataclasses import replace

import pytest

from picker.design.requirements import Resistors, parse_requirements
from picker.engine.evaluate import FAIL, NOTE_MEANINGS, PASS, UNKNOWN, notes
from picker.engine.reasons import reasons
from test_engine import part, requirements, row_of, run_role, switch_role, write_catalog

REL = 1e-4  # hand arithmetic rounded to 5-6 significant figures

# A small-signal NPN (invented) with the v2 columns: Vbe(sat) max and hFE max.
NPN = {"part": "TBX-2", "maker": "Testa Parts", "kind": "npn", "package": "SOT-23",
       "vceo_max_V": 45, "ic_max_A": 0.1, "hfe_min@0.1mA": 62, "hfe_min@1mA": 106,
       "hfe_min@10mA": 144, "vce_sat_mV@1mA": 40, "vce_sat_mV@10mA": 90,
       "vbe_on_V": 0.65, "vbe_sat_max_V": 0.80, "hfe_max": 400, "icbo_nA": 10,
       "price@1": 0.02, "price@1000": 0.01}


def latch(extra: str = "", ic: str = "45 uA", rb: str = "1 Mohm") -> str:
    return switch_role(name="latch", ic=ic, rb=rb, extra='base_drive = "supply"\n' + extra)


def test_vbe_sat_sets_the_base_current(tmp_path):
    """models/README.md §6: the base sits at Vbe(sat), 0.80 V at 25 °C here, not at
    the typical 0.65 V: at -20 °C 0.80 + 0.002·45 = 0.89 V (Horowitz & Hill),
    Ib = (3.0 - 0.89)/470 kΩ = 4.4894 µA (the old model's 0.74 V gave 4.5745 µA).
    Without Vbe(sat), Vbe(on) is used (0.74 V cold); without either, 0.75 V is
    assumed (0.84 V cold, Ib = 4.5957 µA) with the note `vbe assumed`."""
    rows = [NPN, part(NPN, part="TBX-ON", vbe_sat_max_V=None),
            part(NPN, part="TBX-NONE", vbe_sat_max_V=None, vbe_on_V=None)]
    df = write_catalog(tmp_path, rows)
    res = run_role(df, requirements(latch(rb="470 kohm")))
    got = {p: row_of(res, p) for p in ("TBX-2", "TBX-ON", "TBX-NONE")}
    assert got["TBX-2"]["vbe_cold_V"] == pytest.approx(0.89, rel=1e-12)
    assert got["TBX-2"]["ib_A"] == pytest.approx(2.11 / 470e3, rel=1e-12)
    assert got["TBX-ON"]["ib_A"] == pytest.approx(2.26 / 470e3, rel=1e-12)
    assert got["TBX-NONE"]["ib_A"] == pytest.approx(2.16 / 470e3, rel=1e-12)
    assert [("vbe assumed" in notes(r)) for r in got.values()] == [False, False, True]
    assert "vbe assumed" in NOTE_MEANINGS


def test_pull_down_and_resistor_tolerance_worked_example(tmp_path):
    """1 MΩ base resistor, 2.2 MΩ pull-down, 45 µA, 3.0 V cell at -20 °C:
    exact values (no [resistors] table):
        Ib = (3.0 - 0.89)/1 MΩ - 0.89/2.2 MΩ = 2.11 - 0.404545 = 1.705455 µA
    [resistors] tolerance 5 %: Rb at +5 %, the pull-down at -5 % (models/README.md §6):
        Ib = 2.11/1.05 MΩ - 0.89/2.09 MΩ = 2.009524 - 0.425837 = 1.583687 µA
    hFE at 45 µA continued below 0.1 mA: 62·(106/62)^(ln 0.45/ln 10) = 51.478,
    extrapolated; cold ×0.775 = 39.895. Overdrive 1.583687e-6·39.895/45e-6 = 1.4040
    < 2: saturation fails (exact values: 1.5120, fails too). Forced gain
    45/1.583687 = 28.41 > 10: Vce(sat) not guaranteed."""
    df = write_catalog(tmp_path, [NPN])
    req = requirements(latch('base_pulldown = "2.2 Mohm"'))
    exact = row_of(run_role(df, req), "TBX-2")
    r = row_of(run_role(df, replace(req, resistors=Resistors(tolerance=0.05))), "TBX-2")
    assert exact["ib_A"] == pytest.approx(1.705455e-6, rel=REL)
    assert r["ib_A"] == pytest.approx(2.11 / 1.05e6 - 0.89 / 2.09e6, rel=1e-12)
    assert r["ib_A"] == pytest.approx(1.583687e-6, rel=REL)
    assert r["hfe"] == pytest.approx(39.895, rel=REL)
    assert r["overdrive"] == pytest.approx(1.4040, rel=REL)
    assert exact["overdrive"] == pytest.approx(1.5120, rel=REL)
    assert r["check_saturation"] == FAIL and r["extrapolated"]
    assert r["forced_gain"] == pytest.approx(28.415, rel=REL) and r["not_guaranteed"]


def test_resistors_table_in_the_file_applies_to_a_given_value(tmp_path):
    """The same tolerance from the file's [resistors] table: series E12 without a
    tolerance means 10 % (common practice): Ib = 2.11/1.1 MΩ - 0.89/1.98 MΩ
    = 1.918182 - 0.449495 = 1.468687 µA."""
    df = write_catalog(tmp_path, [NPN])
    assert requirements(latch('base_pulldown = "2.2 Mohm"')).resistors is None
    body = ('[supply]\nmin = "3.0 V"\nmax = "4.2 V"\n[ambient]\nmin = "-20 degC"\nmax = "45 degC"\n'
            '[build]\nvolume = 1000\n[resistors]\nseries = "E12"\n[[role]]\n'
            + latch('base_pulldown = "2.2 Mohm"'))
    req = parse_requirements(body, "file.toml")
    assert req.resistors.tolerance == 0.10
    assert row_of(run_role(df, req), "TBX-2")["ib_A"] == pytest.approx(1.468687e-6, rel=REL)


def test_a_pull_down_that_keeps_the_switch_off(tmp_path):
    """1 MΩ from 3.0 V into a 100 kΩ pull-down: the network's open-circuit
    voltage is 3.0·100k/1.1M = 0.273 V, below Vbe 0.89 V (Thevenin): the
    transistor is off. Ib = 0, saturation fails whatever the gain, Vce(sat)
    is not guaranteed (a max_vce_sat limit is unknown), and the reason says
    why in words."""
    df = write_catalog(tmp_path, [NPN])
    req = requirements(latch('base_pulldown = "100 kohm"\nmax_vce_sat = "0.2 V"'))
    res = run_role(df, req)
    r = row_of(res, "TBX-2")
    assert r["ib_A"] == 0.0 and r["check_saturation"] == FAIL
    assert r["not_guaranteed"] and r["check_vce_sat"] == UNKNOWN
    why = reasons(r, res, req)
    assert why[0].startswith("off: the base drive 3 V through 1 MΩ cannot lift the base "
                             "against the 100 kΩ pull-down")
    assert "Vce(sat) not guaranteed: the switch is not turned on" in why


OPEN_BASE = [
    # (base_off, pull-down, hfe_max, expected off current [A], open-base figure?)
    # Icbo 10 nA at 25 °C -> 40 nA at 45 °C (doubling per 10 °C, common practice).
    ("driven", None, 400, 40e-9, False),
    # Open base: (1 + 400·1.1)·40 nA = 441·40 nA = 17.64 µA (Sedra & Smith; 0.5 %/°C from memory).
    ("open", None, 400, 441 * 40e-9, True),
    # No hfe_max: unknown.
    ("open", None, None, None, True),
    # 1 MΩ pull-down: 40 nA·1 MΩ = 0.04 V < 0.15 V: the leakage flows out through it.
    ("open", "1 Mohm", 400, 40e-9, False),
    # ... and then hfe_max is not needed.
    ("open", "1 Mohm", None, 40e-9, False),
    # 10 MΩ: 0.4 V across the junction: the base conducts, Iceo.
    ("open", "10 Mohm", 400, 441 * 40e-9, True),
]


@pytest.mark.parametrize("base_off, pulldown, hfe_max, expected, open_figure", OPEN_BASE)
def test_open_base_leakage(tmp_path, base_off, pulldown, hfe_max, expected, open_figure):
    """models/README.md §6, base_off: what the off-state current is at 45 °C."""
    df = write_catalog(tmp_path, [part(NPN, hfe_max=hfe_max)])
    extra = f'base_off = "{base_off}"\nmax_off_current = "1 uA"\n'
    if pulldown:
        extra += f'base_pulldown = "{pulldown}"\n'
    req = requirements(latch(extra, rb="470 kohm"))
    res = run_role(df, req)
    r = row_of(res, "TBX-2")
    assert bool(r["open_base"]) == open_figure
    if expected is None:
        assert r["check_off_current"] == UNKNOWN
        assert "no hfe_max" in "; ".join(reasons(r, res, req))
        return
    assert r["off_current_A"] == pytest.approx(expected, rel=1e-12)
    assert r["check_off_current"] == (PASS if expected <= 1e-6 else FAIL)
    if open_figure:
        assert "(open base: (1 + hFE max) × Icbo = (1 + 440) × 40 nA)" in reasons(r, res, req)[0]


def test_pull_down_tolerance_in_the_leakage_rule(tmp_path):
    """The pull-down at +tol in the leakage rule (models/README.md §6): 3.6 MΩ
    exact holds (40 nA·3.6 MΩ = 0.144 V < 0.15 V), at +5 % (3.78 MΩ, 0.1512 V)
    it does not, and the figure is Iceo."""
    df = write_catalog(tmp_path, [NPN])
    req = requirements(latch('base_off = "open"\nbase_pulldown = "3.6 Mohm"\n', rb="470 kohm"))
    assert not row_of(run_role(df, req), "TBX-2")["open_base"]
    req = replace(req, resistors=Resistors(tolerance=0.05))
    r = row_of(run_role(df, req), "TBX-2")
    assert r["open_base"] and r["off_current_A"] == pytest.approx(441 * 40e-9, rel=1e-12)


def test_zero_leakage_is_unknown_and_says_so(tmp_path):
    """icbo_nA = 0 with no hot point (models/README.md §4): unknown, not a pass,
    and the reason names the zero; with a hot point of 500 nA at 100 °C the
    doubling rule runs from it: 500·2^(-5.5) = 11.049 nA at 45 °C."""
    rows = [part(NPN, part="TBX-ZERO", icbo_nA=0),
            part(NPN, part="TBX-HOT", icbo_nA=0, icbo_hot_nA=500, icbo_hot_C=100)]
    df = write_catalog(tmp_path, rows)
    req = requirements(latch('max_off_current = "0.1 uA"', rb="470 kohm"))
    res = run_role(df, req)
    zero = row_of(res, "TBX-ZERO")
    assert zero["check_off_current"] == UNKNOWN
    assert "icbo_nA is 0 in the catalogue" in "; ".join(reasons(zero, res, req))
    hot = row_of(res, "TBX-HOT")
    assert hot["off_current_A"] == pytest.approx(500e-9 * 2 ** -5.5, rel=1e-12)
    assert hot["check_off_current"] == PASS


def test_far_below_data_note(tmp_path):
    """8 µA is under a tenth of the lowest hFE point (0.1 mA): the note is `far
    below data` (models/README.md §6); 45 µA is `extrapolated`; 5 mA is inside
    the data and Vce(sat) at 5 mA is between its points: no note."""
    df = write_catalog(tmp_path, [NPN])
    got = {}
    for ic in ("8 uA", "45 uA", "5 mA"):
        res = run_role(df, requirements(latch(ic=ic, rb="1 kohm")))
        got[ic] = notes(row_of(res, "TBX-2"))
    assert got == {"8 uA": ["far below data"], "45 uA": ["extrapolated"], "5 mA": []}
    assert {"far below data", "extrapolated", "not guaranteed"} <= set(NOTE_MEANINGS)


def test_vce_sat_continued_above_the_highest_point(tmp_path):
    """Vce(sat) 40 mV at 1 mA and 90 mV at 10 mA (Ic/Ib = 10) rises: at 20 mA it is
    continued, 90 + (20 - 10)/(10 - 1)·50 = 145.56 mV, `extrapolated`; base 1.8 V
    through 470 Ω: Ib = (1.8 - 0.89)/470 = 1.9362 mA, forced gain 10.33 > 10,
    `not guaranteed` too; through 330 Ω: 2.7576 mA, forced gain 7.25: guaranteed."""
    df = write_catalog(tmp_path, [NPN])
    for rb, guaranteed in (("470 ohm", False), ("330 ohm", True)):
        req = requirements(switch_role(ic="20 mA", rb=rb, extra='base_drive = "1.8 V"\n'))
        r = row_of(run_role(df, req), "TBX-2")
        assert r["vce_sat_V"] == pytest.approx(0.090 + 10 / 9 * 0.050, rel=1e-12)
        assert r["extrapolated"] and bool(r["not_guaranteed"]) != guaranteed
