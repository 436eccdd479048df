"""Self-heating: junction temperature of a conducting part (models/README.md §3)."""

import numpy as np

RUNAWAY_BOUND_C = 1000.0  # a junction past this is in thermal runaway: stop iterating


def solve_junction_temperature(ta_C, current_A, rth_C_per_W, resistance_at,
                               tj_limit_C=None, tol_C=0.01, max_steps=100):
    """Solve ``Tj = Ta + I^2 R(Tj) theta_JA`` per part by fixed-point iteration.

    Basis: junction-to-ambient thermal resistance as JEDEC JESD51 defines it,
    ``Tj = Ta + P theta_JA``, with ``P = I^2 R(Tj)`` (models/README.md §3).

    ta_C [°C] ambient, current_A [A] on-state current, rth_C_per_W [°C/W]
    theta_JA: scalars or shape (n,). resistance_at(tj_C) -> rds_ohm [ohm] for
    the (n,) array of Tj. If it also has ``take(rows)`` (the same function for
    the parts at the positions `rows`, as `mosfet.heated_resistance` gives), the work
    narrows to the parts still moving each time they fall below half of those
    being iterated: most parts settle in a few steps. Each part's iteration
    is its own, so narrowing changes the time, not the result.
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
    tj_C = ta_C.copy()
    converged = np.isnan(rth_C_per_W)  # no rth: the figures at Ta, nothing to iterate
    narrows = hasattr(resistance_at, "take")
    # The parts being iterated: their positions, Tj, data and state. Parts
    # that stop stay (frozen) until the next narrowing drops them.
    rows = np.arange(tj_C.size)
    tj, ta, heat, done = tj_C.copy(), ta_C, heat_C_per_ohm, converged.copy()
    moving = ~done
    with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
        for step in range(max_steps):
            n_moving = np.count_nonzero(moving)
            if n_moving == 0:
                break
            if narrows and n_moving < moving.size // 2:
                tj_C[rows], converged[rows] = tj, done  # the stopped parts' results
                keep = np.flatnonzero(moving)  # (an index takes faster than a mask)
                rows, tj, ta, heat = rows[keep], tj[keep], ta.take(keep), heat.take(keep)
                resistance_at = resistance_at.take(keep)
                done = np.zeros(n_moving, dtype=bool)
                moving = np.ones(n_moving, dtype=bool)
            new_C = np.asarray(resistance_at(tj), dtype=float)
            new_C *= heat
            new_C += ta
            keep = np.isfinite(new_C)
            if step == 0:
                tj[moving & ~keep] = np.nan  # R unknown from the start
            keep &= moving
            moved = np.subtract(new_C, tj)
            np.abs(moved, out=moved)
            settled = moved < tol_C
            settled &= keep
            tj = np.where(keep, new_C, tj)
            done |= settled
            keep ^= settled  # (settled parts are among those kept)
            keep &= new_C <= bound_C  # (new_C is finite where keep is set)
            moving = keep
    tj_C[rows], converged[rows] = tj, done
    return tj_C, converged
