"""The lowest working supply (picker/headroom.py) against closed forms done by
hand, and against the engine's own pass/fail either side of it.

Sources, named again beside each check:
- on-resistance R = R_fix + K / (Vg - Vt): the long-channel triode region of
  the square-law MOSFET (Sedra & Smith, *Microelectronic Circuits*); two
  datasheet points fix R_fix and K exactly (models/README.md §1);
- the drop at the load by the whole triode law, Vds = Vov - sqrt(Vov² - 2 K' I)
  (Sedra & Smith, triode region; models/README.md §1), and below the lowest
  rated drive the conservative extrapolation of models/README.md §1;
- R rises 0.5 %/°C and Vt falls 3 mV/°C: from memory (models/README.md §2);
- gate check vgs >= Vt(Ta) + 0.1 V: models/README.md §6 (common practice);
- Ib = (drive - Vbe) / Rb (Ohm's law) and Vbe falling about 2 mV/°C
  (Horowitz & Hill, *The Art of Electronics*); hFE rising 0.5 %/°C: from memory;
- a lithium-ion cell spans about 3.0 V (cut-off) to 4.2 V (full): common practice.

Tolerance: the solver stops when its bracket is under TOL_V = 10 µV and reports
the upper end, so it lies between the exact boundary and 10 µV above it
(BISECT, plus 1e-9 V of float rounding in the hand arithmetic).
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from picker.engine import evaluate as engine
from picker.engine import headroom
from picker.catalog.load import load_catalog
from picker.engine.evaluate import FAIL, PASS, evaluate_role
from picker.design.requirements import load_requirements, parse_requirements

from conftest import EXAMPLES

BISECT = headroom.TOL_V + 1e-9
STEP_V = 1e-3  # "just above / just below": 1 mV either side

HEADER = ("part,maker,kind,package,vds_max_V,vgs_max_V,id_max_A,vgs_th_max_V,vgs_th_tc_mV/C,"
          "rds_on_mohm@4.5V,rds_on_mohm@2.5V,idss_uA,rth_ja_C/W,tj_max_C,price@1\n")


def catalog(tmp_path, rows: str, header: str = HEADER):
    path = tmp_path / "parts.csv"
    path.write_text(header + rows, encoding="utf-8")
    cat = load_catalog(path, source="test")
    assert not cat.errors, [str(p) for p in cat.errors]
    return cat.df


def requirements(role: str, supply: str = 'min = "3.0 V"\nmax = "4.2 V"') -> object:
    return parse_requirements(f"""
[supply]
{supply}
[ambient]
min = "-20 degC"
max = "45 degC"
[build]
volume = 1000
[[role]]
name = "sw"
refs = ["Q1"]
{role}
""", "test.toml")


PASS_ROLE = ('use = "high-side-pmos"\nload = "1 A"\nmax_drop = "{drop}"\ngate_drive = "{drive}"\n'
             'gate_drive_drop = "{gdd}"')


def pass_role(drop="60 mV", drive="supply", gdd="0.1 V"):
    return requirements(PASS_ROLE.format(drop=drop, drive=drive, gdd=gdd))


@pytest.mark.parametrize("trial_rows", [headroom.TRIAL_ROWS, 1])
def test_closed_form_drop_limited_no_self_heating_no_threshold_drift(tmp_path, monkeypatch,
                                                                     trial_rows):
    """Both search forms: 32 sections a pass, and plain bisection (what very
    many parts get, here forced by allowing 1 trial row). k_vt = 0 (vgs_th_tc_mV/C = 0) and no rth_ja (Tj = Ta), so at the boundary
    the drop equals max_drop D exactly. With the whole triode law the
    channel's share c = D - I R_s satisfies c = Vov - sqrt(Vov² - 2 K' I), so
        Vov = c/2 + K' I / c,      V = Vt + Vov + gate_drive_drop,
        K' = K m, R_s = R_fix m, m = 1 + 0.005 (Ta - 25)   (models/README.md §2, from memory)
    (without the Vds²/2 term it would be Vov = K' I / c).

    Part: Vt = 1.0 V, 40 mΩ at 4.5 V, 60 mΩ at 2.5 V. Two points fix the line
    R = R_fix + K x, x = 1/(Vg - Vt) (Sedra & Smith triode region; models/README.md §1):
        x1 = 1/3.5 = 0.285714, x2 = 1/1.5 = 0.666667
        K = (60 - 40) / (0.666667 - 0.285714) = 52.5 mΩ·V
        R_fix = 40 - 52.5/3.5 = 25 mΩ
    I = 1 A, max_drop = 60 mV, gate_drive_drop = 0.1 V:
        hot 45 °C:   m = 1.1, c = 60 - 27.5 = 32.5 mV, K' = 57.75 mΩ·V
                     Vov = 0.01625 + 0.05775/0.0325 = 1.793173 V, V = 2.893173 V
                     (vgs 2.793 V: inside the rated 2.5-4.5 V)
        cold -20 °C: vgs would be below the lowest rated 2.5 V, so the
                     conservative rule: all channel, N = 25·1.5 + 52.5 = 90 mΩ·V,
                     K' = 90·0.775 = 69.75 mΩ·V, R_s = 0, c = 60 mV
                     Vov = 0.03 + 0.06975/0.06 = 1.1925 V, V = 2.2925 V
                     (vgs 2.1925 V, above the depth limit (2.5 + 1.0)/2 = 1.75 V)
    The gate check (vgs >= Vt + 0.1 V = 1.1 V) holds at both, so the drop binds;
    the worse corner is the hot one.
    """
    monkeypatch.setattr(headroom, "TRIAL_ROWS", trial_rows)
    df = catalog(tmp_path, "HRP-1,Testa,pmos,SOT-23,20,8,3,1.0,0,40,60,1,,150,0.1\n")
    req = pass_role()
    calls = []
    low = headroom.lowest_supply(df, req.roles[0], req, on_step=lambda: calls.append(1)).iloc[0]
    assert len(calls) == 1 + (4 if trial_rows > 1 else 20)  # log2(8.4 V / 10 µV) = 19.7
    hot = 1.0 + 0.0325 / 2 + 0.05775 / 0.0325 + 0.1
    cold = 1.0 + 0.06 / 2 + 0.06975 / 0.06 + 0.1
    assert 0 <= low["lowest_supply_hot_V"] - hot <= BISECT
    assert 0 <= low["lowest_supply_cold_V"] - cold <= BISECT
    assert low["lowest_supply_V"] == low["lowest_supply_hot_V"]
    assert (low["lowest_supply_status"], low["lowest_supply_limit"], low["lowest_supply_corner"]) == \
        ("found", "drop", "hot")
    # The same figure against the engine's own checks 1 mV either side.
    assert _works(df, req, hot + STEP_V) and not _works(df, req, hot - STEP_V)
    assert headroom.describe(low, req.roles[0], req) == \
        "meets 60 mV down to 2.894 V at 45 °C; below it the drop is over the limit"


@pytest.mark.parametrize("tc, cold, hot", [
    # k_vt = 0: V = Vt + 0.1 + gdd = 1.0 + 0.1 + 0.1 at both corners.
    ("0", 1.2, 1.2),
    # default 3 mV/°C (from memory, models/README.md §2): Vt(-20) = 1.0 + 0.003·45 = 1.135 V,
    # Vt(45) = 1.0 - 0.003·20 = 0.94 V; V = Vt(Ta) + 0.1 + 0.1.
    ("", 1.335, 1.14),
])
def test_closed_form_gate_limited(tmp_path, tc, cold, hot):
    """With a loose drop limit (1 V) the gate check binds (models/README.md §6):
    vgs = V - gdd >= Vt(Ta) + 0.1 V, so V = Vt(Ta) + 0.1 V + gdd. The part is
    rated down to 1.1 V (15 mΩ at 1.1 V, 5.4 mΩ at 3.5 V: K = 9.6/9.6 =
    1 mΩ·V, R_fix = 5 mΩ), so the depth limit (1.1 + Vt(Ta))/2 (1.05, 1.1175,
    1.02 V) stays below the gate's need (1.1, 1.235, 1.04 V). At the hot
    gate limit vgs = 1.04 V is below 1.1 V: all channel, N = 5·0.16 + 1 =
    1.8 mΩ·V, K' = 1.98 mΩ·V; with Vov = 0.1 V the drop is 0.1 - sqrt(0.01 -
    0.00396) = 22.3 mV < 1 V and 2 K' I = 0.004 < Vov² = 0.01 (ohmic): the
    drop does not bind."""
    header = HEADER.replace("rds_on_mohm@4.5V,rds_on_mohm@2.5V", "rds_on_mohm@3.5V,rds_on_mohm@1.1V")
    df = catalog(tmp_path, f"HRP-1,Testa,pmos,SOT-23,20,8,3,1.0,{tc},5.4,15,1,,150,0.1\n", header)
    req = pass_role(drop="1 V")
    low = headroom.lowest_supply(df, req.roles[0], req).iloc[0]
    assert 0 <= low["lowest_supply_cold_V"] - cold <= BISECT
    assert 0 <= low["lowest_supply_hot_V"] - hot <= BISECT
    assert low["lowest_supply_limit"] == "gate_drive" and low["lowest_supply_corner"] == "cold"
    worst = max(cold, hot)
    assert _works(df, req, worst + STEP_V) and not _works(df, req, worst - STEP_V)


@pytest.mark.parametrize("pulldown", [None, "47 kohm"])
def test_closed_form_bipolar_saturation(tmp_path, tiny_catalog, pulldown):
    """npn switch, base driven from the cell through Rb = 10 kΩ, Ic = 1 mA,
    overdrive 2 (models/README.md §6). Saturation holds while
        Ib·hFE(T) >= 2·Ic,  Ib = (V - Vbe(T)) / Rb - Vbe(T) / Rpd   (Ohm's and Kirchhoff's laws)
        V = Vbe(T) + Rb·(2·Ic / hFE(T) + Vbe(T) / Rpd)
    TQB-400 (conftest TINY_CSV): hFE min 100 at 1 mA; no Vbe in the catalogue, so
    0.75 V is assumed (models/README.md §6).
        cold -20 °C: Vbe = 0.75 + 0.002·45 = 0.84 V (Horowitz & Hill, -2 mV/°C),
                     hFE = 100·(1 - 0.005·45) = 77.5 (from memory)
                     V = 0.84 + 20/77.5 = 1.098065 V; with a 47 kΩ pull-down
                     + 10k·0.84/47k = 0.178723 V more: 1.276788 V
        hot 45 °C:   Vbe = 0.75 - 0.002·20 = 0.71 V, hFE = 100·1.1 = 110
                     V = 0.71 + 20/110 = 0.891818 V; pull-down: + 0.151064 = 1.042882 V
    """
    df = load_catalog(tiny_catalog, source="test").df
    extra = "" if pulldown is None else f'\nbase_pulldown = "{pulldown}"'
    req = requirements('use = "npn-switch"\ncollector_current = "1 mA"\nbase_drive = "supply"\n'
                       'base_resistor = "10 kohm"' + extra)
    cold, hot = 0.84 + 20 / 77.5, 0.71 + 20 / 110
    if pulldown:
        cold, hot = cold + 10 * 0.84 / 47, hot + 10 * 0.71 / 47
    low = headroom.lowest_supply(df[df["kind"] == "npn"], req.roles[0], req).iloc[0]
    assert 0 <= low["lowest_supply_cold_V"] - cold <= BISECT
    assert 0 <= low["lowest_supply_hot_V"] - hot <= BISECT
    assert (low["lowest_supply_status"], low["lowest_supply_limit"], low["lowest_supply_corner"]) == \
        ("found", "saturation", "cold")
    v = low["lowest_supply_V"]
    for dv, expected in ((STEP_V, PASS), (-STEP_V, FAIL)):
        table = evaluate_role(df, req.roles[0], _with_supply_min(req, v + dv)).table
        assert int(table["check_saturation"].iloc[0]) == expected


def test_fixed_gate_drive_does_not_depend_on_the_supply(tmp_path):
    """gate_drive = 1.8 V (a microcontroller pin), gdd 0: vgs = 1.8 V whatever
    the cell does, so the part works at every supply or at none.
    1.8 V is below the lowest rated 2.5 V: conservative (models/README.md §1),
    N = 25·1.5 + 52.5 = 90 mΩ·V; at 1 A with Vov = 0.8 V (k_vt = 0):
    hot K' = 99 mΩ·V, drop = 0.8 - sqrt(0.64 - 0.198) = 135.2 mV;
    cold K' = 69.75 mΩ·V, drop = 0.8 - sqrt(0.64 - 0.1395) = 92.5 mV.
    - 60 mV limit at 1 A: never (limit drop).
    - 150 mV: both pass: any."""
    df = catalog(tmp_path, "HRP-1,Testa,pmos,SOT-23,20,8,3,1.0,0,40,60,1,,150,0.1\n")
    for drop, status, limit in (("60 mV", "never", "drop"), ("150 mV", "any", "")):
        req = pass_role(drop=drop, drive="1.8 V", gdd="0 V")
        low = headroom.lowest_supply(df, req.roles[0], req).iloc[0]
        assert (low["lowest_supply_status"], low["lowest_supply_limit"]) == (status, limit)
        assert np.isnan(low["lowest_supply_V"])
        # the engine agrees at both ends of the cell's range
        for v in (3.0, 4.2):
            assert _works(df, req, v) == (status == "any")
    assert headroom.short(low) == "any"


def test_never_and_unknown(tmp_path):
    """10 mV at 1 A hot needs R·1.1 <= 10 mΩ, but R_fix alone is 25 mΩ: no
    supply up to the search top (2 × 4.2 V) works. A part with no on-resistance
    point cannot be decided."""
    df = catalog(tmp_path, "HRP-1,Testa,pmos,SOT-23,20,8,3,1.0,0,40,60,1,,150,0.1\n"
                           "HRP-2,Testa,pmos,SOT-23,20,8,3,1.0,0,,,1,,150,0.1\n")
    req = pass_role(drop="10 mV")
    low = headroom.lowest_supply(df, req.roles[0], req)
    assert low["lowest_supply_status"].tolist() == ["never", "unknown"]
    assert low["lowest_supply_limit"].tolist() == ["drop", ""]
    assert "up to 8.4 V" in headroom.describe(low.iloc[0], req.roles[0], req)


def test_demo_roles_agree_with_the_engine_either_side():
    """Every demo part of every role driven from the cell, with the engine's
    whole model (fit, self-heating, temperature coefficients, two-point
    leakage): at the figure + 1 mV the engine's supply-dependent checks pass,
    at - 1 mV one of them does not."""
    df = load_catalog(None).df
    req = load_requirements(EXAMPLES / "kettlewick-power.toml")
    checked = 0
    for role in req.roles:
        if not headroom.supply_driven(role):
            continue
        parts = df[df["kind"] == role.kind]
        low = headroom.lowest_supply(parts, role, req)
        for index, row in low[low["lowest_supply_status"] == "found"].iterrows():
            one = parts.loc[[index]]
            v = row["lowest_supply_V"]
            assert _works(one, req, v + STEP_V, role), (role.name, index, v)
            assert not _works(one, req, v - STEP_V, role), (role.name, index, v)
            checked += 1
    assert checked > 40


def test_solved_for_the_whole_catalogue_at_once(tmp_path):
    """The solve is vectorised: the number of engine evaluations is fixed by
    the bisection (1 + 20 halvings, both corners stacked in each evaluation),
    not by the number of parts. (Its speed is measured in scripts/, not here.)"""
    rng = np.random.default_rng(7)
    n = 5000
    vt = rng.uniform(0.4, 1.5, n).round(2)
    r45 = rng.uniform(15, 80, n).round(1)
    r25 = (r45 * rng.uniform(1.1, 1.6, n)).round(1)
    rows = "".join(f"SYN-{i},Synth,pmos,SOT-23,20,8,3,{vt[i]},,{r45[i]},{r25[i]},1,300,150,0.1\n"
                   for i in range(n))
    df = catalog(tmp_path, rows)
    req = load_requirements(EXAMPLES / "kettlewick-power.toml")
    role = req.role("cell-switch")
    calls = []
    low = headroom.lowest_supply(df, role, req, on_step=lambda: calls.append(1))
    # 10,000 rows (both corners): 7 sections a pass (6 trials per part within
    # 65,536 rows); log(8.4 V / 10 µV) / log 7 = 13.64 / 1.946 = 7.01, so 8
    # passes after the one at the top
    assert headroom.sections(2 * n) == 7
    assert len(calls) == headroom.evaluations(role, req, n_parts=n) == 1 + 8
    # spot-check a sample against the engine
    found = low[low["lowest_supply_status"] == "found"]
    assert len(found) > 100
    for index, row in found.sample(15, random_state=1).iterrows():
        v = row["lowest_supply_V"]
        assert _works(df.loc[[index]], req, v + STEP_V, role)
        assert not _works(df.loc[[index]], req, v - STEP_V, role)


def test_display_rounds_up():
    """A figure shown rounded down would claim the part works where it does not."""
    assert headroom.shown_V(2.8761) == 2.877
    assert headroom.shown_V(2.877) == 2.877
    assert headroom.format_V(2.87601) == "2.877 V"


# -- helpers -----------------------------------------------------------------------

def _with_supply_min(req, v):
    return dataclasses.replace(req, supply=dataclasses.replace(req.supply, min_V=v))


def _works(df, req, v, role=None) -> bool:
    """The engine's own verdict (evaluate_role, both corners, nothing replaced
    but the supply minimum) on the checks the supply can change."""
    role = role or req.roles[0]
    table = evaluate_role(df, role, _with_supply_min(req, v)).table
    row = table.iloc[0]
    if role.is_pass_switch:
        return (int(row["check_gate_drive"]) == PASS and int(row["check_drop"]) == PASS
                and int(row["check_tj"]) != FAIL)
    return int(row["check_saturation"]) == PASS


def test_at_supply_matches_the_engine_corner_figures():
    """at_supply with one corner's temperature gives the engine's per-corner
    drop (engine.pass_switch computes drop_cold_V / drop_hot_V itself) wherever
    the gate is driven on at both corners; where it is not, the engine gives no
    on-state figure at all, and at_supply still gives the corner's own."""
    df = load_catalog(None).df
    req = load_requirements(EXAMPLES / "kettlewick-power.toml")
    role = req.role("cell-switch")
    parts = df[df["kind"] == "pmos"]
    full = engine.pass_switch(parts, role, req)
    on = (full["check_gate_drive"] == PASS).to_numpy()
    assert 0 < on.sum() < len(on)
    for corner in headroom.CORNERS:
        one = headroom.at_supply(parts, role, req, req.supply.min_V,
                                 headroom.corner_temperature(req, corner))
        np.testing.assert_array_equal(one["drop_V"].to_numpy()[on],
                                      full[f"drop_{corner}_V"].to_numpy()[on])
        assert np.isnan(full[f"drop_{corner}_V"].to_numpy()[~on]).all()


@pytest.mark.parametrize("role_name", ["cell-switch", "latch"])
def test_engine_takes_one_supply_per_part(role_name):
    """The contract the solver relies on: engine.pass_switch and
    engine.saturated_switch accept supply.min as one value per part, and each
    row is then exactly what a scalar supply gives that part."""
    df = load_catalog(None).df
    req = load_requirements(EXAMPLES / "kettlewick-power.toml")
    role = req.role(role_name)
    parts = df[df["kind"] == role.kind]
    supply = np.linspace(2.0, 4.2, len(parts))
    evaluate = engine.pass_switch if role.is_pass_switch else engine.saturated_switch
    together = evaluate(parts, role, _with_supply_min(req, supply))
    columns = [c for c in together.columns if c.startswith("check_")] + \
        (["drop_V", "tj_C", "vgs_V"] if role.is_pass_switch else ["ib_A", "overdrive"])
    for i in range(len(parts)):
        alone = evaluate(parts.iloc[[i]], role, _with_supply_min(req, float(supply[i])))
        for c in columns:
            a, b = together[c].iloc[i], alone[c].iloc[0]
            assert (a == b) or (np.isnan(a) and np.isnan(b)), (role_name, i, c)
