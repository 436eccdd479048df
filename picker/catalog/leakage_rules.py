"""The catalogue check's rules for leakage figures (models/README.md §4): a
figure the method cannot read as written is a warning naming its cell; the
row stays in and the model reads it as the method says."""

from __future__ import annotations

import numpy as np

from picker.models.leakage import leakage_findings

_LEAKAGE = (("idss_uA", "idss_hot_uA", "idss_hot_C", "µA"),
            ("icbo_nA", "icbo_hot_nA", "icbo_hot_C", "nA"))


def leakage_rules(df, col_of, arr, warning) -> None:
    """Leakage figures that cannot be read as written (models/README.md §4):
    warnings, the row stays in and the model reads them as the method says."""
    for cold, hot, hot_c, unit in _LEAKAGE:
        if not any(name in df for name in (cold, hot, hot_c)):
            continue
        i25, i_hot, t_hot = arr(cold), arr(hot), arr(hot_c)
        found = leakage_findings(i25, i_hot, t_hot)
        usable_hot = np.isfinite(i_hot) & (i_hot > 0) & np.isfinite(t_hot) & ~found["cool"]
        for pos in np.flatnonzero(found["zero"]):
            then = (f"the leakage is taken from {hot} {i_hot[pos]:g} {unit} at {t_hot[pos]:g} °C, "
                    "doubling every 10 °C" if usable_hot[pos] else "the leakage is unknown")
            warning(int(pos), col_of[cold], f"{cold} is 0, read as blank (a zero is usually a "
                    f"dash typed as a number): {then}", cold)
        for pos in np.flatnonzero(found["hot_zero"]):
            warning(int(pos), col_of[hot], f"{hot} is 0, read as blank (a zero is usually a dash "
                    "typed as a number): the point is left out", hot)
        for pos in np.flatnonzero(found["falling"]):
            warning(int(pos), col_of[hot], f"{hot} {i_hot[pos]:g} {unit} at {t_hot[pos]:g} °C is "
                    f"not above {cold} {i25[pos]:g} {unit}; leakage does not fall as the die "
                    "warms: the point is left out and the leakage doubles every 10 °C from the "
                    "25 °C figure", hot)
        for pos in np.flatnonzero(found["cool"]):
            warning(int(pos), col_of[hot_c], f"{hot_c} {t_hot[pos]:g} °C is not above 25 °C: "
                    f"the point {hot} is left out", hot_c)
        for pos in np.flatnonzero(found["half"]):
            given, missing = (hot, hot_c) if np.isfinite(i_hot[pos]) else (hot_c, hot)
            warning(int(pos), col_of[given], f"{given} without {missing}: the second leakage "
                    "point is left out", given)
