"""Self-heating: junction temperature of a conducting part (models.md §3)."""

import numpy as np

RUNAWAY_BOUND_C = 1000.0  # a junction past this is in thermal runaway: stop iterating


def solve_junction_temperature(ta_C, current_A, rth_C_per_W, resistance_at,
                               tj_limit_C=None, tol_C=0.01, max_steps=100):
    """Solve ``Tj = Ta + I^2 R(Tj) theta_JA`` per part by fixed-point iteration.

    Basis: junction-to-ambient thermal resistance as JEDEC JESD51 defines it,
    ``Tj = Ta + P theta_JA``, with ``P = I^2 R(Tj)`` (models.md §3).

    ta_C [°C] ambient, current_A [A] on-state current, rth_C_per_W [°C/W]
    theta_JA: scalars or shape (n,). resistance_at(tj_C) -> rds_ohm [ohm]:
    vectorised over parts, always called with the full (n,) array of Tj.
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
    no_rth = np.isnan(rth_C_per_W)
    tj_C = ta_C.copy()
    converged = no_rth.copy()
    active = ~no_rth
    with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
        for step in range(max_steps):
            if not active.any():
                break
            rds_ohm = np.asarray(resistance_at(tj_C), dtype=float)
            new_C = ta_C + current_A ** 2 * rds_ohm * rth_C_per_W
            lost = active & ~np.isfinite(new_C)
            if step == 0:
                tj_C = np.where(lost, np.nan, tj_C)  # R unknown from the start
            active &= ~lost
            step_C = np.abs(new_C - tj_C)
            tj_C = np.where(active, new_C, tj_C)
            settled = active & (step_C < tol_C)
            converged |= settled
            active &= ~settled & ~(tj_C > bound_C)
    return tj_C, converged
