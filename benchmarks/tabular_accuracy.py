"""Error of CoolProp's tabular backend (BICUBIC&HEOS) against the full equation of state (HEOS).

Prints, per fluid, the largest relative error on density over a grid of liquid and gas states
away from saturation, the same for states 2 % to 20 % either side of the saturation curve, and
the error on the saturation pressure, evaluated through the audit's own code path
(audit.fluid.properties.inlet_properties).  What it showed decided the default: tables are well
inside 0.1 % away from saturation and far outside it beside the curve, where control valves
often work (flashing and cavitating liquids, gases near their dew point), so the audit uses the
full equation of state (HEOS) by default and takes a tabular backend only when asked.  The audit's --backend option takes a tabular
backend; the issue's bar for using one is 0.1 % on both.

    python benchmarks/tabular_accuracy.py
"""
from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

FLUIDS = {  # fluid: (pressures [bar(a)], temperatures [degC])
    "Water": (np.array([2, 10, 40, 100]), np.array([20, 80, 150, 250, 300, 400])),
    "Methane": (np.array([5, 20, 60, 100]), np.array([0, 30, 80])),
    "Propane": (np.array([2, 10, 20, 40]), np.array([-20, 20, 60, 120])),
    "Nitrogen": (np.array([3, 10, 30]), np.array([0, 40])),
    "n-Heptane": (np.array([2, 10, 30]), np.array([20, 80, 150])),
}


def errors(fluid: str, backend: str = "BICUBIC&HEOS") -> dict[str, float]:
    """Largest relative errors of ``backend`` against HEOS: density away from and near saturation,
    and vapour pressure."""
    import CoolProp.CoolProp as CP

    from audit.fluid.properties import inlet_properties, resolve_fluid

    f, _ = resolve_fluid(fluid)
    p_bar, t_c = FLUIDS[fluid]
    grid_p, grid_t = (a.ravel() for a in np.meshgrid(p_bar * 1e5, t_c + 273.15))
    t_sat = np.linspace(CP.PropsSI("Ttriple", fluid) + 5, CP.PropsSI("Tcrit", fluid) - 5, 6)
    p_sat = np.array([CP.PropsSI("P", "T", t, "Q", 0, fluid) for t in t_sat])
    shares = (0.8, 0.95, 0.98, 1.02, 1.05, 1.2)
    near_p = np.concatenate([p_sat * s for s in shares])
    near_t = np.tile(t_sat, len(shares))
    out = {}
    for name, P, T in (("away", grid_p, grid_t), ("near", near_p, near_t)):
        phase = np.full(P.size, "", dtype=object)
        tab = inlet_properties([f] * P.size, P, T, phase, backend)
        full = inlet_properties([f] * P.size, P, T, phase, "HEOS")
        ok = (tab["error"] == "") & (full["error"] == "")
        out[f"density_{name}"] = float(np.max(np.abs(tab["rho"][ok] / full["rho"][ok] - 1))) if ok.any() else np.nan
        liquid = ok & np.isfinite(full["pv"])
        if name == "away":
            out["vapour_pressure"] = (float(np.max(np.abs(tab["pv"][liquid] / full["pv"][liquid] - 1)))
                                      if liquid.any() else np.nan)
    return out


def main() -> int:
    for fluid in FLUIDS:
        e = errors(fluid)
        pv = (f"{e['vapour_pressure'] * 100:.4f} %" if np.isfinite(e["vapour_pressure"])
              else "n/a (no liquid in the grid)")
        print(f"{fluid:<10} density away from saturation {e['density_away'] * 100:.4f} %, within 20 % of the "
              f"saturation pressure {e['density_near'] * 100:.3g} %, vapour pressure {pv}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
