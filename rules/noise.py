"""Valve noise, A-weighted 1 m from the downstream pipe wall.

Liquids: IEC 60534-8-4:2015 (hydrodynamic: turbulent and cavitating), see
audit/iec/noise_liquid.py.  Gases and vapours: IEC 60534-8-3:2010 (aerodynamic,
five regimes, outlet-flow noise above outlet Mach 0.3), see
audit/iec/noise_gas.py.  Where a method does not apply or an input is missing
the case carries no number and `noise_note` says why.

The limit is 85 dBA by default, the usual occupational exposure action level
(common practice); `noise_limit` on a row overrides it for that valve.
"""
from __future__ import annotations

import numpy as np

from audit.iec import noise_gas
from audit.iec import noise_liquid
from audit.io import pipes

from .base import (Rule, RuleResult, Threshold, col, combine, findings, limit_source, per_valve, text,
                   valid)


def liquid_inputs_missing(cases, liquid):
    """Per case, the first missing input the liquid method needs, in words ('' when none)."""
    checks = [
        ("sound_speed", "no speed of sound for this liquid (give column sound_speed)"),
        ("xfz", "no xFz (given or estimated)"),
    ]
    note = np.full(len(cases), "", dtype=object)
    for name, message in reversed(checks):
        values = col(cases, name)
        note = np.where(liquid & ~(np.isfinite(values) & (values > 0)), message, note)
    return note


def downstream_wall(cases):
    """Wall thickness [m] of the downstream pipe, and a note where it had to be assumed."""
    wall = col(cases, "pipe_out_wall")
    std, nps = pipes.assumed_std_wall(col(cases, "pipe_out_id"))
    assumed = ~(np.isfinite(wall) & (wall > 0)) & np.isfinite(std)
    note = np.full(len(cases), "", dtype=object)
    note[assumed] = [f"; wall assumed {w * 1000:.2f} mm (STD, NPS {n:g}): the line list gives none"
                     for w, n in zip(std[assumed], nps[assumed])]
    return np.where(assumed, std, wall), note


def liquid_levels(cases, an, wall, wall_note):
    """noise_dba and noise_note for the liquid cases (IEC 60534-8-4)."""
    ok = valid(cases)
    liquid = ok & (text(cases, "phase") == "liquid")
    flashing = cases["flashing"].to_numpy(bool)
    missing = liquid_inputs_missing(cases, liquid & ~flashing)
    run = liquid & ~flashing & (missing == "")
    level = np.full(len(cases), np.nan)
    if run.any():
        pick = lambda name: col(cases, name)[run]  # noqa: E731
        res = noise_liquid.liquid_noise(
            pick("w"), pick("p_in"), pick("p_out"), pick("pv"), pick("rho"), pick("sound_speed"), pick("kv"),
            pick("valve_size"), pick("pipe_out_id"), wall[run], pick("flp") / pick("fp"), pick("fd"),
            pick("xfz"), an=per_valve(cases, "noise_an", an)[run])
        level[run] = res["level_dba"]
    note = np.where(liquid & flashing, "flashing at the outlet: IEC 60534-8-4 does not cover flashing liquids, "
                                       "so no level is predicted", missing)
    note = np.where(run & ~np.isfinite(level), "the liquid noise method gave no finite level for these inputs",
                    note)
    note = np.where(run & np.isfinite(level), "IEC 60534-8-4" + wall_note, note)
    return level, note


def gas_levels(cases, an, stp, wall, wall_note):
    """noise_dba and noise_note for the gas and vapour cases (IEC 60534-8-3)."""
    gas = valid(cases) & (text(cases, "phase") == "gas")
    rho2, c2 = col(cases, "rho_out"), col(cases, "sound_speed_out")
    wet = col(cases, "quality_out") < 1.0   # condensing across the valve: not a dry gas
    dry = np.isfinite(rho2) & np.isfinite(c2) & (c2 > 0) & ~wet
    # The isentropic exponent of a dense vapour can be a little below 1 (rho c^2 / p); the 8-3 relations
    # stay finite there, only exactly 1 is a removable singularity (nudged in noise_gas).
    has_k = np.isfinite(col(cases, "k")) & (col(cases, "k") > 0.5)
    run = gas & dry & has_k
    level = np.full(len(cases), np.nan)
    regime = np.zeros(len(cases), int)
    mach = np.full(len(cases), np.nan)
    outlet = np.zeros(len(cases), bool)
    if run.any():
        pick = lambda name: col(cases, name)[run]  # noqa: E731
        res = noise_gas.gas_noise(
            pick("w"), pick("p_in"), pick("p_out"), pick("rho"), pick("k"), pick("kv"), pick("flp") / pick("fp"),
            pick("fd"), pick("valve_size"), pick("pipe_out_id"), wall[run], pick("rho_out"), pick("sound_speed_out"),
            an=per_valve(cases, "noise_an", an)[run], stp=per_valve(cases, "noise_stp", stp)[run])
        level[run], regime[run], mach[run], outlet[run] = (res["level_dba"], res["regime"], res["mach_outlet"],
                                                           res["outlet_flow"])
    computed = run & np.isfinite(level)
    regime_name = np.array(["", "I", "II", "III", "IV", "V"], dtype=object)[regime]
    outlet_note = np.full(len(cases), "", dtype=object)
    outlet_note[outlet] = [f"; outlet-flow noise added (valve outlet Mach {m:.2f} > 0.3)" for m in mach[outlet]]
    pipe_mach = mach * (col(cases, "valve_size") / col(cases, "pipe_out_id")) ** 2
    fast_pipe = computed & (pipe_mach > noise_gas.PIPE_MACH_CAP)
    outlet_note[fast_pipe] = outlet_note[fast_pipe] + [
        f"; downstream pipe Mach {m:.2f} is above 0.3, beyond the pipe flow the method describes: the level is "
        "uncertain" for m in pipe_mach[fast_pipe]]
    sonic = computed & (mach >= 1.0)
    outlet_note[sonic] = outlet_note[sonic] + [f"; valve outlet Mach {m:.2f}: the outlet is choked and the expansion "
                                               "finishes in the pipe, at the edge of the method (clause 7's velocity "
                                               "limits applied)" for m in mach[sonic]]
    # The first reason that applies, as np.select would pick it (assigned last), in an object array:
    # np.select would widen every sentence to a fixed-width text array per case.
    note = np.full(len(cases), "", dtype=object)
    note[computed] = "IEC 60534-8-3, regime " + regime_name[computed] + outlet_note[computed] + wall_note[computed]
    note[run & ~computed] = "the gas noise method gave no finite level for these inputs"
    note[gas & ~has_k] = "no ratio of specific heats k for this gas (give column k)"
    note[gas & ~dry] = ("the outlet is not a dry gas (it condenses, or has no speed of sound): IEC 60534-8-3 "
                        "covers single-phase dry gases only, so no level is predicted")
    return level, note


def evaluate(cases, th) -> RuleResult:
    wall, wall_note = downstream_wall(cases)
    liquid_level, liquid_note = liquid_levels(cases, th["an_liquid"], wall, wall_note)
    gas_level, gas_note = gas_levels(cases, th["an_gas"], th["stp_gas"], wall, wall_note)
    level = np.where(np.isfinite(liquid_level), liquid_level, gas_level)
    note = np.where(liquid_note != "", liquid_note, gas_note)
    limit = per_valve(cases, "noise_limit", th["limit_dba"])
    source = limit_source(cases, "noise_limit")
    known = np.isfinite(level)
    severe = known & (level >= limit + th["urgent_over_db"])
    loud = known & (level > limit) & ~severe
    near = known & (level > limit - th["watch_margin_db"]) & (level <= limit)
    name = text(cases, "case")
    missing_data = valid(cases) & ~known  # never a silent blank: the finding says why there is no number

    def said(i, what):
        return (f"Predicted noise {level[i]:.1f} dBA at 1 m at case {name[i]} is {what} the {source[i]} of "
                f"{limit[i]:.0f} dBA")

    return RuleResult(
        columns={"noise_dba": level, "noise_note": note, "noise_limit_dba": limit},
        findings=combine(
            findings(severe, "NOISE_SEVERE", lambda i: said(i, "far above") + (
                ": hearing protection and a noise fix are needed before people work near it."), value=level),
            findings(loud, "NOISE", lambda i: said(i, "above") + (
                ": plan a quieter trim, silencer or acoustic lagging, and mark the area meanwhile."), value=level),
            findings(near, "NOISE_NEAR", lambda i: said(i, "within "
                     f"{th['watch_margin_db']:.0f} dB of") + ", about the uncertainty of the prediction.", value=level),
            findings(missing_data, "NOISE_NO_DATA", lambda i: (
                f"Noise not predicted at case {name[i]}: {note[i]}.")),
        ))


RULE = Rule(
    code="noise", title="Noise", order=50, evaluate=evaluate,
    thresholds=(
        Threshold("limit_dba", 85.0, "dBA", "common practice",
                  "sound pressure level limit 1 m from the pipe (occupational exposure action level)", low=30.0,
                  high=140.0),
        Threshold("watch_margin_db", 5.0, "dB", "common practice",
                  "a level this close below the limit is worth watching (the methods' uncertainty)"),
        Threshold("urgent_over_db", 15.0, "dB", "common practice",
                  "a level this far above the limit is urgent"),
        Threshold("an_liquid", noise_liquid.AN_GLOBE, "", "IEC 60534-8-4",
                  "valve correction of the liquid acoustic efficiency, An (-4.6: globe valves)", low=-7.0, high=-1.0),
        Threshold("an_gas", noise_gas.AN_GLOBE, "", "IEC 60534-8-3",
                  "valve correction of the gas acoustic efficiency, An (-3.8: globe valve, cage trim)",
                  low=-7.0, high=-1.0),
        Threshold("stp_gas", noise_gas.STP_GLOBE, "", "IEC 60534-8-3",
                  "peak Strouhal number of the gas trim noise, Stp (0.2: globe valve, cage trim)", low=0.01, high=2.0),
    ),
    description="A-weighted level 1 m from the downstream pipe: IEC 60534-8-3 (gas), IEC 60534-8-4 (liquid)",
)
