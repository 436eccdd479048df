"""Linked roles in the requirement file (models/README.md §10, keys in interfaces.md):
what a good latch pair reads as, and one clear line naming the file, line and key for
each way a link can be wrong.

The latch pair below is the soft-latch power switch every one-cell product has in some
form (a P-channel pass switch whose gate an NPN pulls down, the NPN fed from the
switched output); the circuit is common practice, the values are invented.
"""

from __future__ import annotations

import pytest

from conftest import invoke
from picker.design.requirements import parse_requirements
from picker.design.quick import from_options
from picker.errors import RequirementError

LATCH = """\
[supply]
min = "3.0 V"
max = "4.2 V"

[ambient]
min = "-20 degC"
max = "45 degC"

[build]
volume = 5000

[[role]]
name = "pass"
refs = ["Q1"]
use = "high-side-pmos"
load = "1.2 A"
max_drop = "60 mV"
gate_driver = "latch"
gate_pullup = "auto"
max_turn_off = "5 ms"
max_drive_current = "20 uA"
off_load = "10 kohm"
max_off_current = "5 uA"

[[role]]
name = "latch"
refs = ["Q2"]
use = "npn-switch"
base_from = "pass"
base_resistor = "auto"
base_pulldown = "auto"
max_off_current = "0.1 uA"
"""
LINES = LATCH.split("\n")
LINE = {key: next(n + 1 for n, line in enumerate(LINES) if line.startswith(key + " "))
        for key in ("gate_driver", "gate_pullup", "max_turn_off", "off_load", "base_from",
                    "base_resistor", "base_pulldown")}
EXTRA = """
[[role]]
name = "{name}"
refs = ["{ref}"]
use = "{use}"
"""


def edit(key: str, new: str, text: str = LATCH) -> str:
    """The latch file with the line of `key` replaced by `new` (no other line moves)."""
    lines = text.split("\n")
    lines[LINE[key] - 1] = new
    return "\n".join(lines)


def insert_after(key: str, new: str, text: str = LATCH) -> str:
    lines = text.split("\n")
    lines.insert(LINE[key], new)
    return "\n".join(lines)


def test_a_latch_pair_reads_with_auto_values():
    """gate_pullup, base_resistor and base_pulldown may be "auto" (models/README.md §10);
    the driver needs no collector_current (it is what the pull-up draws)."""
    req = parse_requirements(LATCH, "latch.toml")
    switch, driver = req.roles
    assert (switch.gate_driver, switch.gate_pullup_ohm, switch.max_turn_off_s) == ("latch", "auto", 0.005)
    assert (switch.max_drive_current_A, switch.off_load_ohm) == (20e-6, 10e3)
    assert (driver.base_from, driver.base_resistor_ohm, driver.base_pulldown_ohm) == ("pass", "auto", "auto")
    assert driver.collector_current_A is None
    assert req.driver_of(switch) is driver and req.driven_by(driver) is switch
    assert switch.is_linked and driver.is_linked


def test_values_instead_of_auto():
    text = edit("gate_pullup", 'gate_pullup = "470 kohm"')
    text = text.replace('base_resistor = "auto"', 'base_resistor = "1M"')
    switch, driver = parse_requirements(text, "latch.toml").roles
    assert switch.gate_pullup_ohm == 470e3 and driver.base_resistor_ohm == 1e6


FOUR_ROLE_LOOP = (LATCH.replace('base_from = "pass"', 'base_from = "aux"')
                  + EXTRA.format(name="aux", ref="Q3", use="high-side-pmos")
                  + 'load = "0.1 A"\nmax_drop = "50 mV"\ngate_driver = "aux-drv"\ngate_pullup = "1 Mohm"\n'
                  + EXTRA.format(name="aux-drv", ref="Q4", use="npn-switch")
                  + 'base_from = "pass"\nbase_resistor = "1 Mohm"\n')

BAD = {  # (file text, line, the message after "file:line:col: ")
    "link to a missing role": (
        edit("gate_driver", 'gate_driver = "latchh"'), LINE["gate_driver"],
        "[[role]] #1 \"pass\" gate_driver: no role named 'latchh'; did you mean 'latch'?"),
    "gate driver of the wrong family": (
        edit("gate_driver", 'gate_driver = "pass"'), LINE["gate_driver"],
        "[[role]] #1 \"pass\" gate_driver: 'pass' is a high-side-pmos role; gate_driver names "
        "an npn-switch or pnp-switch role"),
    "base fed from the wrong family": (
        edit("base_from", 'base_from = "latch"'), LINE["base_from"],
        "[[role]] #2 \"latch\" base_from: 'latch' is an npn-switch role; base_from names a "
        "high-side-pmos or low-side-nmos role"),
    "driver of the wrong polarity": (
        LATCH.replace('use = "npn-switch"', 'use = "pnp-switch"'),
        LINE["gate_driver"],
        "[[role]] #1 \"pass\" gate_driver: the gate of a high-side-pmos is pulled by an "
        "npn-switch; 'latch' is a pnp-switch role"),
    "driver that sets collector_current": (
        insert_after("base_from", 'collector_current = "45 uA"'), LINE["base_from"] + 1,
        "[[role]] #2 \"latch\" collector_current: 'latch' drives the gate of 'pass' and takes "
        "its collector current from the gate pull-up; remove this key"),
    "a loop of four roles": (
        FOUR_ROLE_LOOP, LINE["gate_driver"],
        "[[role]] #1 \"pass\" gate_driver: the links make a loop (pass -> latch -> aux -> "
        "aux-drv -> pass); only a latch pair may loop: a switch's gate driver fed from that "
        "switch's output"),
    "one driver for two gates": (
        LATCH + EXTRA.format(name="aux", ref="Q3", use="high-side-pmos")
        + 'load = "0.1 A"\nmax_drop = "50 mV"\ngate_driver = "latch"\ngate_pullup = "1 Mohm"\n',
        len(LINES) + 7,
        "[[role]] #3 \"aux\" gate_driver: 'latch' already drives the gate of 'pass'; give each "
        "switch its own driver role"),
    "driver fed from another switch": (
        LATCH.replace('base_from = "pass"', 'base_from = "aux"').replace('base_pulldown = "auto"\n', '')
        .replace('off_load = "10 kohm"', '# open while off') + EXTRA.format(name="aux", ref="Q3", use="high-side-pmos") + 'load = "0.1 A"\nmax_drop = "50 mV"\n',
        LINE["base_from"],
        "[[role]] #2 \"latch\" base_from: 'latch' drives the gate of 'pass' and is fed from 'aux': "
        "a gate driver may be fed from its own switch only (the latch pair)"),
    "gate driver without a pull-up": (
        edit("gate_pullup", "# no pull-up"), 12,
        "[[role]] #1 \"pass\": missing key 'gate_pullup', required with gate_driver (a value, or "
        "\"auto\"); e.g. gate_pullup = \"470 kohm\""),
    "pull-up without a gate driver": (
        edit("gate_driver", "# no driver").replace('base_from = "pass"', 'collector_current = "45 uA"')
        .replace('base_pulldown = "auto"\n', ''), LINE["gate_pullup"],
        "[[role]] #1 \"pass\" gate_pullup: needs gate_driver: the role whose transistor pulls this "
        "gate, e.g. gate_driver = \"latch\""),
    "gate drive given beside a driver": (
        insert_after("gate_driver", 'gate_drive_drop = "0.2 V"'), LINE["gate_driver"] + 1,
        "[[role]] #1 \"pass\" gate_drive_drop: the gate driver's Vce(sat) sets the gate drive of "
        "a switch with a gate_driver; remove this key"),
    "base drive given beside base_from": (
        insert_after("base_from", 'base_drive = "1.8 V"'), LINE["base_from"] + 1,
        "[[role]] #2 \"latch\" base_drive: the switch's output drives the base of a role with "
        "base_from; remove this key"),
    "auto pull-down without base_from": (
        edit("base_from", "# not fed from the switch").replace('off_load = "10 kohm"\n', ''),
        LINE["base_pulldown"] - 1,
        "[[role]] #2 \"latch\" base_pulldown: \"auto\" is chosen against the leakage of the switch "
        "that feeds the base: it needs base_from"),
    "off_load with nothing fed": (
        edit("base_from", "# not fed from the switch").replace('base_pulldown = "auto"', 'base_pulldown = "1 Mohm"'),
        LINE["off_load"],
        "[[role]] #1 \"pass\" off_load: is used where a role's base_from names this switch (the "
        "latch_off check); no role does"),
    "a link that is not text": (
        edit("base_from", "base_from = 3"), LINE["base_from"],
        "[[role]] #2 \"latch\" base_from: must name another role, e.g. base_from = \"pass\""),
    "auto where a value is needed": (
        edit("max_turn_off", 'max_turn_off = "auto"'), LINE["max_turn_off"],
        "[[role]] #1 \"pass\" max_turn_off: 'auto' is not a number"),
    "turn-off time in the wrong unit": (
        edit("max_turn_off", 'max_turn_off = "5 mA"'), LINE["max_turn_off"],
        "[[role]] #1 \"pass\" max_turn_off: '5 mA' is a current; expected a time (s)"),
}


@pytest.mark.parametrize("text, line, message", list(BAD.values()), ids=list(BAD))
def test_bad_link(text, line, message):
    with pytest.raises(RequirementError) as err:
        parse_requirements(text, "latch.toml")
    assert err.value.line == line, str(err.value)
    assert str(err.value).startswith(f"latch.toml:{line}:1: {message}"), str(err.value)


def test_bad_link_is_one_line_and_exit_2(tmp_path):
    """On the command line a broken link is one line naming the file, exit status 2."""
    path = tmp_path / "latch.toml"
    path.write_text(BAD["link to a missing role"][0], encoding="utf-8")
    result = invoke("choose", str(path))
    assert result.exit_code == 2
    lines = [line for line in result.output.splitlines() if line.strip()]
    assert len(lines) == 1 and lines[0].startswith(f"Error: {path}:{LINE['gate_driver']}:1: ")
    assert "Traceback" not in result.output


def test_link_given_as_an_option_to_a_missing_role():
    """A quick question's --gate-driver is checked as the file's key is."""
    base = parse_requirements(LATCH, "latch.toml")
    with pytest.raises(RequirementError) as err:
        from_options({"gate_driver": "nobody"}, base, "pass")
    assert str(err.value).startswith("--gate-driver: no role named 'nobody'")
