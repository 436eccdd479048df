"""Why a candidate is not feasible, in words: each failed check with by how
much, each undecided check with the data it lacks. Only the rows that are
shown (or written) are explained, so this runs over a handful of candidates,
not the catalogue.
"""

from __future__ import annotations

import math

import pandas as pd

from picker.catalog.quantities import format_quantity as q
from picker.engine import link_reasons
from picker.engine.evaluate import FAIL, PASS, RoleResult
from picker.engine.pass_switch import (GATE_OFF, NOT_EXTRAPOLATED, RUNAWAY, SATURATES,
                                       TOO_DEEP)
from picker.models.thermal import RUNAWAY_BOUND_C


def _v(x: float, unit: str, digits: int = 3) -> str:
    return q(float(x), unit, digits) if x is not None and math.isfinite(float(x)) else "?"


def reasons(row: pd.Series, result: RoleResult, req) -> list[str]:
    """Why this candidate is not feasible: each failed check with by how much,
    then each check that could not be decided and what data it lacks."""
    role = result.role
    out: list[str] = []
    said: dict[str, int] = {}  # an undecided check's explanation -> its place in `out`
    for check in result.checks:
        code = int(row[f"check_{check}"])
        if code == PASS:
            continue
        if check in link_reasons.LINK_CHECKS:
            out.append(link_reasons.text(check, code, row, result, req))
            continue
        text = (_fail_text if code == FAIL else _unknown_text)(check, row, role, req)
        head, sep, body = text.partition(" unknown: ")
        if code != FAIL and sep and body in said:  # the same cause: name both checks once
            at = said[body]
            out[at] = out[at].replace(" unknown: ", f", {head} unknown: ", 1)
            continue
        if code != FAIL and sep:
            said[body] = len(out)
        out.append(text)
    return out


def _ic(row, role) -> float:
    """The collector current: the role's, or what a linked driver's pull-up draws."""
    ic = row.get("collector_current_A")
    return role.collector_current_A if ic is None or ic != ic else float(ic)


def _fail_text(check: str, row: pd.Series, role, req) -> str:
    dv, di = req.margins.derate_v, req.margins.derate_i
    if check == "gate_drive":
        need = row["vt_cold_V"] + 0.1
        return (f"gate drive {_v(row['vgs_V'], 'V')} < {_v(need, 'V')} needed at the cold corner "
                f"(Vth max {_v(row['vt_cold_V'], 'V')} at {req.ambient.min_C:g} °C + 0.1 V)")
    if check == "ohmic":
        return (f"ohmic: the channel saturates: at this drive it carries at most "
                f"{_v(row['ohmic_max_A'], 'A')} in its triode region, the load is "
                f"{_v(role.load_A, 'A')}")
    if check == "drop":
        drop, corner = _worse(row, "drop_{}_V")
        if not math.isfinite(float(row["drop_V"])) and not drop > role.max_drop_V:
            return f"drop fails: {_NO_DROP.get(int(row['no_figures']), 'no on-state figure')}"
        return f"drop {_v(drop, 'V')} > {_v(role.max_drop_V, 'V')} at the {corner} corner"
    if check == "tj":
        if row["runaway"]:
            return "thermal runaway: " + (
                "the channel saturates as the junction warms" if row["runaway_saturates"]
                else f"no junction temperature below {RUNAWAY_BOUND_C:g} °C balances the heat")
        tj, corner = _worse(row, "tj_{}_C")
        return f"Tj {tj:.0f} °C > {row['tj_limit_C']:.0f} °C limit at the {corner} corner"
    if check == "off_current":
        how = ""
        if row.get("open_base", False):
            how = (f" (open base: (1 + hFE max) × Icbo = (1 + {_hot_hfe_max(row, req):.0f}) × "
                   f"{_v(row['icbo_hot_A'], 'A')})")
        return (f"off current {_v(row['off_current_A'], 'A')} > "
                f"{_v(role.max_off_current_A, 'A')} at {req.ambient.max_C:g} °C{how}")
    if check == "vds_rating":
        return _derated("Vds", row["vds_max_V"], dv, "V", f"{req.supply.max_V:g} V supply")
    if check == "vgs_rating":
        return _derated("Vgs", row["vgs_max_V"], dv, "V", f"{row['gate_swing_V']:g} V gate swing")
    if check == "id_rating":
        return _derated("Id", row["id_max_A"], di, "A", f"{_v(role.load_A, 'A')} load")
    if check == "saturation":
        if row.get("no_base_resistor", False):
            return (f"saturation: no base resistor of the series fits: even 100R cannot give "
                    f"Ib·hFE ≥ {role.overdrive:g} × {_v(_ic(row, role), 'A')} at the cold corner "
                    "(and Ic/Ib ≤ 10 for a gate driver)")
        if row.get("base_off_state", False):
            return _base_off_text(row, role, req)
        return (f"Ib·hFE = {_v(row['ib_A'], 'A')} × {row['hfe']:.0f} = "
                f"{_v(row['ib_A'] * row['hfe'], 'A')} < {role.overdrive:g} × "
                f"{_v(_ic(row, role), 'A')} at the cold corner")
    if check == "vce_sat":
        return f"Vce(sat) {_v(row['vce_sat_V'], 'V')} > {_v(role.max_vce_sat_V, 'V')}"
    if check == "vceo_rating":
        return _derated("Vceo", row["vceo_max_V"], dv, "V", f"{req.supply.max_V:g} V supply")
    if check == "ic_rating":
        return (f"Ic rating {_v(row['ic_max_A'], 'A')} × {di:g} < "
                f"{_v(_ic(row, role), 'A')}")
    return f"{check} fails"


def _hot_hfe_max(row, req) -> float:
    from picker.models.bipolar import hfe_at_temperature

    return float(hfe_at_temperature(row["hfe_max"], req.ambient.max_C))


def _base_off_text(row, role, req) -> str:
    """Why the base network does not turn the switch on (Ib <= 0)."""
    drive = req.supply.min_V if role.base_drive_V is None else role.base_drive_V
    drive = row.get("base_drive_V", drive)  # a linked role's: the switch's output
    rb = row.get("base_resistor_ohm", role.base_resistor_ohm)
    rpd = row.get("base_pulldown_ohm", role.base_pulldown_ohm)
    vbe = _v(row["vbe_cold_V"], "V")
    if rpd is None or rpd != rpd:
        return (f"off: the base drive {_v(drive, 'V')} is not above Vbe {vbe} at the cold corner")
    return (f"off: the base drive {_v(drive, 'V')} through {_v(rb, 'ohm')} "
            f"cannot lift the base against the {_v(rpd, 'ohm')} pull-down to "
            f"Vbe {vbe} at the cold corner")


def _worse(row, pattern: str) -> tuple[float, str]:
    """The larger of a figure's cold and hot values ('drop_{}_V'), and its corner."""
    cold, hot = (float(row.get(pattern.format(c), math.nan)) for c in ("cold", "hot"))
    if math.isnan(hot) or (not math.isnan(cold) and cold >= hot):
        return cold, "cold"
    return hot, "hot"


# Why a drop fails without a figure (pass_switch's `no_figures` codes).
_NO_DROP = {GATE_OFF: "the gate is not driven on", SATURATES: "the channel saturates at the load",
            RUNAWAY: "thermal runaway"}


def _derated(name: str, rating: float, factor: float, unit: str, limit: str) -> str:
    """'Vds rating 20 V × 0.8 = 16 V < 24 V supply'."""
    return f"{name} rating {rating:g} {unit} × {factor:g} = {rating * factor:.3g} {unit} < {limit}"


_NEEDS = {
    "gate_drive": "vgs_th_max_V",
    "ohmic": "on-resistance points and vgs_th_max_V",
    "drop": "on-resistance points and vgs_th_max_V",
    "tj": "rth_ja_C/W, and tj_max_C or the role's max_tj",
    "off_current": "idss_uA / icbo_nA",
    "vds_rating": "vds_max_V", "vgs_rating": "vgs_max_V", "id_rating": "id_max_A",
    "saturation": "hfe_min points",
    "vce_sat": "vce_sat_mV points",
    "vceo_rating": "vceo_max_V", "ic_rating": "ic_max_A",
}


def _unknown_text(check: str, row: pd.Series, role, req) -> str:
    ic = row.get("collector_current_A")
    if check in ("saturation", "vce_sat", "ic_rating") and ic is not None and ic != ic:
        return (f"{check} unknown: no pull-up value fits the switch, so the collector current "
                "is unknown (models/README.md §10)")
    vgs = row.get("vgs_V")
    if role.is_pass_switch and vgs is not None and vgs != vgs:  # a linked switch (§10)
        if check == "gate_drive":
            return ("gate_drive unknown: the driver's Vce(sat) is not known or not guaranteed "
                    "here, so neither is the gate drive it leaves (models/README.md §10)")
        if check in ("ohmic", "drop", "tj"):
            return f"{check} not evaluated: the gate drive is unknown"
    return _unknown_reason(check, row, role, req)


def _unknown_reason(check: str, row: pd.Series, role, req) -> str:
    if check in ("ohmic", "drop", "tj") and int(row.get("check_gate_drive", PASS)) == FAIL:
        return f"{check} not evaluated: the gate is not driven on"
    if check in ("ohmic", "drop", "tj"):
        why = int(row.get("no_figures", 0))
        if why == TOO_DEEP:
            return (f"{check} unknown: the {_v(row['vgs_V'], 'V')} drive is below "
                    f"{_v(row['depth_limit_V'], 'V')}, half-way from the lowest rated drive "
                    f"{_v(row['lowest_rated_V'], 'V')} to the threshold; no datasheet figure "
                    "reaches that far (picker/models/README.md §1)")
        if why == NOT_EXTRAPOLATED:
            return (f"{check} unknown: the {_v(row['vgs_V'], 'V')} drive is below the lowest "
                    f"rated drive {_v(row['lowest_rated_V'], 'V')}, and extrapolation = \"none\"")
        if check == "tj" and why == SATURATES:
            return "tj not evaluated: the channel saturates at the load"
    if check == "vce_sat" and row.get("not_guaranteed", False):
        if row.get("base_off_state", False):
            return "Vce(sat) not guaranteed: the switch is not turned on"
        return (f"Vce(sat) not guaranteed: forced gain {row['forced_gain']:.0f} > 10, "
                "the datasheet condition")
    if check == "off_current":
        return _off_unknown_text(row, role)
    return f"{check} unknown: no {_NEEDS.get(check, 'data')}"


def _off_unknown_text(row, role) -> str:
    """Why the off-state current is unknown (models/README.md §4, §6)."""
    bipolar = not role.is_pass_switch
    cold = "icbo_nA" if bipolar else "idss_uA"
    if bipolar and row.get("open_base", False) and math.isfinite(row.get("icbo_hot_A", math.nan)):
        return ("off current unknown: an open base leaks (1 + hFE max) × Icbo, and the "
                "catalogue has no hfe_max")
    if row.get(cold) == 0:
        return (f"off current unknown: {cold} is 0 in the catalogue (read as blank: a zero is "
                "usually a dash typed as a number) and there is no hot leakage point")
    return f"off current unknown: no {cold}"
