"""A pass switch (high-side-pmos, low-side-nmos): gate drive, drop, self-heating,
leakage and ratings at both corners (models/README.md §1-§6)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from picker.design.requirements import Requirements, Role
from picker.engine.checks import check as _check
from picker.engine.checks import limit_check as _limit_check
from picker.engine.parts import _data, catalogue_columns, values
from picker.models import leakage, mosfet, thermal
from picker.models._defaults import or_default

GATE_HEADROOM_V = 0.1  # models/README.md §6: vgs must exceed Vt(Ta) by this much
PASS_SWITCH_CHECKS = ("gate_drive", "drop", "tj", "off_current", "vds_rating", "vgs_rating",
                      "id_rating")
PASS_SWITCH_FIGURES = ("vgs_V", "rds_on_ohm", "drop_V", "loss_W", "tj_C", "off_current_A", "corner")
# Catalogue values a candidate row carries as they are (the reasons quote them).
PASS_SWITCH_RATINGS = ("vds_max_V", "vgs_max_V", "id_max_A", "vgs_th_max_V", "rth_ja_C/W", "tj_max_C",
                       "idss_uA")


def pass_switch(parts, role: Role, req: Requirements) -> pd.DataFrame:
    """models/README.md §6, high-side-pmos and low-side-nmos, at both corners (§5):
    one row per part (index of `parts`, a DataFrame or PartData), no price,
    no rank."""
    parts = _data(parts)
    return pd.DataFrame(pass_switch_columns(parts, role, req), index=parts.index)


def pass_switch_columns(parts, role: Role, req: Requirements, *,
                        on_state_only: bool = False, catalogue: bool = True) -> dict:
    """`pass_switch` as a dict of arrays (no DataFrame made). `on_state_only`
    stops after the checks the supply can change (gate drive, drop, Tj): all
    the lowest-supply search needs. `catalogue=False` leaves out the columns
    `catalogue_columns` gives."""
    parts = _data(parts)
    out = catalogue_columns(parts, PASS_SWITCH_RATINGS) if catalogue else {}
    load_A = role.load_A
    vt25_V = values(parts, "vgs_th_max_V")
    fit = parts.fit()
    # Per-part coefficients, or the model's default where the catalogue has
    # none (a plain number when no part overrides it: nothing to index then).
    k_vt = or_default(np.abs(values(parts, "vgs_th_tc_mV/C")) / 1000.0, mosfet.K_VT_V_PER_C)
    a = or_default(values(parts, "rds_tc_pct/C") / 100.0, mosfet.RDS_TC_PER_C)
    rth = values(parts, "rth_ja_C/W")
    drive_V = req.supply.min_V if role.gate_drive_V is None else role.gate_drive_V
    vgs_V = drive_V - role.gate_drive_drop_V

    resistance = mosfet.heated_resistance(vgs_V, fit.r_fix_ohm, fit.k_ohm_V, vt25_V, k_vt, a)

    corners = {}
    for corner, ta_C in (("cold", req.ambient.min_C), ("hot", req.ambient.max_C)):
        if corner == "hot" and np.array_equal(ta_C, req.ambient.min_C):
            corners["hot"] = corners["cold"]  # one ambient (the lowest-supply search): same figures
            break
        vt_V = mosfet.threshold_at(vt25_V, ta_C, k_vt)
        tj_C, converged = thermal.solve_junction_temperature(ta_C, load_A, rth, resistance)
        tj_C = np.broadcast_to(tj_C, vt25_V.shape)
        rds = resistance(tj_C)
        corners[corner] = dict(vt_V=vt_V, gate_ok=vgs_V >= vt_V + GATE_HEADROOM_V, tj_C=tj_C,
                               converged=np.broadcast_to(converged, vt25_V.shape), rds=rds)
    cold, hot = corners["cold"], corners["hot"]

    gate_known = np.isfinite(vt25_V)
    gate_ok = cold["gate_ok"] & hot["gate_ok"]
    out["check_gate_drive"] = _check(gate_ok, gate_known)
    on = gate_known & gate_ok  # where the gate check fails, on-state figures are null
    out["vgs_V"] = vgs_V
    out["vt_cold_V"] = cold["vt_V"]
    out["gate_margin_V"] = vgs_V - (np.maximum(cold["vt_V"], hot["vt_V"]) + GATE_HEADROOM_V)

    hot_worse = np.nan_to_num(hot["rds"], nan=-np.inf) > np.nan_to_num(cold["rds"], nan=-np.inf)
    rds = np.where(on, np.fmax(cold["rds"], hot["rds"]), np.nan)
    out["rds_on_ohm"] = rds
    out["drop_V"] = load_A * rds
    out["drop_cold_V"] = np.where(on, load_A * cold["rds"], np.nan)
    out["drop_hot_V"] = np.where(on, load_A * hot["rds"], np.nan)
    out["loss_W"] = load_A ** 2 * rds
    out["corner"] = pd.Categorical.from_codes(  # 'cold' / 'hot'; NaN where no drop is known
        np.where(np.isfinite(rds), hot_worse.astype(np.int8), -1), categories=["cold", "hot"])
    out["check_drop"] = _limit_check(out["drop_V"], role.max_drop_V)

    # Junction temperature: the worse corner (the hot one, as Ta is higher).
    tj_C = np.where(on, np.fmax(cold["tj_C"], hot["tj_C"]), np.nan)
    has_rth = np.isfinite(rth)
    out["tj_C"] = np.where(has_rth, tj_C, np.nan)
    settled = cold["converged"] & hot["converged"]
    tj_limit_C = _tj_limit(values(parts, "tj_max_C"), role.max_tj_C, req.margins.tj_margin_C)
    out["tj_limit_C"] = tj_limit_C
    with np.errstate(invalid="ignore"):
        tj_ok = settled & (tj_C <= tj_limit_C)
    # Runaway fails whatever the limit (models/README.md §3: "No convergence ... fails"),
    # so it is decided even where neither limit is known.
    known = has_rth & on & np.isfinite(fit.k_ohm_V) & (np.isfinite(tj_limit_C) | ~settled)
    out["check_tj"] = _check(tj_ok, known)
    out["extrapolated"] = on & mosfet.extrapolated(vgs_V, fit.lowest_drive_V)
    if on_state_only:
        return out

    idss_A = values(parts, "idss_uA") * 1e-6
    out["off_current_A"] = leakage.leakage_at(idss_A, req.ambient.max_C,
                                              values(parts, "idss_hot_uA") * 1e-6,
                                              values(parts, "idss_hot_C"))
    if role.max_off_current_A is not None:
        out["check_off_current"] = _limit_check(out["off_current_A"],
                                                role.max_off_current_A)
    derate_v, derate_i = req.margins.derate_v, req.margins.derate_i
    # The gate swings the whole rail when it turns on (models/README.md §6); a gate
    # drive above the rail swings that much instead.
    gate_swing_V = max(req.supply.max_V, role.gate_drive_V or 0.0)
    out["gate_swing_V"] = gate_swing_V
    out["settled"] = settled
    out["check_vds_rating"] = _limit_check(values(parts, "vds_max_V") * derate_v,
                                           req.supply.max_V, at_least=True)
    out["check_vgs_rating"] = _limit_check(values(parts, "vgs_max_V") * derate_v,
                                           gate_swing_V, at_least=True)
    out["check_id_rating"] = _limit_check(values(parts, "id_max_A") * derate_i, load_A,
                                          at_least=True)
    return out


def _tj_limit(tj_max_C: np.ndarray, role_max_C: float | None, margin_C: float) -> np.ndarray:
    """min(role max_tj, tj_max_C - margin), either alone where the other is unknown."""
    part_limit = tj_max_C - margin_C
    if role_max_C is None:
        return part_limit
    return np.fmin(part_limit, role_max_C)
