"""IEC 60534-2-1 worked examples, with inputs and results as the documentation of the
`fluids` library (fluids.control_valve, size_control_valve_l / size_control_valve_g
docstrings) reproduces them.  Kv to Cv: Cv = 1.156 Kv.
"""
import pytest

from audit.iec.sizing import KV_TO_CV, size_valves
from conftest import gas_case, liquid_case

WATER_90C = dict(rho=965.4, pv=70.1e3, pc=22120e3, mu=3.1472e-4, p1=680e3, p2=220e3, q=360.0)


def test_liquid_globe_example_1():
    # fluids docs, "matching example 1" (globe, parabolic plug): Kv 164.995.  Tolerance 0.1 %.
    r = size_valves(**liquid_case(**WATER_90C, d=0.15, d1=0.15, d2=0.15, fl=0.90, fd=0.46))
    assert r["kv"][0] == pytest.approx(165.0, rel=1e-3)
    assert r["cv"][0] == pytest.approx(165.0 * KV_TO_CV, rel=1e-3)
    assert not r["choked"][0]


def test_liquid_segmented_ball_example_2_is_choked():
    # fluids docs, "matching example 2" (segmented ball): Kv 238.06, choked flow.  Tolerance 0.1 %.
    r = size_valves(**liquid_case(**WATER_90C, d=0.10, d1=0.10, d2=0.10, fl=0.60, fd=0.98))
    assert r["kv"][0] == pytest.approx(238.1, rel=1e-3)
    assert r["choked"][0]


def test_gas_with_reducers_example_3():
    # fluids docs, "matching example 3" (rotary eccentric plug, reducers 80/50/100 mm): Kv 72.587.
    # Ours is 72.89.  Two known, named reasons, so the tolerance is 0.5 %:
    #  - the reference loop stops once C moves by less than 1 % per step; carried to convergence
    #    with its own formulas the same case gives about 72.78;
    #  - we size from mass flow with N6 = 3.16, the reference from standard volume with N9 = 24.6;
    #    the rounded constants differ by 0.15 % (checked without reducers: 62.75 against 62.65).
    r = size_valves(**gas_case(t1=433.0, molar_mass=44.01, mu=1.4665e-4, k=1.30, z=0.988, p1=680e3, p2=310e3,
                               q_normal=3800.0, d=0.05, d1=0.08, d2=0.10, fl=0.85, fd=0.42, xt=0.60))
    assert r["kv"][0] == pytest.approx(72.6, rel=5e-3)
    assert r["y"][0] == pytest.approx(0.674, abs=1e-3)  # Y with xT, as in that example
    assert not r["choked"][0]


def test_small_flow_gas_example_4():
    # fluids docs, "roughly matching example 4" (small-flow trim, tapered needle): Kv 0.0165, with
    # a note of about 3 % difference from the standard's own figure from the algorithm.
    # We solve C * FR(C) = C_turbulent to 0.1 % with the reduced-trim FR; 0.01655 here.
    r = size_valves(**gas_case(t1=320.0, molar_mass=39.95, mu=5.625e-5, k=1.67, z=1.0, p1=280e3, p2=130e3,
                               q_normal=0.46, d=0.015, d1=0.015, d2=0.015, fl=0.98, fd=0.07, xt=0.8))
    assert r["kv"][0] == pytest.approx(0.0165, rel=0.03)
    assert r["fr"][0] < 1.0  # non-turbulent: the Reynolds factor is in play
    assert r["converged"][0]
