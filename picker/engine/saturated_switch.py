"""A saturated small-signal switch (npn-switch, pnp-switch): base current, gain,
saturation, Vce(sat), leakage and ratings (models/README.md §6)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from picker.design.requirements import Requirements, Role
from picker.engine.checks import FAIL
from picker.engine.checks import check as _check
from picker.engine.checks import limit_check as _limit_check
from picker.engine.parts import _data, catalogue_columns, points, values
from picker.models import bipolar, leakage

SWITCH_CHECKS = ("saturation", "vce_sat", "off_current", "vceo_rating", "ic_rating")
SWITCH_FIGURES = ("ib_A", "hfe", "vce_sat_V", "off_current_A")
# Catalogue values a candidate row carries as they are (the reasons quote them).
SWITCH_RATINGS = ("vceo_max_V", "ic_max_A", "icbo_nA", "hfe_max")


def saturated_switch(parts, role: Role, req: Requirements) -> pd.DataFrame:
    """models/README.md §6, npn-switch and pnp-switch: saturation at the cold corner;
    one row per part (index of `parts`, a DataFrame or PartData), no price,
    no rank."""
    parts = _data(parts)
    return pd.DataFrame(saturated_switch_columns(parts, role, req), index=parts.index)


def resistor_ends(role: Role, req: Requirements) -> dict:
    """The role's resistors at their worst ends (models/README.md §6): the base
    resistor at +tol and the pull-down at -tol for the base current, the
    pull-down at +tol for the leakage rule; tol from [resistors], 0 without
    it. None where the role has no pull-down."""
    tol = req.resistor_tolerance
    rpd = role.base_pulldown_ohm
    return {"rb_max": role.base_resistor_ohm * (1.0 + tol),
            "rpd_min": None if rpd is None else rpd * (1.0 - tol),
            "rpd_max": None if rpd is None else rpd * (1.0 + tol)}


def saturated_switch_columns(parts, role: Role, req: Requirements, *,
                             on_state_only: bool = False, catalogue: bool = True,
                             linked: dict | None = None) -> dict:
    """`saturated_switch` as a dict of arrays (no DataFrame made).
    `on_state_only` stops after the saturation check (all the lowest-supply
    search needs); `catalogue` as `pass_switch_columns`. `linked` (models/README.md
    §10) gives, per part, what a linked role's partner sets: `ic_A`, `drive_V`
    and the resistor `ends` (as `resistor_ends` gives them)."""
    parts = _data(parts)
    out = catalogue_columns(parts, SWITCH_RATINGS) if catalogue else {}
    ic_A = role.collector_current_A if linked is None else linked["ic_A"]
    cold_C = req.ambient.min_C
    ends = resistor_ends(role, req) if linked is None else linked["ends"]
    drive_V = req.supply.min_V if role.base_drive_V is None else role.base_drive_V
    if linked is not None:
        drive_V = linked["drive_V"]
    vbe25_V, assumed = bipolar.vbe_25(values(parts, "vbe_sat_max_V"), values(parts, "vbe_on_V"))
    vbe_V = bipolar.vbe_at(vbe25_V, cold_C)
    ib_A = bipolar.base_current(drive_V, vbe_V, ends["rb_max"], ends["rpd_min"])
    ic_points_mA, hfe_points = points(parts, "hfe_min")
    gain = bipolar.hfe_at_current(ic_points_mA / 1000.0, hfe_points, ic_A)
    hfe = bipolar.hfe_at_temperature(gain.hfe, cold_C)
    off = ib_A <= 0  # the base network cannot turn the transistor on
    out["vbe_cold_V"] = vbe_V
    out["vbe_assumed"] = assumed
    out["ib_A"] = ib_A
    out["base_off_state"] = off
    out["hfe"] = hfe
    overdrive = bipolar.saturation_overdrive(ib_A, hfe, ic_A)
    out["overdrive"] = overdrive
    out["check_saturation"] = np.where(off, np.int8(FAIL),
                                       _limit_check(overdrive, role.overdrive, at_least=True))
    out["extrapolated"] = gain.extrapolated
    out["far_below_data"] = gain.far_below
    if on_state_only:
        return out

    sat_points_mA, sat_mV = points(parts, "vce_sat_mV")
    vce_sat = bipolar.vce_sat_at_current(sat_points_mA / 1000.0, sat_mV / 1000.0, ic_A)
    guaranteed = bipolar.vce_sat_guaranteed(ic_A, ib_A)
    out["vce_sat_V"] = vce_sat.value
    out["extrapolated"] = gain.extrapolated | vce_sat.above
    out["forced_gain"] = bipolar.forced_gain(ic_A, ib_A)
    out["not_guaranteed"] = np.isfinite(vce_sat.value) & ~guaranteed
    if role.max_vce_sat_V is not None:
        with np.errstate(invalid="ignore"):
            ok = vce_sat.value <= role.max_vce_sat_V
        out["check_vce_sat"] = _check(ok, np.isfinite(vce_sat.value) & guaranteed)

    hot_C = req.ambient.max_C
    icbo_A = leakage.leakage_at(values(parts, "icbo_nA") * 1e-9, hot_C,
                                values(parts, "icbo_hot_nA") * 1e-9, values(parts, "icbo_hot_C"))
    open_base = np.zeros(len(parts), dtype=bool)
    off_A = icbo_A
    if role.base_off == "open":
        hfe_max = bipolar.hfe_at_temperature(values(parts, "hfe_max"), hot_C)
        iceo_A = bipolar.open_base_leakage(icbo_A, hfe_max)
        open_base = (np.ones(len(parts), dtype=bool) if ends["rpd_max"] is None
                     else ~bipolar.pulldown_holds(icbo_A, ends["rpd_max"]))
        off_A = np.where(open_base, iceo_A, icbo_A)
    out["icbo_hot_A"] = icbo_A
    out["open_base"] = open_base
    out["off_current_A"] = off_A
    if role.max_off_current_A is not None:
        out["check_off_current"] = _limit_check(off_A, role.max_off_current_A)
    out["check_vceo_rating"] = _limit_check(values(parts, "vceo_max_V") * req.margins.derate_v,
                                            req.supply.max_V, at_least=True)
    out["check_ic_rating"] = _limit_check(values(parts, "ic_max_A") * req.margins.derate_i,
                                          ic_A, at_least=True)
    if linked is not None:  # a linked driver's current is unknown where no pull-up fits
        out["check_ic_rating"] = np.where(np.isnan(ic_A), np.int8(-1), out["check_ic_rating"])
    return out
