"""Per-part override columns: a blank (NaN) cell means "use the model's default"."""

import numpy as np


def or_default(values, default):
    """Return ``values`` as a float array with NaN entries replaced by ``default``.

    Used for the parameters that models/README.md gives a default for and that a
    catalogue column may override (temperature coefficients, ``vbe_on_V``):
    there a blank cell is not *unknown*, it means *no override*.
    """
    values = np.asarray(values, dtype=float)
    blank = np.isnan(values)
    if blank.all():
        return default  # no part overrides it: the scalar broadcasts for free
    return np.where(blank, default, values)
