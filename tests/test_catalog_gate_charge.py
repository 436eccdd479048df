"""The `qg_nC@<V>V` column family (interfaces.md): total gate charge at a gate drive,
read with its unit, and refused in a unit of another dimension.

Sources: SI prefixes (SI Brochure, 9th ed., BIPM 2019, Table 7: 1 nC = 1000 pC =
1e-9 C); JEDEC's symbol Qg for the total gate charge (as datasheets print it).
"""

from __future__ import annotations

import numpy as np
import pytest

from picker.catalog.columns import canonical, short_header
from picker.catalog.load import load_catalog, points
from picker.errors import CatalogError

HEADER = "part,maker,kind,package,vgs_th_max_V,rds_on_mohm@4.5V,qg_nC@4.5V,QG_NC@-10V"


def test_gate_charge_columns_read_in_nanocoulombs(tmp_path):
    path = tmp_path / "qg.csv"
    path.write_text(HEADER + "\nGQ-1,Testa,pmos,SOT-23,1.0,40,5.2,9 nC\n"
                             "GQ-2,Testa,pmos,SOT-23,1.0,40,4800 pC,\n", encoding="utf-8")
    df = load_catalog(path, source="test").df
    drives, qg = points(df, "qg_nC")
    np.testing.assert_array_equal(drives, [4.5, 10.0])
    np.testing.assert_allclose(qg, [[5.2, 9.0], [4.8, np.nan]], rtol=1e-12)


def test_gate_charge_header_is_normalised_and_shown_short():
    assert canonical("Qg_nC @ 4.50 V") == "qg_nC@4.5V"
    assert short_header("qg_nC@4.5V") == "Qg nC @4.5V"


def test_gate_charge_in_a_current_is_refused_with_its_cell(tmp_path):
    """A value whose unit is not a charge is an error naming its line and column."""
    path = tmp_path / "qg.csv"
    path.write_text(HEADER + "\nGQ-1,Testa,pmos,SOT-23,1.0,40,5 mA,\n", encoding="utf-8")
    catalog = load_catalog(path, source="test")
    assert len(catalog.errors) == 1
    text = str(catalog.errors[0])
    assert ":2:7:" in text and "'5 mA' is a current; expected an electric charge (nC)" in text, text
    with pytest.raises(CatalogError):
        load_catalog(path, source="test", strict=True)
