"""A straightforward per-part Python implementation of the pass-switch role.

The same models as picker's engine (on-resistance fit, temperature, self-
heating, leakage, ratings, price), written the obvious way: one part at a
time, plain floats and loops. It is the floor the vectorised engine is
measured against in scripts/bench.py, and an independent re-implementation
the tests compare the engine with.
"""

from __future__ import annotations

import math

NAN = float("nan")


def _finite(x) -> bool:
    return x is not None and not (isinstance(x, float) and math.isnan(x))


def fit(points: list[tuple[float, float]], vt: float) -> tuple[float, float]:
    """(R_fix, K) in ohm, ohm·V from [(drive V, R ohm)], models/README.md §1."""
    if not points or not _finite(vt) or any(v <= vt for v, _ in points):
        return NAN, NAN
    xs = [1.0 / (v - vt) for v, _ in points]
    rs = [r for _, r in points]
    n = len(points)
    sx, sxx = sum(xs), sum(x * x for x in xs)
    sr, sxr = sum(rs), sum(x * r for x, r in zip(xs, rs))
    den = n * sxx - sx * sx
    if n >= 2 and den > 1e-12 * n * sxx:
        k = (n * sxr - sx * sr) / den
        r_fix = (sr - k * sx) / n
        if k < 0:
            return sr / n, 0.0
        if r_fix < 0:
            return 0.0, sxr / sxx
        return r_fix, k
    return 0.0, sxr / sxx


def resistance(vg, t, r_fix, k, vt25, k_vt=0.003, a=0.005):
    vt = vt25 - k_vt * (t - 25.0)
    if vg <= vt:
        return NAN
    return (r_fix + k / (vg - vt)) * (1.0 + a * (t - 25.0))


def junction(ta, current, rth, r_at):
    """(Tj, converged) by fixed-point iteration, models/README.md §3."""
    if not _finite(rth):
        return ta, True
    tj = ta
    for _ in range(100):
        r = r_at(tj)
        if not _finite(r):
            return tj, False
        new = ta + current * current * r * rth
        if abs(new - tj) < 0.01:
            return new, True
        tj = new
        if tj > 1000.0:
            return tj, False
    return tj, False


def evaluate(part: dict, role: dict) -> dict:
    """One part of a pass-switch role: drop, Tj, off current, checks, price."""
    vt25 = part.get("vgs_th_max_V", NAN)
    pts = [(float(c.split("@")[1][:-1]), part[c] / 1000.0) for c in part
           if c.startswith("rds_on_mohm@") and _finite(part[c])]
    r_fix, k = fit(pts, vt25)
    k_vt = abs(part.get("vgs_th_tc_mV/C", NAN)) / 1000.0
    k_vt = k_vt if _finite(k_vt) else 0.003
    a = part.get("rds_tc_pct/C", NAN) / 100.0
    a = a if _finite(a) else 0.005
    vgs = role["supply_min"] - role["gate_drive_drop"]
    worst_drop, worst_tj, gate_ok, settled = NAN, NAN, True, True
    for ta in (role["ambient_min"], role["ambient_max"]):
        vt = vt25 - k_vt * (ta - 25.0)
        gate_ok = gate_ok and vgs >= vt + 0.1
        tj, converged = junction(ta, role["load"], part.get("rth_ja_C/W", NAN),
                                 lambda t: resistance(vgs, t, r_fix, k, vt25, k_vt, a))
        settled = settled and converged
        drop = role["load"] * resistance(vgs, tj, r_fix, k, vt25, k_vt, a)
        worst_drop = drop if not _finite(worst_drop) else max(worst_drop, drop)
        worst_tj = tj if not _finite(worst_tj) else max(worst_tj, tj)
    if not gate_ok or not _finite(vt25):  # the gate is not driven on: no on-state figures
        worst_drop = worst_tj = NAN
    if not _finite(part.get("rth_ja_C/W", NAN)):  # figures at Ta, but Tj itself unknown
        worst_tj = NAN
    tj_limit = min(role["max_tj"], part.get("tj_max_C", NAN) - 25.0)
    i25, hot, hot_c = (part.get("idss_uA", NAN) * 1e-6, part.get("idss_hot_uA", NAN) * 1e-6,
                       part.get("idss_hot_C", NAN))
    if _finite(hot) and _finite(hot_c) and hot_c != 25.0 and i25 > 0 and hot > 0:
        idss = i25 * (hot / i25) ** ((role["ambient_max"] - 25.0) / (hot_c - 25.0))
    else:
        idss = i25 * 2 ** ((role["ambient_max"] - 25.0) / 10.0)
    quantity = role["volume"]
    price = NAN
    for q in sorted((int(c.split("@")[1]) for c in part if c.startswith("price@")), reverse=True):
        if q <= quantity and _finite(part[f"price@{q}"]):
            price = part[f"price@{q}"]
            break
    ratings = (part.get("vds_max_V", NAN) * 0.8 >= role["supply_max"]
               and part.get("vgs_max_V", NAN) * 0.8 >= role["supply_max"]
               and part.get("id_max_A", NAN) * 0.5 >= role["load"])
    feasible = (gate_ok and _finite(worst_drop) and worst_drop <= role["max_drop"]
                and settled and _finite(worst_tj) and worst_tj <= tj_limit
                and _finite(idss) and idss <= role["max_off"] and ratings)
    return {"part": part["part"], "drop_V": worst_drop, "tj_C": worst_tj,
            "off_current_A": idss, "unit_price": price, "feasible": feasible}
