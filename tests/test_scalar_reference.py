"""The vectorised engine against a plain per-part re-implementation.

scripts/scalar_reference.py writes picker/models/README.md §1-§4, §6 and §7
for a pass switch the obvious way: one part at a time, plain floats and
loops, no numpy, and its own self-heating solve: a scan upward from Ta in
0.25 °C steps for the first sign change of f(T) = Ta + P(T) rth - T, then
bisection inside the step. On every MOSFET of the demo catalogue (the lantern's
cell switch, driven from the cell; the hand warmer's heater, driven at 1.8 V
from a pin, below many parts' rated drives) and on a seeded synthetic
catalogue (scripts/synth.py), both must give the same figures, check
outcomes and verdict, and the junction temperature within 0.01 °C
(picker/models/README.md §3). The bipolar roles are compared the same way
(base current, gain, Vce(sat), off current, price, verdict), with variants
that add a pull-down, an open base and a resistor tolerance (§4, §6).

Where the old method disagreed: plain fixed-point iteration of
T <- Ta + P(T) rth (up to 100 passes, stopping at a step under 0.01 °C) is
run here beside both on the synthetic catalogue; it fails to settle (it
swings about the root, or runs past the bound with a root below it) on parts
where the resistance falls as the die warms fast enough that |dg/dT| >= 1
(thin overdrive, high θJA). The test lists them (2 of 335 settling parts on
its seed) and requires that the engine settle on every part at the
reference's root.
"""

import math
import sys

import numpy as np
import pytest

from conftest import DEMO, EXAMPLES, ROOT
from picker.catalog.load import load_catalog
from picker.design.requirements import load_requirements
from picker.engine.evaluate import OUTCOME, evaluate_role

sys.path.insert(0, str(ROOT / "scripts"))
import scalar_reference  # noqa: E402
import synth  # noqa: E402

TJ_TOL_C = 0.01  # picker/models/README.md §3
# Figures that follow from Tj: the drop moves by at most its slope (well under
# 1 %/°C here) times 0.01 °C, so 2e-4 relative covers them.
REL_TOL = 2e-4


def spec_of(req, role) -> dict:
    return {"supply_min": req.supply.min_V, "supply_max": req.supply.max_V,
            "gate_drive": role.gate_drive_V, "gate_drive_drop": role.gate_drive_drop_V,
            "ambient_min": req.ambient.min_C, "ambient_max": req.ambient.max_C,
            "load": role.load_A, "max_drop": role.max_drop_V, "max_off": role.max_off_current_A,
            "max_tj": role.max_tj_C, "volume": req.volume,
            "extrapolation": req.margins.extrapolation, "rth_factor": req.margins.rth_factor,
            "tj_margin": req.margins.tj_margin_C}


def compare(df, req, role) -> list[dict]:
    table = evaluate_role(df, role, req).frame.set_index("part")
    spec = spec_of(req, role)
    parts = df[df["kind"] == role.kind].to_dict("records")
    refs = []
    for part in parts:
        ref = scalar_reference.evaluate(part, spec)
        row = table.loc[part["part"]]
        for name in ("drop_V", "off_current_A", "unit_price"):
            if math.isnan(ref[name]):
                assert math.isnan(row[name]), (part["part"], name)
            else:
                assert row[name] == pytest.approx(ref[name], rel=REL_TOL), (part["part"], name)
        for name in ("tj_C", "tj_cold_C", "tj_hot_C"):
            if math.isnan(ref[name]):
                assert math.isnan(row[name]), (part["part"], name)
            else:
                assert abs(row[name] - ref[name]) <= TJ_TOL_C, (part["part"], name)
        for check in ("ohmic", "drop", "tj"):
            assert OUTCOME[int(row[f"check_{check}"])] == ref[check], (part["part"], check)
        assert bool(row["feasible"]) == ref["feasible"], part["part"]
        refs.append(ref)
    return refs


@pytest.mark.parametrize("example, role_name", [("kettlewick-power.toml", "cell-switch"),
                                                ("kettlewick-power.toml", "night-light"),
                                                ("kettlewick-warmer.toml", "heater")])
def test_engine_equals_the_per_part_reference_on_the_demo_catalogue(example, role_name):
    req = load_requirements(EXAMPLES / example)
    df = load_catalog(DEMO, source="test").df
    refs = compare(df, req, req.role(role_name))
    assert len(refs) >= 15


@pytest.mark.parametrize("mode", ["conservative", "fit", "none"])
def test_engine_equals_the_reference_on_a_synthetic_catalogue(mode):
    """600 seeded synthetic MOSFETs (scripts/synth.py, seed 11), the heater's
    1.8 V drive with θJA doubled (rth_factor 2) so that many parts heat far,
    some run away and some saturate, in each extrapolation mode."""
    import dataclasses

    req = load_requirements(EXAMPLES / "kettlewick-warmer.toml")
    req = dataclasses.replace(req, margins=dataclasses.replace(
        req.margins, extrapolation=mode, rth_factor=2.0))
    df = synth.loaded_frame(600, seed=11, kinds=("nmos",))
    refs = compare(df, req, req.role("heater"))
    if mode == "conservative":
        outcomes = {(r["ohmic"], r["drop"], r["tj"]) for r in refs}
        assert ("pass", "fail", "fail") in outcomes  # thermal runaway
        assert ("fail", "fail", "unknown") in outcomes  # the channel saturates at Ta


SWITCH_VARIANTS = [
    # (example file, role, overrides as requirement text appended to the role, tolerance)
    ("kettlewick-power.toml", "latch", "", None),
    ("kettlewick-power.toml", "latch", 'base_pulldown = "2.2 Mohm"\nbase_off = "open"\n', 0.05),
    ("kettlewick-power.toml", "latch", 'base_off = "open"\n', None),
    ("kettlewick-power.toml", "gauge-leds", 'base_pulldown = "47 kohm"\n', 0.10),
    ("kettlewick-power.toml", "sensor-feed", "", None),
    ("kettlewick-power.toml", "usb-sense", 'base_pulldown = "10 Mohm"\nbase_off = "open"\n', 0.01),
    ("kettlewick-warmer.toml", "thermistor-bias", "", None),
    ("kettlewick-warmer.toml", "buzzer", 'base_pulldown = "470 ohm"\n', 0.05),
]


@pytest.mark.parametrize("example, role_name, extra, tol", SWITCH_VARIANTS,
                         ids=[f"{v[1]}-{i}" for i, v in enumerate(SWITCH_VARIANTS)])
def test_switch_engine_equals_the_per_part_reference(example, role_name, extra, tol):
    """Every bipolar part of the demo catalogue of the role's kind, for the demo
    roles and variants with a pull-down, an open base and a resistor tolerance
    (models/README.md §4, §6): the same base current, gain, Vce(sat), off current,
    unit price and verdict, to rounding."""
    import dataclasses

    from picker.design.requirements import Resistors, from_options

    req = load_requirements(EXAMPLES / example)
    options = {}
    for line in extra.splitlines():
        key, value = (p.strip() for p in line.split("=", 1))
        options[key] = value.strip('"')
    if options:
        from picker.design.keys import OPTION_KEYS

        req = from_options({k: options.get(k) for k in OPTION_KEYS}, req, role_name)
    if tol is not None:
        req = dataclasses.replace(req, resistors=Resistors(tolerance=tol))
    role = req.role(role_name)
    df = load_catalog(DEMO, source="test").df
    table = evaluate_role(df, role, req).frame.set_index("part")
    spec = {"supply_min": req.supply.min_V, "supply_max": req.supply.max_V,
            "ambient_min": req.ambient.min_C, "ambient_max": req.ambient.max_C,
            "ic": role.collector_current_A, "drive": role.base_drive_V, "rb": role.base_resistor_ohm,
            "rpd": role.base_pulldown_ohm, "tol": req.resistor_tolerance,
            "overdrive": role.overdrive, "base_off": role.base_off,
            "max_vce_sat": role.max_vce_sat_V, "max_off": role.max_off_current_A,
            "volume": req.volume * role.parts_per_board}
    parts = df[df["kind"] == role.kind].to_dict("records")
    assert len(parts) >= 10
    for part in parts:
        ref = scalar_reference.evaluate_switch(part, spec)
        row = table.loc[part["part"]]
        for name in ("ib_A", "hfe", "vce_sat_V", "off_current_A", "unit_price"):
            if math.isnan(ref[name]):
                assert math.isnan(row[name]), (part["part"], name)
            else:
                assert row[name] == pytest.approx(ref[name], rel=1e-9), (part["part"], name)
        assert bool(row["feasible"]) == ref["feasible"], part["part"]


def _old_fixed_point(ta, current, rth, drop):
    """The old method: T <- Ta + I drop(T) rth, up to 100 passes, until a step
    is under 0.01 °C; (Tj, settled)."""
    t = ta
    for _ in range(100):
        d = drop(t, current)
        if not math.isfinite(d):
            return t, False
        new = ta + current * d * rth
        if abs(new - t) < 0.01:
            return new, True
        t = new
        if t > 1000.0:
            return t, False
    return t, False


def test_where_plain_fixed_point_iteration_fails_the_engine_does_not():
    """Parts at small overdrive whose resistance falls as they warm, with a
    high θJA: scripts/synth.py's seeded N-channel parts at a 1.6 A load and
    a fixed 2.0 V drive, θJA x3. Each part's on-state at one corner (Ta =
    25 °C) by the reference's scan (the truth), by the old iteration and by
    the engine's solve (picker.models.thermal through the engine)."""
    import dataclasses

    from picker.engine.parts import PartData
    from picker.models import mosfet, thermal

    df = synth.loaded_frame(3000, seed=5, kinds=("nmos",))
    data = PartData(df)
    vt25 = data.values("vgs_th_max_V")
    fit = data.fit()
    k_vt = mosfet.k_vt_of(data.values("vgs_th_tc_mV/C"), vt25)
    a = data.values("rds_tc_pct/C") / 100.0
    channel, drive = mosfet.channel_at_drive(2.0, fit, vt25, k_vt, a)
    rth = data.values("rth_ja_C/W") * 3.0
    load = 1.6
    ok = (drive.usable & (drive.vg_eff_V > mosfet.depth_limit_V(fit.lowest_drive_V, vt25))
          & (channel.max_current_A(25.0) > load) & np.isfinite(rth))
    rows = np.flatnonzero(ok)
    cap = np.fmin(channel.saturation_temperature(25.0, load), thermal.RUNAWAY_BOUND_C)
    tj, runaway = thermal.solve_junction_temperature(
        25.0, rth[rows], mosfet.ChannelPower(channel.take(rows), load), cap[rows])
    swings = []
    for j, i in enumerate(rows):
        drop = _plain_drop(channel, i)
        ref_tj, ref_runaway = scalar_reference.junction(25.0, load, float(rth[i]), drop)
        assert bool(runaway[j]) == ref_runaway, i
        if not ref_runaway:
            assert abs(tj[j] - ref_tj) <= TJ_TOL_C, i
            old_tj, settled = _old_fixed_point(25.0, load, float(rth[i]), drop)
            if not settled or abs(old_tj - ref_tj) > TJ_TOL_C:
                swings.append(df["part"].iloc[i])
    # When written, the old iteration failed here on SXN0001072-SC- and
    # SXN0001796-SOT (of 335 parts that settle): rare, and exactly the marginal
    # parts. (Not pinned by name: scripts/synth.py may change its draws.)
    assert swings, "the case this test exists for has gone: choose harsher conditions"


def _plain_drop(channel, i):
    """The channel's drop of part i as a plain-float function (no numpy per call)."""
    def scalar(v):
        return float(np.broadcast_to(v, (len(np.atleast_1d(channel.vov25)),))[i])

    v25, kv, n25, n1, rs, a = (scalar(v) for v in (channel.vov25, channel.k_vt, channel.n25,
                                                   channel.n1, channel.rs25, channel.a))

    def drop(t, current):
        d = t - 25.0
        m = 1.0 + a * d
        vov = v25 + kv * d
        s2 = vov * vov - 2.0 * (n25 + n1 * d) * m * current
        return current * rs * m + vov - math.sqrt(s2) if vov > 0 and s2 >= 0 else math.nan

    return drop
