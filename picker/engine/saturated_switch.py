"""A saturated small-signal switch (npn-switch, pnp-switch): base current, gain,
saturation, Vce(sat), leakage and ratings (models/README.md §6)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from picker.design.requirements import Requirements, Role
from picker.engine.checks import check as _check
from picker.engine.checks import limit_check as _limit_check
from picker.engine.parts import _data, catalogue_columns, points, values
from picker.models import bipolar, leakage

SWITCH_CHECKS = ("saturation", "vce_sat", "off_current", "vceo_rating", "ic_rating")
SWITCH_FIGURES = ("ib_A", "hfe", "vce_sat_V", "off_current_A")
SWITCH_RATINGS = ("vceo_max_V", "ic_max_A", "icbo_nA")


def saturated_switch(parts, role: Role, req: Requirements) -> pd.DataFrame:
    """models/README.md §6, npn-switch and pnp-switch: saturation at the cold corner;
    one row per part (index of `parts`, a DataFrame or PartData), no price,
    no rank."""
    parts = _data(parts)
    return pd.DataFrame(saturated_switch_columns(parts, role, req), index=parts.index)


def saturated_switch_columns(parts, role: Role, req: Requirements, *,
                             on_state_only: bool = False, catalogue: bool = True) -> dict:
    """`saturated_switch` as a dict of arrays (no DataFrame made).
    `on_state_only` stops after the saturation check (all the lowest-supply
    search needs); `catalogue` as `pass_switch_columns`."""
    parts = _data(parts)
    out = catalogue_columns(parts, SWITCH_RATINGS) if catalogue else {}
    ic_A = role.collector_current_A
    cold_C = req.ambient.min_C
    drive_V = req.supply.min_V if role.base_drive_V is None else role.base_drive_V
    vbe_V = bipolar.vbe_at(values(parts, "vbe_on_V"), cold_C)
    ib_A = bipolar.base_current(drive_V, vbe_V, role.base_resistor_ohm)
    ic_points_mA, hfe_points = points(parts, "hfe_min")
    hfe25, below_points = bipolar.hfe_at_current(ic_points_mA / 1000.0, hfe_points, ic_A)
    hfe = bipolar.hfe_at_temperature(hfe25, cold_C)
    out["vbe_cold_V"] = vbe_V
    out["ib_A"] = ib_A
    out["hfe"] = hfe
    overdrive = bipolar.saturation_overdrive(ib_A, hfe, ic_A)
    out["overdrive"] = overdrive
    out["check_saturation"] = _limit_check(overdrive, role.overdrive, at_least=True)
    out["extrapolated"] = below_points
    if on_state_only:
        return out

    sat_points_mA, sat_mV = points(parts, "vce_sat_mV")
    vce_sat_V = bipolar.vce_sat_at_current(sat_points_mA / 1000.0, sat_mV / 1000.0, ic_A)
    gain = bipolar.forced_gain(ic_A, ib_A)
    guaranteed = bipolar.vce_sat_guaranteed(ic_A, ib_A)
    out["vce_sat_V"] = vce_sat_V
    out["forced_gain"] = gain
    out["not_guaranteed"] = np.isfinite(vce_sat_V) & ~guaranteed
    if role.max_vce_sat_V is not None:
        with np.errstate(invalid="ignore"):
            ok = vce_sat_V <= role.max_vce_sat_V
        out["check_vce_sat"] = _check(ok, np.isfinite(vce_sat_V) & guaranteed)

    icbo_A = values(parts, "icbo_nA") * 1e-9
    out["off_current_A"] = leakage.leakage_at(icbo_A, req.ambient.max_C,
                                              values(parts, "icbo_hot_nA") * 1e-9,
                                              values(parts, "icbo_hot_C"))
    if role.max_off_current_A is not None:
        out["check_off_current"] = _limit_check(out["off_current_A"],
                                                role.max_off_current_A)
    out["check_vceo_rating"] = _limit_check(values(parts, "vceo_max_V") * req.margins.derate_v,
                                            req.supply.max_V, at_least=True)
    out["check_ic_rating"] = _limit_check(values(parts, "ic_max_A") * req.margins.derate_i,
                                          ic_A, at_least=True)
    return out
