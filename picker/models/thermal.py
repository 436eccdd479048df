"""Self-heating: junction temperature of a conducting part (picker/models/README.md §3)."""

import numpy as np

RUNAWAY_BOUND_C = 1000.0  # no balance below this: thermal runaway
TOL_C = 0.01  # the junction temperature is found to this


def solve_junction_temperature(ta_C, rth_C_per_W, power_at, cap_C=RUNAWAY_BOUND_C,
                               tol_C=TOL_C, max_steps=80):
    """The lowest ``Tj >= Ta`` with ``Tj = Ta + P(Tj) rth``, per part, to tol_C.

    Basis: junction-to-ambient thermal resistance as JEDEC JESD51 defines it,
    ``Tj = Ta + P theta_JA`` (picker/models/README.md §3).

    ta_C [°C] ambient, rth_C_per_W [°C/W]: scalars or shape (n,).
    power_at(t_C) -> (P [W], dP/dT [W/°C]) for the (n,) array of junction
    temperatures, NaN where no figure exists; with ``take(rows)`` (the same
    for the parts at positions `rows`) the work narrows to the parts still
    being solved. cap_C [°C], scalar or (n,): no root at or above it counts
    (the runaway bound, or the temperature where the channel saturates).

    Method, all parts at once, each with its own state. ``f(T) = Ta + P(T) rth
    - T`` is >= 0 at Ta. From ``lo = Ta`` the walk goes up by Newton steps
    ``-f/f'`` where ``f' < 0`` (a step that undershoots the root keeps f >= 0
    and becomes the new lo; one that overshoots it gives f < 0 and closes the
    bracket ``[lo, hi]``) and by steps of ``max(f, lo - Ta, 1 °C)`` where
    ``f' >= 0`` (the heat grows faster than the junction: runaway unless it
    turns). Inside a bracket: Newton from the last point while it stays inside
    and at least halves the bracket, else bisection. Done when a Newton step
    is under tol_C / 4 (the iterate it gives is reported), or the bracket is
    narrower than tol_C (its middle). Plain fixed-point iteration is not
    used: where P falls as the die warms it swings about the root.

    Returns ``(tj_C, runaway)``:

    - a root: Tj, False;
    - f still >= 0 at cap_C (no balance below it): cap_C, True;
    - NaN rth: Tj = Ta, False (the caller gives the figures at Ta);
    - P unknown at Ta (or NaN Ta): NaN, False;
    - not settled in max_steps (not seen in practice): NaN, False.
    """
    ta_C, rth_C_per_W, cap_C = np.broadcast_arrays(
        *(np.atleast_1d(np.asarray(v, dtype=float)) for v in (ta_C, rth_C_per_W, cap_C)))
    narrows = hasattr(power_at, "take")
    with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
        p, dp = power_at(ta_C)
        ta_C, rth_C_per_W, cap_C, p, dp = np.broadcast_arrays(ta_C, rth_C_per_W, cap_C, p, dp)
        n = ta_C.size
        tj_out = ta_C.copy()
        runaway_out = np.zeros(n, dtype=bool)
        f = rth_C_per_W * p
        solve = np.isfinite(rth_C_per_W) & np.isfinite(f)
        tj_out[~np.isfinite(rth_C_per_W)] = ta_C[~np.isfinite(rth_C_per_W)]
        tj_out[np.isfinite(rth_C_per_W) & ~np.isfinite(f)] = np.nan
        solve &= f > 0  # f = 0: no heat, Tj = Ta
        rows = np.flatnonzero(solve)
        if rows.size == 0:
            return tj_out, runaway_out
        if narrows and rows.size < n:
            power_at = power_at.take(rows)
        elif not narrows:
            rows = np.arange(n)  # evaluate every part each time; finished ones are frozen
        ta, rth, cap = ta_C[rows], rth_C_per_W[rows], cap_C[rows]
        lo, flo, dlo = ta.copy(), f[rows], rth * dp[rows] - 1.0
        hi = cap.copy()
        fhi = np.full(rows.size, np.nan)  # NaN: no bracket yet
        x, fx, dfx = lo.copy(), flo.copy(), dlo.copy()  # the point last evaluated
        width = np.full(rows.size, np.inf)  # the bracket's width before the last step
        live = solve[rows] if not narrows else np.ones(rows.size, dtype=bool)
        result = np.full(rows.size, np.nan)
        ran = np.zeros(rows.size, dtype=bool)

        for _ in range(max_steps):
            if not live.any():
                break
            if narrows and np.count_nonzero(live) < live.size // 2:
                tj_out[rows], runaway_out[rows] = result, ran
                keep = np.flatnonzero(live)
                rows = rows[keep]
                ta, rth, cap, lo, flo, dlo, hi, fhi, x, fx, dfx, width, result, ran = (
                    v[keep] for v in (ta, rth, cap, lo, flo, dlo, hi, fhi, x, fx, dfx, width,
                                      result, ran))
                power_at = power_at.take(keep)
                live = np.ones(rows.size, dtype=bool)
            bracketed = np.isfinite(fhi)
            newton = x - fx / dfx
            # unbracketed: x is lo, f(lo) > 0
            walk = np.where(dlo < 0, newton, lo + np.maximum(np.maximum(flo, lo - ta), 1.0))
            inside = (newton > lo) & (newton < hi) & (np.abs(newton - x) <= 0.5 * width)
            inside &= np.isfinite(newton)
            step_to = np.where(bracketed, np.where(inside, newton, 0.5 * (lo + hi)),
                               np.minimum(walk, cap))
            used_newton = np.where(bracketed, inside, dlo < 0)
            small = used_newton & (np.abs(step_to - x) < 0.25 * tol_C) & (step_to < cap)
            narrow = bracketed & (hi - lo < tol_C)
            finish = live & (small | narrow)
            result = np.where(finish, np.where(small, step_to, 0.5 * (lo + hi)), result)
            live &= ~finish
            width = np.where(bracketed, hi - lo, width)

            p, dp = power_at(step_to)
            fc = ta + rth * p - step_to
            dfc = rth * dp - 1.0
            fc = np.where(np.isnan(fc), np.inf, fc)  # past saturation: no balance there
            up = live & (fc >= 0)
            down = live & (fc < 0)
            lo = np.where(up, step_to, lo)
            flo = np.where(up, fc, flo)
            dlo = np.where(up, dfc, dlo)
            hi = np.where(down, step_to, hi)
            fhi = np.where(down, fc, fhi)
            x = np.where(live, step_to, x)
            fx = np.where(live, fc, fx)
            dfx = np.where(live, dfc, dfx)
            at_cap = up & ~bracketed & (step_to >= cap)
            result = np.where(at_cap, cap, result)
            ran |= at_cap
            live &= ~at_cap
        mine = solve[rows]  # (without `take`, rows are every part)
        tj_out[rows[mine]], runaway_out[rows[mine]] = result[mine], ran[mine]
    return tj_out, runaway_out
