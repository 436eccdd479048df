"""The vectorised engine against a plain per-part re-implementation.

scripts/scalar_reference.py writes models/README.md §1-§4, §6 and §7 the obvious
way: one part at a time, plain floats and loops, no numpy. On every P-channel
part of the demo catalogue, for the lantern's cell switch, both must give the
same drop, junction temperature, off-state current, unit price and verdict.
"""

import math
import sys

import pytest

from conftest import DEMO, EXAMPLES, ROOT
from picker.catalog.load import load_catalog
from picker.engine.evaluate import evaluate_role
from picker.design.requirements import load_requirements

sys.path.insert(0, str(ROOT / "scripts"))
import scalar_reference  # noqa: E402

# The reference stops its fixed point one step later or earlier than the
# vectorised solve in rare cases; both are within the 0.01 °C tolerance of
# models/README.md §3, which moves R by at most 0.5 %/°C x 0.01 °C = 5e-5.
REL_TOL = 1e-4


def test_engine_equals_the_per_part_reference_on_the_demo_catalogue():
    req = load_requirements(EXAMPLES / "kettlewick-power.toml")
    role = req.role("cell-switch")
    df = load_catalog(DEMO, source="test").df
    table = evaluate_role(df, role, req).frame.set_index("part")
    spec = {"supply_min": req.supply.min_V, "supply_max": req.supply.max_V,
            "gate_drive_drop": role.gate_drive_drop_V, "ambient_min": req.ambient.min_C,
            "ambient_max": req.ambient.max_C, "load": role.load_A, "max_drop": role.max_drop_V,
            "max_off": role.max_off_current_A, "max_tj": role.max_tj_C, "volume": req.volume}
    parts = df[df["kind"] == "pmos"].to_dict("records")
    assert len(parts) >= 30
    for part in parts:
        ref = scalar_reference.evaluate(part, spec)
        row = table.loc[part["part"]]
        for name in ("drop_V", "off_current_A", "unit_price"):
            if math.isnan(ref[name]):
                assert math.isnan(row[name]), (part["part"], name)
            else:
                assert row[name] == pytest.approx(ref[name], rel=REL_TOL), (part["part"], name)
        if not math.isnan(row["tj_C"]):
            assert row["tj_C"] == pytest.approx(ref["tj_C"], rel=REL_TOL), part["part"]
        assert bool(row["feasible"]) == ref["feasible"], part["part"]


SWITCH_VARIANTS = [
    # (example file, role, overrides as requirement text appended to the role, tolerance)
    ("kettlewick-power.toml", "latch", "", None),
    ("kettlewick-power.toml", "latch", 'base_pulldown = "2.2 Mohm"\nbase_off = "open"\n', 0.05),
    ("kettlewick-power.toml", "latch", 'base_off = "open"\n', None),
    ("kettlewick-power.toml", "gauge-leds", 'base_pulldown = "47 kohm"\n', 0.10),
    ("kettlewick-power.toml", "sensor-feed", "", None),
    ("kettlewick-power.toml", "usb-sense", 'base_pulldown = "10 Mohm"\nbase_off = "open"\n', 0.01),
    ("kettlewick-warmer.toml", "thermistor-bias", "", None),
    ("kettlewick-warmer.toml", "buzzer", 'base_pulldown = "470 ohm"\n', 0.05),
]


@pytest.mark.parametrize("example, role_name, extra, tol", SWITCH_VARIANTS,
                         ids=[f"{v[1]}-{i}" for i, v in enumerate(SWITCH_VARIANTS)])
def test_switch_engine_equals_the_per_part_reference(example, role_name, extra, tol):
    """Every bipolar part of the demo catalogue of the role's kind, for the demo
    roles and variants with a pull-down, an open base and a resistor tolerance
    (models/README.md §4, §6): the same base current, gain, Vce(sat), off current,
    unit price and verdict, to rounding."""
    import dataclasses

    from picker.design.requirements import Resistors, from_options

    req = load_requirements(EXAMPLES / example)
    options = {}
    for line in extra.splitlines():
        key, value = (p.strip() for p in line.split("=", 1))
        options[key] = value.strip('"')
    if options:
        from picker.design.keys import OPTION_KEYS

        req = from_options({k: options.get(k) for k in OPTION_KEYS}, req, role_name)
    if tol is not None:
        req = dataclasses.replace(req, resistors=Resistors(tolerance=tol))
    role = req.role(role_name)
    df = load_catalog(DEMO, source="test").df
    table = evaluate_role(df, role, req).frame.set_index("part")
    spec = {"supply_min": req.supply.min_V, "supply_max": req.supply.max_V,
            "ambient_min": req.ambient.min_C, "ambient_max": req.ambient.max_C,
            "ic": role.collector_current_A, "drive": role.base_drive_V, "rb": role.base_resistor_ohm,
            "rpd": role.base_pulldown_ohm, "tol": req.resistor_tolerance,
            "overdrive": role.overdrive, "base_off": role.base_off,
            "max_vce_sat": role.max_vce_sat_V, "max_off": role.max_off_current_A,
            "volume": req.volume * role.parts_per_board}
    parts = df[df["kind"] == role.kind].to_dict("records")
    assert len(parts) >= 10
    for part in parts:
        ref = scalar_reference.evaluate_switch(part, spec)
        row = table.loc[part["part"]]
        for name in ("ib_A", "hfe", "vce_sat_V", "off_current_A", "unit_price"):
            if math.isnan(ref[name]):
                assert math.isnan(row[name]), (part["part"], name)
            else:
                assert row[name] == pytest.approx(ref[name], rel=1e-9), (part["part"], name)
        assert bool(row["feasible"]) == ref["feasible"], part["part"]
