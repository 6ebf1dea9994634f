"""Acoustic-induced vibration (AIV) screen for gas and vapour letdowns.

A letdown that drops a large pressure ratio at a high mass flow radiates acoustic power into the
downstream pipe; on flare, blowdown and relief headers that power fatigues small-bore connections
and welded supports, a failure the noise level 1 m from the pipe does not reveal.  Screened by the
sound power level at the valve, by the published relation of Carucci and Mueller (1982), as the
Energy Institute's guidelines for avoiding vibration-induced fatigue (2008) use it:

    PWL = 10 lg[ (dp / p1)^3.6 * W^2 * (T1 / M)^1.2 ] + 126.1   [dB re 1 pW]

W mass flow [kg/s], T1 inlet temperature [K], M molar mass [kg/kmol] (constants from memory).
Above the screening limit (155 dB, common practice; a site file changes it) the downstream
pipework needs an AIV assessment.
"""
from __future__ import annotations

import numpy as np

from .base import Rule, RuleResult, Threshold, col, combine, findings, text, valid

AIV_CONSTANT_DB = 126.1  # Carucci and Mueller (1982), from memory


def sound_power_level(dp_over_p1, w, t1, molar_mass):
    """Sound power level [dB re 1e-12 W] of a gas letdown, Carucci and Mueller (1982).

    dp_over_p1: pressure drop over inlet pressure [-]; w: mass flow [kg/s]; t1: inlet
    temperature [K]; molar_mass [kg/kmol].  A screening relation for the power entering the
    downstream pipe (valid for gas and vapour, sub- and supercritical pressure ratios).
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        return 10.0 * np.log10(dp_over_p1 ** 3.6 * w ** 2 * (t1 / molar_mass) ** 1.2) + AIV_CONSTANT_DB


def evaluate(cases, th) -> RuleResult:
    gas = valid(cases) & (text(cases, "phase") == "gas")
    p1, p2 = col(cases, "p_in"), col(cases, "p_out")
    pwl = np.where(gas, sound_power_level((p1 - p2) / p1, col(cases, "w"), col(cases, "t_in"),
                                          col(cases, "molar_mass")), np.nan)
    over = gas & (pwl > th["limit_db"])
    name = text(cases, "case")
    return RuleResult(
        columns={"aiv_pwl_db": pwl},
        findings=combine(findings(over, "AIV", lambda i: (
            f"Acoustic power {pwl[i]:.0f} dB at case {name[i]} is above the {th['limit_db']:.0f} dB screening limit "
            "for acoustic-induced vibration: have the downstream pipework (small-bore connections, supports, "
            "welded attachments) assessed for fatigue."), value=pwl)))


RULE = Rule(
    code="vibration", title="Acoustic-induced vibration", order=55, evaluate=evaluate,
    thresholds=(
        Threshold("limit_db", 155.0, "dB re 1 pW", "common practice",
                  "sound power level above which the downstream pipework needs an AIV assessment", low=100.0,
                  high=200.0),
    ),
    description="sound power level of gas letdowns (Carucci and Mueller) against an AIV screening limit",
)
