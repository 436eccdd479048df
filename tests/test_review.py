"""`picker review`: the drop-in rule, the savings arithmetic, consolidation,
requirement-based proposals, and a BOM file that is never touched.

Outside references: the on-resistance curve through a part's datasheet points
is the long-channel triode model of models/README.md §1 (Sedra & Smith, MOSFET triode
region), the gain interpolation the log-log rule of models/README.md §6, the hot
leakage the two-point exponential of models/README.md §4; each hand computation is
written beside its row. The prices and parts are invented test data."""

import json

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from conftest import DEMO, EXAMPLES, ROOT, invoke, run_cli, sha256
from picker.review.bom import read_bom
from picker.catalog.load import load_catalog
from picker.errors import CatalogError, UsageError
from picker.review.propose import Options, drop_ins, review

DATA = ROOT / "tests" / "data" / "review"
DEMO_BOM = EXAMPLES / "kettlewick-bom.csv"
POWER = EXAMPLES / "kettlewick-power.toml"

# -- the drop-in rule: truth tables ------------------------------------------------------------

MOS_COLUMNS = ["part", "maker", "kind", "package", "status", "vds_max_V", "vgs_max_V", "id_max_A",
               "vgs_th_max_V", "rds_on_mohm@10V", "rds_on_mohm@4.5V", "rds_on_mohm@2.5V",
               "rds_on_mohm@1.8V", "idss_uA", "idss_hot_uA", "idss_hot_C", "rth_ja_C/W",
               "tj_max_C", "price@1"]
MOS_INCUMBENT = {"vds_max_V": 20, "vgs_max_V": 8, "id_max_A": 3, "vgs_th_max_V": 1.0,
                 "rds_on_mohm@4.5V": 40, "rds_on_mohm@2.5V": 60, "idss_uA": 1, "idss_hot_uA": 10,
                 "idss_hot_C": 85, "rth_ja_C/W": 300, "tj_max_C": 150}
BJT_COLUMNS = ["part", "maker", "kind", "package", "status", "vceo_max_V", "ic_max_A",
               "hfe_min@0.1mA", "hfe_min@1mA", "hfe_min@10mA", "vce_sat_mV@10mA",
               "vce_sat_mV@100mA", "vce_sat_mV@200mA", "icbo_nA", "icbo_hot_nA", "icbo_hot_C",
               "rth_ja_C/W", "tj_max_C", "price@1"]
BJT_INCUMBENT = {"vceo_max_V": 45, "ic_max_A": 0.1, "hfe_min@0.1mA": 150, "hfe_min@1mA": 200,
                 "hfe_min@10mA": 200, "vce_sat_mV@10mA": 250, "vce_sat_mV@100mA": 600,
                 "icbo_nA": 15, "icbo_hot_nA": 5000, "icbo_hot_C": 150, "rth_ja_C/W": 330,
                 "tj_max_C": 150}
NEGATIVE = {"vds_max_V", "vgs_max_V", "id_max_A", "vgs_th_max_V", "vceo_max_V", "ic_max_A"}

# (case, change to the candidate, options, expected: "ok", "absent" or the start of the reason)
MOS_ROWS = [
    ("identical", {}, {}, "ok"),
    ("higher ratings", {"vds_max_V": 30, "vgs_max_V": 12, "id_max_A": 5, "tj_max_C": 175}, {}, "ok"),
    ("Vds rating lower", {"vds_max_V": 12}, {}, "Vds rating 12 V < 20 V"),
    ("Vgs rating lower", {"vgs_max_V": 6}, {}, "Vgs rating"),
    ("Id rating lower", {"id_max_A": 2}, {}, "Id rating"),
    ("Tj max lower", {"tj_max_C": 125}, {}, "Tj max"),
    ("threshold max higher", {"vgs_th_max_V": 1.2}, {}, "Vgs(th) max 1.2 V > 1 V"),
    ("no threshold max", {"vgs_th_max_V": ""}, {}, "no Vgs(th) max"),
    ("Rds(on) higher at 4.5 V", {"rds_on_mohm@4.5V": 45}, {}, "Rds(on) at 4.5 V 45 mΩ > 40 mΩ"),
    ("Rds(on) lower at both drives", {"rds_on_mohm@4.5V": 35, "rds_on_mohm@2.5V": 55}, {}, "ok"),
    ("one point at 4.5 V only: 2.5 V would be extrapolated",
     {"rds_on_mohm@4.5V": 20, "rds_on_mohm@2.5V": ""}, {}, "no Rds(on) at 2.5 V"),
    # x = 1/(V - 1.0): 1.25 at 1.8 V, 0.2857 at 4.5 V; K = (90 - 35) / 0.9643 = 57.04 mΩ·V,
    # R_fix = 35 - 57.04 x 0.2857 = 18.70 mΩ; R(2.5 V) = 18.70 + 57.04 / 1.5 = 56.7 <= 60
    ("points at 1.8 and 4.5 V, curve below at 2.5 V",
     {"rds_on_mohm@1.8V": 90, "rds_on_mohm@4.5V": 35, "rds_on_mohm@2.5V": ""}, {}, "ok"),
    # K = (110 - 35) / 0.9643 = 77.78, R_fix = 35 - 22.22 = 12.78; R(2.5 V) = 12.78 + 51.85 = 64.6
    ("points at 1.8 and 4.5 V, curve above at 2.5 V",
     {"rds_on_mohm@1.8V": 110, "rds_on_mohm@4.5V": 35, "rds_on_mohm@2.5V": ""}, {},
     "Rds(on) at 2.5 V 64.6 mΩ > 60 mΩ"),
    # x = 1.25 at 1.8 V, 0.6667 at 2.5 V; K = (70 - 50) / 0.5833 = 34.29, R_fix = 50 - 22.86
    # = 27.14; R(4.5 V) = 27.14 + 34.29 x 0.2857 = 36.9 <= 40
    ("points at 1.8 and 2.5 V, curve below at 4.5 V",
     {"rds_on_mohm@1.8V": 70, "rds_on_mohm@2.5V": 50, "rds_on_mohm@4.5V": ""}, {}, "ok"),
    # one point: the curve would give 45 x 1.5 / 3.5 = 19.3 at 4.5 V; the bound is 45
    ("one point at 2.5 V, bounded by it at 4.5 V",
     {"rds_on_mohm@2.5V": 45, "rds_on_mohm@4.5V": ""}, {}, "Rds(on) at 4.5 V 45 mΩ > 40 mΩ"),
    ("one point at 2.5 V, low enough for 4.5 V", {"rds_on_mohm@2.5V": 38, "rds_on_mohm@4.5V": ""},
     {}, "ok"),
    ("points at 4.5 and 10 V only: 2.5 V would be extrapolated",
     {"rds_on_mohm@10V": 25, "rds_on_mohm@4.5V": 35, "rds_on_mohm@2.5V": ""}, {}, "no Rds(on) at 2.5 V"),
    ("Idss higher", {"idss_uA": 2}, {}, "Idss 2 µA > 1 µA"),
    ("no Idss", {"idss_uA": ""}, {}, "no Idss"),
    ("no hot leakage point", {"idss_hot_uA": "", "idss_hot_C": ""}, {}, "Idss at 85 °C"),
    ("hot leakage higher", {"idss_hot_uA": 20}, {}, "Idss at 85 °C"),
    # 1 µA x (40 / 1) ** ((85 - 25) / (125 - 25)) = 40 ** 0.6 = 9.15 µA <= 10 µA at 85 °C
    ("hot point at 125 °C, below at 85 °C", {"idss_hot_uA": 40, "idss_hot_C": 125}, {}, "ok"),
    # 60 ** 0.6 = 11.7 µA > 10 µA
    ("hot point at 125 °C, above at 85 °C", {"idss_hot_uA": 60, "idss_hot_C": 125}, {}, "Idss at 85 °C"),
    ("θJA higher", {"rth_ja_C/W": 350}, {}, "θJA 350 °C/W > 300 °C/W"),
    ("no θJA", {"rth_ja_C/W": ""}, {}, "no θJA"),
    ("another package", {"package": "SOT-323"}, {}, "package SOT-323"),
    ("another package, accepted", {"package": "SOT-323"},
     {"packages_ok": (("SOT-23", "SOT-323"),)}, "ok"),
    ("accepted through a chain of groups", {"package": "SOT-323"},
     {"packages_ok": (("SOT-23", "SOT-23-3"), ("sot-23-3", "SOT-323"))}, "ok"),
    ("the same outline spelled otherwise", {"package": "sot23"}, {}, "ok"),
    ("nrnd", {"status": "nrnd"}, {}, "status nrnd"),
    ("nrnd, allowed", {"status": "nrnd"}, {"include_nrnd": True}, "ok"),
    ("eol, never", {"status": "eol"}, {"include_nrnd": True}, "status eol"),
    ("other kind", {"kind": "other"}, {}, "absent"),
]
BJT_ROWS = [
    ("identical", {}, {}, "ok"),
    ("better everywhere", {"hfe_min@0.1mA": 260, "hfe_min@1mA": 400, "vce_sat_mV@10mA": 150,
                           "icbo_hot_nA": 4000, "rth_ja_C/W": 320}, {}, "ok"),
    ("Vceo rating lower", {"vceo_max_V": 40}, {}, "Vceo rating 40 V < 45 V"),
    ("Ic rating lower", {"ic_max_A": 0.05}, {}, "Ic rating"),
    ("Tj max lower", {"tj_max_C": 125}, {}, "Tj max"),
    ("hFE lower at 1 mA", {"hfe_min@1mA": 180}, {}, "hFE at 1 mA 180 < 200"),
    # log-log between 160 at 0.1 mA and 250 at 10 mA: at 1 mA, sqrt(160 x 250) = 200 >= 200
    ("hFE between points, equal", {"hfe_min@0.1mA": 160, "hfe_min@1mA": "", "hfe_min@10mA": 250},
     {}, "ok"),
    # sqrt(160 x 240) = 196 < 200
    ("hFE between points, lower", {"hfe_min@0.1mA": 160, "hfe_min@1mA": "", "hfe_min@10mA": 240},
     {}, "hFE at 1 mA 196 < 200"),
    ("no hFE at the lowest current", {"hfe_min@0.1mA": ""}, {}, "no hFE at 0.1 mA"),
    ("Vce(sat) higher at 100 mA", {"vce_sat_mV@100mA": 700}, {}, "Vce(sat) at 100 mA 700 mV > 600 mV"),
    # linear between 200 mV at 10 mA and 770 mV at 200 mA: 200 + 90/190 x 570 = 470 <= 600
    ("Vce(sat) between points", {"vce_sat_mV@10mA": 200, "vce_sat_mV@100mA": "",
                                 "vce_sat_mV@200mA": 770}, {}, "ok"),
    ("no Vce(sat) above 10 mA", {"vce_sat_mV@100mA": ""}, {}, "no Vce(sat) at 100 mA"),
    ("Icbo higher", {"icbo_nA": 20}, {}, "Icbo 20 nA > 15 nA"),
    ("no Icbo", {"icbo_nA": ""}, {}, "no Icbo"),
    ("no hot Icbo point", {"icbo_hot_nA": "", "icbo_hot_C": ""}, {}, "Icbo at 150 °C"),
    ("θJA higher", {"rth_ja_C/W": 400}, {}, "θJA"),
    ("another package", {"package": "SOT-323"}, {}, "package SOT-323"),
    ("eol", {"status": "eol"}, {}, "status eol"),
    ("other kind", {"kind": "other"}, {}, "absent"),
]
OTHER = {"pmos": "nmos", "nmos": "pmos", "npn": "pnp", "pnp": "npn"}


def _catalogue(tmp_path, kind, candidate_change, incumbent_change=None):
    bipolar = kind in ("npn", "pnp")
    columns, base = (BJT_COLUMNS, BJT_INCUMBENT) if bipolar else (MOS_COLUMNS, MOS_INCUMBENT)
    rows = []
    for name, change in (("INC-1", incumbent_change or {}), ("CAND-2", candidate_change)):
        row = {"part": name, "maker": "Testa Parts", "kind": kind, "package": "SOT-23",
               "status": "active", "price@1": 0.1, **base, **change}
        if row["kind"] == "other":
            row["kind"] = OTHER[kind]
        if row["kind"] in ("pmos", "pnp"):  # P-type ratings as datasheets print them: negative
            row = {k: (-v if k in NEGATIVE and isinstance(v, (int, float)) else v) for k, v in row.items()}
        rows.append(",".join(str(row.get(c, "")) for c in columns))
    path = tmp_path / f"{kind}.csv"
    path.write_text("\n".join([",".join(columns)] + rows) + "\n", encoding="utf-8")
    catalog = load_catalog(path, source="test")
    assert catalog.errors == []
    return catalog.df


def _verdict(table) -> str:
    found = table[table["part"] == "CAND-2"]
    if found.empty:
        return "absent"
    return "ok" if bool(found["qualifies"].iloc[0]) else found["why"].iloc[0]


@pytest.mark.parametrize("kind", ["pmos", "nmos"])
@pytest.mark.parametrize("case, change, options, expected", MOS_ROWS, ids=[r[0] for r in MOS_ROWS])
def test_drop_in_rule_mosfet(tmp_path, kind, case, change, options, expected):
    verdict = _verdict(drop_ins(_catalogue(tmp_path, kind, change), "INC-1", Options(**options)))
    assert verdict == expected if expected in ("ok", "absent") else verdict.startswith(expected), verdict


@pytest.mark.parametrize("kind", ["npn", "pnp"])
@pytest.mark.parametrize("case, change, options, expected", BJT_ROWS, ids=[r[0] for r in BJT_ROWS])
def test_drop_in_rule_bipolar(tmp_path, kind, case, change, options, expected):
    verdict = _verdict(drop_ins(_catalogue(tmp_path, kind, change), "INC-1", Options(**options)))
    assert verdict == expected if expected in ("ok", "absent") else verdict.startswith(expected), verdict


@pytest.mark.parametrize("kind, incumbent, candidate, expected", [
    # data the incumbent lacks is not asked of the candidate
    ("pmos", {"idss_uA": "", "idss_hot_uA": "", "idss_hot_C": ""},
     {"idss_uA": "", "idss_hot_uA": "", "idss_hot_C": ""}, "ok"),
    ("nmos", {"rds_on_mohm@2.5V": ""}, {"rds_on_mohm@2.5V": ""}, "ok"),
    ("npn", {"vce_sat_mV@100mA": "", "icbo_hot_nA": "", "icbo_hot_C": ""},
     {"vce_sat_mV@100mA": "", "icbo_hot_nA": "", "icbo_hot_C": ""}, "ok"),
    ("pnp", {"package": ""}, {"package": ""}, "package unknown"),  # no package: cannot be the same
])
def test_drop_in_rule_incumbent_without_data(tmp_path, kind, incumbent, candidate, expected):
    df = _catalogue(tmp_path, kind, candidate, incumbent)
    verdict = _verdict(drop_ins(df, "INC-1"))
    assert verdict == expected


@pytest.mark.parametrize("call, error", [
    (lambda df: drop_ins(df, "NOPE-9"), CatalogError),  # an incumbent the catalogue lacks
    (lambda df: drop_ins(df, "INC-1", Options(volume=0)), UsageError),
    (lambda df: drop_ins(df, "INC-1", Options(volume=2.5)), UsageError),
])
def test_drop_in_rule_errors(tmp_path, call, error):
    with pytest.raises(error):
        call(_catalogue(tmp_path, "npn", {}))


def test_drop_in_screen_covers_a_large_catalogue_in_one_call(tmp_path):
    """One incumbent screened against 20,000 copies of a qualifying part: one
    boolean per part comes back, all true. (Speed is measured by
    scripts/bench_review.py, not here.)"""
    from picker.review.propose import KindParts

    df = _catalogue(tmp_path, "npn", {})
    big = df.iloc[np.r_[0, np.ones(20_000, dtype=int)]].reset_index(drop=True)
    big["part"] = [f"P{i}" for i in range(len(big))]
    kp = KindParts(big, np.arange(len(big)), "npn")
    mask = kp.drop_in(0)
    assert mask.shape == (len(big),) and mask.all()


# -- savings arithmetic ---------------------------------------------------------------------

def _review(bom_path, catalogue=DATA / "cost-catalogue.csv", **options):
    df = load_catalog(catalogue, source="test").df
    req = options.pop("requirements", None)
    return review(read_bom(bom_path), df, Options(**options), req)


@pytest.mark.parametrize("volume, expected", [
    (3000, {"Q1": (0.12, 0.10, 0.02), "Q2-Q5": (0.012, 0.010, 0.008),
            "totals": (0.168, 0.140, 0.028, 84.0)}),
    (500, {"Q1": (0.30, 0.25, 0.05), "Q2-Q5": (0.020, 0.018, 0.008),
           "totals": (0.380, 0.322, 0.058, 29.0)}),
])
def test_savings_arithmetic_three_line_bom(volume, expected):
    """tests/data/review/three-lines.csv against cost-catalogue.csv, by hand.

    Price breaks (unit price at quantity N and above; models/README.md §7):
        TPA-1  0.30 @1  0.12 @1000  0.08 @10000      TNB-1  0.050 @1  0.020 @1000  0.012 @10000
        TPA-2  0.25 @1  0.10 @1000  0.06 @10000      TNB-2  0.050 @1  0.018 @1000  0.010 @10000
    TPA-2 is a drop-in for TPA-1 and TNB-2 for TNB-1 (better on every figure);
    TPA-3 and TNB-3 are cheaper but not drop-ins (Rds at 2.5 V, Vceo).

    Volume 3000:
        Q1     1 per board -> 3000 bought  -> the 1000 break: 0.12 -> 0.10, saves 0.02 a board
        Q2-Q5  4 per board -> 12000 bought -> the 10000 break: 0.012 -> 0.010,
               saves 4 x 0.002 = 0.008 a board
        R1     a resistor: carried through, not costed
        now 0.12 + 4 x 0.012 = 0.168; after 0.10 + 4 x 0.010 = 0.140;
        saving 0.028 a board, x 3000 = 84 a build.
    Volume 500:
        Q1     500 bought -> below 1000: the 1 break: 0.30 -> 0.25, saves 0.05
        Q2-Q5  2000 bought -> the 1000 break: 0.020 -> 0.018, saves 4 x 0.002 = 0.008
        now 0.30 + 0.08 = 0.380; after 0.25 + 0.072 = 0.322; saving 0.058, x 500 = 29.
    The BOM's own prices (0.11, 0.015) are shown, never used.
    """
    rv = _review(DATA / "three-lines.csv", volume=volume)
    lines = {r.line.refs and ",".join(r.line.refs) for r in rv.lines}
    assert lines == {"Q1", "Q2,Q3,Q4,Q5", "R1"}
    q1, q2, r1 = rv.lines
    for r, key, part in ((q1, "Q1", "TPA-2"), (q2, "Q2-Q5", "TNB-2")):
        now, after, saving = expected[key]
        assert r.status == "proposal" and r.proposal == part
        assert (r.unit_now, r.unit_after) == pytest.approx((now, after), abs=1e-12)
        assert r.saving == pytest.approx(saving, abs=1e-12)
    assert r1.category == "other" and r1.status == "other"
    assert (q1.line.bom_price, q2.line.bom_price) == (0.11, 0.015)
    t = rv.totals()
    now, after, saving, per_build = expected["totals"]
    assert t["cost_per_board_now"] == pytest.approx(now, abs=1e-12)
    assert t["cost_per_board_after"] == pytest.approx(after, abs=1e-12)
    assert t["saving_per_board"] == pytest.approx(saving, abs=1e-12)
    assert t["saving_per_build"] == pytest.approx(per_build, abs=1e-9)
    assert rv.groups == [] and t["lines_removed"] == 0


def test_consolidation_crosses_a_price_break():
    """tests/data/review/consolidate.csv, volume 3000, by hand.

        Q1, Q2  TNB-1 x2 -> 6000 bought  -> 0.020 at the 1000 break; its drop-in TNB-2 0.018
        Q3, Q4  TNB-2 x2 -> 6000 bought  -> 0.018; nothing cheaper qualifies (TNB-3: Vceo 30 V)
        now            2 x 0.020 + 2 x 0.018 = 0.076 a board
        line by line   2 x 0.018 + 2 x 0.018 = 0.072
        one part       TNB-2 serves both lines: 4 a board -> 12000 bought -> the 10000 break,
                       0.010: 4 x 0.010 = 0.040
        saving 0.076 - 0.040 = 0.036 a board (0.032 beyond the line proposals),
        x 3000 = 108 a build; two lines become one.
    """
    rv = _review(DATA / "consolidate.csv", volume=3000)
    assert [r.status for r in rv.lines] == ["proposal", "kept"]
    (g,) = rv.groups
    assert (g.part, g.units, g.lines_removed) == ("TNB-2", 4, 1)
    assert g.unit_price == pytest.approx(0.010)
    assert (g.cost_now, g.cost_line_by_line, g.cost) == pytest.approx((0.076, 0.072, 0.040))
    t = rv.totals()
    assert t["cost_per_board_line_by_line"] == pytest.approx(0.072)
    assert t["cost_per_board_after"] == pytest.approx(0.040)
    assert t["saving_per_build"] == pytest.approx(108.0)
    changes = rv.changes()
    # one line, as a purchaser buys it: the refs and quantities of both, at the 10000 break
    assert (changes[0].part, changes[0].refs, changes[0].qty) == ("TNB-2", "Q1, Q2, Q3, Q4", "4")
    assert changes[0].price == pytest.approx(0.010) and changes[1].drop


def test_no_consolidation_when_the_break_is_not_reached():
    """At volume 1000 each line buys 2000 and both 4000: all at the 1000 break.
    TNB-2 for both costs 4 x 0.018 = 0.072, the same as line by line: still
    proposed, for the line it removes, with nothing beyond the line proposals."""
    rv = _review(DATA / "consolidate.csv", volume=1000)
    (g,) = rv.groups
    assert g.cost == pytest.approx(g.cost_line_by_line)
    assert rv.totals()["cost_per_board_after"] == pytest.approx(0.072)


# -- the demo ---------------------------------------------------------------------------------

@pytest.fixture(scope="module")
def demo_df():
    return load_catalog(DEMO, source="test").df


def _by_refs(rv):
    return {",".join(r.line.refs): r for r in rv.lines}


def test_demo_drop_in(demo_df):
    rv = review(read_bom(DEMO_BOM), demo_df, Options(volume=5000))
    lines = _by_refs(rv)
    over = lines["Q4,Q5,Q6,Q7"]
    assert over.status == "proposal" and over.unit_after <= 0.009
    assert over.proposal == "QLB-4N62K"  # the one drop-in for the over-specified part
    typo = lines["Q9"]
    assert typo.part == "HLN6126-T" and typo.match.status == "confirm"
    assert lines["Q1"].match.how == "suffix" and lines["Q8"].part == "QLB-4P60K"
    for refs, r in lines.items():
        if refs[0] in "RCDUJB":
            assert r.category == "other" and r.status == "other" and r.proposal == ""
    assert rv.findings == []
    assert any(w.line == 6 and "confirm" in w.message for w in rv.warnings)
    assert rv.totals()["saving_per_board"] > 0.3


def test_demo_with_requirements(demo_df):
    from picker.design.requirements import load_requirements

    rv = review(read_bom(DEMO_BOM), demo_df, Options(volume=5000), load_requirements(POWER))
    lines = _by_refs(rv)
    over = lines["Q4,Q5,Q6,Q7"]
    assert over.roles == ("gauge-leds",) and over.unit_after <= 0.009
    assert all(r.roles for refs, r in lines.items() if refs.startswith("Q"))
    assert rv.findings == []  # every incumbent of the demo meets its role


def test_incumbent_that_fails_its_role_is_a_finding_first(demo_df):
    """failing-incumbents.csv: Q1 HLP6125-W (SOT-323) drops 60.9 mV where the
    cell switch allows 60 mV; Q2, Q3 MWB4410K leak 60 nA where the latch
    allows 50 nA. Both are findings, listed first; each line gets the cheapest
    feasible part in its own package even where it costs more."""
    from picker.design.requirements import load_requirements

    rv = review(read_bom(DATA / "failing-incumbents.csv"), demo_df, Options(volume=5000),
                load_requirements(POWER))
    roles = [f for f in rv.findings if f["type"] == "role"]
    assert [f["refs"] for f in roles] == [["Q1"], ["Q2", "Q3"]]
    assert rv.findings[:2] == roles
    assert "drop" in roles[0]["finding"] and "off current" in roles[1]["finding"]
    lines = _by_refs(rv)
    q1, latch = lines["Q1"], lines["Q2,Q3"]
    assert q1.status == "fix" and q1.proposal_package == "SOT-323"
    assert latch.status == "fix" and latch.saving < 0  # the fix costs more: shown, not hidden
    assert lines["R99"].category == "dnp"


def test_role_refs_not_in_the_bom_are_warned(demo_df, tmp_path):
    from picker.design.requirements import load_requirements

    path = tmp_path / "b.csv"
    path.write_text("Refs,Qty,MPN\nQ1,1,HLP6125-T\n")
    rv = review(read_bom(path), demo_df, Options(volume=5000), load_requirements(POWER))
    assert any("refs Q2, Q3 are not in the BOM" in w.message for w in rv.warnings)
    assert rv.lines[0].roles == ("cell-switch",)


# -- the command ------------------------------------------------------------------------------

COMMANDS = [
    (),
    ("--format", "json"),
    ("--format", "csv"),
    ("--volume", "5000", "--all-lines"),
    ("--requirements", str(POWER)),
    ("--requirements", str(POWER), "--format", "json", "--package-ok", "SOT-23,SOT-323"),
    ("--take-at", "85"),
    ("--column", "part=Nope"),  # an error: the BOM must still be untouched
    ("--volume", "0"),
]


@pytest.mark.parametrize("args", COMMANDS)
def test_bom_bytes_unchanged_after_every_command(tmp_path, args):
    bom = tmp_path / "bom.csv"
    bom.write_bytes(DEMO_BOM.read_bytes())
    before = sha256(bom)
    result = invoke("review", str(bom), *args)
    assert result.exit_code in (0, 1, 2), result.output
    assert sha256(bom) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bom.csv"]


def test_write_bom_reread_line_by_line(tmp_path):
    """Every line the revision does not change keeps its bytes, plus the empty
    new cell (tests/test_revised_bom.py checks what the changed lines say)."""
    bom = tmp_path / "bom.csv"
    bom.write_bytes(DEMO_BOM.read_bytes())
    before = sha256(bom)
    out = tmp_path / "revised.csv"
    result = invoke("review", str(bom), "--volume", "5000", "--write-bom", str(out))
    assert result.exit_code == 0, result.output
    assert "2 line(s) changed, 1 merged into another line" in result.output
    assert sha256(bom) == before
    original, revised = read_bom(bom), read_bom(out)
    assert revised.header == original.header + ["picker_change"]
    assert len(revised.lines) == len(original.lines) - 1
    changed = [b for b in revised.lines if b.cells[-1]]
    assert [b.refs for b in changed] == [("Q2", "Q3", "Q10"), ("Q4", "Q5", "Q6", "Q7")]
    old = bom.read_bytes().split(b"\r\n")
    new = out.read_bytes().split(b"\r\n")
    kept = [b for b in new[1:] if b.endswith(b",")]
    assert len(kept) == len(original.lines) - 3  # all but the two changed and the merged one
    assert all(b[:-1] in old for b in kept)


def test_write_bom_refuses_to_overwrite_and_never_writes_the_input(tmp_path):
    bom = tmp_path / "bom.csv"
    bom.write_bytes(DEMO_BOM.read_bytes())
    before = sha256(bom)
    out = tmp_path / "out.csv"
    out.write_text("keep me")
    result = invoke("review", str(bom), "--write-bom", str(out))
    assert result.exit_code == 2 and "exists" in result.output and "--force" in result.output
    assert out.read_text() == "keep me"
    for args in (("--write-bom", str(bom)), ("--write-bom", str(bom), "--force")):
        result = invoke("review", str(bom), *args)
        assert result.exit_code == 2 and "never writes its input" in result.output
        assert sha256(bom) == before
    result = invoke("review", str(bom), "--write-bom", str(out), "--force")
    assert result.exit_code == 0
    assert (tmp_path / "out.csv.bak").read_text() == "keep me"
    assert read_bom(out).header[-1] == "picker_change"
    assert not [p for p in tmp_path.iterdir() if p.name.endswith(".tmp")]


def test_json_output(tmp_path):
    result = invoke("review", str(DEMO_BOM), "--volume", "5000", "--format", "json")
    assert result.exit_code == 0
    doc = json.loads(result.stdout)
    assert doc["volume"] == 5000 and doc["volume_source"] == "--volume"
    assert doc["columns"]["part"] == "Part number"
    lines = {d["refs"]: d for d in doc["lines"]}
    q4 = lines["Q4-Q7"]
    assert (q4["part"], q4["proposal"], q4["unit_now"], q4["unit_after"]) == (
        "MWB4518K", "QLB-4N62K", 0.085, 0.009)
    assert q4["saving_per_board"] == pytest.approx(0.304) and q4["saving_per_build"] == pytest.approx(1520)
    assert lines["Q9"]["confirm"] is True and lines["Q9"]["score"] == 87.5
    assert lines["R1, R14"]["category"] == "other"
    totals = doc["totals"]
    assert totals["saving_per_build"] == pytest.approx(totals["saving_per_board"] * 5000)
    assert doc["consolidation"][0]["lines_removed"] >= 1


def test_csv_output(tmp_path):
    import csv
    import io

    result = invoke("review", str(DEMO_BOM), "--volume", "5000", "--format", "csv")
    assert result.exit_code == 0
    rows = list(csv.DictReader(io.StringIO(result.stdout)))
    assert [r["section"] for r in rows].count("line") == 21
    assert rows[-1]["section"] == "totals"
    q4 = next(r for r in rows if r["refs"] == "Q4-Q7")
    assert (q4["proposal"], q4["unit_after"], q4["saving_per_build"]) == ("QLB-4N62K", "0.009", "1520")


def test_table_output_names_the_price_basis_and_cautions():
    result = invoke("review", str(DEMO_BOM), "--volume", "5000")
    assert result.exit_code == 0
    out = result.stdout
    assert "Transistor lines at 5,000 boards a build" in out
    assert "HLN6126-T ?" in out and "BOM price" in out
    assert "catalogue's unit price at the build quantity" in out
    assert "body diode" in out and "Lithium-ion" in out
    assert "15 other line(s) carried through unchanged" in out


def test_default_volume_is_said(tmp_path):
    result = invoke("review", str(DEMO_BOM), "--format", "json")
    assert "assumed: 1000 boards a build" in result.stderr
    assert json.loads(result.stdout)["volume"] == 1000
    result = invoke("review", str(DEMO_BOM), "-R", str(POWER), "--format", "json")
    assert json.loads(result.stdout)["volume"] == 5000


def test_nothing_found_exits_1(tmp_path):
    bom = tmp_path / "b.csv"
    bom.write_text("Refs,Qty,MPN\nQ3,1,QLB-4N62K\nR1,1,FPR04-1003-F\n")
    result = invoke("review", str(bom), "--volume", "100")
    assert result.exit_code == 1 and "nothing to propose" in result.stderr


@pytest.mark.parametrize("args, words", [
    (("unknown-header.csv",), ["BOM columns not recognised", "--column part=HEADER"]),
    (("unknown-header.csv", "--column", "part"), ["write FIELD=HEADER"]),
    (("unknown-header.csv", "--column", "mpn=Bauteil"), ["unknown field 'mpn'"]),
    (("three-lines.csv", "--volume", "many"), ["--volume many"]),
    (("three-lines.csv", "--package-ok", ","), ["--package-ok"]),
    (("three-lines.csv", "--take-at", "80", "--confirm-at", "90"), ["--confirm-at"]),
    (("no-such.csv",), ["no such BOM file"]),
])
def test_bad_input_is_one_line_and_exit_2(args, words):
    first, *rest = args
    result = invoke("review", str(DATA / first), *rest)
    assert result.exit_code == 2, result.output
    message = result.stderr.strip()
    assert len(message.splitlines()) == 1 and message.startswith("Error: ")
    for word in words:
        assert word in message


def test_named_columns_then_work():
    result = invoke("review", str(DATA / "unknown-header.csv"), "--column", "part=Bauteil",
                    "--column", "qty=Anzahl", "--format", "json")
    assert result.exit_code == 0
    doc = json.loads(result.stdout)
    assert doc["lines"][0]["proposal"] == "QLB-4N62K" and doc["lines"][1]["category"] == "other"


def test_help_text():
    result = invoke("review", "--help")
    assert result.exit_code == 0
    for option in ("--requirements", "--volume", "--column", "--take-at", "--confirm-at",
                   "--package-ok", "--write-bom", "--force"):
        assert option in result.stdout


def test_subprocess_run_has_no_traceback(tmp_path):
    out = tmp_path / "revised.csv"
    result = run_cli("review", str(DEMO_BOM), "-R", str(POWER), "--write-bom", str(out))
    assert result.returncode == 0, result.stderr
    assert "Traceback" not in result.stdout + result.stderr
    assert "gauge-leds" in result.stdout and out.exists()
    bad = run_cli("review", str(DATA / "unknown-header.csv"))
    assert bad.returncode == 2 and "Traceback" not in bad.stderr


_PARTS = ["HLP6125-T", "hlg614b-t", "MWB4518K", "QLB4P60K", "HLN6128-T", "QLB-4N60K-TR",
          "FPR04-1003-F", "", "=1+1", "Q1"]
_REFS = ["Q1", "Q2, Q3", "Q4-Q7", "Q9-Q8", "R1", "", "U1-A", "Q1"]
_QTY = ["1", "2", "4", "0", "", "x", "-3", "1.0"]


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(rows=st.lists(st.tuples(st.sampled_from(_REFS), st.sampled_from(_QTY),
                               st.sampled_from(_PARTS)), max_size=8),
       delimiter=st.sampled_from([",", ";"]), requirements=st.booleans())
def test_any_bom_gives_an_answer_or_one_line(tmp_path, rows, delimiter, requirements):
    """Random BOMs of demo spellings and oddities: exit 0, 1 or 2, never a crash,
    and the file untouched."""
    import csv
    import io

    out = io.StringIO()
    writer = csv.writer(out, delimiter=delimiter)
    writer.writerow(["Ref Des", "Qty", "MPN"])
    writer.writerows(rows)
    bom = tmp_path / "fuzz.csv"
    bom.write_text(out.getvalue())
    before = sha256(bom)
    args = ["--requirements", str(POWER)] if requirements else ["--volume", "5000"]
    result = invoke("review", str(bom), *args, "--format", "json")
    assert result.exit_code in (0, 1, 2), result.output
    assert result.exception is None or isinstance(result.exception, SystemExit), result.exception
    if result.exit_code != 2:
        json.loads(result.stdout)
    assert sha256(bom) == before


def test_end_of_life_incumbent_is_replaced_even_at_a_higher_price(demo_df, tmp_path):
    """AGXP305-23 is eol in the demo catalogue: a finding, and the cheapest
    drop-in in its package even though it costs more; an nrnd incumbent is a
    finding only."""
    path = tmp_path / "b.csv"
    path.write_text("Refs,Qty,MPN\nQ1,1,AGXP305-23\nQ2,1,VTJ208-3\n")
    rv = review(read_bom(path), demo_df, Options(volume=100))
    assert [f["type"] for f in rv.findings] == ["status", "status"]
    assert "end of life" in rv.findings[0]["finding"] and "nrnd" in rv.findings[1]["finding"]
    eol, nrnd = rv.lines
    assert eol.status == "fix" and "end of life" in eol.note and eol.saving < 0
    assert nrnd.status in ("kept", "proposal")
