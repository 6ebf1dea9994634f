"""Travel and capacity: is each case inside the valve's useful travel?

Predicted travel comes from the inherent characteristic and cv_ratio.
Above the high limit the valve has little capacity left; above 100 % it
cannot pass the flow at all.  Below the low limit it works near its seat:
poor control, seat and plug wear.  Limits are common practice.
"""
from __future__ import annotations

from .base import Rule, RuleResult, Threshold, col, combine, findings, text, valid


def evaluate(cases, th) -> RuleResult:
    ok = valid(cases)
    travel, ratio = col(cases, "travel_pct"), col(cases, "cv_ratio")
    cv_req, rated = col(cases, "cv"), col(cases, "rated_cv")
    name = text(cases, "case")
    over = ok & (ratio > 1.0)
    high = ok & (travel > th["high_pct"]) & ~over
    low = ok & (travel < th["low_pct"])
    return RuleResult(findings=combine(
        findings(over, "OVER_CAPACITY", lambda i: (
            f"Cannot pass the flow at case {name[i]}: it needs Cv {cv_req[i]:.3g}, the valve has {rated[i]:.3g} "
            f"({ratio[i] * 100:.0f} % of rated)."), value=ratio),
        findings(high, "TRAVEL_HIGH", lambda i: (
            f"Travel {travel[i]:.1f} % at case {name[i]} is above {th['high_pct']:.0f} %: little capacity left "
            f"(Cv {cv_req[i]:.3g} of {rated[i]:.3g})."), value=travel),
        findings(low, "TRAVEL_LOW", lambda i: (
            f"Travel {travel[i]:.1f} % at case {name[i]} is below {th['low_pct']:.0f} %: oversized for this case, "
            "poor control and seat wear."), value=-travel),
    ))


RULE = Rule(
    code="travel", title="Travel and capacity", order=60, evaluate=evaluate,
    thresholds=(
        Threshold("high_pct", 90.0, "% travel", "common practice", "predicted travel above which capacity is short",
                  high=100.0),
        Threshold("low_pct", 10.0, "% travel", "common practice", "predicted travel below which the valve is oversized",
                  high=100.0),
    ),
    ordered=(("low_pct", "high_pct"),),
    description="predicted travel against high and low limits; above 100 % the valve cannot pass the flow",
)
