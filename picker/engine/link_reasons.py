"""Why a linked role's candidate fails the checks of models/README.md §10, in
words: the pull-up that holds the gate shut, the turn-off bound, the drive
current, the latch held off, and `pair` (what this part does to the other
role's choice)."""

from __future__ import annotations

import math

from picker.catalog.quantities import format_quantity as q
from picker.catalog.quantities import resistor_code
from picker.engine.checks import FAIL

LINK_CHECKS = ("held_off", "turn_off", "drive_current", "latch_off", "pair")
ON_STATE = ("gate_drive", "ohmic", "drop", "tj")
CHECK_WORDS: dict = {}  # the checks are named as the interface names them (drop, latch_off ...)


def _v(x, unit: str, digits: int = 3) -> str:
    try:
        x = float(x)
    except (TypeError, ValueError):
        return "?"
    return q(x, unit, digits) if math.isfinite(x) else "?"


def _r(x) -> str:
    try:
        x = float(x)
    except (TypeError, ValueError):
        return "?"
    return resistor_code(x) if math.isfinite(x) and x > 0 else "?"


def refs(role) -> str:
    return "/".join(role.refs)


def text(check: str, code: int, row, result, req) -> str:
    """The reason for one failed (code FAIL) or undecided linked check."""
    link = result.link
    series = getattr(req, "resistors", None)
    series_name = series.series if series is not None else "E24"
    hot = f"{req.ambient.max_C:g} °C"
    if check == "held_off":
        driver = refs(link.partner)
        if row.get("no_pullup", False):
            if code == FAIL:
                return (f"held off: no {series_name} value fits: even a 100R pull-up lets {driver}'s "
                        f"leakage open the gate past Vth min {_v(row['vt_min_hot_V'], 'V')} − 0.1 V "
                        f"at {hot}")
            return "held_off unknown: no pull-up value fits (the turn-off time decides)"
        if code == FAIL:
            return (f"held off: {driver}'s leakage through the {_r(row['gate_pullup_ohm'])} pull-up "
                    f"opens the gate {_v(row['gate_leak_V'], 'V')}, over Vth min "
                    f"{_v(row['vt_min_hot_V'], 'V')} − 0.1 V at {hot}")
        if not math.isfinite(float(row.get("vt_min_hot_V", math.nan))):
            return "held_off unknown: no vgs_th_min_V"
        return f"held_off unknown: no off-state current for {driver}"
    if check == "turn_off":
        if row.get("no_pullup", False):
            if code == FAIL:
                return (f"turn-off: no {series_name} value fits: even a 100R pull-up takes longer "
                        f"than {_v(link.switch.max_turn_off_s, 's')}")
            return "turn_off unknown: no pull-up value fits (the held-off gate decides)"
        if code == FAIL:
            return (f"turn-off bound {_v(row['t_off_s'], 's')} > {_v(link.switch.max_turn_off_s, 's')} "
                    f"(pull-up {_r(row['gate_pullup_ohm'])} at its high end, Vth min "
                    f"{_v(row['vt_min_hot_V'], 'V')})")
        return "turn_off unknown: no qg_nC points (an input capacitance is not enough)"
    if check == "drive_current":
        if code == FAIL:
            return (f"the {_r(row['gate_pullup_ohm'])} pull-up draws {_v(row['pullup_current_A'], 'A')} "
                    f"from a full cell > {_v(link.switch.max_drive_current_A, 'A')}")
        return "drive_current unknown: no pull-up value fits"
    if check == "latch_off":
        if code != FAIL:
            return f"latch_off unknown: no off-state current for {refs(link.switch)}"
        if row.get("no_pulldown", False):
            return (f"latch off: no {series_name} value fits: even a 100R pull-down leaves the base "
                    f"above 0.15 V with {refs(link.switch)}'s leakage at {hot}")
        if link.partner.base_pulldown_ohm is None and link.switch.off_load_ohm is None:
            return ("latch off: no pull-down and no off_load: nothing holds the base down while "
                    f"{refs(link.switch)} leaks")
        return (f"latch off: {refs(link.switch)}'s leakage lifts the base to "
                f"{_v(row['latch_base_V'], 'V')} at {hot} (> 0.15 V): the latch would turn itself on")
    if check == "pair":
        return pair_text(row, result, req)
    return f"{check} fails"


def _failed(row, result, key: str = "other_fails") -> list[str]:
    bits = int(row.get(key, 0))
    return [c for i, c in enumerate(result.other_checks) if bits >> i & 1]


def pair_text(row, result, req) -> str:
    """'pair: its Vce(sat) leaves 2.85 V of gate drive, and Q1's drop then fails'."""
    link = result.link
    failed = _failed(row, result)
    if not failed:
        undecided = _failed(row, result, "other_unknown")
        open_ = ", ".join(CHECK_WORDS.get(c, c) for c in undecided[:3]) + (
            f" and {len(undecided) - 3} more" if len(undecided) > 3 else "")
        other = refs(link.switch if result.side == "partner" else link.partner)
        return (f"pair: with it {other}'s {open_} cannot be decided" if open_
                else f"pair: {result.partner_part} is not feasible with it")
    words = " and ".join(CHECK_WORDS.get(c, c) for c in failed)
    if result.side == "partner":  # this part is the driver: what it does to the switch
        other = refs(link.switch)
        if any(c in ON_STATE for c in failed):
            return (f"pair: its Vce(sat) leaves {_v(row.get('other_vgs_V'), 'V')} of gate drive, "
                    f"and {other}'s {words} then fails")
        if "held_off" in failed or "off_current" in failed:
            return (f"pair: its leakage opens {other}'s gate {_v(row.get('other_gate_leak_V'), 'V')}, "
                    f"and {other}'s {words} then fails")
        return (f"pair: its leakage limits {other}'s pull-up to {_r(row.get('other_gate_pullup_ohm'))}, "
                f"and {other}'s {words} then fails")
    other = refs(link.partner)  # this part is the switch: what it does to the driver
    if "latch_off" in failed:
        return (f"pair: its leakage {_v(row.get('off_current_A'), 'A')} lifts {other}'s base to "
                f"{_v(row.get('other_latch_base_V'), 'V')} while off, and {other}'s {words} then fails")
    if link.drives_gate:
        return (f"pair: its gate needs a {_r(row.get('gate_pullup_ohm'))} pull-up, so {other} carries "
                f"{_v(row.get('other_collector_current_A'), 'A')}, and {other}'s {words} then fails")
    return f"pair: with it {other}'s {words} fails"
