"""Self-heating: junction temperature of a conducting part (models.md §3)."""

import inspect

import numpy as np

RUNAWAY_BOUND_C = 1000.0  # a junction past this is in thermal runaway: stop iterating


def solve_junction_temperature(ta_C, current_A, rth_C_per_W, resistance_at,
                               tj_limit_C=None, tol_C=0.01, max_steps=100):
    """Solve ``Tj = Ta + I^2 R(Tj) theta_JA`` per part by fixed-point iteration.

    Basis: junction-to-ambient thermal resistance as JEDEC JESD51 defines it,
    ``Tj = Ta + P theta_JA``, with ``P = I^2 R(Tj)`` (models.md §3).

    ta_C [°C] ambient, current_A [A] on-state current, rth_C_per_W [°C/W]
    theta_JA: scalars or shape (n,). resistance_at(tj_C) -> rds_ohm [ohm] for
    the full (n,) array of Tj; or resistance_at(tj_C, idx) -> rds_ohm for the
    parts `idx` (an index array) only, which lets each step work on the parts
    still moving (the engine's form: most parts settle in a few steps).
    tj_limit_C [°C]: the runaway bound, default RUNAWAY_BOUND_C; a part past
    it stops iterating and is not converged. It is not the ``tj`` check limit
    (the engine compares Tj with that), so pass a bound well above it.
    tol_C [°C]: a part stops once its step is below this.

    Iteration starts at Tj = Ta for all parts at once; each part stops
    updating once it settles. Returns ``(tj_C, converged)``:

    - settled: Tj, True.
    - runaway (past the bound, or still moving after max_steps): last Tj, False.
    - R NaN or infinite after the first step: last finite Tj, False.
    - NaN rth: Tj = Ta, True (on-state figures at Ta; the ``tj`` check is
      unknown, the engine marks it so from the NaN rth).
    - R unknown already at Ta (or NaN Ta / current): Tj NaN, False; a NaN
      Tj means unknown, so the caller tests it before ``converged``.
    """
    bound_C = RUNAWAY_BOUND_C if tj_limit_C is None else tj_limit_C
    ta_C, current_A, rth_C_per_W = np.broadcast_arrays(
        *(np.atleast_1d(np.asarray(v, dtype=float)) for v in (ta_C, current_A, rth_C_per_W)))
    heat_C_per_ohm = current_A ** 2 * rth_C_per_W  # Tj = Ta + heat * R
    no_rth = np.isnan(rth_C_per_W)
    tj_C = ta_C.copy()
    converged = no_rth.copy()
    by_index = len(inspect.signature(resistance_at).parameters) >= 2
    # While most parts are still moving, whole arrays are cheapest; once fewer
    # than half are, the work continues on the index list of those parts.
    active = ~no_rth
    idx = None
    with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
        for step in range(max_steps):
            if idx is None and np.count_nonzero(active) < active.size // 2:
                idx = np.flatnonzero(active)
            if idx is not None and idx.size == 0 or idx is None and not active.any():
                break
            if idx is None:  # every part at once (few temporaries: this is the hot loop)
                rds_ohm = np.asarray(resistance_at(tj_C, slice(None)) if by_index
                                     else resistance_at(tj_C), dtype=float)
                new_C = heat_C_per_ohm * rds_ohm
                new_C += ta_C
                keep = np.isfinite(new_C)
                if step == 0:
                    tj_C[active & ~keep] = np.nan  # R unknown from the start
                keep &= active
                moved = np.subtract(new_C, tj_C)
                np.abs(moved, out=moved)
                settled = moved < tol_C
                settled &= keep
                np.copyto(tj_C, new_C, where=keep)
                converged |= settled
                keep &= ~settled
                keep &= ~(new_C > bound_C)
                active = keep
            else:  # the parts still moving
                tj_now = tj_C[idx]
                rds_ohm = np.asarray(resistance_at(tj_now, idx) if by_index
                                     else resistance_at(tj_C)[idx], dtype=float)
                new_C = ta_C[idx] + heat_C_per_ohm[idx] * rds_ohm
                keep = np.isfinite(new_C)
                settled = keep & (np.abs(new_C - tj_now) < tol_C)
                tj_C[idx[keep]] = new_C[keep]
                converged[idx[settled]] = True
                idx = idx[keep & ~settled & ~(new_C > bound_C)]
    return tj_C, converged
