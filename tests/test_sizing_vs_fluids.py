"""Random valve-cases against the `fluids` library's IEC 60534-2-1 implementation.

Reference: fluids.control_valve.size_control_valve_l / size_control_valve_g (turbulent).
With reducers the reference iterates C <- C(FP(C)) and stops once a step moves C by less than
1 % (and after one step when C falls, as with an expander alone), which leaves it up to a few
tenths of a percent short of its own fixed point (seen: 598.6 against 601.6, 39.67 against
39.87, 834 against 860 at C/d^2 = 0.13).  So with reducers we compare with the same
reference carried to convergence: its base coefficient (size_control_valve_* without
diameters) and its public pieces loss_coefficient_piping, is_choked_turbulent_l/_g and
FF_critical_pressure_ratio_l, iterated to 1e-7 (benchmarks/reference.py).  Without reducers we compare with
size_control_valve_* directly.  And, for viscous liquids, fluids.control_valve.Reynolds_valve and Reynolds_factor solved
for C * FR(C) = C_turbulent by a scalar bisection here.  We do not use the laminar branch of
size_control_valve_l for that: it returns C stepped by 30 % (the standard's hand procedure),
not a converged value, and picks the reduced-trim FR for large C/d^2, where IEC 60534-2-1
takes the full-size-trim one (from memory of the standard's annex; the same swap explains the
3 % its docs note on the small-flow example).  Tolerance 0.5 % (issue 2).
"""
import math

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

fluids_cv = pytest.importorskip("fluids.control_valve")

import reference  # noqa: E402  (benchmarks/reference.py: fluids carried to convergence)
from audit.iec.sizing import N18, size_valves  # noqa: E402
from conftest import R  # noqa: E402

TOL = 5e-3


def _ours_liquid(rho, pv, pc, mu, p1, p2, q_m3h, d, d1, d2, fl, fd):
    return size_valves([False], [q_m3h / 3600 * rho], [p1], [p2], [300.0], [rho], [pv], [pc], [mu], [np.nan],
                       [np.nan], [d], [d1], [d2], [fl], [np.nan], [fd])


liquid = st.fixed_dictionaries({
    "rho": st.floats(600, 1100), "pv_frac": st.floats(0.001, 0.6), "pc": st.floats(2e6, 22e6),
    "mu": st.floats(2e-4, 2e-3), "p1": st.floats(2e5, 60e5), "ratio": st.floats(0.05, 0.95),
    "q": st.floats(1.0, 600.0), "d": st.sampled_from([0.025, 0.05, 0.08, 0.1, 0.15, 0.2, 0.3]),
    "r1": st.sampled_from([1.0, 1.0, 1.25, 1.5, 2.0]), "r2": st.sampled_from([1.0, 1.0, 1.25, 1.5, 2.0]),
    "fl": st.floats(0.5, 0.95), "fd": st.floats(0.1, 1.0),
})


@settings(max_examples=200)
@given(liquid)
def test_turbulent_liquid_matches_fluids(c):
    p2 = c["p1"] * c["ratio"]
    pv = min(c["pv_frac"] * c["p1"], 0.9 * c["pc"])
    d1, d2 = c["d"] * c["r1"], c["d"] * c["r2"]
    ours = _ours_liquid(c["rho"], pv, c["pc"], c["mu"], c["p1"], p2, c["q"], c["d"], d1, d2, c["fl"], c["fd"])
    assume(ours["converged"][0] and ours["rev"][0] > 2e4)
    ref = _reference_liquid(c["rho"], pv, c["pc"], c["mu"], c["p1"], p2, c["q"], c["d"], d1, d2, c["fl"], c["fd"])
    _compare_kv(ours, ref)
    if abs(ours["choke_ratio"][0] - 1.0) > 0.03:
        ff = fluids_cv.FF_critical_pressure_ratio_l(Psat=pv, Pc=c["pc"])
        assert bool(ours["choked"][0]) == fluids_cv.is_choked_turbulent_l(
            c["p1"] - p2, c["p1"], pv, ff, FLP=ours["flp"][0], FP=ours["fp"][0])


def _compare_kv(ours, ref):
    """Ours against the reference: the closed form without reducers, the reference's step with them.

    ``ref`` is a number (no reducers: size_control_valve_* itself) or a pair (step, c0):
    the reference's own equations as a map C -> C_required(C) and its starting point.  With
    reducers we require (1) that our C is a fixed point of the reference's equations to 0.5 %
    (no convergence or amplification question arises there), and (2) that ours is not above the
    reference's own fixed point, reached from c0: where the equations have two fixed points
    (an outlet expander, FP > 1, seen: 78.6 non-choked and 88.0 choked), ours is the smallest
    sufficient coefficient, which is the one a valve needs.  Check (2) only tells fixed points
    apart (they lie 10 % or more apart); its 2 % allows for the reference's fixed point moving
    with its rounded N9 constant, which large reducers amplify (seen: 0.5 % at C/d^2 = 0.115),
    and it is made only up to C/d^2 = 0.04 (Kv, mm), about the most a real full-bore body rates
    (from memory); beyond, the amplification grows without bound (6 % seen at C/d^2 = 0.59).
    """
    kv = ours["kv"][0]
    if not isinstance(ref, tuple):
        assert kv == pytest.approx(ref, rel=TOL)
        return
    step, c0, d = ref
    assert step(kv) == pytest.approx(kv, rel=TOL)
    if kv / (d * 1000) ** 2 > 0.04:
        # Beyond, (2) is not made; the reference's fixed point may not even exist there: with an
        # outlet expander alone the loss sum is negative and 1 + sum/N2 (C/d^2)^2 falls below zero
        # at large C (its FP a square root of a negative number; seen at C/d^2 = 0.084).
        return
    fixed = reference.converge(step, c0)
    if np.isfinite(fixed):
        assert kv <= fixed * 1.02


def _reference_liquid(rho, pv, pc, mu, p1, p2, q, d, d1, d2, fl, fd):
    if d1 == d2 == d:
        return fluids_cv.size_control_valve_l(rho=rho, Psat=pv, Pc=pc, mu=mu, P1=p1, P2=p2, Q=q / 3600, D1=d1,
                                              D2=d2, d=d, FL=fl, Fd=fd, allow_laminar=False)
    step, c0 = reference.liquid_step(rho, pv, pc, mu, p1, p2, q / 3600, d, d1, d2, fl)
    return step, c0, d


def _reference_gas(t, m, mu, k, z, p1, p2, q, d, d1, d2, fl, fd, xt):
    if d1 == d2 == d:
        return fluids_cv.size_control_valve_g(T=t, MW=m, mu=mu, gamma=k, Z=z, P1=p1, P2=p2, Q=q / 3600, xT=xt,
                                              FL=fl, Fd=fd, D1=d1, D2=d2, d=d, allow_laminar=False)
    step, c0 = reference.gas_step(t, m, mu, k, z, p1, p2, q / 3600, d, d1, d2, fl, fd, xt)
    return step, c0, d


gas = st.fixed_dictionaries({
    "t": st.floats(250, 500), "m": st.floats(16, 60), "mu": st.floats(1e-5, 2.5e-5), "k": st.floats(1.1, 1.6),
    "z": st.floats(0.8, 1.0), "p1": st.floats(2e5, 100e5), "ratio": st.floats(0.15, 0.95),
    "q": st.floats(100.0, 1e5), "d": st.sampled_from([0.025, 0.05, 0.08, 0.1, 0.15, 0.2, 0.3]),
    "r1": st.sampled_from([1.0, 1.0, 1.25, 1.5, 2.0]), "r2": st.sampled_from([1.0, 1.0, 1.25, 1.5, 2.0]),
    "fl": st.floats(0.5, 0.95), "fd": st.floats(0.1, 1.0), "xt": st.floats(0.2, 0.85),
})


@settings(max_examples=200)
@given(gas)
def test_turbulent_gas_matches_fluids(c):
    p2 = c["p1"] * c["ratio"]
    d1, d2 = c["d"] * c["r1"], c["d"] * c["r2"]
    rho1 = c["p1"] * c["m"] / 1000 / (c["z"] * R * c["t"])
    w = c["q"] / 3600 * 101325 * c["m"] / 1000 / (R * 273.15)
    ours = size_valves([True], [w], [c["p1"]], [p2], [c["t"]], [rho1], [np.nan], [np.nan], [c["mu"]], [c["m"]],
                       [c["k"]], [c["d"]], [d1], [d2], [c["fl"]], [c["xt"]], [c["fd"]])
    assume(ours["converged"][0] and ours["rev"][0] > 2e4)
    x = 1 - c["ratio"]
    f_gamma = c["k"] / 1.4
    # Between F_gamma*xTP and F_gamma*xT size_control_valve_g's choked branch keeps
    # Y = 1 - x/(3 F_gamma xT) with the actual x, so its C moves with x although the flow is choked
    # (the standard's choked equation has Y = 2/3); keep clear of that band and of the choke point.
    lo, hi = sorted([ours["x_choked"][0], f_gamma * c["xt"]])
    assume(not (0.97 * lo <= x <= 1.03 * hi))
    ref = _reference_gas(c["t"], c["m"], c["mu"], c["k"], c["z"], c["p1"], p2, c["q"], c["d"], d1, d2, c["fl"],
                         c["fd"], c["xt"])
    _compare_kv(ours, ref)
    if abs(ours["choke_ratio"][0] - 1.0) > 0.03:
        assert bool(ours["choked"][0]) == fluids_cv.is_choked_turbulent_g(x, f_gamma, xTP=ours["xtp"][0])


def _reference_viscous(rho, mu, p1, p2, q, d, fl, fd):
    """Smallest C with C * FR(C) >= C_turbulent, FR from fluids' functions, valve = pipe size.

    The non-turbulent equation of IEC 60534-2-1 has no choked form; a case that is also choked
    in turbulent terms needs at least the turbulent choked C, so the larger of the two counts.
    """
    choked = fluids_cv.size_control_valve_l(rho=rho, Psat=1e3, Pc=22e6, mu=mu, P1=p1, P2=p2, Q=q / 3600, FL=fl)
    c_turb = fluids_cv.size_control_valve_l(rho=rho, Psat=1e3, Pc=22e6, mu=mu, P1=p1, P2=p2, Q=q / 3600,
                                            allow_choked=False, allow_laminar=False)
    d_mm = d * 1000
    nu = mu / rho

    def capacity(c):
        rev = fluids_cv.Reynolds_valve(nu=nu, Q=q, D1=d_mm, FL=fl, Fd=fd, C=c)
        fr = 1.0 if rev >= 1e4 else fluids_cv.Reynolds_factor(FL=fl, C=c, d=d_mm, Rev=rev,
                                                             full_trim=c / d_mm ** 2 >= 0.016 * N18)
        return c * min(fr, 1.0)

    lo = c_turb
    hi = lo
    while capacity(hi) < c_turb:
        lo, hi = hi, hi * 1.01
        if hi > 1e6 * c_turb:
            return math.nan
    for _ in range(60):
        mid = math.sqrt(lo * hi)
        lo, hi = (mid, hi) if capacity(mid) < c_turb else (lo, mid)
    return max(hi, choked)


viscous = st.fixed_dictionaries({
    "rho": st.floats(800, 1000), "mu": st.floats(0.02, 1.0), "p1": st.floats(3e5, 20e5), "ratio": st.floats(0.5, 0.9),
    "q": st.floats(0.5, 60.0), "d": st.sampled_from([0.025, 0.05, 0.08, 0.1, 0.15]), "fl": st.floats(0.6, 0.95),
    "fd": st.floats(0.1, 1.0),
})


@settings(max_examples=120)
@given(viscous)
def test_viscous_liquid_matches_reynolds_factor_of_fluids(c):
    p2 = c["p1"] * c["ratio"]
    ours = _ours_liquid(c["rho"], 1e3, 22e6, c["mu"], c["p1"], p2, c["q"], c["d"], c["d"], c["d"], c["fl"], c["fd"])
    ref = _reference_viscous(c["rho"], c["mu"], c["p1"], p2, c["q"], c["d"], c["fl"], c["fd"])
    assume(np.isfinite(ref))
    assert ours["converged"][0]
    assert ours["kv"][0] == pytest.approx(ref, rel=TOL)
