"""Unit handling at the input edge: text cells and header units to SI.

Everything inside the tool is SI (Pa absolute, K, kg/s or m3/s, m, Pa s,
kg/m3).  This module is the one place where line-list units are read.  It
works column-wise: every distinct unit string in a column is resolved once
through pint, then applied to the whole column with numpy, so a file of
20,000 rows costs a handful of pint look-ups, not one per cell.

Gauge pressures (``barg``, ``kPag``, ``psig``, ``MPag``) are converted to
absolute by adding the site's atmospheric pressure, per row.  Standard gas
volume flows carry their reference state (see ``STANDARD_REFERENCES``).
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
import pandas as pd


@lru_cache(maxsize=1)
def unit_registry():
    """pint's registry, built at the first unit look-up (some 0.1 s): a run whose line list was read in
    another process (io.early) never needs it.  pint's "gallon" is the US gallon."""
    import pint

    return pint.UnitRegistry(autoconvert_offset_to_baseunit=True)


P_STD = 101325.0  # Pa, the contract's standard atmosphere

# Standard reference states for gas volume flow (linelist contract, "Operating cases").
STANDARD_REFERENCES = {
    "nm3": (273.15, 101325.0),  # normal m3: 0 degC, 101.325 kPa
    "sm3": (288.15, 101325.0),  # standard m3: 15 degC, 101.325 kPa
    "scf": ((60.0 - 32.0) / 1.8 + 273.15, 14.696 * 6894.757293168),  # 60 degF, 14.696 psia
}

# Each quantity kind: its SI unit, and the line-list spellings we accept.
# Keys are lower-case spellings with spaces removed; values are pint expressions.
_PRESSURE = {
    "pa": "Pa", "kpa": "kPa", "mpa": "MPa", "bar": "bar", "bara": "bar", "mbar": "mbar",
    "psi": "psi", "psia": "psi", "kpaa": "kPa", "mpaa": "MPa", "atm": "atm",
    "kg/cm2": "kgf/cm**2", "kgf/cm2": "kgf/cm**2", "mmhg": "mmHg", "torr": "torr",
}
_GAUGE = {"barg": "bar", "kpag": "kPa", "psig": "psi", "mpag": "MPa", "kg/cm2g": "kgf/cm**2"}
_TEMPERATURE = {"degc": "degC", "c": "degC", "°c": "degC", "k": "K", "degf": "degF",
                "f": "degF", "°f": "degF", "degr": "degR", "r": "degR"}
_LENGTH = {"mm": "mm", "m": "m", "cm": "cm", "in": "inch", "inch": "inch", '"': "inch",
           "ft": "foot"}
_VOLUME_FLOW = {"m3/h": "m**3/h", "m3/s": "m**3/s", "l/min": "L/min", "l/s": "L/s",
                "l/h": "L/h", "gpm": "gallon/min", "usgpm": "gallon/min",
                "ft3/h": "ft**3/h", "bbl/d": "42*gallon/day", "m3/d": "m**3/day"}
_MASS_FLOW = {"kg/h": "kg/h", "kg/s": "kg/s", "t/h": "t/h", "lb/h": "lb/h", "lb/s": "lb/s",
              "kg/min": "kg/min", "t/d": "t/day"}
_STD_FLOW = {"nm3/h": ("nm3", "m**3/h"), "nm3/d": ("nm3", "m**3/day"),
             "sm3/h": ("sm3", "m**3/h"), "sm3/d": ("sm3", "m**3/day"),
             "scfh": ("scf", "ft**3/h"), "scfm": ("scf", "ft**3/min"),
             "scfd": ("scf", "ft**3/day"), "mmscfd": ("scf", "1e6*ft**3/day")}
_VISCOSITY = {"cp": "cP", "mpas": "mPa*s", "mpa.s": "mPa*s", "mpa*s": "mPa*s", "pas": "Pa*s",
              "pa.s": "Pa*s", "pa*s": "Pa*s"}
_DENSITY = {"kg/m3": "kg/m**3", "g/cm3": "g/cm**3", "g/ml": "g/mL", "lb/ft3": "lb/ft**3",
            "kg/l": "kg/L"}
_MOLAR_MASS = {"kg/kmol": "kg/kmol", "g/mol": "g/mol"}
_VELOCITY = {"m/s": "m/s", "ft/s": "ft/s"}
_PERCENT = {"%": "percent", "pct": "percent", "percent": "percent"}
_DBA = {"dba": "1", "db(a)": "1", "db": "1"}
_ONE = {"-": "1", "1": "1"}

KINDS = {
    "pressure": ("Pa", _PRESSURE),
    "temperature": ("K", _TEMPERATURE),
    "length": ("m", _LENGTH),
    "volume_flow": ("m**3/s", _VOLUME_FLOW),
    "mass_flow": ("kg/s", _MASS_FLOW),
    "viscosity": ("Pa*s", _VISCOSITY),
    "density": ("kg/m**3", _DENSITY),
    "molar_mass": ("kg/kmol", _MOLAR_MASS),
    "velocity": ("m/s", _VELOCITY),
    "percent": ("percent", _PERCENT),
    "dba": ("1", _DBA),
    "dimensionless": ("1", _ONE),
}


def _key(unit: str) -> str:
    return unit.strip().lower().replace(" ", "").replace("³", "3").replace("²", "2")


@dataclass(frozen=True)
class UnitRule:
    """How one unit string maps to SI: ``si = value * scale + offset`` (+ p_atm if gauge).

    ``flow_basis`` is 'volume', 'mass' or 'std' for flows, else ''.
    ``std_ref`` is the (T, p) reference state of a standard volume flow.
    """
    scale: float
    offset: float = 0.0
    gauge: bool = False
    flow_basis: str = ""
    std_ref: tuple[float, float] | None = None


def accepted_units(kind: str) -> list[str]:
    """The unit spellings accepted for a quantity kind, for error messages."""
    if kind == "flow":
        return sorted(set(_VOLUME_FLOW) | set(_MASS_FLOW) | set(_STD_FLOW))
    names = set(KINDS[kind][1])
    if kind == "pressure":
        names |= set(_GAUGE)
    return sorted(names)


def _pint_rule(expr: str, si: str) -> UnitRule:
    ureg = unit_registry()
    if "*" in expr and expr.split("*")[0].replace(".", "").replace("e", "").isdigit():
        return UnitRule(scale=ureg.parse_expression(expr).to(si).magnitude)  # e.g. '42*gallon/day'
    one = ureg.Quantity(1.0, expr).to(si).magnitude
    zero = ureg.Quantity(0.0, expr).to(si).magnitude
    return UnitRule(scale=one - zero, offset=zero)


@lru_cache(maxsize=512)
def unit_rule(unit: str, kind: str) -> UnitRule | None:
    """Resolve a unit string for a quantity kind; None if we do not accept it.

    ``kind`` is one of ``KINDS`` or 'flow' (any of volume, mass or standard
    volume flow).
    """
    k = _key(unit)
    if kind == "flow":
        if k in _STD_FLOW:
            ref_name, expr = _STD_FLOW[k]
            rule = _pint_rule(expr, "m**3/s")
            return UnitRule(rule.scale, 0.0, False, "std", STANDARD_REFERENCES[ref_name])
        for basis, table, si in (("volume", _VOLUME_FLOW, "m**3/s"), ("mass", _MASS_FLOW, "kg/s")):
            if k in table:
                rule = _pint_rule(table[k], si)
                return UnitRule(rule.scale, 0.0, False, basis, None)
        return None
    si, table = KINDS[kind]
    if kind == "pressure" and k in _GAUGE:
        rule = _pint_rule(_GAUGE[k], si)
        return UnitRule(rule.scale, 0.0, True)
    if k in table:
        return _pint_rule(table[k], si)
    return None


_NUMBER = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*?)\s*$")
_MINUS_SIGNS = str.maketrans({"\u2212": "-", "\u2013": "-", "\u2012": "-", "\u00a0": " ",
                              "\u202f": " "})
_THOUSANDS_COMMA = re.compile(r"^\s*[+-]?\d{1,3}(,\d{3})+(\.\d*)?")
_DECIMAL_COMMA = re.compile(r"^(\s*[+-]?\d+),(\d+)")


_NOMINAL_PREFIX = re.compile(r"^\s*(DN|NPS)\s*([0-9.,/\- ]+?)\s*$", re.I)
_FRACTION = re.compile(r"^\s*(?:(\d+)[\s\-]+)?(\d+)\s*/\s*(\d+)\s*(.*?)\s*$")
_DOT_THOUSANDS = re.compile(r"^\s*[+-]?\d{1,3}(\.\d{3})+(,\d*)?(?!\d)")


def _nominal(s: str) -> tuple[str, str] | None:
    """'DN80' -> ('80', 'mm'); 'NPS 3' -> ('3', 'in'): a nominal size written with its system's prefix."""
    m = _NOMINAL_PREFIX.match(s)
    if not m:
        return None
    return m.group(2).strip(), ("mm" if m.group(1).upper() == "DN" else "in")


def split_number(text: str, decimal_comma: bool = False) -> tuple[float | None, str, str]:
    """Split a cell such as ``'12,5 barg'`` into (12.5, 'barg', '').

    Returns (value, unit, problem).  A decimal comma is accepted; a comma
    followed by exactly three digits is refused as ambiguous (1,500 might be
    1500 or 1.5), because a silent guess could be off by a factor of 1000.
    With ``decimal_comma`` (a semicolon-separated export) commas are decimal
    marks, and a dot followed by exactly three digits is the ambiguous case.
    Nominal sizes read as lengths: 'DN80' (80 mm), 'NPS 3' and '3"' (3 in),
    '1-1/2 in' (1.5 in).
    """
    if not decimal_comma:
        plain = _NUMBER_SPACE_UNIT.fullmatch(text)
        if plain:  # '1055.1 kg/h', the common cell: none of the cases below can apply to it
            return float(plain.group(1)), plain.group(2), ""
    return _split_number(text, decimal_comma)


# An unsigned ASCII number, one space and a unit of printable ASCII starting with a letter, without
# commas: no minus sign to translate, no nominal prefix, no fraction, no thousands or decimal comma.
# Each part can match in one way only, so a long cell that fails is rejected in linear time.
_NUMBER_SPACE_UNIT = re.compile(r"((?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?)"
                                r" ([A-Za-z][\x21-\x2b\x2d-\x7e]*)")


def _split_number(text: str, decimal_comma: bool) -> tuple[float | None, str, str]:
    """``split_number`` for any cell (see there)."""
    s = text.translate(_MINUS_SIGNS).strip()
    nominal = _nominal(s)
    if nominal:
        s = f"{nominal[0]} {nominal[1]}"
    fraction = _FRACTION.match(s)
    if fraction:
        whole, num, den, unit = fraction.groups()
        if int(den) == 0:
            return None, "", "is not a number (a fraction over zero)"
        return (int(whole or 0) + int(num) / int(den)), unit, ""
    if decimal_comma:
        if _DOT_THOUSANDS.match(s) and "," in s:
            s = s.replace(".", "")
        elif _DOT_THOUSANDS.match(s):
            return None, "", ("is ambiguous in a file with decimal commas (a thousands dot or a decimal "
                              "point?); write it without the dot")
        s = s.replace(",", ".", 1)
    elif "," in s:
        if "." in s and _THOUSANDS_COMMA.match(s):
            s = s.replace(",", "")
        else:
            m = _DECIMAL_COMMA.match(s)
            if m and len(m.group(2)) == 3 and not s[m.end():m.end() + 1].isdigit():
                return None, "", "is ambiguous (thousands separator or decimal comma?); write it without a comma"
            s = _DECIMAL_COMMA.sub(r"\1.\2", s, count=1)
    m = _NUMBER.match(s)
    if not m:
        return None, "", "is not a number"
    return float(m.group(1)), m.group(2), ""


@lru_cache(maxsize=1)
def _all_unit_spellings() -> frozenset[str]:
    names = set(_GAUGE) | set(_STD_FLOW) | set(_VOLUME_FLOW) | set(_MASS_FLOW)
    for _, table in KINDS.values():
        names |= set(table)
    return frozenset(names - {"1", "-"}) | {"-"}


def is_unit_text(text: str) -> bool:
    """True where a cell holds only a unit this module accepts ('barg', '[kg/h]', 'degC'): a units row."""
    return _key(str(text).strip().strip("[]")) in _all_unit_spellings()


@dataclass
class ParsedColumn:
    """A column converted to SI; ``errors`` holds a message per bad row (else '')."""
    values: np.ndarray
    errors: np.ndarray
    flow_basis: np.ndarray | None = None
    std_t: np.ndarray | None = None
    std_p: np.ndarray | None = None


def parse_column(cells: pd.Series, kind: str, header_unit: str, default_unit: str,
                 column: str, p_atm: np.ndarray, decimal_comma: bool = False) -> ParsedColumn:
    """Convert one line-list column of text cells to SI.

    cells: the raw text (blank = not given, becomes NaN with no error).
    kind: a key of ``KINDS`` or 'flow'.  header_unit: the unit in square
    brackets after the header, or ''.  default_unit: the contract's default
    for the column.  p_atm: site atmospheric pressure per row [Pa].
    decimal_comma: the file writes decimals with commas (see ``split_number``).
    A cell unit wins over the header unit, which wins over the default.
    """
    n = len(cells)
    values = np.full(n, np.nan)
    errors = np.full(n, "", dtype=object)
    basis = np.full(n, "", dtype=object) if kind == "flow" else None
    std_t = np.full(n, np.nan) if kind == "flow" else None
    std_p = np.full(n, np.nan) if kind == "flow" else None
    fallback = header_unit or default_unit
    fallback_rule = unit_rule(fallback, kind) if fallback else UnitRule(1.0)
    # Fast path: plain numbers take the header/default unit, converted as one array.
    plain = pd.to_numeric(cells, errors="coerce").to_numpy(dtype=float)
    is_plain = np.isfinite(plain)
    if decimal_comma:  # '1.200' is not plainly 1.2 in a file that writes decimals with commas
        is_plain &= ~cells.astype(str).str.contains(".", regex=False).to_numpy()
    if is_plain.any():
        if fallback_rule is None:
            bad = (f"column '{column}': unknown unit '{_clip(fallback)}' in the header; "
                   f"expected one of {', '.join(accepted_units(kind))}")
            errors[is_plain] = bad
        else:
            _apply(fallback_rule, plain, is_plain, values, basis, std_t, std_p, p_atm)
    texts = cells.to_numpy(dtype=object)
    numbers = np.full(n, np.nan)
    groups: dict[UnitRule, list[int]] = {}
    for i in np.flatnonzero(~is_plain):
        raw = texts[i]
        if raw is None or (isinstance(raw, float) and np.isnan(raw)):
            continue
        text = str(raw)
        if not text.strip():
            continue
        number, unit, problem = split_number(text, decimal_comma)
        if problem:
            errors[i] = f"column '{column}': value '{_clip(text)}' {problem}"
            continue
        rule = unit_rule(unit, kind) if unit else fallback_rule
        if rule is None:
            errors[i] = (f"column '{column}': unknown unit '{_clip(unit or fallback)}' in "
                         f"'{_clip(text)}'; expected one of {', '.join(accepted_units(kind))}")
            continue
        numbers[i] = number
        groups.setdefault(rule, []).append(i)
    for rule, rows in groups.items():
        mask = np.zeros(n, dtype=bool)
        mask[rows] = True
        _apply(rule, numbers, mask, values, basis, std_t, std_p, p_atm)
    return ParsedColumn(values, errors, basis, std_t, std_p)


def _apply(rule: UnitRule, numbers, mask, values, basis, std_t, std_p, p_atm) -> None:
    si = numbers[mask] * rule.scale + rule.offset
    if rule.gauge:
        si = si + p_atm[mask]
    values[mask] = si
    if basis is not None:
        basis[mask] = rule.flow_basis
        if rule.std_ref:
            std_t[mask], std_p[mask] = rule.std_ref


def _clip(text: str, limit: int = 60) -> str:
    """Shorten a cell for a message, so a 5,000-character cell cannot flood the report."""
    text = str(text)
    return text if len(text) <= limit else text[:limit] + "..."
