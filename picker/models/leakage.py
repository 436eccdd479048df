"""Off-state leakage against temperature (models/README.md §4)."""

import numpy as np


def leakage_at(i25_A, t_C, hot_A=None, hot_C=None):
    """Leakage current [A] at temperature t_C [°C].

    - default: ``I(T) = I25 * 2 ** ((T - 25) / 10)``, reverse junction leakage
      doubles every 10 °C (common practice).
    - where a second datasheet point is usable (hot_A and hot_C finite,
      hot_C != 25, I25 > 0 and hot_A > 0): the exponential through both points,
      ``I(T) = I25 * (I_hot / I25) ** ((T - 25) / (T_hot - 25))``.

    i25_A [A] at 25 °C; hot_A [A] at hot_C [°C], optional, scalar or per part
    (NaN where a part has none). NaN i25_A gives NaN. The datasheet figure is
    used as is, at whatever voltage it was specified (conservative).
    """
    i25_A = np.asarray(i25_A, dtype=float)
    rise_C = np.asarray(t_C, dtype=float) - 25.0
    doubling_A = i25_A * 2.0 ** (rise_C / 10.0)
    if hot_A is None or hot_C is None:
        return doubling_A
    hot_A = np.asarray(hot_A, dtype=float)
    hot_rise_C = np.asarray(hot_C, dtype=float) - 25.0
    usable = (np.isfinite(hot_A) & np.isfinite(hot_rise_C) & (hot_rise_C != 0)
              & (i25_A > 0) & (hot_A > 0))
    # The power only where it is used (it is the slow part): the same values.
    i25_A, hot_A, rise_C, hot_rise_C, usable, doubling_A = np.broadcast_arrays(
        i25_A, hot_A, rise_C, hot_rise_C, usable, doubling_A)
    out_A = doubling_A.copy()
    if usable.any():
        out_A[usable] = i25_A[usable] * (hot_A[usable] / i25_A[usable]) ** (
            rise_C[usable] / hot_rise_C[usable])
    return out_A
