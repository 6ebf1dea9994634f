"""Reference sizing from the `fluids` library, one case at a time, carried to convergence.

fluids.control_valve.size_control_valve_l / _g iterate C <- C_required(C) for reducers and
stop once a step moves C by less than 1 %, which can leave them a few tenths of a percent (with
large reducers, a few percent) short of their own fixed point.  ``converged_kv_*`` continue the
same iteration with fluids' public pieces (loss_coefficient_piping, is_choked_turbulent_l/_g,
FF_critical_pressure_ratio_l and the library's no-fittings coefficient) until C settles to 1e-7.
Used by the benchmark's row-by-row loop and by the tests; independent of the project's code.
"""
from __future__ import annotations

import math

import fluids.control_valve as fcv

N2, N5 = 1.6e-3, 1.8e-3  # IEC 60534-2-1 Table 1, Kv with d in mm


def converge(step, c0):
    """Fixed point of ``step`` from ``c0``, to 1e-7 relative (NaN if it will not settle)."""
    c = c0
    for _ in range(5000):
        nxt = step(c)
        if not math.isfinite(nxt) or nxt > 1e12:
            return math.nan
        if abs(nxt / c - 1) < 1e-7:
            return nxt
        c = nxt
    return math.nan


def liquid_step(rho, pv, pc, mu, p1, p2, q, d, d1, d2, fl):
    """(step, c0): C -> C_required(C) for a liquid with reducers, SI inputs, q in m3/s."""
    ff = fcv.FF_critical_pressure_ratio_l(Psat=pv, Pc=pc)
    base_open = fcv.size_control_valve_l(rho=rho, Psat=pv, Pc=pc, mu=mu, P1=p1, P2=p2, Q=q, FL=fl,
                                         allow_choked=False)
    base_choked = base_open * math.sqrt((p1 - p2) / (p1 - ff * pv))  # IEC eq. (3) over eq. (1)
    loss = fcv.loss_coefficient_piping(d * 1000, d1 * 1000, d2 * 1000)
    loss_in = fcv.loss_coefficient_piping(d * 1000, d1 * 1000)

    def step(c):
        r2 = (c / (d * 1000) ** 2) ** 2
        fp = 1 / math.sqrt(1 + loss / N2 * r2)
        flp = fl / math.sqrt(1 + fl ** 2 / N2 * loss_in * r2)
        if fcv.is_choked_turbulent_l(p1 - p2, p1, pv, ff, FLP=flp, FP=fp):
            return base_choked / flp
        return base_open / fp
    return step, base_open


def gas_step(t, m, mu, k, z, p1, p2, q_normal, d, d1, d2, fl, fd, xt):
    """(step, c0) for a gas with reducers; q_normal in m3/s at 0 degC and 101.325 kPa."""
    kw = dict(T=t, MW=m, mu=mu, gamma=k, Z=z, P1=p1, P2=p2, Q=q_normal, xT=xt, FL=fl, Fd=fd)
    x = (p1 - p2) / p1
    f_gamma = k / 1.4
    open_c = fcv.size_control_valve_g(allow_choked=False, **kw)      # eq. (8a), Y with xT
    y_open = max(1 - x / (3 * f_gamma * xt), 2 / 3)
    base = open_c * y_open                                           # C * Y, no fittings
    loss = fcv.loss_coefficient_piping(d * 1000, d1 * 1000, d2 * 1000)
    loss_in = fcv.loss_coefficient_piping(d * 1000, d1 * 1000)

    def step(c):
        r2 = (c / (d * 1000) ** 2) ** 2
        fp = 1 / math.sqrt(1 + loss / N2 * r2)
        xtp = xt / fp ** 2 / (1 + xt * loss_in / N5 * r2)
        if fcv.is_choked_turbulent_g(x, f_gamma, xTP=xtp):
            return base / (2 / 3) / fp * math.sqrt(x / (f_gamma * xtp))   # eq. (17a)
        return base / y_open / fp                                        # eq. (11a)
    return step, open_c


def kv_liquid(rho, pv, pc, mu, p1, p2, q, d, d1, d2, fl, fd):
    """Reference Kv of a liquid case: fluids' own result, polished to convergence with reducers."""
    kv = fcv.size_control_valve_l(rho=rho, Psat=pv, Pc=pc, mu=mu, P1=p1, P2=p2, Q=q, D1=d1, D2=d2, d=d, FL=fl, Fd=fd)
    if d1 == d2 == d:
        return kv
    step, _ = liquid_step(rho, pv, pc, mu, p1, p2, q, d, d1, d2, fl)
    return converge(step, kv)


def kv_gas(t, m, mu, k, z, p1, p2, q_normal, d, d1, d2, fl, fd, xt):
    """Reference Kv of a gas case: fluids' own result, polished to convergence with reducers."""
    kv = fcv.size_control_valve_g(T=t, MW=m, mu=mu, gamma=k, Z=z, P1=p1, P2=p2, Q=q_normal, D1=d1, D2=d2, d=d,
                                  FL=fl, Fd=fd, xT=xt)
    if d1 == d2 == d:
        return kv
    step, _ = gas_step(t, m, mu, k, z, p1, p2, q_normal, d, d1, d2, fl, fd, xt)
    return converge(step, kv)
