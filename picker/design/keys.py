"""The requirement file's keys as data: tables, role keys by family, the unit,
rule and example of every quantity, the command-line options that set them,
and the bounds on what a file may hold."""

from __future__ import annotations

USES = ("high-side-pmos", "low-side-nmos", "npn-switch", "pnp-switch")
KIND_OF_USE = {"high-side-pmos": "pmos", "low-side-nmos": "nmos", "npn-switch": "npn", "pnp-switch": "pnp"}
PASS_USES = ("high-side-pmos", "low-side-nmos")

MAX_FILE_BYTES, MAX_ROLES, MAX_REFS = 1_000_000, 200, 1000  # files people receive from others
MAX_VOLUME, MAX_QTY = 10**9, 100_000
MAX_MAGNITUDE = 1e12  # any quantity, in its unit (A, V, ohm, degC...): 1e24 when squared
QUICK_SUPPLY_V, QUICK_AMBIENT_C, QUICK_VOLUME, QUICK_REFS = (3.0, 4.2), (-20.0, 50.0), 1000, ("Q?",)

TOP_KEYS = ("supply", "ambient", "build", "margins", "resistors", "role")
TABLE_KEYS = {"supply": ("min", "max", "capacity"), "ambient": ("min", "max"),
              "build": ("volume",), "margins": ("derate_v", "derate_i", "tj_margin", "extrapolation", "rth_factor"),
              "resistors": ("series", "tolerance", "max")}
# [resistors] (models/README.md §6, §10): IEC 60063's series, and the tolerance each
# implies when the file gives none (common practice); the largest "auto" value.
# One source for them: the series' own module (it imports numpy only when used).
from picker.models.eseries import DEFAULT_MAX_OHM as DEFAULT_RESISTOR_MAX_OHM  # noqa: E402
from picker.models.eseries import DEFAULT_SERIES, SERIES  # noqa: E402
from picker.models.eseries import DEFAULT_TOLERANCE as SERIES_TOLERANCE  # noqa: E402
from picker.models.eseries import LOWEST_OHM as SMALLEST_RESISTOR_OHM  # noqa: E402
BASE_OFF = ("driven", "open")  # what holds a switch's base while it is off (models/README.md §6)
COMMON_KEYS = ("name", "refs", "use", "qty", "max_off_current")
FAMILY_KEYS = {True: ("load", "max_drop", "gate_drive", "gate_drive_drop", "max_tj",  # by is_pass_switch
                      "gate_driver", "gate_pullup", "max_turn_off", "max_drive_current", "off_load"),
               False: ("collector_current", "base_drive", "base_resistor", "overdrive", "max_vce_sat",
                       "base_from", "base_pulldown", "base_off")}
ROLE_KEYS = COMMON_KEYS + FAMILY_KEYS[True] + FAMILY_KEYS[False]
# (a gate driver takes its collector current from the pull-up: models/README.md §10)
REQUIRED = {True: ("load", "max_drop"), False: ("collector_current", "base_resistor")}

# Linked roles (models/README.md §10): keys naming another role, keys that may be "auto",
# and keys that mean something only on a linked role.
LINK_KEYS = {"gate_driver": (True, False), "base_from": (False, True)}  # key: (on a switch, names a switch)
AUTO = "auto"
AUTO_KEYS = ("gate_pullup", "base_resistor", "base_pulldown")
NEEDS_DRIVER = ("gate_pullup", "max_turn_off", "max_drive_current")  # only with gate_driver
# A switch's gate is pulled away from its source by a driver of the opposite rail:
# a high-side P-channel gate down to ground by an NPN, a low-side N-channel gate up to
# the supply by a PNP; a base fed from a switch's output likewise.
DRIVER_OF = {"high-side-pmos": "npn-switch", "low-side-nmos": "pnp-switch"}

# key: (field, unit, rule, example)
QUANTITIES = {
    "load": ("load_A", "A", "positive", "1.5 A"),
    "max_drop": ("max_drop_V", "V", "positive", "60 mV"),
    "gate_drive": ("gate_drive_V", "V", "drive", "supply"),
    "gate_drive_drop": ("gate_drive_drop_V", "V", "non-negative", "0.1 V"),
    "max_tj": ("max_tj_C", "degC", "temperature", "100 degC"),
    "collector_current": ("collector_current_A", "A", "positive", "40 uA"),
    "base_drive": ("base_drive_V", "V", "drive", "supply"),
    "base_resistor": ("base_resistor_ohm", "ohm", "positive", "68 kohm"),
    "overdrive": ("overdrive", "1", "at-least-1", "2"),
    "max_vce_sat": ("max_vce_sat_V", "V", "positive", "0.15 V"),
    "base_pulldown": ("base_pulldown_ohm", "ohm", "positive", "1 Mohm"),
    "gate_pullup": ("gate_pullup_ohm", "ohm", "positive", "470 kohm"),
    "max_turn_off": ("max_turn_off_s", "s", "positive", "1 ms"),
    "max_drive_current": ("max_drive_current_A", "A", "positive", "20 uA"),
    "off_load": ("off_load_ohm", "ohm", "positive", "10 kohm"),
    "max_off_current": ("max_off_current_A", "A", "positive", "1 uA"),
    "derate_v": ("derate_v", "1", "fraction", "0.8"),
    "derate_i": ("derate_i", "1", "fraction", "0.5"),
    "tj_margin": ("tj_margin_C", "degC", "non-negative", "25 degC"),
    "rth_factor": ("rth_factor", "1", "positive", "1.5"),
}
# key: (field, the words it takes): text choices, not quantities
CHOICES = {
    "extrapolation": ("extrapolation", ("conservative", "fit", "none")),  # method §1
}
RULES = {  # rule: (test the value must pass, what the message says otherwise)
    "positive": (lambda x: x > 0, "must be above zero"),
    "non-negative": (lambda x: x >= 0, "must not be negative"),
    "drive": (lambda x: x > 0, 'must be "supply" or a voltage above zero (write magnitudes: '
                               'a gate pulled to -2.5 V is "2.5 V")'),
    "temperature": (lambda x: x >= -273.15, "is below absolute zero"),
    "at-least-1": (lambda x: x >= 1, "must be 1 or more"),
    "fraction": (lambda x: 0 < x <= 1, "must be above 0 and at most 1 (0.8 uses a rating up to 80 %)"),
}
EXAMPLES = {"name": '"pass"', "refs": '["Q1"]', "use": '"high-side-pmos"', "volume": "5000",
            "gate_driver": '"latch"', "base_from": '"pass"',
            "base_off": '"driven"', "series": '"E24"', "tolerance": '"5 %"', "resistors.max": '"2.2 Mohm"',
            "supply.min": '"3.0 V"', "supply.max": '"4.2 V"', "ambient.min": '"-20 degC"',
            "ambient.max": '"45 degC"', **{k: f'"{v[3]}"' for k, v in QUANTITIES.items()},
            **{k: f'"{v[1][0]}"' for k, v in CHOICES.items()}}

# option key -> (table, key); key None: a range 'MIN..MAX' filling min and max
OPTION_KEYS = {"supply": ("supply", None), "ambient": ("ambient", None), "capacity": ("supply", "capacity"),
               "volume": ("build", "volume"), "max_off": ("role", "max_off_current"),
               **{k: ("margins", k) for k in TABLE_KEYS["margins"]},
               **{k: ("role", k) for k in ROLE_KEYS if k != "max_off_current"}}


def _closest(word: str, choices, cutoff: float = 0.6) -> list[str]:
    import difflib  # only on the error path

    return difflib.get_close_matches(word, list(choices), n=3, cutoff=cutoff)


def _or(words) -> str:
    quoted = [f"'{w}'" for w in words]
    return quoted[0] if len(quoted) == 1 else ", ".join(quoted[:-1]) + " or " + quoted[-1]


def _a(use: str) -> str:
    return f"an {use}" if use.startswith("n") else f"a {use}"  # 'an npn-switch', 'a pnp-switch'
