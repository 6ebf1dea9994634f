"""Valve outlet velocity and, for gases, outlet Mach number; inlet and upstream line velocity.

Mean velocity at the valve outlet, u = W / (rho_out A), with A the area of
the valve's nominal bore (the line list's valve size) and rho_out the
outlet density after the isenthalpic expansion (liquid, flashing
two-phase homogeneous mixture, or gas).  Mach = u / c_out for gases.
Limits are common practice for erosion and noise; `velocity_limit` on a
row overrides the outlet velocity limit for that valve.  The body inlet
velocity (nominal bore) and the upstream line velocity (pipe_in bore) use
the inlet density.
"""
from __future__ import annotations

import numpy as np

from .base import Rule, RuleResult, Threshold, bar, col, combine, findings, limit_source, per_valve, text, valid


def outlet_velocity(w, rho_out, d):
    """Mean outlet velocity [m/s]: w mass flow [kg/s], rho_out [kg/m3], d outlet bore [m]."""
    return w / (rho_out * np.pi * d ** 2 / 4.0)


def evaluate(cases, th) -> RuleResult:
    ok = valid(cases)
    phase = text(cases, "phase")
    flashing = cases["flashing"].to_numpy(bool)
    w, d, p2 = col(cases, "w"), col(cases, "valve_size"), col(cases, "p_out")
    rho_out, c_out = col(cases, "rho_out"), col(cases, "sound_speed_out")
    u_free = np.where(ok, outlet_velocity(w, rho_out, d), np.nan)
    gas = phase == "gas"
    # Mach number at the valve outlet: gas, and flashing liquid against the homogeneous-equilibrium
    # speed of sound of the outlet mixture.  At 1 or more the outlet is choked: the velocity there is
    # the speed of sound and the rest of the expansion happens in the pipe downstream.
    has_mach = ok & (gas | flashing) & np.isfinite(c_out) & (c_out > 0)
    mach = np.where(has_mach, u_free / c_out, np.nan)
    outlet_choked = has_mach & (mach >= 1.0)
    u = np.where(outlet_choked, c_out, u_free)
    default = np.select([gas, flashing], [th["gas_m_s"], th["flashing_m_s"]], th["liquid_m_s"])
    limit = per_valve(cases, "velocity_limit", default)
    source = limit_source(cases, "velocity_limit")
    fast = ok & (u > limit) & ~outlet_choked
    sonic = ok & gas & (mach > th["gas_mach"]) & ~outlet_choked
    with np.errstate(divide="ignore", invalid="ignore"):
        d_needed = np.sqrt(4.0 * w / (np.pi * rho_out * limit))  # outlet bore that brings u under the limit
    name = text(cases, "case")
    kind = np.select([gas, flashing], ["gas", "flashing liquid"], "liquid")
    # Inlet: the body's inlet bore and the upstream line, at the inlet density.
    rho_in = col(cases, "rho")
    u_in = np.where(ok, outlet_velocity(w, rho_in, d), np.nan)
    line = np.maximum(col(cases, "pipe_in_id"), d)
    u_line = np.where(ok, outlet_velocity(w, rho_in, line), np.nan)
    mach_in = np.where(ok & gas, u_in / col(cases, "sound_speed"), np.nan)
    inlet_over = np.where(gas, mach_in > th["inlet_gas_mach"], u_in > th["inlet_liquid_m_s"]) & ok
    line_limit = np.where(gas, th["line_gas_m_s"], th["line_liquid_m_s"])
    line_over = ok & (u_line > line_limit) & (line > d * 1.001)  # a line wider than the body (else inlet says it)

    def inlet_said(i):
        measure = f"Mach {mach_in[i]:.2f}" if gas[i] else f"{u_in[i]:.3g} m/s"
        limit_text = f"Mach {th['inlet_gas_mach']:.2f}" if gas[i] else f"{th['inlet_liquid_m_s']:.3g} m/s"
        return (f"Body inlet velocity {measure} at case {name[i]} is above {limit_text} (common practice): "
                "erosion at the inlet, and the inlet pressure the sizing assumed is not quite the one the valve sees.")

    kind_out = np.where(gas, "gas", "two-phase mixture").astype(object)
    note = np.full(len(cases), "", dtype=object)  # text only where it applies (a fixed-width array per case is MBs)
    note[outlet_choked] = [f"outlet velocity limited by choking at the outlet (the speed of sound of the outlet {k})"
                           for k in kind_out[outlet_choked]]
    return RuleResult(
        columns={"velocity_out_m_s": u, "mach_out": mach, "velocity_limit_m_s": limit, "velocity_in_m_s": u_in,
                 "velocity_line_in_m_s": u_line, "outlet_choked": outlet_choked, "velocity_note": note},
        findings=combine(
            findings(outlet_choked, "OUTLET_CHOKED", lambda i: (
                f"The valve outlet is choked at case {name[i]}: the {kind_out[i]} would leave at Mach {mach[i]:.2f}, "
                f"so it leaves at its speed of sound ({c_out[i]:.3g} m/s) and the expansion to {bar(p2[i])} "
                f"moves into the downstream pipe (shock, noise, vibration, erosion). An outlet bore of about "
                f"{d_needed[i] * 1000:.0f} mm (body or expander, against {d[i] * 1000:.0f} mm now) would bring the "
                f"outlet under the {limit[i]:.3g} m/s limit."), value=mach),
            findings(fast, "VELOCITY", lambda i: (
                f"Outlet velocity {u[i]:.3g} m/s at case {name[i]} is above the {source[i]} of "
                f"{limit[i]:.3g} m/s for {kind[i]}: erosion and vibration risk."), value=u / limit),
            findings(sonic, "MACH", lambda i: (
                f"Outlet Mach number {mach[i]:.2f} at case {name[i]} is above {th['gas_mach']:.2f}: "
                "expect high noise and vibration at the valve outlet."), value=mach),
            findings(inlet_over, "INLET_VELOCITY", inlet_said,
                     value=np.where(gas, mach_in / th["inlet_gas_mach"], u_in / th["inlet_liquid_m_s"])),
            findings(line_over, "LINE_VELOCITY", lambda i: (
                f"Upstream line velocity {u_line[i]:.3g} m/s at case {name[i]} (bore {line[i] * 1000:.0f} mm) is above "
                f"{line_limit[i]:.3g} m/s (common practice): the line is undersized for this case."),
                value=u_line / line_limit),
        ))


RULE = Rule(
    code="velocity", title="Inlet and outlet velocity", order=40, evaluate=evaluate,
    thresholds=(
        Threshold("liquid_m_s", 10.0, "m/s", "common practice", "outlet velocity limit, liquid"),
        Threshold("flashing_m_s", 25.0, "m/s", "common practice", "outlet velocity limit, flashing liquid"),
        Threshold("gas_m_s", 150.0, "m/s", "common practice", "outlet velocity limit, gas and vapour"),
        Threshold("gas_mach", 0.5, "Mach", "common practice", "outlet Mach number limit, gas and vapour"),
        Threshold("inlet_liquid_m_s", 10.0, "m/s", "common practice", "body inlet velocity limit, liquid"),
        Threshold("inlet_gas_mach", 0.3, "Mach", "common practice", "body inlet Mach number limit, gas and vapour"),
        Threshold("line_liquid_m_s", 5.0, "m/s", "common practice", "upstream line velocity limit, liquid"),
        Threshold("line_gas_m_s", 40.0, "m/s", "common practice", "upstream line velocity limit, gas and vapour"),
    ),
    description="mean outlet velocity of the outlet mixture, Mach for gases; body inlet and upstream line velocity",
)
