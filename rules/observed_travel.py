"""Observed against predicted travel, where the line list gives `travel_<case>` or the history a travel signal.

A large gap points at worn trim, a wrong rated Cv or characteristic in the
records, or process data that do not describe the case.  A gap that grows
month by month over the history's period (TRAVEL_DRIFT, docs/history.md) points
the same way, earlier.  Both limits are common practice.
"""
from __future__ import annotations

import numpy as np

from .base import Rule, RuleResult, Threshold, col, combine, findings, text, valid


def evaluate(cases, th) -> RuleResult:
    ok = valid(cases)
    observed = col(cases, "travel")
    predicted = col(cases, "travel_pct")
    gap = observed - predicted
    name = text(cases, "case")
    big = ok & np.isfinite(observed) & (np.abs(gap) > th["gap_pct"])
    # The history's trend rides on its median representative case, once per valve (NaN elsewhere).
    trend = col(cases, "hist_gap_trend") if "hist_gap_trend" in cases else np.full(len(cases), np.nan)
    days = col(cases, "hist_period_days") if "hist_period_days" in cases else np.full(len(cases), np.nan)
    with np.errstate(invalid="ignore"):
        drift = (name == "hist_p50") & (np.abs(trend) > th["drift_pct_per_month"]) & (days >= th["drift_min_days"])
    return RuleResult(
        columns={"travel_observed_pct": observed},
        findings=combine(
            findings(big, "TRAVEL_MISMATCH", lambda i: (
                f"Observed travel {observed[i]:.0f} % at case {name[i]} differs from the predicted "
                f"{predicted[i]:.0f} % by {abs(gap[i]):.0f} points: check for trim wear, the rated Cv on record, "
                "or the process data."), value=np.abs(gap)),
            findings(drift, "TRAVEL_DRIFT", lambda i: (
                f"Observed minus predicted travel {'grows' if trend[i] > 0 else 'falls'} by {abs(trend[i]):.1f} "
                f"points a month over {days[i]:.0f} days of history: check for trim wear, a sticking or "
                "recalibrated positioner, or a drifting transmitter."), value=np.abs(trend))))


RULE = Rule(
    code="observed_travel", title="Observed travel", order=70, evaluate=evaluate,
    thresholds=(Threshold("gap_pct", 15.0, "% travel", "common practice",
                          "largest accepted gap between observed and predicted travel", high=100.0),
                Threshold("drift_pct_per_month", 1.0, "% travel per month", "common practice",
                          "largest accepted trend of the observed-minus-predicted travel gap over the history",
                          high=100.0),
                Threshold("drift_min_days", 30.0, "days", "common practice",
                          "shortest history period on which a travel trend is judged", high=3650.0)),
    description="historian travel against the travel the sizing predicts",
)
