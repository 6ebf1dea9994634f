"""The one interface every screening rule shares.

A rule is a module in this package that defines ``RULE = Rule(...)``.  Its
``evaluate(cases, thresholds)`` receives the table of sized valve-cases (SI
columns, one row per case) and a dict of its effective thresholds, and
returns a ``RuleResult``: the columns it computes (added to the case table,
so later rules may read them) and its findings, one row each with the case
row, a code, a severity and one plain sentence with the numbers in it.
"""
from __future__ import annotations

from contextlib import contextmanager
from dataclasses import dataclass, field
from typing import Callable

import numpy as np
import pandas as pd

from .levels import Severity  # noqa: F401  (re-exported: rules.base.Severity)
from .severity import severity_of


@dataclass(frozen=True)
class Threshold:
    """A documented default that a site file can override, within [low, high]."""
    name: str
    default: float
    unit: str
    source: str      # "IEC 60534-...", or "common practice"
    meaning: str
    low: float = 0.0
    high: float = float("inf")

    def check(self, value: float) -> str:
        """'' if ``value`` is allowed, else what is expected."""
        if self.low <= value <= self.high:
            return ""
        top = "" if self.high == float("inf") else f" and at most {self.high:g}"
        return f"expected at least {self.low:g}{top} ({self.unit or 'a ratio'})"


@dataclass
class RuleResult:
    columns: dict[str, np.ndarray] = field(default_factory=dict)
    findings: pd.DataFrame = field(default_factory=lambda: empty_findings())


@dataclass(frozen=True)
class Rule:
    code: str
    title: str
    order: int
    thresholds: tuple[Threshold, ...]
    evaluate: Callable[[pd.DataFrame, dict], RuleResult]
    description: str = ""
    ordered: tuple[tuple[str, str], ...] = ()  # (a, b): threshold a must stay below threshold b

    def defaults(self) -> dict[str, float]:
        return {t.name: t.default for t in self.thresholds}


FINDING_COLUMNS = ["case_row", "code", "severity", "sentence", "value"]


def empty_findings() -> pd.DataFrame:
    return pd.DataFrame({"case_row": pd.Series(dtype=int), "code": pd.Series(dtype=object),
                         "severity": pd.Series(dtype=int), "sentence": pd.Series(dtype=object),
                         "value": pd.Series(dtype=float)})


def findings(mask: np.ndarray, code: str, sentence: Callable[[int], str],
             value: np.ndarray | None = None) -> pd.DataFrame:
    """Findings for the case rows where ``mask`` holds; ``sentence(i)`` writes row i's sentence.

    The level comes from the severity table (``rules.severity``), the one place that grades.
    value: per case row, how bad the finding is there (larger is worse); it picks the case a
    valve's sentence quotes.  Without it, the earliest case is quoted.
    """
    rows = np.flatnonzero(mask)
    if rows.size == 0:
        return empty_findings()
    worst = np.asarray(value, float)[rows] if value is not None else np.full(rows.size, np.nan)
    text = [sentence(i) for i in rows] if _SENTENCES[0] else [""] * rows.size
    return pd.DataFrame({"case_row": rows, "code": code, "severity": int(severity_of(code)),
                         "sentence": text, "value": worst})


_SENTENCES = [True]  # off only inside ``without_sentences``


@contextmanager
def without_sentences():
    """Findings without their sentences: for audits read only as counts (history samples), where
    writing a sentence per sample per finding costs more than the rule itself."""
    _SENTENCES[0] = False
    try:
        yield
    finally:
        _SENTENCES[0] = True


def combine(*frames: pd.DataFrame) -> pd.DataFrame:
    frames = [f for f in frames if len(f)]
    return pd.concat(frames, ignore_index=True) if frames else empty_findings()


def col(cases: pd.DataFrame, name: str) -> np.ndarray:
    """A case column as a float array."""
    return cases[name].to_numpy(float)


def per_valve(cases: pd.DataFrame, name: str, default) -> np.ndarray:
    """A row's own value of a per-valve setting (a limit, a factor) where the line list gives one, else the default."""
    given = col(cases, name)
    return np.where(np.isfinite(given), given, default)


def limit_source(cases: pd.DataFrame, name: str) -> np.ndarray:
    """Which limit a sentence quotes: the row's own, or the rule's default."""
    return np.where(np.isfinite(col(cases, name)), "line-list limit", "default limit")


def text(cases: pd.DataFrame, name: str) -> np.ndarray:
    return cases[name].to_numpy(dtype=object)


def valid(cases: pd.DataFrame) -> np.ndarray:
    """Cases that were sized: no case error, converged."""
    return (text(cases, "case_error") == "") & cases["converged"].to_numpy(bool)


def bar(p_pa: float) -> str:
    """A pressure for a sentence: bar(a), 3 significant figures."""
    return f"{p_pa / 1e5:.3g} bar(a)"
