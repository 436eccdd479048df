"""Method v2 through the engine, the requirement file and the screens, worked
by hand (picker/models/README.md §1, §3, §5, §6).

The part of the method document's worked examples: 45 mΩ at 4.5 V, 60 mΩ at
2.5 V, vgs_th_max_V 1.0 V; fit K = 0.039375 Ω·V, R_fix = 0.03375 Ω (by hand in
tests/test_models_mosfet.py). Temperature coefficients are switched off in
the catalogue row and both ambient corners are 25 °C unless a test says
otherwise, so each number below is the bare formula. Sources: Sedra & Smith
(triode region: R = R_fix + K/(Vg - Vt) at small Vds, and Id = k (Vov Vds -
Vds²/2)), JEDEC JESD51 (Tj = Ta + P θJA).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest

from conftest import EXAMPLES, invoke
from picker.catalog.load import load_catalog
from picker.design.requirements import parse_requirements
from picker.engine.evaluate import FAIL, PASS, UNKNOWN, evaluate_role
from picker.engine.reasons import reasons

PART = {"part": "TVX-1", "maker": "Testa Parts", "kind": "nmos", "package": "SOT-23",
        "vds_max_V": 20, "vgs_max_V": 8, "id_max_A": 10, "vgs_th_max_V": 1.0,
        "rds_on_mohm@4.5V": 45, "rds_on_mohm@2.5V": 60, "vgs_th_tc_mV/C": 0, "rds_tc_pct/C": 0,
        "idss_uA": 1, "tj_max_C": 150, "price@1": 0.1}


def catalog(tmp_path, **changes):
    row = {**PART, **changes}
    row = {k: v for k, v in row.items() if v is not None}
    path = tmp_path / "v2.csv"
    path.write_text(",".join(row) + "\n" + ",".join(str(v) for v in row.values()) + "\n")
    cat = load_catalog(path, source="test")
    assert not cat.errors, [str(p) for p in cat.errors]
    return cat.df


def role_req(drive="1.8 V", load="1 mA", margins="", ambient=("25 degC", "25 degC"),
             max_drop="5 V", extra=""):
    return parse_requirements(f"""
[supply]
min = "3.0 V"
max = "4.2 V"
[ambient]
min = "{ambient[0]}"
max = "{ambient[1]}"
[build]
volume = 1
[margins]
{margins}
[[role]]
name = "sw"
refs = ["Q1"]
use = "low-side-nmos"
load = "{load}"
max_drop = "{max_drop}"
gate_drive = "{drive}"
gate_drive_drop = "0 V"
{extra}
""", "v2.toml")


def row(df, req):
    result = evaluate_role(df, req.roles[0], req)
    return result.table.iloc[0], result


@pytest.mark.parametrize("mode, ohm", [
    # conservative: N = 0.03375·1.5 + 0.039375 = 0.09 Ω·V, R = 0.09/0.8 = 112.5 mΩ
    ("conservative", 0.1125),
    # fit: 0.03375 + 0.039375/0.8 = 82.97 mΩ
    ("fit", 0.03375 + 0.039375 / 0.8),
])
def test_extrapolation_modes_below_the_lowest_rated_drive(tmp_path, mode, ohm):
    """At 1.8 V (below the lowest rated 2.5 V) and 1 mA (the small-Vds limit:
    the whole law adds x/2 = K' I / (2 Vov²) = 7e-5): Rds(on) as worked in
    picker/models/README.md §1; the note `extrapolated`; all checks decided."""
    r, _ = row(catalog(tmp_path), role_req(margins=f'extrapolation = "{mode}"'))
    assert r["rds_on_ohm"] == pytest.approx(ohm, rel=2e-4)
    assert r["extrapolated"]
    assert r["check_ohmic"] == PASS and r["check_drop"] == PASS


def test_no_extrapolation_leaves_the_on_state_unknown(tmp_path):
    """extrapolation = "none": below 2.5 V no figure; ohmic, drop and tj
    unknown (§1, §5); the note is still given, and the reason says why."""
    r, result = row(catalog(tmp_path), role_req(margins='extrapolation = "none"'))
    assert np.isnan(r["drop_V"]) and np.isnan(r["rds_on_ohm"]) and pd.isna(r["corner"])
    assert r["vgs_V"] == pytest.approx(1.8)
    for check in ("ohmic", "drop", "tj"):
        assert r[f"check_{check}"] == UNKNOWN, check
    assert r["extrapolated"]
    why = reasons(r, result, role_req())
    assert any("below the lowest rated drive 2.5 V" in w and 'extrapolation = "none"' in w
               for w in why), why


@pytest.mark.parametrize("mode", ["conservative", "fit", "none"])
def test_the_depth_limit_holds_in_every_mode(tmp_path, mode):
    """(2.5 + 1.0)/2 = 1.75 V: at 1.74 V no figure in any mode; at 1.76 V
    (conservative, fit) there is one (§1)."""
    df = catalog(tmp_path)
    deep, result = row(df, role_req(drive="1.74 V", margins=f'extrapolation = "{mode}"'))
    assert np.isnan(deep["drop_V"]) and deep["check_drop"] == UNKNOWN
    assert deep["depth_limit_V"] == pytest.approx(1.75)
    why = reasons(deep, result, role_req())
    assert any(w.startswith("ohmic, drop, tj unknown: the 1.74 V drive is below 1.75 V, "
                            "half-way from the lowest rated drive") for w in why), why
    above, _ = row(df, role_req(drive="1.76 V", margins=f'extrapolation = "{mode}"'))
    assert np.isfinite(above["drop_V"]) == (mode != "none")


def test_the_channel_saturates_at_the_load(tmp_path):
    """1.8 V, conservative: K' = 0.09 Ω·V, Vov = 0.8 V, so the channel carries
    at most 0.64/0.18 = 3.556 A (§1). At 3.6 A: `ohmic` fails, `drop` fails,
    `tj` unknown, no figures; the reason names the 3.56 A. At 3.5 A it carries
    it: drop = 0.8 - sqrt(0.64 - 0.63) = 700 mV."""
    df = catalog(tmp_path)
    r, result = row(df, role_req(load="3.6 A"))
    assert (r["check_ohmic"], r["check_drop"], r["check_tj"]) == (FAIL, FAIL, UNKNOWN)
    assert np.isnan(r["drop_V"]) and r["saturates"]
    assert r["ohmic_max_A"] == pytest.approx(0.64 / 0.18, rel=1e-9)
    assert any("carries at most 3.56 A" in w for w in reasons(r, result, role_req()))
    ok, _ = row(df, role_req(load="3.5 A"))
    assert ok["check_ohmic"] == PASS
    assert ok["drop_V"] == pytest.approx(0.8 - math.sqrt(0.64 - 0.18 * 3.5), rel=1e-9)


def test_no_credit_above_the_highest_rated_drive_and_the_boosted_gate_rating(tmp_path):
    """One point, 70 mΩ at 2.5 V, driven at 10 V from a boosted rail: the
    part is evaluated at 2.5 V (K = 0.105 Ω·V, Vov = 1.5 V; at 10 mA the
    drop per ampere is 0.07·(1 + x/2), x = K I / Vov² = 4.7e-4), `vgs_V` is still 10 V, the note is
    `extrapolated`, and the gate rating is checked against the 10 V the gate
    sees (§6): 8 V · 0.8 = 6.4 V fails, 12.5 V · 0.8 = 10 V passes."""
    df = catalog(tmp_path, **{"rds_on_mohm@4.5V": None, "rds_on_mohm@2.5V": 70})
    r, _ = row(df, role_req(drive="10 V", load="10 mA"))
    assert r["rds_on_ohm"] == pytest.approx(0.070 * (1 + 0.105 * 0.01 / 2.25 / 2), rel=1e-4)
    assert r["vgs_V"] == 10.0 and r["extrapolated"]
    assert r["check_vgs_rating"] == FAIL
    assert r["gate_swing_V"] == 10.0
    rated, _ = row(catalog(tmp_path, vgs_max_V=12.5, **{"rds_on_mohm@4.5V": None,
                                                         "rds_on_mohm@2.5V": 70}),
                   role_req(drive="10 V", load="10 mA"))
    assert rated["check_vgs_rating"] == PASS


def test_rth_factor_multiplies_every_theta(tmp_path):
    """All-fixed part (50 mΩ at 2.5 and 4.5 V: K = 0), 2 A, θJA 250 °C/W,
    a = 0.5 %/°C, Ta = 45 °C. Closed form Tj = (Ta + c (1 - 25a)) / (1 - c a)
    with c = I² R25 θ (JEDEC JESD51 balance): factor 1: c = 50, Tj =
    88.75/0.75 = 118.33 °C; factor 1.5: c = 75, Tj = (45 + 65.625)/0.625 =
    177.0 °C."""
    df = catalog(tmp_path, **{"rds_on_mohm@4.5V": 50, "rds_on_mohm@2.5V": 50,
                              "rds_tc_pct/C": None, "rth_ja_C/W": 250})
    for factor, expected in ((1.0, 118.3333), (1.5, 177.0)):
        r, _ = row(df, role_req(drive="4.5 V", load="2 A", margins=f"rth_factor = {factor}",
                                ambient=("45 degC", "45 degC")))
        assert r["tj_C"] == pytest.approx(expected, abs=0.01)


def test_runaway_by_saturation_as_the_junction_warms(tmp_path):
    """One point, 300 mΩ at 2.5 V (K = 0.45 Ω·V), driven at 2.5 V with 1 A,
    θJA 400 °C/W, the threshold held (k_vt = 0) and R rising 0.5 %/°C: at
    25 °C 2 K' I = 0.9 < Vov² = 2.25 (ohmic passes), but K' grows with m(T)
    and the channel saturates where m = 2.25/0.9 = 2.5, at 325 °C, before any
    balance is reached (the drop at 25 °C is 1.5 - sqrt(2.25 - 0.9) = 0.338 V,
    135 °C of heating, and it grows faster than the junction warms): thermal runaway, `tj` and `drop` fail, `ohmic`
    passes, no figures (§3, §5)."""
    df = catalog(tmp_path, **{"rds_on_mohm@4.5V": None, "rds_on_mohm@2.5V": 300,
                              "rds_tc_pct/C": None, "rth_ja_C/W": 400})
    r, result = row(df, role_req(drive="2.5 V", load="1 A"))
    assert r["runaway"] and r["runaway_saturates"]
    assert (r["check_ohmic"], r["check_drop"], r["check_tj"]) == (PASS, FAIL, FAIL)
    assert np.isnan(r["tj_C"]) and np.isnan(r["drop_V"]) and np.isnan(r["rds_on_ohm"])
    why = reasons(r, result, role_req())
    assert "thermal runaway: the channel saturates as the junction warms" in why


@pytest.mark.parametrize("text, fragment", [
    ('extrapolation = "wild"', "'wild' must be \"conservative\" or \"fit\" or \"none\""),
    ('extrapolation = "fitt"', "did you mean 'fit'?"),
    ("rth_factor = -1", "must be above zero"),
])
def test_margin_keys_are_checked(tmp_path, text, fragment):
    path = tmp_path / "bad.toml"
    path.write_text(f"""[supply]
min = "3.0 V"
max = "4.2 V"
[ambient]
min = "-20 degC"
max = "45 degC"
[build]
volume = 10
[margins]
{text}
[[role]]
name = "sw"
refs = ["Q1"]
use = "low-side-nmos"
load = "1 A"
max_drop = "50 mV"
""")
    result = invoke("choose", str(path))
    assert result.exit_code == 2
    line = result.stderr.strip().splitlines()[-1]
    assert line.startswith(f"Error: {path}:10") and fragment in line, line


def test_choose_prints_a_legend_for_the_notes_that_appear():
    """The lantern's cell switch driven from a fixed 5 V (less the driver's
    0.3 V: 4.7 V, above the 4.5 V most parts are rated at), so the feasible
    parts carry `extrapolated`; the hand warmer's heater, where one rejected
    part runs away. The legend under the tables explains each in one
    sentence citing the method document, and names no note that does not
    appear (invented demo data)."""
    result = invoke("choose", str(EXAMPLES / "kettlewick-power.toml"), "--role", "cell-switch",
                    "--gate-drive", "5V")
    assert result.exit_code == 0, result.output
    out = result.stdout
    legend = out[out.index("What the notes mean:"):out.index("Design summary:")]
    assert "  extrapolated: evaluated outside the drives" in legend
    assert "picker/models/README.md §1" in legend
    assert "thermal runaway" not in legend and "not guaranteed" not in legend
    warmer = invoke("choose", str(EXAMPLES / "kettlewick-warmer.toml"), "--role", "heater",
                    "--all").stdout
    legend = warmer[warmer.index("What the notes mean:"):warmer.index("Design summary:")]
    assert "  thermal runaway: no junction temperature below 1000 °C" in legend
    assert "extrapolated" not in legend  # no feasible heater part is evaluated outside its drives


def test_json_of_a_runaway_part_has_no_figures_but_the_drive():
    """§5: a runaway part's on-state figures and corner are null; vgs_V is given."""
    result = invoke("choose", str(EXAMPLES / "kettlewick-warmer.toml"), "--role", "heater",
                    "--format", "json")
    doc = json.loads(result.stdout)
    cand = next(c for c in doc["roles"][0]["candidates"] if c["part"] == "QLM-2N12X")
    assert cand["checks"]["tj"] == "fail" and cand["checks"]["drop"] == "fail"
    assert cand["checks"]["ohmic"] == "pass"
    for figure in ("rds_on_ohm", "drop_V", "loss_W", "tj_C", "corner"):
        assert cand["figures"][figure] is None, figure
    assert cand["figures"]["vgs_V"] == pytest.approx(1.8)
