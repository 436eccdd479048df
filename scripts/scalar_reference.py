"""A straightforward per-part Python implementation of the pass-switch and
saturated-switch roles.

The same models as picker's engine (on-resistance fit, temperature, self-
heating, leakage, base current, gain, Vce(sat), open-base leakage, ratings,
price), written the obvious way: one part at a time, plain floats and loops.
It is the floor the vectorised engine is measured against in scripts/bench.py,
and an independent re-implementation the tests compare the engine with.
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
    idss = leakage(part.get("idss_uA", NAN) * 1e-6, part.get("idss_hot_uA", NAN) * 1e-6,
                   part.get("idss_hot_C", NAN), role["ambient_max"])
    price = unit_price(part, role["volume"])
    ratings = (part.get("vds_max_V", NAN) * 0.8 >= role["supply_max"]
               and part.get("vgs_max_V", NAN) * 0.8 >= role["supply_max"]
               and part.get("id_max_A", NAN) * 0.5 >= role["load"])
    feasible = (gate_ok and _finite(worst_drop) and worst_drop <= role["max_drop"]
                and settled and _finite(worst_tj) and worst_tj <= tj_limit
                and _finite(idss) and idss <= role["max_off"] and ratings)
    return {"part": part["part"], "drop_V": worst_drop, "tj_C": worst_tj,
            "off_current_A": idss, "unit_price": price, "feasible": feasible}


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
