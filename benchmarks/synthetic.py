"""Synthetic line lists for benchmarks: a realistic mix of services, three cases each, fixed seed.

Services (invented): cooling and boiler water, hot condensate, light hydrocarbon liquids,
steam, natural gas, nitrogen, and a few natural-gas mixtures that repeat (as a site's fuel gas
does).  Sizes and rated Cv are drawn so that most valves sit in their working range and some
do not.
"""
from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

HEADER = ["tag", "area", "service", "fluid", "phase", "valve_size", "rated_cv", "characteristic", "fl", "xt", "fd",
          "pipe_in_id", "pipe_out_id", "pipe_out_wall"]
for case in ("min", "norm", "max"):
    HEADER += [f"flow_{case}", f"p_in_{case}", f"p_out_{case}", f"t_in_{case}"]

# fluid, phase, p_in range [bar(a)], t_in range [degC], flow range (unit), drop share range
SERVICES = [  # pressure-drop shares as control valves usually take them; letdowns take more
    ("Water", "", (3, 60), (15, 90), (5, 400, "m3/h"), (0.05, 0.4)),
    ("Water", "", (5, 20), (120, 170), (2, 60, "m3/h"), (0.2, 0.7)),
    ("n-Heptane", "", (3, 30), (20, 120), (5, 300, "m3/h"), (0.05, 0.35)),
    ("Propane", "", (12, 30), (10, 45), (3, 150, "m3/h"), (0.05, 0.3)),
    ("Water", "steam", (5, 45), (260, 420), (1000, 40000, "kg/h"), (0.05, 0.5)),
    ("Methane", "", (10, 80), (10, 60), (500, 60000, "kg/h"), (0.05, 0.45)),
    ("Nitrogen", "", (4, 30), (10, 40), (100, 8000, "kg/h"), (0.05, 0.4)),
    ("Methane[0.92]&Ethane[0.06]&Propane[0.02]", "", (20, 60), (20, 40), (1000, 30000, "kg/h"), (0.05, 0.4)),
]
WEIGHTS = np.array([0.25, 0.08, 0.12, 0.08, 0.14, 0.16, 0.12, 0.05])
SIZES_MM = np.array([25, 40, 50, 80, 100, 150, 200, 250])
MIXTURE_STATES = 6  # mixtures repeat a few distinct states, as a site's fuel gas does


def _rough_kv(fluid, gas, flow, unit, p1, p2, t1):
    """A designer's first estimate of Kv (turbulent, no reducers), to pick a plausible body."""
    import CoolProp.CoolProp as CP

    rho = CP.PropsSI("D", "P", p1 * 1e5, "T", t1 + 273.15, fluid)
    w = flow if unit == "kg/h" else flow * rho
    dp = p1 - p2
    if not gas:
        return w / rho * np.sqrt(rho / 1000.0 / dp)
    x = min(dp / p1, 0.5)
    return w / (31.6 * (1 - x / 1.5) * np.sqrt(x * p1 * rho))


def make_linelist(n_valves: int, path: Path, seed: int = 20261201) -> Path:
    """Write ``n_valves`` synthetic valves to ``path`` (CSV) and return the path."""
    rng = np.random.default_rng(seed)
    kind = rng.choice(len(SERVICES), size=n_valves, p=WEIGHTS / WEIGHTS.sum())
    rows = []
    for i in range(n_valves):
        fluid, phase, p_rng, t_rng, (f_lo, f_hi, unit), drop = SERVICES[kind[i]]
        mixture = "&" in fluid
        r = np.random.default_rng(seed + (i % MIXTURE_STATES if mixture else 1000 + i))
        p_in = r.uniform(*p_rng)
        t_in = r.uniform(*t_rng)
        share = r.uniform(*drop)
        flow = np.exp(r.uniform(np.log(f_lo), np.log(f_hi)))
        gas = phase == "steam" or unit == "kg/h"
        kv = _rough_kv(fluid, gas, flow, unit, p_in, p_in * (1 - share), t_in)
        # The smallest standard body whose rated Kv/d^2 of about 0.02 covers the max case with
        # some margin; now and then one size too small, as in a unit whose duty has grown.
        # Gas bodies get more margin: they are also chosen for outlet velocity.
        margin = rng.uniform(1.8, 3.0) if gas else rng.uniform(1.1, 1.6)
        fit = SIZES_MM[np.searchsorted(SIZES_MM ** 2 * 0.02, kv * margin)
                       if kv * margin < SIZES_MM[-1] ** 2 * 0.02 else -1]
        too_small = rng.uniform() < 0.08
        size = int(SIZES_MM[max(0, np.searchsorted(SIZES_MM, fit) - 1)] if too_small else fit)
        rated_kv = 0.02 * size ** 2 * rng.uniform(0.7, 1.3)
        row = {"tag": f"SV-{i:05d}", "area": f"Unit {1 + i % 7}", "service": f"synthetic service {kind[i]}",
               "fluid": fluid, "phase": phase, "valve_size": size, "rated_cv": f"{rated_kv * 1.156:.4g}",
               "characteristic": rng.choice(["equal_percentage", "linear"]), "fl": f"{rng.uniform(0.6, 0.92):.3f}",
               "xt": f"{rng.uniform(0.35, 0.8):.3f}", "fd": f"{rng.uniform(0.2, 1.0):.3f}",
               "pipe_out_wall": f"{rng.uniform(4, 10):.1f}"}
        # The usual installation: the valve in its line size, or one or two sizes below it with
        # concentric reducers of the same line size on both sides.
        # (An undersized valve is left in its own line size: with reducers round a body asked for
        # C/d^2 far past any real rating, FP falls towards 0.2 and the equations' fixed point turns
        # so sensitive that 0.15 % in a rounded constant moves it by 3 %, which measures nothing.)
        line = size * (1.0 if too_small else rng.choice([1.0, 1.0, 1.5, 2.0]))
        row["pipe_in_id"] = row["pipe_out_id"] = f"{line:.1f}"
        for case, f_share, p_shift in (("min", 0.4, 1.02), ("norm", 0.75, 1.0), ("max", 1.0, 0.98)):
            p1 = p_in * (p_shift if not mixture else 1.0)
            row[f"flow_{case}"] = f"{flow * f_share:.5g} {unit}"
            row[f"p_in_{case}"] = f"{p1:.5g}"
            row[f"p_out_{case}"] = f"{p1 * (1 - share):.5g}"
            row[f"t_in_{case}"] = f"{t_in:.4g}"
        rows.append(row)
    with open(path, "w", newline="", encoding="utf-8") as fh:
        writer = csv.DictWriter(fh, fieldnames=HEADER, lineterminator="\n")
        writer.writeheader()
        writer.writerows(rows)
    return path
