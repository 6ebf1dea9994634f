"""Gas mixtures above their envelope with the phase imposed, against CoolProp's ordinary flash.

Reference: CoolProp's (p, T) flash of the mixture without an imposed phase (the route the line-list
audit takes), through ``inlet_properties``.  Imposing the phase skips only the search for a second
phase, so the states must agree to rounding (1e-12 relative: both solve the same Helmholtz equation).
"""
import numpy as np

from audit.fluid.mixture_gas import MARGIN_K, cricondentherm, full_equation_inlet, gas_mixture_properties
from audit.fluid.properties import INLET_FIELDS, inlet_properties, resolve_fluid

NATURAL_GAS = "Methane[0.92]&Ethane[0.06]&Propane[0.02]"


def test_gas_mixture_properties_equal_the_ordinary_flash():
    fluid, _ = resolve_fluid(NATURAL_GAS)
    p = np.array([5e5, 20e5, 40e5, 60e5, 80e5])
    t = np.array([250.0, 260.0, 300.0, 320.0, 240.0])
    fast = gas_mixture_properties(fluid, p, t)
    full = inlet_properties([fluid] * p.size, p, t, np.full(p.size, "", dtype=object))
    assert (fast["error"] == "").all() and (full["error"] == "").all()
    assert (fast["phase"] == full["phase"]).all()
    for name in INLET_FIELDS:
        a, b = fast[name], full[name]
        assert np.array_equal(np.isnan(a), np.isnan(b)), name
        ok = np.isfinite(b)
        assert np.allclose(a[ok], b[ok], rtol=1e-12, atol=0.0), name


def test_gas_mixture_properties_refuse_states_near_the_envelope():
    fluid, _ = resolve_fluid(NATURAL_GAS)
    t_max = cricondentherm(fluid)
    # The envelope of this gas peaks near 222 K (CoolProp's phase envelope; a lean natural gas's
    # cricondentherm lies some 30-50 K above methane's critical 190.6 K, common practice).
    assert 200.0 < t_max < 240.0
    t = np.array([t_max + MARGIN_K - 1.0, t_max + MARGIN_K + 1.0])
    out = gas_mixture_properties(fluid, np.full(2, 40e5), t)
    assert out["error"][0] != "" and np.isnan(out["rho"][0])
    assert out["error"][1] == "" and out["rho"][1] > 0


def test_full_equation_inlet_equals_inlet_properties_case_by_case():
    """The line list's route: mixtures above the envelope imposed-gas, everything else as before."""
    gas, _ = resolve_fluid(NATURAL_GAS)
    water, _ = resolve_fluid("Water")
    t_limit = cricondentherm(gas) + MARGIN_K
    fluids = [gas, gas, gas, water, None, gas]
    p = np.array([30e5, 30e5, 30e5, 10e5, 10e5, 50e5])
    # above the limit; 2 K below it (plain flash); named 'liquid' (plain flash, which refuses or
    # follows the row); liquid water; a custom fluid (skipped); above, at higher pressure
    t = np.array([300.0, t_limit - 2.0, 300.0, 330.0, 330.0, 280.0])
    given = np.array(["", "", "liquid", "", "", "gas"], dtype=object)
    routed = full_equation_inlet(fluids, p, t, given)
    plain = inlet_properties(fluids, p, t, given)
    assert list(routed["error"]) == list(plain["error"])
    assert list(routed["phase"]) == list(plain["phase"])
    assert list(routed["note"]) == list(plain["note"])
    for name in INLET_FIELDS:
        a, b = routed[name], plain[name]
        assert np.array_equal(np.isnan(a), np.isnan(b)), name
        ok = np.isfinite(b)
        assert np.allclose(a[ok], b[ok], rtol=1e-12, atol=0.0), name
    assert np.isnan(routed["rho"][4])  # the custom fluid is the engine's, not CoolProp's
