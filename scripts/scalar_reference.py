"""A straightforward per-part Python implementation of the pass-switch and
saturated-switch roles.

The same method as picker's engine (picker/models/README.md §1-§7: for a pass
switch the fit lifted onto the data, the rated-drive rules, the whole triode
law, temperature, self-heating; for a saturated switch the base current,
gain, Vce(sat) and open-base leakage; leakage, ratings, price), written the
obvious way: one part at a time, plain floats and loops, no numpy. It is the
floor the vectorised engine is measured against in scripts/bench.py, and an
independent re-implementation the tests compare the engine with.

Its self-heating solve is deliberately unlike the engine's: a plain scan
upward from Ta in steps of SCAN_C for the first sign change of
f(T) = Ta + P(T) rth - T, then bisection inside that step to 1e-6 °C.
"""

from __future__ import annotations

import math

NAN = float("nan")
SCAN_C = 0.25  # °C between the scan's points
BOUND_C = 1000.0  # no balance below this: thermal runaway
GATE_HEADROOM_V = 0.1


def _finite(x) -> bool:
    return x is not None and not (isinstance(x, float) and math.isnan(x))


def fit(points: list[tuple[float, float]], vt: float) -> tuple[float, float, float, float]:
    """(R_fix, K, V_lo, V_hi) in ohm, ohm·V, V, V from [(drive V, R ohm)],
    picker/models/README.md §1: points at or below Vt left out, least squares
    under R_fix >= 0, K >= 0, then R_fix lifted onto the points."""
    if not _finite(vt):
        return NAN, NAN, NAN, NAN
    points = [(v, r) for v, r in points if v > vt]
    if not points:
        return NAN, NAN, NAN, NAN
    xs = [1.0 / (v - vt) for v, _ in points]
    rs = [r for _, r in points]
    n = len(points)
    sx, sxx = sum(xs), sum(x * x for x in xs)
    sr, sxr = sum(rs), sum(x * r for x, r in zip(xs, rs))
    den = n * sxx - sx * sx
    r_fix, k = 0.0, sxr / sxx
    if n >= 2 and den > 1e-12 * n * sxx:
        k_free = (n * sxr - sx * sr) / den
        r_free = (sr - k_free * sx) / n
        if k_free < 0:
            r_fix, k = sr / n, 0.0
        elif r_free >= 0:
            r_fix, k = r_free, k_free
    lift = max([0.0] + [r - (r_fix + k * x) for x, r in zip(xs, rs) if r - (r_fix + k * x) > 1e-12 * r])
    drives = [v for v, _ in points]
    return r_fix + lift, k, min(drives), max(drives)


def channel(vgs, r_fix, k, v_lo, v_hi, vt25, k_vt, a, mode):
    """A function T -> drop(T, I) for this part at this drive, and whether a
    figure may be given at all (picker/models/README.md §1)."""
    vg = min(vgs, v_hi)
    below = vgs < v_lo
    if below and mode == "conservative":
        n25, n1, rs25 = r_fix * (v_lo - vt25) + k, r_fix * k_vt, 0.0
    else:
        n25, n1, rs25 = k, 0.0, r_fix
    usable = not (below and mode == "none")

    def drop(t, current):
        d = t - 25.0
        m = 1.0 + a * d
        vov = vg - vt25 + k_vt * d
        kch = (n25 + n1 * d) * m
        s2 = vov * vov - 2.0 * kch * current
        if vov <= 0 or s2 < 0:
            return NAN  # the channel is off, or saturates
        return current * rs25 * m + vov - math.sqrt(s2)

    return drop, vg, usable


def junction(ta, current, rth, drop):
    """(Tj, runaway) by a scan and bisection, picker/models/README.md §3; the
    scan stops at a saturated channel (no drop: runaway) or at BOUND_C."""
    if not _finite(rth):
        return ta, False

    def f(t):
        d = drop(t, current)
        return NAN if not _finite(d) else ta + current * d * rth - t

    lo, f_lo = ta, f(ta)
    if not _finite(f_lo):
        return NAN, False
    if f_lo <= 0:
        return ta, False
    while lo < BOUND_C:
        hi = min(lo + SCAN_C, BOUND_C)
        f_hi = f(hi)
        if not _finite(f_hi):  # saturates somewhere in (lo, hi]: find where, look for a root
            a, b = lo, hi
            for _ in range(60):
                mid = 0.5 * (a + b)
                if _finite(f(mid)):
                    a = mid
                else:
                    b = mid
            if _finite(f(a)) and f(a) <= 0:
                hi, f_hi = a, f(a)
            else:
                return a, True
        if f_hi <= 0:
            for _ in range(60):
                mid = 0.5 * (lo + hi)
                if f(mid) > 0:
                    lo = mid
                else:
                    hi = mid
            return 0.5 * (lo + hi), False
        lo = hi
    return BOUND_C, True


def leakage(i25, hot, hot_c, t):
    """Leakage at t °C, models/README.md §4: through two points where the hot one
    is above 25 °C and above the 25 °C figure; from the hot point by doubling
    where the 25 °C figure is 0 or blank; else doubling from the 25 °C figure
    (unknown where that is 0 or blank)."""
    has_25 = _finite(i25) and i25 > 0
    has_hot = _finite(hot) and hot > 0 and _finite(hot_c) and hot_c > 25.0
    if has_25 and has_hot and hot > i25:
        return i25 * (hot / i25) ** ((t - 25.0) / (hot_c - 25.0))
    if not has_25 and has_hot:
        return hot * 2 ** ((t - hot_c) / 10.0)
    return i25 * 2 ** ((t - 25.0) / 10.0) if has_25 else NAN


def unit_price(part: dict, quantity: int) -> float:
    """The price of the largest break at or below the quantity, models/README.md §7."""
    breaks = sorted((int(c.split("@")[1]) for c in part if c.startswith("price@")), reverse=True)
    for q in breaks:
        if q <= quantity and _finite(part[f"price@{q}"]):
            return part[f"price@{q}"]
    return NAN


def evaluate(part: dict, role: dict) -> dict:
    """One part of a pass-switch role: figures, the on-state checks, price, verdict.

    role: supply_min, supply_max, gate_drive (None: the supply), gate_drive_drop,
    ambient_min, ambient_max, load, max_drop, max_off, max_tj (None: none),
    volume, and optionally extrapolation, rth_factor, tj_margin.
    """
    vt25 = part.get("vgs_th_max_V", NAN)
    pts = [(float(c.split("@")[1][:-1]), part[c] / 1000.0) for c in part
           if c.startswith("rds_on_mohm@") and _finite(part[c])]
    r_fix, k, v_lo, v_hi = fit(pts, vt25)
    k_vt = abs(part.get("vgs_th_tc_mV/C", NAN)) / 1000.0
    k_vt = k_vt if _finite(k_vt) else max(0.003, 0.003 * vt25 if _finite(vt25) else 0.0)
    a = part.get("rds_tc_pct/C", NAN) / 100.0
    a = a if _finite(a) else 0.005
    rth = part.get("rth_ja_C/W", NAN) * role.get("rth_factor", 1.0)
    mode = role.get("extrapolation", "conservative")
    load = role["load"]
    drive = role["supply_min"] if role.get("gate_drive") is None else role["gate_drive"]
    vgs = drive - role["gate_drive_drop"]
    tj_limit = NAN
    for limit in (role.get("max_tj"), part.get("tj_max_C", NAN) - role.get("tj_margin", 25.0)):
        if _finite(limit):
            tj_limit = limit if not _finite(tj_limit) else min(tj_limit, limit)

    fitted = _finite(k) and _finite(vt25)
    drop_at, vg_eff, usable = channel(vgs, r_fix, k, v_lo, v_hi, vt25, k_vt, a, mode) \
        if fitted else (None, vgs, False)
    gate_ok = True
    corners = []
    for ta in (role["ambient_min"], role["ambient_max"]):
        vt = vt25 - k_vt * (ta - 25.0) if _finite(vt25) else NAN
        ok = _finite(vt) and vgs >= vt + GATE_HEADROOM_V
        gate_ok = gate_ok and ok
        c = {"why": "figures", "drop": NAN, "tj": NAN}
        if not _finite(vt):
            c["why"] = "no data"
        elif not ok:
            c["why"] = "gate"
        elif not fitted:
            c["why"] = "no data"
        elif vg_eff < 0.5 * (v_lo + vt):
            c["why"] = "too deep"
        elif not usable:
            c["why"] = "not extrapolated"
        elif not _finite(drop_at(ta, load)):
            c["why"] = "saturates"
        else:
            tj, runaway = junction(ta, load, rth, drop_at)
            if runaway:
                c["why"] = "runaway"
            else:
                c["tj"] = tj if _finite(rth) else NAN
                c["drop"] = drop_at(tj, load)
        corners.append(c)

    table = {"gate": ("unknown", "fail", "unknown"), "no data": ("unknown",) * 3,
             "not extrapolated": ("unknown",) * 3, "too deep": ("unknown",) * 3,
             "saturates": ("fail", "fail", "unknown"), "runaway": ("pass", "fail", "fail")}
    outcome = {}
    for j, name in enumerate(("ohmic", "drop", "tj")):
        codes = []
        for c in corners:
            if c["why"] != "figures":
                codes.append(table[c["why"]][j])
            elif name == "ohmic":
                codes.append("pass")
            elif name == "drop":
                codes.append("pass" if c["drop"] <= role["max_drop"] else "fail")
            elif _finite(c["tj"]) and _finite(tj_limit):
                codes.append("pass" if c["tj"] <= tj_limit else "fail")
            else:
                codes.append("unknown")
        outcome[name] = ("fail" if "fail" in codes else "unknown" if "unknown" in codes
                         else "pass")
    both = all(c["why"] == "figures" for c in corners)
    worst_drop = max(c["drop"] for c in corners) if both else NAN
    worst_tj = max(c["tj"] for c in corners) if both and _finite(rth) else NAN

    idss = leakage(part.get("idss_uA", NAN) * 1e-6, part.get("idss_hot_uA", NAN) * 1e-6,
                   part.get("idss_hot_C", NAN), role["ambient_max"])
    price = unit_price(part, role["volume"])
    swing = max(role["supply_max"], role.get("gate_drive") or 0.0)
    ratings = (part.get("vds_max_V", NAN) * 0.8 >= role["supply_max"]
               and part.get("vgs_max_V", NAN) * 0.8 >= swing
               and part.get("id_max_A", NAN) * 0.5 >= load)
    feasible = (gate_ok and all(v == "pass" for v in outcome.values())
                and _finite(idss) and idss <= role["max_off"] and ratings)
    return {"part": part["part"], "drop_V": worst_drop, "tj_C": worst_tj,
            # each corner's own Tj, where the gate is driven on at both (§6)
            "tj_cold_C": corners[0]["tj"] if gate_ok else NAN,
            "tj_hot_C": corners[1]["tj"] if gate_ok else NAN,
            "off_current_A": idss, "unit_price": price, "feasible": feasible, **outcome}


def _curve(points: list[tuple[float, float]], x: float, log: bool, below: bool, above: str):
    """(value, past an end) along sorted datasheet points, models/README.md §6:
    interpolated between points (log-log or linear); past the low end continued
    along the first segment where `below` and the value there is lower than the
    next point's; past the high end continued along the last segment where it
    goes as `above` says ('falls' or 'rises'); held otherwise."""
    points = sorted(points)
    if not points:
        return NAN, False
    f = (lambda v: math.log(v)) if log else (lambda v: v)

    def line(a, b):
        (x1, y1), (x2, y2) = a, b
        t = (f(x) - f(x1)) / (f(x2) - f(x1))
        return y1 * (y2 / y1) ** t if log else y1 + t * (y2 - y1)

    if x < points[0][0]:
        if below and len(points) > 1 and points[0][1] < points[1][1]:
            return line(points[0], points[1]), True
        return points[0][1], True
    if x > points[-1][0]:
        a, b = points[-2:] if len(points) > 1 else (None, None)
        if a and ((above == "falls" and b[1] < a[1]) or (above == "rises" and b[1] > a[1])):
            return line(a, b), True
        return points[-1][1], True
    for a, b in zip(points, points[1:]):
        if a[0] <= x <= b[0]:
            return (a[1] if x == a[0] else b[1] if x == b[0] else line(a, b)), False
    return points[0][1], False  # one point, x on it


def evaluate_switch(part: dict, role: dict) -> dict:
    """One part of a saturated-switch role (models/README.md §6): base current,
    gain and saturation at the cold corner, Vce(sat), off current, ratings, price.
    `role`: supply_min, supply_max, ambient_min, ambient_max, ic, drive (None:
    the supply), rb, rpd (None: none), tol, overdrive, base_off, max_vce_sat,
    max_off, volume."""
    cold, hot = role["ambient_min"], role["ambient_max"]
    vbe25 = part.get("vbe_sat_max_V", NAN)
    if not _finite(vbe25):
        vbe25 = part.get("vbe_on_V", NAN)
    if not _finite(vbe25):
        vbe25 = 0.75
    vbe = vbe25 - 0.002 * (cold - 25.0)
    drive = role["supply_min"] if role["drive"] is None else role["drive"]
    ib = (drive - vbe) / (role["rb"] * (1 + role["tol"]))
    if role["rpd"] is not None:
        ib -= vbe / (role["rpd"] * (1 - role["tol"]))
    ib = max(ib, 0.0)
    ic = role["ic"]
    gain_points = [(float(c.split("@")[1][:-2]) / 1000.0, part[c]) for c in part
                   if c.startswith("hfe_min@") and _finite(part[c]) and part[c] > 0]
    hfe25, _ = _curve(gain_points, ic, log=True, below=True, above="falls")
    hfe = hfe25 * (1 + 0.005 * (cold - 25.0))
    if ib <= 0:
        saturation = False
    elif _finite(hfe):
        saturation = ib * hfe >= role["overdrive"] * ic
    else:
        saturation = None  # unknown
    sat_points = [(float(c.split("@")[1][:-2]) / 1000.0, part[c] / 1000.0) for c in part
                  if c.startswith("vce_sat_mV@") and _finite(part[c])]
    vce_sat, _ = _curve(sat_points, ic, log=False, below=False, above="rises")
    guaranteed = ib > 0 and ic / ib <= 10
    icbo = leakage(part.get("icbo_nA", NAN) * 1e-9, part.get("icbo_hot_nA", NAN) * 1e-9,
                   part.get("icbo_hot_C", NAN), hot)
    off = icbo
    if role["base_off"] == "open":
        held = (role["rpd"] is not None and _finite(icbo)
                and icbo * role["rpd"] * (1 + role["tol"]) < 0.15)
        if not held:
            hfe_max = part.get("hfe_max", NAN) * (1 + 0.005 * (hot - 25.0))
            off = (1 + hfe_max) * icbo
    checks = [saturation,
              None if not _finite(part.get("vceo_max_V", NAN))
              else part["vceo_max_V"] * 0.8 >= role["supply_max"],
              None if not _finite(part.get("ic_max_A", NAN)) else part["ic_max_A"] * 0.5 >= ic]
    if role["max_off"] is not None:
        checks.append(None if not _finite(off) else off <= role["max_off"])
    if role["max_vce_sat"] is not None:
        checks.append(None if not (_finite(vce_sat) and guaranteed) else vce_sat <= role["max_vce_sat"])
    return {"part": part["part"], "ib_A": ib, "hfe": hfe, "vce_sat_V": vce_sat,
            "off_current_A": off, "unit_price": unit_price(part, role["volume"]),
            "saturation": saturation, "feasible": all(c is True for c in checks)}
