"""A pass switch (high-side-pmos, low-side-nmos): gate drive, the channel at the
load, self-heating, leakage and ratings at both corners (picker/models/README.md
§1-§6)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from picker.design.requirements import Requirements, Role
from picker.engine.checks import FAIL, PASS, UNKNOWN
from picker.engine.checks import check as _check
from picker.engine.checks import limit_check as _limit_check
from picker.engine.parts import _data, catalogue_columns, values
from picker.models import leakage, mosfet, thermal

GATE_HEADROOM_V = 0.1  # picker/models/README.md §6: vgs must exceed Vt(Ta) by this much
PASS_SWITCH_CHECKS = ("gate_drive", "ohmic", "drop", "tj", "off_current", "vds_rating",
                      "vgs_rating", "id_rating")
PASS_SWITCH_FIGURES = ("vgs_V", "rds_on_ohm", "drop_V", "loss_W", "tj_C", "off_current_A", "corner")
# Catalogue values a candidate row carries as they are (the reasons quote them).
PASS_SWITCH_RATINGS = ("vds_max_V", "vgs_max_V", "id_max_A", "vgs_th_max_V", "rth_ja_C/W", "tj_max_C",
                       "idss_uA")

# Why a corner has no on-state figures (column `no_figures`, the worse corner's;
# picker/models/README.md §5). 0: it has them.
FIGURES, GATE_OFF, NO_DATA, TOO_DEEP, NOT_EXTRAPOLATED, SATURATES, RUNAWAY = range(7)
# Check outcomes (ohmic, drop, tj) of a corner without figures, by the reason.
_NO_FIGURE_CHECKS = {
    GATE_OFF: (UNKNOWN, FAIL, UNKNOWN),
    NO_DATA: (UNKNOWN, UNKNOWN, UNKNOWN),
    TOO_DEEP: (UNKNOWN, UNKNOWN, UNKNOWN),
    NOT_EXTRAPOLATED: (UNKNOWN, UNKNOWN, UNKNOWN),
    SATURATES: (FAIL, FAIL, UNKNOWN),
    RUNAWAY: (PASS, FAIL, FAIL),
}
# Which reason a candidate shows when both corners lack figures: the one
# that decides most (a failure before a gap).
_PRECEDENCE = (GATE_OFF, SATURATES, RUNAWAY, TOO_DEEP, NOT_EXTRAPOLATED, NO_DATA)


def pass_switch(parts, role: Role, req: Requirements) -> pd.DataFrame:
    """picker/models/README.md §6, high-side-pmos and low-side-nmos, at both
    corners (§5): one row per part (index of `parts`, a DataFrame or
    PartData), no price, no rank."""
    parts = _data(parts)
    return pd.DataFrame(pass_switch_columns(parts, role, req), index=parts.index)


def pass_switch_columns(parts, role: Role, req: Requirements, *,
                        on_state_only: bool = False, catalogue: bool = True,
                        vgs_V=None) -> dict:
    """`pass_switch` as a dict of arrays (no DataFrame made). `on_state_only`
    stops after the checks the supply can change (gate drive, ohmic, drop,
    Tj): all the lowest-supply search needs. `catalogue=False` leaves out the
    columns `catalogue_columns` gives."""
    parts = _data(parts)
    out = catalogue_columns(parts, PASS_SWITCH_RATINGS) if catalogue else {}
    load_A = role.load_A
    vt25_V = values(parts, "vgs_th_max_V")
    fit = parts.fit()
    k_vt = mosfet.k_vt_of(values(parts, "vgs_th_tc_mV/C"), vt25_V)
    a = values(parts, "rds_tc_pct/C") / 100.0
    rth = values(parts, "rth_ja_C/W") * req.margins.rth_factor
    drive_V = req.supply.min_V if role.gate_drive_V is None else role.gate_drive_V
    if vgs_V is None:
        vgs_V = drive_V - role.gate_drive_drop_V
    else:  # the gate drive a linked driver leaves (models/README.md §10), per part; NaN: unknown
        vgs_V = np.asarray(vgs_V, dtype=float)
    channel, drive = mosfet.channel_at_drive(vgs_V, fit, vt25_V, k_vt, a,
                                             req.margins.extrapolation)
    power = mosfet.ChannelPower(channel, load_A)
    gate_known = np.isfinite(vt25_V) & np.isfinite(vgs_V)

    corners = {}
    for corner, ta_C in (("cold", req.ambient.min_C), ("hot", req.ambient.max_C)):
        if corner == "hot" and np.array_equal(ta_C, req.ambient.min_C):
            corners["hot"] = corners["cold"]  # one ambient (the lowest-supply search): same figures
            break
        corners[corner] = _corner(channel, drive, fit, power, vt25_V, k_vt, rth, ta_C, vgs_V,
                                  load_A, gate_known)
    cold, hot = corners["cold"], corners["hot"]

    gate_ok = cold["gate_ok"] & hot["gate_ok"]
    out["check_gate_drive"] = _check(gate_ok, gate_known)
    out["vgs_V"] = vgs_V
    out["vt_cold_V"] = cold["vt_V"]
    out["gate_margin_V"] = vgs_V - (np.maximum(cold["vt_V"], hot["vt_V"]) + GATE_HEADROOM_V)

    figures = (cold["why"] == FIGURES) & (hot["why"] == FIGURES)
    hot_worse = np.nan_to_num(hot["drop_V"], nan=-np.inf) > np.nan_to_num(cold["drop_V"], nan=-np.inf)
    drop_V = np.where(figures, np.fmax(cold["drop_V"], hot["drop_V"]), np.nan)
    out["drop_V"] = drop_V
    out["rds_on_ohm"] = drop_V / load_A
    out["loss_W"] = load_A * drop_V
    # Each corner's own figures (where the gate is driven on at both: §6)
    gate_on = gate_known & gate_ok
    out["drop_cold_V"] = np.where(gate_on, cold["drop_V"], np.nan)
    out["drop_hot_V"] = np.where(gate_on, hot["drop_V"], np.nan)
    has_rth = np.isfinite(rth)
    out["tj_cold_C"] = np.where(gate_on & has_rth, cold["tj_C"], np.nan)
    out["tj_hot_C"] = np.where(gate_on & has_rth, hot["tj_C"], np.nan)
    out["corner"] = pd.Categorical.from_codes(  # 'cold' / 'hot'; NaN where no drop is known
        np.where(figures, hot_worse.astype(np.int8), -1), categories=["cold", "hot"])
    tj_C = np.where(figures & has_rth, np.fmax(cold["tj_C"], hot["tj_C"]), np.nan)
    out["tj_C"] = tj_C
    tj_limit_C = _tj_limit(values(parts, "tj_max_C"), role.max_tj_C, req.margins.tj_margin_C)
    out["tj_limit_C"] = tj_limit_C

    # Each corner's checks, then the worse of the two: fail at either, else
    # unknown at either, else pass (picker/models/README.md §5).
    checks = {}
    for j, name in enumerate(("ohmic", "drop", "tj")):
        lut = np.array([UNKNOWN] + [_NO_FIGURE_CHECKS[w][j] for w in range(1, 7)], dtype=np.int8)
        codes = []
        for c in (cold, hot):
            if name == "ohmic":
                decided = np.int8(PASS)
            elif name == "drop":
                decided = _limit_check(c["drop_V"], role.max_drop_V)
            else:
                with np.errstate(invalid="ignore"):
                    decided = _check(c["tj_C"] <= tj_limit_C,
                                     has_rth & np.isfinite(c["tj_C"]) & np.isfinite(tj_limit_C))
            codes.append(np.where(c["why"] == FIGURES, decided, lut[c["why"]]))
        worse = np.where((codes[0] == FAIL) | (codes[1] == FAIL), np.int8(FAIL),
                         np.minimum(codes[0], codes[1]))  # UNKNOWN (-1) < PASS (1)
        checks[name] = worse.astype(np.int8)
    out["check_ohmic"] = checks["ohmic"]
    out["check_drop"] = checks["drop"]
    out["check_tj"] = checks["tj"]
    why = np.full(len(vt25_V), FIGURES, dtype=np.int8)
    for reason in reversed(_PRECEDENCE):
        why = np.where((cold["why"] == reason) | (hot["why"] == reason), np.int8(reason), why)
    out["no_figures"] = why
    out["runaway"] = why == RUNAWAY
    out["runaway_saturates"] = (why == RUNAWAY) & (
        (cold["t_sat_C"] < thermal.RUNAWAY_BOUND_C) & (cold["why"] == RUNAWAY)
        | (hot["t_sat_C"] < thermal.RUNAWAY_BOUND_C) & (hot["why"] == RUNAWAY))
    out["saturates"] = why == SATURATES
    out["ohmic_max_A"] = np.fmin(cold["max_A"], hot["max_A"])
    out["lowest_rated_V"] = fit.lowest_drive_V
    out["highest_rated_V"] = fit.highest_drive_V
    out["depth_limit_V"] = np.fmax(cold["depth_V"], hot["depth_V"])
    out["extrapolated"] = gate_known & gate_ok & (drive.below | drive.above)
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
    # The gate swings the whole rail when it turns on (picker/models/README.md
    # §6); a fixed gate drive above the rail (a boosted one) swings that much.
    gate_swing_V = max(req.supply.max_V, role.gate_drive_V or 0.0)
    out["gate_swing_V"] = gate_swing_V
    out["check_vds_rating"] = _limit_check(values(parts, "vds_max_V") * derate_v,
                                           req.supply.max_V, at_least=True)
    out["check_vgs_rating"] = _limit_check(values(parts, "vgs_max_V") * derate_v,
                                           gate_swing_V, at_least=True)
    out["check_id_rating"] = _limit_check(values(parts, "id_max_A") * derate_i, load_A,
                                          at_least=True)
    return out


def _corner(channel, drive, fit, power, vt25_V, k_vt, rth, ta_C, vgs_V, load_A,
            gate_known) -> dict:
    """One ambient corner: the threshold, the gate check, why there are no
    figures (or FIGURES), the junction temperature and the drop there."""
    vt_V = mosfet.threshold_at(vt25_V, ta_C, k_vt)
    gate_ok = vgs_V >= vt_V + GATE_HEADROOM_V
    depth_V = mosfet.depth_limit_V(fit.lowest_drive_V, vt_V)
    with np.errstate(invalid="ignore"):
        too_deep = drive.vg_eff_V < depth_V
    max_A = channel.max_current_A(ta_C)
    with np.errstate(invalid="ignore"):
        saturates = ~(max_A > load_A)  # NaN (channel off) counts as saturated
    t_sat_C = channel.saturation_temperature(ta_C, load_A)
    cap_C = np.fmin(t_sat_C, thermal.RUNAWAY_BOUND_C)

    why = np.full(np.shape(vt25_V), FIGURES, dtype=np.int8)
    why = np.where(saturates, np.int8(SATURATES), why)
    why = np.where(~drive.usable & np.isfinite(fit.k_ohm_V) & gate_known,
                   np.int8(NOT_EXTRAPOLATED), why)
    why = np.where(too_deep, np.int8(TOO_DEEP), why)  # in every mode (§1)
    why = np.where(~np.isfinite(fit.k_ohm_V) | ~gate_known, np.int8(NO_DATA), why)
    why = np.where(gate_known & ~gate_ok, np.int8(GATE_OFF), why)

    # Solve only where the channel carries the load at Ta: elsewhere P is
    # unknown (NaN) and the solve leaves the part alone.
    solve = why == FIGURES
    tj_C, runaway = thermal.solve_junction_temperature(
        ta_C, np.where(solve, rth, np.nan), power, cap_C)
    tj_C = np.where(solve, tj_C, np.nan)
    runaway &= solve
    why = np.where(runaway, np.int8(RUNAWAY), why)
    figures = why == FIGURES
    drop_V = np.where(figures, channel.drop(tj_C, load_A), np.nan)
    return dict(vt_V=vt_V, gate_ok=gate_ok, why=why, tj_C=np.where(figures, tj_C, np.nan),
                drop_V=drop_V, max_A=max_A, t_sat_C=t_sat_C, depth_V=depth_V)


def _tj_limit(tj_max_C: np.ndarray, role_max_C: float | None, margin_C: float) -> np.ndarray:
    """min(role max_tj, tj_max_C - margin), either alone where the other is unknown."""
    part_limit = tj_max_C - margin_C
    if role_max_C is None:
        return part_limit
    return np.fmin(part_limit, role_max_C)
