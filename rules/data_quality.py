"""Data quality: what the numbers rest on, so a reader can weigh them.

Typical trim factors in place of the valve's own, properties overridden by
the line list, cases that could not be audited, and cases whose flow
coefficient could not be found.
"""
from __future__ import annotations

from .base import Rule, RuleResult, combine, findings, text


def evaluate(cases, th) -> RuleResult:
    err = text(cases, "case_error")
    failed = cases["sizing_failed"].to_numpy(bool)
    typical = text(cases, "typical_factors")
    overridden = text(cases, "overridden")
    name = text(cases, "case")
    first = ~cases.duplicated("valve").to_numpy()  # one note per valve, on its first case
    return RuleResult(findings=combine(
        findings(err != "", "CASE_INVALID",
                 lambda i: f"Case {name[i]} could not be audited: {err[i]}."),
        findings(failed, "NOT_CONVERGED", lambda i: (
            f"Case {name[i]}: no flow coefficient meets this case (the sizing did not converge to 0.1 %); "
            "the reducers or laminar flow limit the capacity of this body, or the data are wrong.")),
        findings(first & (typical != ""), "TYPICAL_FACTORS", lambda i: (
            f"Typical factors for the valve style were used for {typical[i]}; the trim's own data would be better.")),
        findings(first & (overridden != ""), "PROPERTIES_OVERRIDDEN", lambda i: (
            f"Fluid properties taken from the line list instead of CoolProp: {overridden[i]}.")),
    ))


RULE = Rule(code="data_quality", title="Data quality", order=90, evaluate=evaluate, thresholds=(),
            description="typical factors, overridden properties, cases not audited or not converged")
