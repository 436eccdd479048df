"""Off-state leakage against temperature (models/README.md §4)."""

import numpy as np


def leakage_at(i25_A, t_C, hot_A=None, hot_C=None):
    """Leakage current [A] at temperature t_C [°C], from the datasheet's 25 °C
    figure i25_A [A] and an optional second point hot_A [A] at hot_C [°C]
    (scalars or one value per part; NaN where a part has none).

    - default: ``I(T) = I25 * 2 ** ((T - 25) / 10)``, reverse junction leakage
      doubles every 10 °C (common practice);
    - a usable hot point (hot_A > 0 at hot_C > 25 °C) above the 25 °C figure:
      the exponential through both points,
      ``I(T) = I25 * (I_hot / I25) ** ((T - 25) / (T_hot - 25))``;
    - a hot point at or below the 25 °C figure says leakage falls as the die
      warms, which a junction does not do: the point is left out and the
      doubling rule stands (the catalogue check warns); so is a hot point
      whose temperature is not above 25 °C;
    - I25 = 0 (a dash typed as a number, as a rule) or blank, with a usable hot
      point: the doubling rule runs from the hot point,
      ``I(T) = I_hot * 2 ** ((T - T_hot) / 10)``;
    - I25 = 0 or blank and no usable hot point: NaN (unknown).

    The datasheet figure is used as is, at whatever voltage it was specified
    (no scaling down to the circuit's lower voltage: conservative).

    Worked example, a falling hot point: Icbo 10 nA at 25 °C and 8 nA at
    100 °C, evaluated at 45 °C. Through both points the curve would give
    10 nA * 0.8 ** (20 / 75) = 9.42 nA, less than at 25 °C. The hot point is
    left out and 10 nA * 2 ** (20 / 10) = 40 nA is the figure.
    With 0 nA at 25 °C and 500 nA at 100 °C instead:
    500 nA * 2 ** ((45 - 100) / 10) = 500 nA / 45.25 = 11.05 nA.
    """
    i25_A = np.asarray(i25_A, dtype=float)
    rise_C = np.asarray(t_C, dtype=float) - 25.0
    with np.errstate(invalid="ignore"):
        known_25 = i25_A > 0  # False for 0 and NaN
    doubling_A = np.where(known_25, i25_A, np.nan) * 2.0 ** (rise_C / 10.0)
    if hot_A is None or hot_C is None:
        return doubling_A
    hot_A = np.asarray(hot_A, dtype=float)
    hot_rise_C = np.asarray(hot_C, dtype=float) - 25.0
    with np.errstate(invalid="ignore"):
        usable = (hot_A > 0) & (hot_rise_C > 0)  # False where either is NaN
        two_point = usable & known_25 & (hot_A > i25_A)
    from_hot = usable & ~known_25
    if not (two_point.any() or from_hot.any()):
        return doubling_A
    i25_A, hot_A, rise_C, hot_rise_C, two_point, from_hot, doubling_A = np.broadcast_arrays(
        i25_A, hot_A, rise_C, hot_rise_C, two_point, from_hot, doubling_A)
    out_A = doubling_A.copy()
    # The power only where it is used (it is the slow part).
    if two_point.any():
        out_A[two_point] = i25_A[two_point] * (hot_A[two_point] / i25_A[two_point]) ** (
            rise_C[two_point] / hot_rise_C[two_point])
    if from_hot.any():
        out_A[from_hot] = hot_A[from_hot] * 2.0 ** (
            (rise_C[from_hot] - hot_rise_C[from_hot]) / 10.0)
    return out_A


def leakage_findings(i25, hot, hot_C):
    """Where a catalogue's leakage data cannot be read as written
    (models/README.md §4), as boolean arrays per row, for the catalogue check:

    - ``zero``: the 25 °C figure is 0 (usually a dash typed as a number);
    - ``hot_zero``: the hot point is 0;
    - ``falling``: a hot point at or below the 25 °C figure (left out);
    - ``cool``: a hot point whose temperature is not above 25 °C (left out);
    - ``half``: a hot figure without its temperature, or the reverse.

    i25, hot in any one unit, hot_C [°C]; NaN is blank.
    """
    i25, hot, hot_C = (np.asarray(a, dtype=float) for a in (i25, hot, hot_C))
    with np.errstate(invalid="ignore"):
        has_hot, has_c = np.isfinite(hot), np.isfinite(hot_C)
        cool = has_hot & has_c & (hot_C <= 25.0)
        return {
            "zero": i25 == 0,
            "hot_zero": has_hot & (hot == 0),
            "falling": has_c & ~cool & (hot > 0) & (i25 > 0) & (hot <= i25),
            "cool": cool,
            "half": has_hot ^ has_c,
        }
