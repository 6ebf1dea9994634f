"""Whether a coefficient is the sizing's own answer, without its search (IEC 60534-2-1 clauses 6 to 9).

``sizing.size_valves`` returns, per case, the smallest C with C >= C_required(C), found on a
geometric grid (ratio 1.5 from a quarter of the turbulent estimate without fittings) and narrowed
inside the first grid step that suffices.  Take a coefficient C0 with C_required(C0) = C0 (the
flow through C0 from the forward form ``sizing.flow_through``, say, as the headroom study does),
and G = 1.5 C0, above the first grid point at or past C0.  Where the flow is turbulent at G
(Rev >= 10,000; Rev only grows as C falls, so it is turbulent everywhere below G) and, for a gas,
the choked state at G is the one at C -> 0 (x_choked = F_gamma xTP is monotonic in C, so the state
does not switch in between; at a switch Y jumps), C_required(C)/C falls as C grows all the way up
to G (the argument of ``sizing._smallest_sufficient_c``).  So every grid point below C0 falls
short, the first one at or past it suffices (G itself must, which also rules out a G where the
equations have no value), and the narrowing returns C0.  Three evaluations of the equations
instead of a search of a dozen or more; tests/test_sizing_solver.py checks the claim against the
search itself.
"""
from __future__ import annotations

import numpy as np

from audit.iec.blocks import in_blocks
from audit.iec.sizing import _GRID_POINTS, _GRID_RATIO, _Case, _evaluate

ANSWER_RTOL = 1e-9  # C_required(C0) within this of C0: the crossing, to far inside the sizing's 0.1 %


def is_sizing_answer(c_kv, is_gas, w, p1, p2, t1, rho1, pv, pc, mu, molar_mass, k, d, d1, d2, fl, xt, fd):
    """True where ``size_valves`` at these arguments would return the coefficient ``c_kv`` [Kv].

    Same arguments and units as ``sizing.size_valves``, after the coefficient.  False is no verdict:
    the case needs the search.
    """
    return in_blocks(_answer_block, c_kv, is_gas, w, p1, p2, t1, rho1, pv, pc, mu, molar_mass, k, d, d1, d2, fl,
                     xt, fd)["answer"]


def _answer_block(c_kv, is_gas, w, p1, p2, t1, rho1, pv, pc, mu, molar_mass, k, d, d1, d2, fl, xt, fd):
    case = _Case(is_gas, w, p1, p2, t1, rho1, pv, pc, mu, molar_mass, k, d, d1, d2, fl, xt, fd)
    c0 = np.asarray(c_kv, float) * np.ones(case.w.shape)
    g = c0 * _GRID_RATIO
    at, above = _evaluate(case, c0), _evaluate(case, g)
    small = _evaluate(case, np.full(c0.shape, 1e-12))  # no fittings: the search's first estimate
    start = small["c_req"] * 0.25
    with np.errstate(invalid="ignore", divide="ignore"):
        crossing = np.abs(at["c_req"] / c0 - 1.0) <= ANSWER_RTOL
        in_grid = (c0 >= start) & (g <= start * _GRID_RATIO ** (_GRID_POINTS - 1))
        monotonic = (above["c_req"] <= g) & (above["rev"] >= 1.0e4)
        same_state = (case.x >= above["x_choked"]) == (case.x >= small["x_choked"])
    return {"answer": crossing & in_grid & monotonic & (~case.gas | same_state)}
