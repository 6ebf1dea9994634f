"""Valve outlet velocity and, for gases, outlet Mach number.

Mean velocity at the valve outlet, u = W / (rho_out A), with A the area of
the valve's nominal bore (the line list's valve size) and rho_out the
outlet density after the isenthalpic expansion (liquid, flashing
two-phase homogeneous mixture, or gas).  Mach = u / c_out for gases.
Limits are common practice for erosion and noise; `velocity_limit` on a
row overrides the velocity limit for that valve.
"""
from __future__ import annotations

import numpy as np

from .base import Rule, RuleResult, Severity, Threshold, col, combine, findings, limit_source, per_valve, text, valid


def outlet_velocity(w, rho_out, d):
    """Mean outlet velocity [m/s]: w mass flow [kg/s], rho_out [kg/m3], d outlet bore [m]."""
    return w / (rho_out * np.pi * d ** 2 / 4.0)


def evaluate(cases, th) -> RuleResult:
    ok = valid(cases)
    phase = text(cases, "phase")
    flashing = cases["flashing"].to_numpy(bool)
    u = np.where(ok, outlet_velocity(col(cases, "w"), col(cases, "rho_out"), col(cases, "valve_size")), np.nan)
    gas = phase == "gas"
    mach = np.where(ok & gas, u / col(cases, "sound_speed_out"), np.nan)
    default = np.select([gas, flashing], [th["gas_m_s"], th["flashing_m_s"]], th["liquid_m_s"])
    limit = per_valve(cases, "velocity_limit", default)
    source = limit_source(cases, "velocity_limit")
    fast = ok & (u > limit)
    sonic = ok & gas & (mach > th["gas_mach"])
    name = text(cases, "case")
    kind = np.select([gas, flashing], ["gas", "flashing liquid"], "liquid")
    return RuleResult(
        columns={"velocity_out_m_s": u, "mach_out": mach, "velocity_limit_m_s": limit},
        findings=combine(
            findings(fast, "VELOCITY", Severity.PLAN, lambda i: (
                f"Outlet velocity {u[i]:.3g} m/s at case {name[i]} is above the {source[i]} of "
                f"{limit[i]:.3g} m/s for {kind[i]}: erosion and vibration risk.")),
            findings(sonic, "MACH", Severity.PLAN, lambda i: (
                f"Outlet Mach number {mach[i]:.2f} at case {name[i]} is above {th['gas_mach']:.2f}: "
                "expect high noise and vibration at the valve outlet.")),
        ))


RULE = Rule(
    code="velocity", title="Outlet velocity", order=40, evaluate=evaluate,
    thresholds=(
        Threshold("liquid_m_s", 10.0, "m/s", "common practice", "outlet velocity limit, liquid"),
        Threshold("flashing_m_s", 25.0, "m/s", "common practice", "outlet velocity limit, flashing liquid"),
        Threshold("gas_m_s", 150.0, "m/s", "common practice", "outlet velocity limit, gas and vapour"),
        Threshold("gas_mach", 0.5, "Mach", "common practice", "outlet Mach number limit, gas and vapour"),
    ),
    description="mean outlet velocity of the outlet mixture; Mach for gases",
)
