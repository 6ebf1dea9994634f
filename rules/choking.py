"""Choking margin: how close each case runs to choked flow (IEC 60534-2-1).

choke_ratio is dp / dp_choked for liquids (dp_choked with FLP and FP) and
x / (F_gamma xTP) for gases, from the sizing.  At 1.0 the flow stops
responding to a lower outlet pressure; above the watch level there is
little room for more throughput.
"""
from __future__ import annotations

from .base import Rule, RuleResult, Threshold, bar, col, combine, findings, text, valid


def evaluate(cases, th) -> RuleResult:
    ratio = col(cases, "choke_ratio")
    ok = valid(cases)
    gas = text(cases, "phase") == "gas"
    p1, p2, dp_ch = col(cases, "p_in"), col(cases, "p_out"), col(cases, "dp_choked")
    dp = p1 - p2
    x, x_choked = col(cases, "x"), col(cases, "x_choked")  # read once: a sentence is written per finding
    name = text(cases, "case")
    choked = ok & (ratio >= th["choked"])
    near = ok & (ratio >= th["watch"]) & ~choked

    def headroom(i):
        if gas[i]:
            return (f"x is {x[i]:.3f} against a choked limit of {x_choked[i]:.3f}; "
                    f"the outlet pressure can fall to {bar(p1[i] - dp_ch[i])} (dp {dp_ch[i] / 1e3:.0f} kPa) "
                    "before the flow chokes")
        return (f"dp is {dp[i] / 1e3:.0f} kPa against a choked limit of {dp_ch[i] / 1e3:.0f} kPa; "
                f"{max(dp_ch[i] - dp[i], 0) / 1e3:.0f} kPa more drop, or an outlet pressure down to "
                f"{bar(p1[i] - dp_ch[i])}, before the flow chokes")

    return RuleResult(
        columns={"choked": ok & (ratio >= 1.0)},
        findings=combine(
            findings(choked, "CHOKED", lambda i: (
                f"Choked at case {name[i]} (choke ratio {ratio[i]:.2f}): a lower outlet pressure will not "
                f"raise the flow; {'dp' if not gas[i] else 'x'} is past the limit of "
                f"{(dp_ch[i] / 1e3) if not gas[i] else x_choked[i]:.3g}"
                f"{' kPa' if not gas[i] else ''}."), value=ratio),
            findings(near, "CHOKE_NEAR", lambda i: (
                f"Near choking at case {name[i]} (choke ratio {ratio[i]:.2f}): {headroom(i)}."), value=ratio),
        ))


RULE = Rule(
    code="choking", title="Choking margin", order=10, evaluate=evaluate,
    thresholds=(
        Threshold("watch", 0.8, "choke ratio", "common practice",
                  "choke ratio from which a case is reported as near choking", high=1.0),
        Threshold("choked", 1.0, "choke ratio", "IEC 60534-2-1 (definition of choked flow)",
                  "choke ratio at which the flow is choked", low=0.5, high=1.0),
    ),
    ordered=(("watch", "choked"),),
    description="choke_ratio against a watch level and 1.0, with the headroom left",
)
