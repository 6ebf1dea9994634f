"""Observed against predicted travel, where the line list gives `travel_<case>`.

A large gap points at worn trim, a wrong rated Cv or characteristic in the
records, or process data that do not describe the case.  The gap limit is
common practice.
"""
from __future__ import annotations

import numpy as np

from .base import Rule, RuleResult, Threshold, col, findings, text, valid


def evaluate(cases, th) -> RuleResult:
    ok = valid(cases)
    observed = col(cases, "travel")
    predicted = col(cases, "travel_pct")
    gap = observed - predicted
    name = text(cases, "case")
    big = ok & np.isfinite(observed) & (np.abs(gap) > th["gap_pct"])
    return RuleResult(
        columns={"travel_observed_pct": observed},
        findings=findings(big, "TRAVEL_MISMATCH", lambda i: (
            f"Observed travel {observed[i]:.0f} % at case {name[i]} differs from the predicted {predicted[i]:.0f} % "
            f"by {abs(gap[i]):.0f} points: check for trim wear, the rated Cv on record, or the process data."), value=np.abs(gap)))


RULE = Rule(
    code="observed_travel", title="Observed travel", order=70, evaluate=evaluate,
    thresholds=(Threshold("gap_pct", 15.0, "% travel", "common practice",
                          "largest accepted gap between observed and predicted travel", high=100.0),),
    description="historian travel against the travel the sizing predicts",
)
