"""The line list's vocabulary: the columns it reads, their units, plausible ranges and accepted words.

Follows docs/input.md; the loader and its checks read these tables, and so do
`valve-audit`'s messages about unknown columns.
"""
from __future__ import annotations

import difflib
import re


CASE_FIELDS = {  # prefix: (kind, default unit)
    "flow": ("flow", ""),          # default depends on the phase: m3/h liquid, kg/h gas
    "p_in": ("pressure", "bar"),
    "p_out": ("pressure", "bar"),
    "t_in": ("temperature", "degC"),
    "travel": ("percent", "%"),
    "quality_in": ("dimensionless", ""),
}


CASE_COLUMN = re.compile(r"^(quality_in|flow|p_in|p_out|t_in|travel)_([a-z0-9_]+)$")


SATURATED = re.compile(r"^\s*sat(urated|uration)?\s*$", re.I)  # t_in 'sat': the saturation temperature at p_in


NUMERIC = {  # column: (kind, default unit)
    "density": ("density", "kg/m3"),
    "vapour_pressure": ("pressure", "kPa"),
    "critical_pressure": ("pressure", "kPa"),
    "viscosity": ("viscosity", "cP"),
    "molar_mass": ("molar_mass", "kg/kmol"),
    "k": ("dimensionless", ""),
    "z": ("dimensionless", ""),
    "sound_speed": ("velocity", "m/s"),
    "valve_size": ("length", "mm"),
    "rated_cv": ("dimensionless", ""),
    "rated_kv": ("dimensionless", ""),
    "rangeability": ("dimensionless", ""),
    "fl": ("dimensionless", ""),
    "xt": ("dimensionless", ""),
    "fd": ("dimensionless", ""),
    "xfz": ("dimensionless", ""),
    "pipe_in_id": ("length", "mm"),
    "pipe_out_id": ("length", "mm"),
    "pipe_in_size": ("length", "in"),
    "pipe_out_size": ("length", "in"),
    "pipe_out_wall": ("length", "mm"),
    "noise_limit": ("dba", "dBA"),
    "velocity_limit": ("velocity", "m/s"),
    "noise_an": ("dimensionless", ""),
    "noise_stp": ("dimensionless", ""),
}


# The historian signal that measures each quantity of this valve (docs/history.md); optional.
HISTORY_SIGNALS = ("hist_flow", "hist_p_in", "hist_p_out", "hist_t_in", "hist_travel")
TEXT = ("tag", "area", "service", "fluid", "phase", "characteristic", "valve_style",
        "pipe_in_schedule", "pipe_out_schedule", "intent", "duty", "criticality", "dissolved_gas",
        *HISTORY_SIGNALS)


OVERRIDES = ("density", "vapour_pressure", "critical_pressure", "viscosity", "molar_mass", "k", "z")


CUSTOM_NEEDS = {"liquid": ("density", "vapour_pressure", "critical_pressure", "viscosity"),
                "gas": ("molar_mass", "k", "z", "viscosity")}


PIPE_NARROWER_LIMIT = 0.75  # pipe bore below this share of the valve size is refused


KNOWN = set(NUMERIC) | set(TEXT) | {"p_atm"}


# Plausible magnitudes, SI (docs/input.md, "Plausible ranges"): a value outside is a typing or units slip
# and rejects its row (or case) by name, before it can overflow the arithmetic or a plot axis.
PLAUSIBLE = {  # column: (low, high, how the message shows the bounds)
    "density": (0.01, 25000.0, "0.01 to 25,000 kg/m3"),
    "vapour_pressure": (0.0, 1e9, "0 to 1,000,000 kPa"),
    "critical_pressure": (1e4, 1e9, "10 to 1,000,000 kPa"),
    "viscosity": (1e-7, 100.0, "0.0001 to 100,000 cP"),
    "molar_mass": (1.0, 1000.0, "1 to 1,000 kg/kmol"),
    "sound_speed": (10.0, 10000.0, "10 to 10,000 m/s"),
    "valve_size": (0.003, 3.0, "3 to 3,000 mm"),
    "rated_cv": (1e-4, 1e5, "0.0001 to 100,000 (Cv)"),
    "rated_kv": (1e-4, 1e5, "0.0001 to 100,000 (Kv)"),
    "rangeability": (1.0, 1000.0, "1 to 1,000"),
    "pipe_in_id": (0.003, 5.0, "3 to 5,000 mm"),
    "pipe_out_id": (0.003, 5.0, "3 to 5,000 mm"),
    "pipe_in_size": (0.003, 5.0, "1/8 to 200 in"),
    "pipe_out_size": (0.003, 5.0, "1/8 to 200 in"),
    "pipe_out_wall": (1e-4, 0.2, "0.1 to 200 mm"),
    "noise_limit": (30.0, 140.0, "30 to 140 dBA"),
    "velocity_limit": (0.1, 1000.0, "0.1 to 1,000 m/s"),
    "p_atm": (30e3, 110e3, "30 to 110 kPa"),
}


CASE_PLAUSIBLE = {  # case field: (low, high, bounds in words); flows in SI of their basis
    "flow": (1e-9, 1e6, "a positive flow below 1,000,000 kg/s or m3/s"),
    "p_in": (1.0, 1e9, "1 Pa to 10,000 bar(a)"),
    "p_out": (1.0, 1e9, "1 Pa to 10,000 bar(a)"),
    "t_in": (1.0, 3000.0, "1 to 3,000 K"),
    "travel": (0.0, 110.0, "0 to 110 %"),
}


# A bare valve size (no unit in the cell or the header) below this is taken for inches written
# without a unit, and refused: the smallest common control-valve body is DN15.
BARE_SIZE_MIN_MM = 15.0


PHASE_WORDS = {"liquid": "liquid", "gas": "gas", "vapour": "gas", "vapor": "gas", "steam": "gas"}


def is_known_column(name: str) -> bool:
    """A normalised header this loader reads (wide or long layout)."""
    return name in KNOWN or bool(CASE_COLUMN.match(name)) or name in CASE_FIELDS or name == "case"


def suggestion(name: str) -> str:
    """' (did you mean 'x'?)' for a near miss among the known column names, else ''."""
    pool = sorted(KNOWN | {f"{p}_max" for p in CASE_FIELDS} | {f"{p}_<case>" for p in CASE_FIELDS})
    close = difflib.get_close_matches(name, pool, n=1, cutoff=0.75)
    if not close:
        m = re.match(r"^([a-z]+(?:_[a-z]+)?)_([a-z0-9_]+)$", name)
        if m:
            prefix = difflib.get_close_matches(m.group(1), list(CASE_FIELDS), n=1, cutoff=0.75)
            close = [f"{prefix[0]}_{m.group(2)}"] if prefix else []
    return f" (did you mean '{close[0]}'?)" if close else ""


REQUIRED = (("tag",), ("fluid",), ("valve_size",), ("rated_cv", "rated_kv"))


SERVICE_WORDS = {  # column: (accepted words, the default for a blank cell)
    "intent": (("flashing", "choked"), ""),
    "duty": (("continuous", "intermittent", "startup", "emergency"), "continuous"),
    "criticality": (("high", "medium", "low"), "medium"),
    "dissolved_gas": (("yes", "no"), "no"),
}


_SERVICE_SPELLINGS = {"start_up": "startup", "start-up": "startup", "y": "yes", "true": "yes", "n": "no",
                      "false": "no", "med": "medium"}
