"""Cavitation of liquids, IEC 60534-8-4 (xFz) with the choked limit of IEC 60534-2-1.

xF = dp / (p1 - pv) is compared with the incipient cavitation ratio xFz
corrected to the inlet pressure, xFzp1 = xFz (6 bar / p1)^0.125 (IEC
60534-8-4, clause on the characteristic pressure ratio), and with the
choked ratio (FLP / FP)^2.  Where the line list gives no xFz it is
estimated per IEC 60534-8-4 from Fd, FL and the case's required C:
xFz = 0.90 / sqrt(1 + 3 Fd sqrt(C / (N34 FL))), with C as Cv and N34 = 1.17
(the Kv form has N34 = 1.00; the two agree to the rounding of the constants, and
the Cv form is the one that reproduces the standard's worked example).

Levels: none (xF < xFzp1), incipient, developed (from our screening split
of the cavitating range, a threshold below), choked (xF >= (FLP/FP)^2),
flashing (p2 <= pv); not_assessed where the row says the liquid carries
dissolved gas (outgassing is outside these methods, and a finding says so).
"""
from __future__ import annotations

import numpy as np

from audit.iec.noise_liquid import estimate_xfz, xfz_at_inlet

from .base import Rule, RuleResult, Threshold, col, combine, findings, text, valid

def levels(xf, xfzp1, x_choke, flashing, developed_share):
    """Cavitation level per case from xF and its boundaries."""
    developed_from = xfzp1 + developed_share * (x_choke - xfzp1)
    return np.select(
        [flashing, xf >= x_choke, xf >= developed_from, xf >= xfzp1],
        ["flashing", "choked", "developed", "incipient"], "none")


def evaluate(cases, th) -> RuleResult:
    ok = valid(cases)
    liquid = ok & (text(cases, "phase") == "liquid")
    p1, p2, pv = col(cases, "p_in"), col(cases, "p_out"), col(cases, "pv")
    dp = p1 - p2
    with np.errstate(divide="ignore", invalid="ignore"):
        xf = np.where(liquid, dp / (p1 - pv), np.nan)
        sigma = np.where(liquid, (p1 - pv) / dp, np.nan)
    given = col(cases, "xfz_given")
    estimated = estimate_xfz(col(cases, "kv"), col(cases, "fd"), col(cases, "fl"))
    xfz = np.where(liquid, np.where(np.isfinite(given), given, estimated), np.nan)
    source = np.where(liquid, np.where(np.isfinite(given), "given", "estimated"), "")
    xfzp1 = xfz_at_inlet(xfz, p1)
    x_choke = (col(cases, "flp") / col(cases, "fp")) ** 2
    flashing = cases["flashing"].to_numpy(bool)
    level = np.where(liquid, levels(xf, xfzp1, x_choke, flashing, th["developed_share"]), "")
    # Dissolved gas comes out of solution on letdown: neither cavitation nor flashing of a pure liquid.
    degassing = liquid & (text(cases, "dissolved_gas") == "yes")
    level = np.where(degassing & (level != "none"), "not_assessed", level)
    name = text(cases, "case")

    def sentence(i, what):
        return (f"Cavitation {what} at case {name[i]}: xF {xf[i]:.3f} against xFz {xfzp1[i]:.3f} "
                f"({source[i]}, at inlet pressure) and a choked limit of {x_choke[i]:.3f}; sigma {sigma[i]:.2f}.")

    return RuleResult(
        columns={"xf": xf, "sigma": sigma, "xfz": xfz, "xfzp1": xfzp1, "xfz_source": source,
                 "cavitation": level},
        findings=combine(
            findings(level == "incipient", "CAV_INCIPIENT", lambda i: sentence(i, "incipient"), value=xf),
            findings(level == "developed", "CAV_DEVELOPED",
                     lambda i: sentence(i, "developed") + " Expect trim damage and noise.", value=xf),
            findings(level == "choked", "CAV_CHOKED", lambda i: sentence(i, "choked") + (
                f" dp {dp[i] / 1e3:.0f} kPa: expect heavy damage downstream of the seat."), value=dp),
            findings(degassing, "DISSOLVED_GAS", lambda i: (
                f"Dissolved gas at case {name[i]} (letdown from {p1[i] / 1e5:.3g} to {p2[i] / 1e5:.3g} bar(a)): gas "
                "coming out of solution is neither cavitation nor flashing of a pure liquid, so those results are "
                "not given; check outgassing flow, outlet velocity and erosion by another method."), value=dp),
        ))


RULE = Rule(
    code="cavitation", title="Cavitation", order=20, evaluate=evaluate,
    thresholds=(
        Threshold("developed_share", 0.5, "share of the span xFzp1..(FLP/FP)^2", "common practice",
                  "where in the cavitating range cavitation counts as developed rather than incipient", high=1.0),
        Threshold("urgent_dp_kpa", 1000.0, "kPa", "common practice",
                  "choked cavitation with this pressure drop or more, in continuous duty, is urgent"),
    ),
    description="xF against xFz (given or estimated, IEC 60534-8-4) and (FLP/FP)^2",
)
