"""Screening rules.  Each module here defines ``RULE``; the engine finds them itself.

See ``rules.base`` for the interface and DEVELOPERS.md for how to add one.
"""
from __future__ import annotations

import importlib
import pkgutil
from functools import lru_cache

import numpy as np
import pandas as pd

from .base import Rule, Severity, combine

_NOT_RULES = {"base", "severity", "levels", "docs"}  # the interface and its tables, not rules


@lru_cache(maxsize=1)
def all_rules() -> tuple[Rule, ...]:
    """Every rule module of this package, in evaluation order."""
    found = []
    for info in pkgutil.iter_modules(__path__):
        if info.name in _NOT_RULES or info.name.startswith("_"):
            continue
        module = importlib.import_module(f"{__name__}.{info.name}")
        rule = getattr(module, "RULE", None)
        if isinstance(rule, Rule):
            found.append(rule)
    return tuple(sorted(found, key=lambda r: (r.order, r.code)))


class ThresholdError(ValueError):
    """A site rule file names a rule or threshold that does not exist, or a bad value."""


def effective_thresholds(overrides: dict | None) -> dict[str, dict[str, float]]:
    """Defaults of every rule with a site's overrides applied; unknown names are errors."""
    overrides = overrides or {}
    rules = {r.code.lower(): r for r in all_rules()}
    out = {code: r.defaults() for code, r in rules.items()}
    for code, values in overrides.items():
        key = str(code).lower()
        if key not in rules:
            raise ThresholdError(f"rule '{code}' does not exist; rules are {', '.join(sorted(rules))}")
        if not isinstance(values, dict):
            raise ThresholdError(f"rule '{code}': expected a table of thresholds")
        by_name = {t.name: t for t in rules[key].thresholds}
        for name, value in values.items():
            if name not in out[key]:
                raise ThresholdError(f"rule '{code}' has no threshold '{name}'; it has {', '.join(out[key])}")
            try:
                number = float(value) if not isinstance(value, bool) and isinstance(value, (int, float)) else None
            except OverflowError:
                number = None
            if number is None or not np.isfinite(number):
                shown = "a huge integer" if isinstance(value, int) and value.bit_length() > 1000 else str(value)[:40]
                raise ThresholdError(f"[{code}] {name} = {shown}: not a finite number")
            problem = by_name[name].check(number)
            if problem:
                raise ThresholdError(f"[{code}] {name} = {number:g} is out of range: {problem}")
            out[key][name] = number
        for a, b in rules[key].ordered:
            if not out[key][a] < out[key][b]:
                raise ThresholdError(f"[{code}] {a} = {out[key][a]:g} must be below {b} = {out[key][b]:g}")
    return out


def apply_rules(cases: pd.DataFrame, overrides: dict | None = None, only: tuple[str, ...] | None = None,
                graded: bool = True) -> pd.DataFrame:
    """Run every rule in order (or only the rules whose codes ``only`` names); add their columns to
    ``cases``; return all findings.

    graded=False (the history's samples, read only as counts): the findings as the rules wrote them,
    without the service adjustment, the family and the per-case ``findings`` column.

    Each finding carries its ``family`` and its level from the severity table,
    moved by the valve's intent and duty (``rules.severity.adjust_for_service``).
    """
    from .severity import adjust_for_service, family_of

    thresholds = effective_thresholds(overrides)
    found = []
    for rule in all_rules():
        if only is not None and rule.code not in only:
            continue
        result = rule.evaluate(cases, thresholds[rule.code.lower()])
        for name, values in result.columns.items():
            cases[name] = values
        found.append(result.findings)
    if not graded:
        return combine(*found)
    allf = adjust_for_service(combine(*found), cases, thresholds)
    codes = allf["code"].to_numpy(dtype=object)
    allf["family"] = pd.Series(codes).map({c: family_of(c) for c in set(codes.tolist())}).to_numpy(dtype=object)
    ordered = allf.sort_values(["case_row", "severity"], ascending=[True, False], kind="stable")
    per_case: dict[int, dict[str, None]] = {}
    for row, code in zip(ordered["case_row"].tolist(), ordered["code"].tolist()):
        per_case.setdefault(row, {})[code] = None
    text = np.full(len(cases), "", dtype=object)
    for row, codes in per_case.items():
        text[row] = ";".join(codes)
    cases["findings"] = text
    return allf


__all__ = ["Rule", "Severity", "all_rules", "apply_rules", "effective_thresholds", "ThresholdError"]
