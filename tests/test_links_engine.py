"""Linked roles in the engine (models/README.md §10): a pull-up and a base resistor
chosen by hand, the joint choice against a brute force over every pair, and the
`pair` check.

Sources: Ohm's and Kirchhoff's laws; IEC 60063's E24 series (from memory, as in
tests/test_eseries.py); the subthreshold swing's proportion to absolute
temperature (Sze, *Physics of Semiconductor Devices*) with 100 mV/decade at
25 °C (from memory); the rest of the arithmetic is models/README.md §4, §6 and §10
worked by hand in each docstring.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from conftest import DEMO
from picker.catalog.load import load_catalog
from picker.design.requirements import parse_requirements
from picker.engine.evaluate import FAIL, PASS, evaluate
from picker.engine.linked import _costs, _kind_rows, evaluate_link
from picker.engine.links import PairModel, links_of
from picker.engine.pairs import PairVerdict, brute_force_pair

HEAD = """
[supply]
min = "3.0 V"
max = "4.2 V"
[ambient]
min = "-20 degC"
max = "45 degC"
[build]
volume = 1000
[resistors]
series = "E24"
"""
LATCH = HEAD + """
[[role]]
name = "pass"
refs = ["Q1"]
use = "high-side-pmos"
load = "0.5 A"
max_drop = "60 mV"
gate_driver = "latch"
gate_pullup = "auto"
off_load = "10 kohm"
max_off_current = "20 uA"
[[role]]
name = "latch"
refs = ["Q2"]
use = "npn-switch"
base_from = "pass"
base_resistor = "auto"
base_pulldown = "100 kohm"
"""
# Two invented parts with round figures for the arithmetic.
HAND_CSV = """\
part,maker,kind,package,vds_max_V,vgs_max_V,id_max_A,vgs_th_min_V,vgs_th_max_V,rds_on_mohm@4.5V,rds_on_mohm@2.5V,idss_uA,rth_ja_C/W,tj_max_C,vceo_max_V,ic_max_A,hfe_min@0.01mA,hfe_min@0.1mA,hfe_min@1mA,vce_sat_mV@1mA,vce_sat_mV@10mA,vbe_sat_max_V,icbo_nA,price@1
HP-1,Handwork,pmos,SOT-23,20,8,3,0.5,1.0,40,60,1,250,150,,,,,,,,,,0.05
HN-1,Handwork,npn,SOT-23,,,,,,,,,350,150,45,0.1,80,100,120,50,80,0.75,50,0.01
"""


def hand_design(tmp_path, text=LATCH):
    path = tmp_path / "hand.csv"
    path.write_text(HAND_CSV, encoding="utf-8")
    return evaluate(load_catalog(path, source="test").df, parse_requirements(text, "hand.toml"))


def test_pull_up_and_base_resistor_by_hand(tmp_path):
    """A worked example of §10's choices, E24 at 5 %.

    Pull-up. The NPN leaks icbo 50 nA at 25 °C, doubling every 10 °C (§4): 200 nA at
    45 °C. The switch's threshold minimum 0.5 V falls 3 mV/°C: 0.5 - 0.003 x 20 =
    0.44 V at 45 °C, so held_off allows R (1.05) x 200 nA <= 0.34 V: R <= 1.619 Mohm.
    Its leakage, 1 uA doubling to 4 uA, is multiplied by 10^(V / S) with
    S = 100 mV x 318.15 / 298.15 = 106.708 mV/decade; the 20 uA limit allows
    10^(V/S) <= 5, V <= 106.708 mV x log10(5) = 74.58 mV, so R (1.05) x 200 nA <=
    74.58 mV: R <= 355.2 kohm. The largest E24 value under both is 330 kohm
    (346.5 kohm x 200 nA = 69.3 mV; 360 kohm would give 75.6 mV).

    The NPN's collector current is what the pull-up draws from a full cell at its low
    end: 4.2 V / (330 kohm x 0.95) = 4.2 / 313.5 kohm = 13.397 uA.

    Base resistor. The base is fed from the switched output, 3.0 V - 60 mV = 2.94 V.
    Vbe(sat) 0.75 V rises 2 mV/°C to 0.84 V at -20 °C. The 100 kohm pull-down at its low
    end (95 kohm) takes 0.84 / 95k = 8.842 uA; a gate driver needs Ib >= Ic / 10 =
    1.3397 uA (saturation's Ib hFE >= 2 Ic needs less: hFE at 13.4 uA is 82.3 between the
    10 uA and 100 uA points, 63.8 at -20 °C). So Rb (1.05) <= (2.94 - 0.84) /
    (8.842 + 1.3397) uA = 206.25 kohm, Rb <= 196.4 kohm: 180 kohm (200 kohm x 1.05 =
    210 kohm is too much).

    Gate drive: Vce(sat) below its lowest point (1 mA) is that point's 50 mV (§6), so
    the switch sees 3.0 - 0.05 = 2.95 V."""
    design = hand_design(tmp_path)
    link = design.links[0]
    assert link.chosen
    values = {r["key"]: r["ohm"] for r in link.resistors}
    assert values == {"gate_pullup": 330e3, "base_resistor": 180e3, "base_pulldown": 100e3}
    f = link.figures
    assert f["collector_current_A"] == pytest.approx(4.2 / 313.5e3, rel=1e-12)
    assert f["vgs_V"] == pytest.approx(2.95, abs=1e-12)
    assert f["gate_leak_V"] == pytest.approx(200e-9 * 346.5e3, rel=1e-9)
    s = 0.1 * 318.15 / 298.15
    switch = link.switch.frame.iloc[link.switch.chosen_row]
    assert switch["off_current_A"] == pytest.approx(4e-6 * 10 ** (0.0693 / s), rel=1e-9)
    assert switch["off_current_A"] == pytest.approx(17.845e-6, rel=1e-4)


def test_latch_base_and_drive_current_by_hand(tmp_path):
    """The base while off (§10 with the NPN's own leakage): the switch leaks 17.845 uA into
    the 10 kohm load and Rb + Rpd at their high end (189k + 105k = 294k): R_L || 294k =
    9671.05 ohm, the pull-down's share 105 / 294, so 17.845 uA x 9671.05 x 0.357143 =
    61.64 mV; the NPN's 200 nA flows out of its base into Rpd || (Rb + R_L) = 105k ||
    199k = 68.73 kohm: 13.75 mV. The base sits at 75.4 mV, under 0.15 V.

    Drive current while on (§9), from a full cell with the resistors at their low end:
    the pull-up 4.2 V / 313.5 kohm = 13.397 uA, the base resistor (4.2 - Vbe(45 °C) =
    4.2 - 0.71) V / 171 kohm = 20.409 uA: 33.806 uA."""
    design = hand_design(tmp_path)
    f = design.links[0].figures
    leak = 4e-6 * 10 ** (200e-9 * 346.5e3 / (0.1 * 318.15 / 298.15))
    shunt = 10e3 * 294e3 / 304e3
    expected = leak * shunt * 105 / 294 + 200e-9 * 105e3 * 199e3 / 304e3
    assert f["latch_base_V"] == pytest.approx(expected, rel=1e-9)
    assert f["latch_base_V"] == pytest.approx(0.07538, rel=1e-3)
    assert design.on_drive_current_A == pytest.approx(4.2 / 313.5e3 + 3.49 / 171e3, rel=1e-9)


def test_too_large_a_pull_down_fails_latch_off(tmp_path):
    """With a 2.2 Mohm pull-down the NPN's own 200 nA alone lifts its base by 200 nA x
    (2.31M || (Rb + 10k)), far past 0.15 V: latch_off fails and no pair is feasible."""
    design = hand_design(tmp_path, LATCH.replace('base_pulldown = "100 kohm"', 'base_pulldown = "2.2 Mohm"'))
    latch = design.roles[1]
    row = latch.frame.iloc[0]
    assert int(row["check_latch_off"]) == FAIL and row["latch_base_V"] > 0.15
    assert not design.links[0].chosen


def demo_variants():
    base = LATCH.replace('load = "0.5 A"', 'load = "1.2 A"')
    yield "latch", base
    yield "auto pull-down", base.replace('base_pulldown = "100 kohm"', 'base_pulldown = "auto"')
    yield "drive limit", base.replace('off_load = "10 kohm"', 'off_load = "10 kohm"\nmax_drive_current = "8 uA"')
    yield "given pull-up", base.replace('gate_pullup = "auto"', 'gate_pullup = "470 kohm"')
    yield "open load", base.replace('off_load = "10 kohm"\n', '')
    yield "tight drop", base.replace('max_drop = "60 mV"', 'max_drop = "45 mV"')
    yield "driver from a pin", (base.replace('base_from = "pass"', 'base_drive = "1.8 V"')
                                .replace('off_load = "10 kohm"\n', ''))


@pytest.mark.parametrize("name, text", list(demo_variants()), ids=[n for n, _ in demo_variants()])
def test_joint_choice_equals_a_brute_force_over_every_pair(name, text):
    """On the demo catalogue, each variant: the pair chosen is the one a look at every
    (driver, switch) pair gives by §10's order (cheapest, more preferred, smaller drop,
    smaller Vce(sat), catalogue order), judged by the same pair model."""
    df = load_catalog(DEMO, source="test").df
    req = parse_requirements(text, "variant.toml")
    link = links_of(req)[0]
    P, S = _kind_rows(df, link.partner), _kind_rows(df, link.switch)
    model = PairModel(link, req, P, S)

    def judge(p, s):
        out = model.evaluate(p, s)
        return PairVerdict(out["feasible"], out["switch"]["drop_V"], out["partner"]["vce_sat_V"])
    brute = brute_force_pair(_costs(P, link.partner, req)["cost"], _costs(S, link.switch, req)["cost"],
                             judge, driver_preferred=P.identity()["preferred"],
                             switch_preferred=S.identity()["preferred"])
    result = evaluate_link(df, link, req)
    if brute is None:
        assert not result.chosen
    else:
        assert result.chosen
        assert (result.partner.chosen_row, result.switch.chosen_row) == (brute.driver, brute.switch)
        assert result.pairs_evaluated <= len(P) * len(S)


def test_each_table_is_evaluated_with_the_other_choice_and_carries_pair(tmp_path):
    """The chosen parts head their tables; a driver's `pair` check is the chosen switch's
    feasibility with that driver, and the other way round."""
    df = load_catalog(DEMO, source="test").df
    req = parse_requirements(LATCH.replace('load = "0.5 A"', 'load = "1.2 A"'), "demo.toml")
    design = evaluate(df, req)
    lr = design.links[0]
    assert lr.chosen
    for table in (lr.switch, lr.partner):
        first = table.table.iloc[0]
        assert bool(first["feasible"]) and int(first["check_pair"]) == PASS
        assert table.choice["part"] == first["part"]
    link = links_of(req)[0]
    model = PairModel(link, req, _kind_rows(df, link.partner), _kind_rows(df, link.switch))
    n = len(lr.partner.frame)
    out = model.evaluate(np.arange(n), np.full(n, lr.switch.chosen_row))
    np.testing.assert_array_equal(lr.partner.frame["check_pair"].to_numpy() == PASS, out["switch_ok"])


STARVING = "HN-2,Handwork,npn,SOT-23,,,,,,,,,350,150,45,0.1,80,100,120,300,350,0.75,50,0.005\n"


def test_a_cheap_driver_that_starves_the_gate_fails_pair_with_the_reason(tmp_path):
    """HN-2 costs half of HN-1 and passes every check of its own, but its Vce(sat) of
    300 mV (held below its 1 mA point, §6) leaves 3.0 - 0.3 = 2.7 V of gate drive, and
    at 2.7 V HP-1's drop is over 30 mV (it is 28.5 mV at the 2.95 V that HN-1 leaves):
    the pair is HP-1 with HN-1, and HN-2 fails `pair` alone, with that reason."""
    path = tmp_path / "hand.csv"
    path.write_text(HAND_CSV + STARVING, encoding="utf-8")
    req = parse_requirements(LATCH.replace('max_drop = "60 mV"', 'max_drop = "30 mV"'), "hand.toml")
    design = evaluate(load_catalog(path, source="test").df, req)
    lr = design.links[0]
    assert lr.partner.choice["part"] == "HN-1"
    from picker.engine.reasons import reasons

    starving = lr.partner.table.set_index("part").loc["HN-2"]
    assert reasons(starving, lr.partner, req) == [
        "pair: its Vce(sat) leaves 2.7 V of gate drive, and Q1's drop then fails"]
    assert [p["part"] for p in lr.pair_only] == ["HN-2"]


def test_choose_shows_the_circuit_and_its_json(tmp_path):
    """`picker choose` on a linked file: the circuit section with the pair, the resistors
    as a schematic writes them (IEC 60062: 330k, 180k, 100k) and the margins; the JSON
    carries `links`, `on_drive_current_A` and the linked checks and figures."""
    import json

    from conftest import invoke

    csv, toml = tmp_path / "hand.csv", tmp_path / "hand.toml"
    csv.write_text(HAND_CSV, encoding="utf-8")
    toml.write_text(LATCH, encoding="utf-8")
    result = invoke("choose", str(toml), "--catalog", str(csv))
    assert result.exit_code == 0, result.output
    text = result.output
    assert "pass (Q1) and latch (Q2) as one circuit: soft-latch switch" in text
    for line in ("gate pull-up     330k (E24, 5 %, chosen)", "base resistor    180k (E24, 5 %, chosen)",
                 "base pull-down   100k (as given, 5 %)"):
        assert line in text, text
    assert "gate drive       2.95 V from a 3 V cell at -20 °C" in text
    doc = json.loads(invoke("choose", str(toml), "--catalog", str(csv), "--format", "json").stdout)
    link = doc["links"][0]
    assert link["pair"] == {"switch": "HP-1", "partner": "HN-1"}
    assert [r["code"] for r in link["resistors"]] == ["330k", "180k", "100k"]
    assert doc["on_drive_current_A"] == pytest.approx(4.2 / 313.5e3 + 3.49 / 171e3, rel=1e-9)
    switch, latch = doc["roles"]
    assert {"held_off", "pair"} <= set(switch["candidates"][0]["checks"])
    assert {"latch_off", "pair"} <= set(latch["candidates"][0]["checks"])
    assert switch["candidates"][0]["figures"]["gate_pullup_ohm"] == 330e3
    assert latch["candidates"][0]["figures"]["base_resistor_ohm"] == 180e3


def test_curve_draws_the_latch_margins_and_lineup_tries_the_circuit_as_built(tmp_path):
    """`picker curve --chart latch`: the chosen pair's margins against the cell's voltage
    (the resistors as chosen). Its lowest supply, like lineup's and the report's, is the
    circuit's as built: below 2.825 V the driver's base (its resistors fixed) no longer
    gives Ic/Ib <= 10, so its Vce(sat) is not guaranteed and the gate is not driven on.
    Worked: Ib = (V - 0.06 - 0.84) / 189k - 0.84 / 95k must reach 13.397 uA / 10, so
    V = 0.90 + 189k x (1.3397 + 8.8421) uA = 2.8244 V, shown rounded up to 2.825 V."""
    import json

    from conftest import invoke

    csv, toml = tmp_path / "hand.csv", tmp_path / "hand.toml"
    csv.write_text(HAND_CSV, encoding="utf-8")
    toml.write_text(LATCH, encoding="utf-8")
    result = invoke("curve", "--requirements", str(toml), "--role", "pass", "--chart", "latch",
                    "--catalog", str(csv), "--format", "json")
    assert result.exit_code == 0, result.output
    doc = json.loads(result.stdout)
    (chart,) = [c for c in doc["charts"] if c["chart"] == "latch"]
    labels = [s["label"] for s in chart["series"]]
    assert labels[:4] == ["Q1 drop", "Q1 gate drive", "Q2 saturation", "Q2 forced gain ≤ 10"]
    low = doc["lowest_supply"]["HP-1"]
    assert (low["status"], low["limit"], low["corner"]) == ("found", "gate_drive", "cold")
    assert low["V"] == pytest.approx(0.90 + 189e3 * (4.2 / 313.5e3 / 10 + 0.84 / 95e3), abs=2e-5)
    text = invoke("lineup", "HP-1", "--requirements", str(toml), "--role", "pass", "--catalog", str(csv))
    assert text.exit_code == 0 and "HP-1: meets 60 mV down to 2.825 V at -20 °C" in text.output
    not_linked = invoke("curve", "--requirements", str(toml.with_name("x.toml")), "--catalog", str(csv))
    assert not_linked.exit_code == 2
