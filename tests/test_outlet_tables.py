"""Gas outlet states from tables against the full isenthalpic expansion, near and away from the dew point.

Reference: ``isenthalpic_outlet`` (Newton or secant on T with CoolProp (p, T) states, else CoolProp's
(h, p) flash; its outlet temperatures are checked against CoolProp's own (h, p) flash below).  The
bounds are the ones ``audit.fluid.outlet_tables`` promises: density and speed of sound within
PROMISED_REL_ERROR (0.1 %), temperature within 0.1 K; near the dew point the full calculation answers.
"""
import numpy as np
import pytest

import CoolProp.CoolProp as CP

from audit.fluid.outlet import isenthalpic_outlet
from audit.fluid.outlet_tables import build_outlet_table, lookup_outlet, tabulated_outlet
from audit.fluid.properties import inlet_properties, resolve_fluid
from audit.fluid.tables import NEAR_SATURATION_K, PROMISED_REL_ERROR, fluid_states

N = 3000
CHECKED = 300  # full calculations to compare with (each 30-150 us, a mixture's more)

CASES = {  # gas services: a permanent gas, a natural gas (imposed-gas nodes), superheated steam
    "nitrogen": ("Nitrogen", (5e5, 30e5), (280.0, 310.0), (0.05, 0.4)),
    "natural_gas": ("Methane[0.92]&Ethane[0.06]&Propane[0.02]", (20e5, 60e5), (290.0, 310.0), (0.05, 0.4)),
    "steam": ("Water", (10e5, 40e5), (560.0, 640.0), (0.1, 0.6)),
}


def states(name, p_rng, t_rng, drop, seed):
    fluid, problem = resolve_fluid(name)
    assert not problem
    rng = np.random.default_rng(seed)
    p1, t1 = rng.uniform(*p_rng, N), rng.uniform(*t_rng, N)
    h1 = fluid_states(fluid, p1, t1)["h"]
    p2 = p1 * (1.0 - rng.uniform(*drop, N))
    return fluid, p2, h1, t1


@pytest.mark.parametrize("label", sorted(CASES))
def test_tabulated_outlet_away_from_saturation(label):
    name, p_rng, t_rng, drop = CASES[label]
    fluid, p2, h1, t1 = states(name, p_rng, t_rng, drop, seed=7)
    table = build_outlet_table(fluid, p2, h1, t1)
    assert table is not None
    assert lookup_outlet(table, p2, h1)[1].mean() > 0.8   # the table answered: the comparison means something
    tab = tabulated_outlet([fluid] * N, p2, h1, t_in=t1, gas=np.ones(N, bool))
    full = isenthalpic_outlet([fluid] * CHECKED, p2[:CHECKED], h1[:CHECKED], t_in=t1[:CHECKED],
                              gas=np.ones(CHECKED, bool))
    assert (full["error"] == "").all() and (tab["error"] == "").all()
    for key in ("rho", "sound_speed"):
        assert np.max(np.abs(tab[key][:CHECKED] / full[key] - 1.0)) < PROMISED_REL_ERROR, key
    assert np.max(np.abs(tab["t"][:CHECKED] - full["t"])) < 0.1
    assert (tab["quality"] == 1.0).all()


def test_tabulated_outlet_near_the_dew_point_uses_the_full_calculation():
    # Steam expanding to within a few kelvin of saturation at the outlet (IAPWS saturation line via
    # CoolProp): those samples must be the full calculation's, exactly; some outlets turn wet.
    fluid, _ = resolve_fluid("Water")
    rng = np.random.default_rng(8)
    p2 = rng.uniform(3e5, 6e5, N)
    t_sat2 = np.array([CP.PropsSI("T", "P", x, "Q", 1, "Water") for x in p2])
    p1 = p2 * 1.5
    # inlet enthalpy: that of the outlet pressure's saturated vapour plus 0-40 kJ/kg (about 0-20 K of superheat)
    h1 = np.array([CP.PropsSI("H", "P", x, "Q", 1, "Water") for x in p2]) + rng.uniform(-20e3, 40e3, N)
    t1 = np.array([CP.PropsSI("T", "P", a, "H", b, "Water") for a, b in zip(p1, h1)])
    tab = tabulated_outlet([fluid] * N, p2, h1, t_in=t1, gas=np.ones(N, bool))
    near = np.abs(tab["t"] - t_sat2) < NEAR_SATURATION_K
    assert near.sum() > 100 and (tab["quality"] < 1.0).sum() > 100
    pick = np.flatnonzero(near)[:CHECKED]
    full = isenthalpic_outlet([fluid] * pick.size, p2[pick], h1[pick], t_in=t1[pick], gas=np.ones(pick.size, bool))
    for key in ("quality", "rho", "t"):
        assert np.array_equal(tab[key][pick], full[key]), key


def test_isenthalpic_outlet_matches_coolprops_hp_flash():
    # The reference itself: the Newton/secant outlet against CoolProp's direct (h, p) flash.
    fluid, p2, h1, t1 = states("Nitrogen", (5e5, 30e5), (280.0, 310.0), (0.05, 0.4), seed=9)
    full = isenthalpic_outlet([fluid] * 20, p2[:20], h1[:20], t_in=t1[:20], gas=np.ones(20, bool))
    direct = [CP.PropsSI("T", "P", a, "H", b, "Nitrogen") for a, b in zip(p2[:20], h1[:20])]
    assert np.allclose(full["t"], direct, atol=1e-3)  # the Newton stops within 1e-7 of h: far under 1 mK


@pytest.mark.parametrize("name,p_rng,t_rng,drop", [("Nitrogen", (5e5, 30e5), (280.0, 310.0), (0.05, 0.4)),
                                                  ("Methane", (10e5, 80e5), (283.0, 333.0), (0.05, 0.45)),
                                                  ("Water", (10e5, 40e5), (560.0, 640.0), (0.1, 0.6))])
def test_isenthalpic_outlet_from_the_joule_thomson_start_matches_coolprops_hp_flash(name, p_rng, t_rng, drop):
    # The engine starts a pure gas's Newton steps at T1 + mu_JT (p2 - p1) (mu_JT from the inlet state);
    # the outlet must still be CoolProp's direct (h, p) flash, within the Newton's stop (1e-7 of h: under
    # 1 mK, as above).  And the start must really be near: the linear estimate's error is second order in
    # the pressure drop, so at least ten times under the T1 start's (here 29 to 86 times, medians).
    fluid, _ = resolve_fluid(name)
    rng = np.random.default_rng(10)
    p1, t1 = rng.uniform(*p_rng, 20), rng.uniform(*t_rng, 20)
    p2 = p1 * (1.0 - rng.uniform(*drop, 20))
    inlet = inlet_properties([fluid] * 20, p1, t1, np.array(["gas"] * 20, dtype=object))
    assert (inlet["error"] == "").all() and np.isfinite(inlet["jt"]).all()
    start = t1 + inlet["jt"] * (p2 - p1)
    out = isenthalpic_outlet([fluid] * 20, p2, inlet["h"], t_in=t1, gas=np.ones(20, bool), t_start=start)
    direct = np.array([CP.PropsSI("T", "P", a, "H", b, name) for a, b in zip(p2, inlet["h"])])
    assert (out["error"] == "").all()
    assert np.allclose(out["t"], direct, atol=1e-3)
    assert np.median(np.abs(start - direct)) < 0.1 * np.median(np.abs(t1 - direct))
