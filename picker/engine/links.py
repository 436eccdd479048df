"""Roles that drive each other, evaluated as one circuit (models/README.md §10).

A `Link` is a pass switch and its bipolar partner: the transistor that pulls
its gate (`gate_driver`), which may also take its base current from the
switch's output (`base_from`: the latch pair), or a bipolar role fed from the
switch's output alone. `PairModel` holds what each side's parts bring, once
per part, and evaluates any list of (partner part, switch part) pairs at once:
the pull-up, the partner's collector current, the pull-down and base resistor,
the gate drive the partner leaves, and both roles' figures and checks with
each other. The joint choice (`engine.pairs`) asks it about batches of pairs;
the role tables ask it about one role's parts against the other's choice.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from picker.design.requirements import Requirements, Role
from picker.engine.checks import FAIL, PASS, UNKNOWN
from picker.engine.checks import check as _check
from picker.engine.checks import limit_check as _limit_check
from picker.engine.parts import PartData, values
from picker.engine.pass_switch import PASS_SWITCH_CHECKS, pass_switch_columns
from picker.engine.saturated_switch import SWITCH_CHECKS, saturated_switch_columns
from picker.models import bipolar, eseries, gate, leakage, mosfet

AUTO = "auto"
LATCH_BASE_LIMIT_V = 0.15  # a base at or below this stays off (models/README.md §10)
FORCED_GAIN_LIMIT = 10.0  # a gate driver's Ic/Ib, so its Vce(sat) is the datasheet's (§6)
ON_STATE = ("gate_drive", "ohmic", "drop", "tj")


@dataclass(frozen=True)
class Link:
    switch: Role
    partner: Role
    drives_gate: bool  # the partner is the switch's gate driver
    fed: bool  # the partner's base is fed from the switch's output


def links_of(req: Requirements) -> list[Link]:
    """The requirement file's linked pairs: each switch with a gate driver, and
    each switch feeding the base of a role that is not its driver."""
    out = []
    for role in req.roles:
        if not role.is_pass_switch:
            continue
        driver = req.driver_of(role)
        if driver is not None:
            out.append(Link(role, driver, True, driver.base_from == role.name))
        for other in req.roles:
            if other.base_from == role.name and other is not driver:
                out.append(Link(role, other, False, True))
    return out


@dataclass(frozen=True)
class Series:
    """Where "auto" values come from, and the tolerances resistors are taken at."""

    name: str
    auto_tol: float  # an "auto" value's tolerance
    given_tol: float  # a value the file gives (0 without a [resistors] table: exact)
    max_ohm: float

    @classmethod
    def of(cls, req: Requirements) -> "Series":
        table = getattr(req, "resistors", None)
        if table is None:
            name = eseries.DEFAULT_SERIES
            return cls(name, eseries.DEFAULT_TOLERANCE[name], 0.0, eseries.DEFAULT_MAX_OHM)
        return cls(table.series, table.tolerance, table.tolerance, table.max_ohm)

    def tol(self, value) -> float:
        return self.auto_tol if value == AUTO else self.given_tol

    def choose(self, passes, n: int) -> np.ndarray:
        return eseries.largest_passing(passes, n, self.name, self.auto_tol, eseries.LOWEST_OHM,
                                       self.max_ohm)


class PairModel:
    """One link's two roles over their catalogue parts: per-part figures that do
    not depend on the partner, and `evaluate(p, s)` for arrays of pairs
    (positions of partner parts in `partner`, of switch parts in `switch`)."""

    def __init__(self, link: Link, req: Requirements, partner: PartData, switch: PartData) -> None:
        self.link, self.req, self.partner, self.switch = link, req, partner, switch
        self.series = Series.of(req)
        sw, pr = link.switch, link.partner
        hot = req.ambient.max_C
        # switch side
        k_vt = mosfet.k_vt_of(values(switch, "vgs_th_tc_mV/C"), values(switch, "vgs_th_max_V"))  # §2
        self.vt_min_hot_V = gate.threshold_min_at(values(switch, "vgs_th_min_V"), hot, k_vt)
        drives_V, qg_nC = switch.points("qg_nC")
        self.qg_C = gate.gate_charge_at(drives_V, qg_nC * 1e-9, req.supply.max_V)
        self.idss_hot_A = leakage.leakage_at(values(switch, "idss_uA") * 1e-6, hot,
                                             values(switch, "idss_hot_uA") * 1e-6,
                                             values(switch, "idss_hot_C"))
        # partner side: its off-state current with the pull-down as given (an "auto"
        # one at [resistors] max, the most an open base can leak: §10 step 1)
        rpd = pr.base_pulldown_ohm
        probe = {"ic_A": np.full(len(partner), 1e-3), "drive_V": req.supply.min_V,
                 "ends": self._ends(np.full(len(partner), 1e6), self._pulldown(rpd, len(partner)))}
        own = saturated_switch_columns(partner, pr, req, catalogue=False, linked=probe)
        self.partner_off_A = np.asarray(own["off_current_A"], dtype=float)
        self.partner_icbo_hot_A = np.asarray(own.get("icbo_hot_A", own["off_current_A"]), dtype=float)
        self.drive_V = (req.supply.min_V - sw.max_drop_V if link.fed
                        else (req.supply.min_V if pr.base_drive_V is None else pr.base_drive_V))
        self.off_load_ohm = np.inf if sw.off_load_ohm is None else sw.off_load_ohm

    # -- resistors ------------------------------------------------------------------------

    def _pulldown(self, rpd, n: int) -> np.ndarray | None:
        if rpd is None:
            return None
        return np.full(n, self.series.max_ohm if rpd == AUTO else float(rpd))

    def _ends(self, rb_ohm, rpd_ohm, rb_tol=None, rpd_tol=None) -> dict:
        pr = self.link.partner
        rb_tol = self.series.tol(pr.base_resistor_ohm) if rb_tol is None else rb_tol
        rpd_tol = self.series.tol(pr.base_pulldown_ohm) if rpd_tol is None else rpd_tol
        return {"rb_max": rb_ohm * (1 + rb_tol),
                "rpd_min": None if rpd_ohm is None else rpd_ohm * (1 - rpd_tol),
                "rpd_max": None if rpd_ohm is None else rpd_ohm * (1 + rpd_tol)}

    def latch_base_V(self, leak_A, rb_max, rpd_max, icbo_A) -> np.ndarray:
        """models/README.md §10: the base's lift while off. The switch's leakage
        divides between the load's off resistance R_L and Rb + Rpd, and the base
        sits on Rpd's share; the partner's own collector-base leakage flows out of
        its base into Rpd || (Rb + R_L) (Kirchhoff's and Ohm's laws)."""
        r_l = self.off_load_ohm
        with np.errstate(divide="ignore", invalid="ignore"):
            if rpd_max is None:
                v = (leak_A * r_l + icbo_A * (rb_max + r_l)) * np.ones_like(rb_max)
                return np.where(np.isfinite(v), v, np.inf)
            chain = rb_max + rpd_max
            shunt = chain if np.isinf(r_l) else r_l * chain / (r_l + chain)
            own = rpd_max if np.isinf(r_l) else rpd_max * (rb_max + r_l) / (rpd_max + rb_max + r_l)
            return leak_A * shunt * rpd_max / chain + icbo_A * own

    # -- a batch of pairs -----------------------------------------------------------------

    def evaluate(self, p: np.ndarray, s: np.ndarray, *, full: bool = False,
                 fixed: dict | None = None) -> dict:
        """Both roles' columns for the pairs (partner part p[k], switch part s[k]):
        `switch` and `partner` (dicts of per-pair arrays, as the role families give
        them, with the link's figures and checks added), `switch_ok`,
        `partner_ok` (every check of that role passes) and `feasible`. `fixed`
        holds resistor values per pair (`gate_pullup_ohm`, `base_resistor_ohm`,
        `base_pulldown_ohm`; NaN: none fitted) to use instead of choosing them:
        the circuit as chosen, tried at another supply (engine.headroom)."""
        link, req, series = self.link, self.req, self.series
        sw, pr = link.switch, link.partner
        n = len(p)
        P, S = self.partner.take(p), self.switch.take(s)
        off_A = self.partner_off_A[p]
        vt_hot = self.vt_min_hot_V[s]
        qg = self.qg_C[s]
        sw_cols: dict = {}
        pr_cols: dict = {}

        if link.drives_gate:  # 1. the pull-up
            if fixed is not None:
                r_pu = np.asarray(fixed["gate_pullup_ohm"], dtype=float)
            elif sw.gate_pullup_ohm == AUTO:
                idss_hot = self.idss_hot_A[s]

                def passes(r_max):
                    leak_V = gate.gate_leak(off_A, r_max)
                    ok = gate.held_off_margin(leak_V, vt_hot) >= 0
                    if sw.max_turn_off_s is not None:
                        ok &= gate.turn_off_bound(r_max, qg, vt_hot) <= sw.max_turn_off_s
                    if sw.max_off_current_A is not None:  # the opened gate's leakage grows with R
                        opened = gate.opened_leakage(idss_hot, leak_V, req.ambient.max_C)
                        ok &= ~(opened > sw.max_off_current_A)
                    return ok
                r_pu = series.choose(passes, n)
            else:
                r_pu = np.full(n, float(sw.gate_pullup_ohm))
            tol = series.tol(sw.gate_pullup_ohm)
            r_pu_max, r_pu_min = r_pu * (1 + tol), r_pu * (1 - tol)
            none_fits = np.isnan(r_pu) & np.isfinite(vt_hot) & np.isfinite(off_A)
            # the check that excluded even the smallest value is the one that fails
            lowest = eseries.LOWEST_OHM * (1 + tol)
            held_at_lowest = gate.held_off_margin(gate.gate_leak(off_A, lowest), vt_hot) >= 0
            ic_A = req.supply.max_V / r_pu_min
            leak_V = gate.gate_leak(off_A, r_pu_max)
            margin = gate.held_off_margin(leak_V, vt_hot)
            sw_cols["gate_pullup_ohm"] = r_pu
            sw_cols["gate_leak_V"] = leak_V
            sw_cols["held_off_margin_V"] = margin
            sw_cols["vt_min_hot_V"] = vt_hot
            sw_cols["no_pullup"] = none_fits
            held = _check(margin >= 0, np.isfinite(margin))
            sw_cols["check_held_off"] = np.where(none_fits, np.where(held_at_lowest, UNKNOWN, FAIL),
                                                 held).astype(np.int8)
            if sw.max_turn_off_s is not None:
                t_off = gate.turn_off_bound(r_pu_max, qg, vt_hot)
                sw_cols["t_off_s"] = t_off
                turn = _limit_check(t_off, sw.max_turn_off_s)
                sw_cols["check_turn_off"] = np.where(none_fits, np.where(held_at_lowest, FAIL, UNKNOWN),
                                                     turn).astype(np.int8)
            else:
                sw_cols["t_off_s"] = gate.turn_off_bound(r_pu_max, qg, vt_hot)
            drive_A = req.supply.max_V / r_pu_min
            sw_cols["pullup_current_A"] = drive_A
            if sw.max_drive_current_A is not None:
                sw_cols["check_drive_current"] = _limit_check(drive_A, sw.max_drive_current_A)
            sw_off_A = gate.opened_leakage(self.idss_hot_A[s], leak_V, req.ambient.max_C)
        else:
            r_pu_max = None
            ic_A = np.full(n, pr.collector_current_A)
            sw_off_A = self.idss_hot_A[s]

        # 2-3. the pull-down, against the switch's leakage with the base resistor at zero
        rpd = pr.base_pulldown_ohm
        rpd_tol = series.tol(rpd)
        if fixed is not None and rpd is not None:
            rpd_ohm = np.asarray(fixed["base_pulldown_ohm"], dtype=float)
        elif rpd == AUTO:
            icbo = self.partner_icbo_hot_A[p]
            rpd_ohm = series.choose(lambda r_max: self.latch_base_V(sw_off_A, np.zeros(n), r_max, icbo)
                                    <= LATCH_BASE_LIMIT_V, n)
        else:
            rpd_ohm = None if rpd is None else np.full(n, float(rpd))

        # 4. the base resistor
        rb = pr.base_resistor_ohm
        rb_tol = series.tol(rb)
        if fixed is not None:
            rb_ohm = np.asarray(fixed["base_resistor_ohm"], dtype=float)
        elif rb == AUTO:
            # (where no pull-down fits, latch_off fails and the base is evaluated without one)
            rpd_min = None if rpd_ohm is None else np.nan_to_num(rpd_ohm, nan=np.inf) * (1 - rpd_tol)
            rb_ohm = choose_base_resistor(P, pr, req, series, ic_A, self.drive_V, rpd_min,
                                          forced=link.drives_gate)
        else:
            rb_ohm = np.full(n, float(rb))
        no_rb = np.isnan(rb_ohm) & np.isfinite(ic_A)  # (an unknown current leaves it unknown)
        # no base resistor fits: the transistor is taken as off (saturation fails)
        ends = self._ends(np.where(no_rb, np.inf, rb_ohm),
                          None if rpd_ohm is None else np.nan_to_num(rpd_ohm, nan=np.inf), rb_tol, rpd_tol)
        pr_cols.update(saturated_switch_columns(P, pr, req, catalogue=full,
                                                linked={"ic_A": ic_A, "drive_V": self.drive_V,
                                                        "ends": ends}))
        pr_cols["collector_current_A"] = ic_A
        pr_cols["base_drive_V"] = self.drive_V
        pr_cols["base_resistor_ohm"] = rb_ohm
        pr_cols["base_pulldown_ohm"] = np.full(n, np.nan) if rpd_ohm is None else rpd_ohm
        pr_cols["no_base_resistor"] = no_rb
        if rpd == AUTO:
            pr_cols["off_current_A"] = off_A  # taken with the pull-down at its largest (§10)
            if pr.max_off_current_A is not None:
                pr_cols["check_off_current"] = _limit_check(off_A, pr.max_off_current_A)

        # 5. the gate drive it leaves, and the switch with it
        if link.drives_gate:
            vce = np.asarray(pr_cols["vce_sat_V"], dtype=float)
            guaranteed = ~np.asarray(pr_cols["not_guaranteed"], bool) & np.isfinite(vce)
            vgs = np.where(guaranteed & ~no_rb, req.supply.min_V - vce, np.nan)
            sw_cols.update(pass_switch_columns(S, sw, req, catalogue=full, vgs_V=vgs))
        else:
            sw_cols.update(pass_switch_columns(S, sw, req, catalogue=full))
        sw_cols["off_current_A"] = sw_off_A
        if sw.max_off_current_A is not None:
            sw_cols["check_off_current"] = _limit_check(sw_off_A, sw.max_off_current_A)

        # 6. the latch, held off
        if link.fed:
            rb_max = np.asarray(ends["rb_max"], dtype=float)
            rpd_max = ends["rpd_max"]
            with np.errstate(invalid="ignore"):
                v_b = self.latch_base_V(sw_off_A, rb_max, rpd_max, self.partner_icbo_hot_A[p])
            no_rpd = np.zeros(n, bool) if rpd != AUTO else np.isnan(rpd_ohm) & np.isfinite(sw_off_A)
            v_b = np.where(no_rpd, np.nan, v_b)
            pr_cols["latch_base_V"] = v_b
            pr_cols["no_pulldown"] = no_rpd
            with np.errstate(invalid="ignore"):
                latch = _check(v_b <= LATCH_BASE_LIMIT_V, ~np.isnan(v_b))
            pr_cols["check_latch_off"] = np.where(no_rpd, np.int8(FAIL), latch).astype(np.int8)
        out = {"switch": sw_cols, "partner": pr_cols}
        out["switch_ok"] = all_pass(sw_cols, self.switch_checks, n)
        out["partner_ok"] = all_pass(pr_cols, self.partner_checks, n)
        out["feasible"] = out["switch_ok"] & out["partner_ok"]
        return out

    @property
    def switch_checks(self) -> tuple[str, ...]:
        """The switch's checks in the link (models/README.md §6, §10), without `pair`."""
        sw = self.link.switch
        checks = [c for c in PASS_SWITCH_CHECKS if c != "off_current" or sw.max_off_current_A is not None]
        if self.link.drives_gate:
            checks.append("held_off")
            checks += ["turn_off"] if sw.max_turn_off_s is not None else []
            checks += ["drive_current"] if sw.max_drive_current_A is not None else []
        return tuple(checks)

    @property
    def partner_checks(self) -> tuple[str, ...]:
        pr = self.link.partner
        checks = [c for c in SWITCH_CHECKS
                  if (c != "vce_sat" or pr.max_vce_sat_V is not None)
                  and (c != "off_current" or pr.max_off_current_A is not None)]
        return tuple(checks + (["latch_off"] if self.link.fed else []))


def choose_base_resistor(parts: PartData, role: Role, req: Requirements, series: Series, ic_A,
                         drive_V, rpd_min, *, forced: bool) -> np.ndarray:
    """`base_resistor = "auto"` (models/README.md §10): per part the largest series
    value whose `saturation` passes at the cold corner with the resistor at +tol
    and the pull-down (`rpd_min`, ohm, at -tol; None: none) at its low end; with
    `forced` (a gate driver) also at a forced gain Ic/Ib <= 10. NaN: none fits."""
    n = len(parts)
    vbe25, _ = bipolar.vbe_25(values(parts, "vbe_sat_max_V"), values(parts, "vbe_on_V"))
    vbe_cold = bipolar.vbe_at(vbe25, req.ambient.min_C)
    ic_pts, hfe_pts = parts.points("hfe_min")
    hfe = bipolar.hfe_at_temperature(bipolar.hfe_at_current(ic_pts / 1000.0, hfe_pts, ic_A).hfe,
                                     req.ambient.min_C)

    def saturates(rb_max):
        with np.errstate(divide="ignore", invalid="ignore"):
            ib = bipolar.base_current(drive_V, vbe_cold, rb_max, rpd_min)
            ok = ib * hfe >= role.overdrive * ic_A
            if forced:
                ok &= ic_A <= FORCED_GAIN_LIMIT * ib
        return ok & (ib > 0)
    return series.choose(saturates, n)


def auto_base_columns(parts, role: Role, req: Requirements, *, catalogue: bool = True,
                      on_state_only: bool = False, base_resistor_ohm=None) -> dict:
    """A switch of its own (no link) with `base_resistor = "auto"`: the resistor
    chosen per part as `choose_base_resistor` (or, given `base_resistor_ohm`, those
    values: the circuit as chosen, tried at another supply), then the family's
    columns with it."""
    from picker.engine.parts import _data

    parts = _data(parts)
    series = Series.of(req)
    n = len(parts)
    drive = req.supply.min_V if role.base_drive_V is None else role.base_drive_V
    rpd = role.base_pulldown_ohm
    rpd_tol = series.tol(rpd)
    rpd_min = None if rpd is None else np.full(n, float(rpd) * (1 - rpd_tol))
    rb_ohm = (choose_base_resistor(parts, role, req, series, role.collector_current_A, drive, rpd_min,
                                   forced=False) if base_resistor_ohm is None
              else np.asarray(base_resistor_ohm, dtype=float))
    no_rb = np.isnan(rb_ohm)
    ends = {"rb_max": np.where(no_rb, np.inf, rb_ohm) * (1 + series.auto_tol),
            "rpd_min": rpd_min, "rpd_max": None if rpd is None else np.full(n, float(rpd) * (1 + rpd_tol))}
    out = saturated_switch_columns(parts, role, req, catalogue=catalogue, on_state_only=on_state_only,
                                   linked={"ic_A": role.collector_current_A, "drive_V": drive, "ends": ends})
    out["base_resistor_ohm"] = rb_ohm
    out["no_base_resistor"] = no_rb
    return out


def all_pass(columns: dict, checks, n: int) -> np.ndarray:
    ok = np.ones(n, dtype=bool)
    for c in checks:
        ok &= np.asarray(columns[f"check_{c}"]) == PASS
    return ok
