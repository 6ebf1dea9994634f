"""Flashing: the outlet pressure at or below the liquid's vapour pressure.

The outlet vapour mass fraction and mixture density come from the
isenthalpic expansion the engine computes (inlet enthalpy, outlet
pressure, CoolProp).  Flashing flow erodes trim and body and cannot be
cured by trim choice; it is a matter of the valve's location and body.
"""
from __future__ import annotations

import numpy as np

from .base import Rule, RuleResult, bar, col, combine, findings, text, valid


def evaluate(cases, th) -> RuleResult:
    ok = valid(cases)
    liquid = text(cases, "phase") == "liquid"
    p2, pv = col(cases, "p_out"), col(cases, "pv")
    flashing = ok & liquid & (p2 <= pv)
    quality = np.where(flashing, col(cases, "quality_out"), 0.0)
    quality = np.where(ok, quality, np.nan)
    rho_out = col(cases, "rho_out")
    name = text(cases, "case")

    def sentence(i):
        if np.isfinite(quality[i]):
            share = (f"{quality[i] * 100:.1f} % of the mass leaves as vapour (outlet mixture density "
                     f"{rho_out[i]:.3g} kg/m3)")
        else:
            share = "the vapour fraction is not computed for a custom fluid"
        return (f"Flashing at case {name[i]}: outlet {bar(p2[i])} is at or below the vapour pressure "
                f"{bar(pv[i])}; {share}. Expect erosion of trim and body downstream of the seat.")

    # A dense gas can cool into the two-phase region as it expands (Joule-Thomson): the outlet is
    # then a wet vapour, outside the gas sizing and noise methods, with no single speed of sound.
    gas_quality = col(cases, "quality_out")
    condensing = ok & (text(cases, "phase") == "gas") & (gas_quality < 1.0)
    return RuleResult(
        columns={"flashing": flashing, "vapour_fraction_out": quality},
        findings=combine(
            findings(flashing, "FLASHING", sentence, value=quality),
            findings(condensing, "CONDENSING", lambda i: (
                f"Gas partly condenses across the valve at case {name[i]}: {(1 - gas_quality[i]) * 100:.1f} % of the "
                f"mass leaves as liquid at {bar(p2[i])}; the gas methods assume a dry outlet, so treat the "
                "velocity and choking figures as rough and check for liquid slugs and erosion."),
                     value=1 - gas_quality)))


RULE = Rule(code="flashing", title="Flashing", order=15, evaluate=evaluate, thresholds=(),
            description="p_out at or below the vapour pressure; outlet vapour fraction by isenthalpic flash; "
                        "gas that condenses across the valve")
