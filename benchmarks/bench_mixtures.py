"""Gas-mixture inlet states on the line list's route: plain flash against the imposed-gas route.

    python benchmarks/bench_mixtures.py [--states 300]

A site's line list may hold many gas-mixture valves, each at its own (p, T): every distinct state
costs CoolProp's plain mixture flash (a search for a second phase) unless the state lies above the
mixture's envelope, where ``full_equation_inlet`` imposes the gas phase.  Both sides run in this
process on the same states (the synthetic line list's natural gas over its pressure and temperature
ranges), each on an empty state cache; the envelope's tracing is counted in the routed side.
"""
from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from audit.fluid import mixture_gas  # noqa: E402
from audit.fluid.properties import INLET_FIELDS, inlet_properties, resolve_fluid, state_for  # noqa: E402

NATURAL_GAS = "Methane[0.92]&Ethane[0.06]&Propane[0.02]"  # benchmarks/synthetic.py's mixture service


def main(argv=None) -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("--states", type=int, default=300)
    args = ap.parse_args(argv)
    fluid, _ = resolve_fluid(NATURAL_GAS)
    rng = np.random.default_rng(20261203)
    p = rng.uniform(20e5, 60e5, args.states)
    t = rng.uniform(293.15, 313.15, args.states)
    given = np.full(args.states, "", dtype=object)
    fluids = [fluid] * args.states
    state_for(fluid, "HEOS").cache.clear()
    t0 = time.perf_counter()
    plain = inlet_properties(fluids, p, t, given)
    t_plain = time.perf_counter() - t0
    state_for(fluid, "HEOS").cache.clear()
    t0 = time.perf_counter()
    routed = mixture_gas.full_equation_inlet(fluids, p, t, given)
    t_routed = time.perf_counter() - t0
    worst = max(float(np.nanmax(np.abs(routed[k] / plain[k] - 1.0))) for k in INLET_FIELDS
                if np.isfinite(plain[k]).any())
    print(f"{args.states} distinct natural-gas inlet states: plain flash {t_plain:.2f} s "
          f"({1e3 * t_plain / args.states:.2f} ms a state); imposed-gas route {t_routed:.3f} s including the "
          f"envelope's tracing ({1e3 * t_routed / args.states:.3f} ms a state); ratio {t_plain / t_routed:.0f}x; "
          f"largest relative difference over every field {worst:.1e}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
