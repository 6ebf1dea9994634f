"""Interpolated inlet properties against the full equation of state, near and away from saturation.

Reference: CoolProp's full (Helmholtz) equation of state through ``inlet_properties`` (itself checked
against IAPWS-IF97 in test_properties_iapws.py). The bound is the one ``audit.fluid.tables`` promises:
density and vapour pressure within PROMISED_REL_ERROR (0.1 %), and states near saturation answered by
the full equation itself.
"""
import numpy as np
import pytest

import CoolProp.CoolProp as CP

from audit.fluid.properties import inlet_properties, resolve_fluid, state_groups
from audit.fluid.tables import NEAR_SATURATION_K, PROMISED_REL_ERROR, build_table, tabulated_inlet_properties

N = 3000


def both(name, p, t):
    fluid, problem = resolve_fluid(name)
    assert not problem
    blank = np.full(len(p), "", dtype=object)
    return (tabulated_inlet_properties([fluid] * len(p), p, t, blank),
            inlet_properties([fluid] * len(p), p, t, blank), fluid)


def rel(a, b):
    ok = np.isfinite(a) & np.isfinite(b) & (b != 0)
    return np.abs(a[ok] / b[ok] - 1.0)


CASES = {  # away from saturation: compressed water, a permanent gas, a light hydrocarbon liquid
    "water_liquid": ("Water", (5e5, 40e5), (290.0, 400.0)),
    "nitrogen_gas": ("Nitrogen", (5e5, 60e5), (250.0, 350.0)),
    "propane_liquid": ("Propane", (15e5, 30e5), (270.0, 310.0)),
}


@pytest.mark.parametrize("label", sorted(CASES))
def test_tabulated_inlet_properties_away_from_saturation(label):
    name, (p_lo, p_hi), (t_lo, t_hi) = CASES[label]
    rng = np.random.default_rng(3)
    p, t = rng.uniform(p_lo, p_hi, N), rng.uniform(t_lo, t_hi, N)
    tab, full, fluid = both(name, p, t)
    table = build_table(fluid, p, t)
    assert table is not None
    answered = table.lookup(p, t)[1]
    assert answered.mean() > 0.8            # the table, not the fallback, answered: the check means something
    assert rel(tab["rho"], full["rho"]).max() < PROMISED_REL_ERROR
    if np.isfinite(full["pv"]).any():
        assert rel(tab["pv"], full["pv"]).max() < PROMISED_REL_ERROR
    assert (tab["phase"] == full["phase"]).all() and (tab["error"] == full["error"]).all()


def test_tabulated_inlet_properties_near_saturation_use_the_full_equation():
    # Superheated steam from 0.2 K to 40 K above saturation (IAPWS saturation line via CoolProp):
    # the states within NEAR_SATURATION_K must come from the full equation, exactly.
    rng = np.random.default_rng(4)
    p = rng.uniform(5e5, 20e5, N)
    t_sat = np.array([CP.PropsSI("T", "P", x, "Q", 1, "Water") for x in p])
    superheat = rng.uniform(0.2, 40.0, N)
    tab, full, fluid = both("Water", p, t_sat + superheat)
    near = superheat < NEAR_SATURATION_K
    assert near.sum() > 50 and (~near).sum() > 1000
    for name in ("rho", "pv", "sound_speed", "k", "mu"):
        assert np.array_equal(tab[name][near], full[name][near], equal_nan=True), name
    assert rel(tab["rho"], full["rho"]).max() < PROMISED_REL_ERROR
    assert rel(tab["pv"], full["pv"]).max() < PROMISED_REL_ERROR
    assert (tab["phase"] == full["phase"]).all()


def test_tabulated_inlet_properties_across_the_saturation_line():
    # Water from 2 to 10 bar and 100 to 200 degC: liquid and vapour on either side of the line (IAPWS);
    # cells that cross it, and states near it, must not be interpolated across phases.
    rng = np.random.default_rng(5)
    p, t = rng.uniform(2e5, 10e5, N), rng.uniform(373.15, 473.15, N)
    tab, full, _ = both("Water", p, t)
    assert set(full["phase"]) == {"liquid", "gas"}
    assert (tab["phase"] == full["phase"]).all()
    assert rel(tab["rho"], full["rho"]).max() < PROMISED_REL_ERROR
    assert rel(tab["pv"], full["pv"]).max() < PROMISED_REL_ERROR


def test_few_states_take_the_full_equation():
    fluid, _ = resolve_fluid("Nitrogen")
    p, t = np.full(3, 40e5), np.array([280.0, 290.0, 300.0])
    blank = np.full(3, "", dtype=object)
    tab = tabulated_inlet_properties([fluid] * 3, p, t, blank)   # under MIN_STATES: no table is built
    full = inlet_properties([fluid] * 3, p, t, blank)
    assert np.array_equal(tab["rho"], full["rho"])


def test_tabulated_inlet_properties_gas_mixture_within_promise():
    # A natural gas well above its envelope (cricondentherm about 222 K, CoolProp's phase envelope):
    # the table's nodes take the imposed-gas route, the reference is CoolProp's ordinary flash.
    fluid, _ = resolve_fluid("Methane[0.92]&Ethane[0.06]&Propane[0.02]")
    rng = np.random.default_rng(6)
    p, t = rng.uniform(20e5, 60e5, N), rng.uniform(280.0, 320.0, N)
    tab = tabulated_inlet_properties([fluid] * N, p, t, np.full(N, "", dtype=object))
    table = build_table(fluid, p, t)
    assert table is not None and table.lookup(p, t)[1].mean() > 0.8
    pick = rng.choice(N, size=40, replace=False)  # the ordinary mixture flash costs ~15 ms a state
    full = inlet_properties([fluid] * pick.size, p[pick], t[pick], np.full(pick.size, "", dtype=object))
    assert rel(tab["rho"][pick], full["rho"]).max() < PROMISED_REL_ERROR
    assert rel(tab["sound_speed"][pick], full["sound_speed"]).max() < PROMISED_REL_ERROR
    assert (tab["phase"][pick] == "gas").all() and (full["phase"] == "gas").all()


def test_state_groups_by_fluid_and_label():
    """The grouping the tables use (plain bookkeeping, checked against a dictionary built by hand)."""
    water, _ = resolve_fluid("Water")
    nitrogen, _ = resolve_fluid("Nitrogen")
    fluids = [water, nitrogen, None, water, water, nitrogen, water]
    label = np.array([1, 1, 1, 2, 1, 1, 2])
    mask = np.array([True, True, True, True, True, False, True])
    got = {(id(f), int(label[g[0]])): g.tolist() for f, g in state_groups(fluids, label, mask)}
    expected: dict = {}
    for k, f in enumerate(fluids):
        if f is not None and mask[k]:
            expected.setdefault((id(f), int(label[k])), []).append(k)
    assert got == expected == {(id(water), 1): [0, 4], (id(nitrogen), 1): [1], (id(water), 2): [3, 6]}
