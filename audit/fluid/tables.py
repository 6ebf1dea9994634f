"""Inlet properties by interpolation in tables built from the full equation of state, for many states.

A plant historian gives every sample its own (p, T): one full-equation state
per sample costs 6-20 us in CoolProp, which a year of hourly data for a unit
cannot afford.  Here, per pure fluid, a table over the (p, T) rectangle its
states actually visit is built from full-equation nodes (``inlet_properties``
itself), and states are interpolated: bilinear in (log p, T), on the
logarithm of density, viscosity and vapour pressure (the latter weighed in
1/T).  The result promises density and vapour pressure within
``PROMISED_REL_ERROR`` (0.1 %) of the full equation, and checks viscosity,
speed of sound and the isentropic exponent to the same bound:

- a state in a cell whose four corners are not all valid and of one phase, or
  within ``NEAR_SATURATION_K`` of the saturation temperature at its pressure,
  is evaluated by the full equation (near saturation the properties turn
  sharply and the phase itself is in question);
- every table checks itself on states halfway between nodes against the full
  equation and is refined (twice the nodes each way) until they agree within
  half the promise, or is given up for the full equation.

A gas mixture's nodes are full-equation states with the gas phase imposed,
at least ``mixture_gas.MARGIN_K`` above its two-phase envelope (below it a
node is not valid, so a state there takes the full flash); a mixture state
left over from the tables takes the same imposed-phase route when it is above
the envelope.  Saturated or wet inlets (t_in 'sat', quality_in) and custom
fluids always take the full equation.  Results have the layout of
``inlet_properties``.
"""
from __future__ import annotations

import numpy as np

import CoolProp.CoolProp as CP

from audit.fluid.names import Fluid
from audit.fluid.mixture_gas import full_equation_inlet, gas_mixture_properties
from audit.fluid.properties import INLET_FIELDS, empty_inlet, inlet_properties, place, state_groups

PROMISED_REL_ERROR = 1e-3     # density and vapour pressure, against the full equation
CHECK_REL_ERROR = 5e-4        # what a table must show on its own check points to be used
NEAR_SATURATION_K = 3.0       # closer than this to saturation: the full equation
MIN_STATES = 2000             # fewer states (a table costs 200 to 800 full-equation states) take the full equation
START_NODES = 12              # per axis; refined up to START_NODES * 2**MAX_REFINE
MAX_REFINE = 3
LOG_FIELDS = ("rho", "pv", "mu")  # interpolated as logarithms (near-exponential in T, or linear in p)
CHECKED = ("rho", "pv", "mu", "sound_speed", "k")  # what the self-check compares (sizing and noise read them)


def fluid_states(fluid: Fluid, p: np.ndarray, t: np.ndarray, backend: str = "HEOS") -> dict[str, np.ndarray]:
    """One fluid's full-equation states at (p [Pa], t [K]): ``inlet_properties``, or for a mixture its gas
    above the envelope (the table nodes and their checks; ``mixture_gas.full_equation_inlet`` is the line list's)."""
    if fluid.is_mixture:
        return gas_mixture_properties(fluid, p, t)
    return inlet_properties([fluid] * p.size, p, t, np.full(p.size, "", dtype=object), backend)


class Table:
    """Full-equation nodes of one pure fluid on a (log p, T) grid, and bilinear lookup."""

    def __init__(self, fluid: Fluid, p_lo: float, p_hi: float, t_lo: float, t_hi: float, nodes: int,
                 backend: str = "HEOS"):
        self.fluid = fluid
        self.lp = np.linspace(np.log(p_lo), np.log(p_hi), nodes)
        self.t = np.linspace(t_lo, t_hi, nodes)
        lp, tt = np.meshgrid(self.lp, self.t, indexing="ij")
        p_nodes, t_nodes = np.exp(lp).ravel(), tt.ravel()
        full = fluid_states(fluid, p_nodes, t_nodes, backend)
        shape = (nodes, nodes)
        self.values = {}
        for name in INLET_FIELDS:
            v = full[name].reshape(shape)
            self.values[name] = np.log(np.where(v > 0, v, np.nan)) if name in LOG_FIELDS else v
        self.phase = full["phase"].reshape(shape)
        ok = (full["error"] == "") & (full["note"] == "")  # a note marks a saturated or wet node
        self.ok = ok.reshape(shape)
        self.t_sat = _saturation_temperature(fluid, np.exp(self.lp))

    def lookup(self, p: np.ndarray, t: np.ndarray) -> tuple[dict, np.ndarray]:
        """(interpolated fields, answered) for states inside the table; unanswered ones need the full equation."""
        lp = np.log(p)
        i = np.clip(np.searchsorted(self.lp, lp) - 1, 0, len(self.lp) - 2)
        j = np.clip(np.searchsorted(self.t, t) - 1, 0, len(self.t) - 2)
        inside = (lp >= self.lp[0]) & (lp <= self.lp[-1]) & (t >= self.t[0]) & (t <= self.t[-1])
        u = (lp - self.lp[i]) / (self.lp[i + 1] - self.lp[i])
        w = (t - self.t[j]) / (self.t[j + 1] - self.t[j])
        corners = [(i, j), (i + 1, j), (i, j + 1), (i + 1, j + 1)]
        weights = [(1 - u) * (1 - w), u * (1 - w), (1 - u) * w, u * w]
        phase0 = self.phase[i, j]
        usable = inside.copy()
        for a, b in corners:
            usable &= self.ok[a, b] & (self.phase[a, b] == phase0)
        t_sat = np.interp(lp, self.lp, self.t_sat, left=np.nan, right=np.nan)
        usable &= ~(np.abs(t - t_sat) < NEAR_SATURATION_K)  # NaN (no saturation: supercritical) passes
        # Vapour pressure: ln pv is close to linear in 1/T (Clausius-Clapeyron), so it is weighed in 1/T.
        w_inv = (1.0 / t - 1.0 / self.t[j]) / (1.0 / self.t[j + 1] - 1.0 / self.t[j])
        weights_pv = [(1 - u) * (1 - w_inv), u * (1 - w_inv), (1 - u) * w_inv, u * w_inv]
        out = {}
        for name in INLET_FIELDS:
            grid = self.values[name]
            wts = weights_pv if name == "pv" else weights
            v = sum(wt * grid[a, b] for wt, (a, b) in zip(wts, corners))
            out[name] = np.exp(v) if name in LOG_FIELDS else v
        out["t"] = np.asarray(t, float).copy()
        usable &= np.isfinite(out["rho"]) & np.isfinite(out["sound_speed"])
        out["phase"] = np.where(usable, phase0, "").astype(object)
        out["note"] = np.full(len(p), "", dtype=object)
        out["error"] = np.full(len(p), "", dtype=object)
        return out, usable


def _saturation_temperature(fluid: Fluid, p: np.ndarray) -> np.ndarray:
    """Saturation temperature [K] at each pressure, NaN at or above the critical pressure (and for a mixture)."""
    if fluid.is_mixture:
        return np.full(p.size, np.nan)  # its nodes stay MARGIN_K above the envelope instead
    name = fluid.components[0]
    pc = CP.PropsSI("pcrit", name)
    p_triple = CP.PropsSI("ptriple", name) if name != "Water" else 611.655
    out = np.full(p.size, np.nan)
    for k, pk in enumerate(p):
        if p_triple < pk < pc:
            try:
                out[k] = CP.PropsSI("T", "P", float(pk), "Q", 0.0, name)
            except ValueError:
                pass
    return out


def _check(table: Table, p: np.ndarray, t: np.ndarray, backend: str) -> float:
    """Largest relative error of the CHECKED fields at the given states (cell midpoints: the worst case)."""
    values, usable = table.lookup(p, t)
    if not usable.any():
        return 0.0
    full = fluid_states(table.fluid, p[usable], t[usable], backend)
    worst = 0.0
    for name in CHECKED:
        ref, got = full[name], values[name][usable]
        both = np.isfinite(ref) & np.isfinite(got) & (ref != 0)
        if both.any():
            worst = max(worst, float(np.max(np.abs(got[both] / ref[both] - 1.0))))
    return worst


def build_table(fluid: Fluid, p: np.ndarray, t: np.ndarray, backend: str = "HEOS") -> Table | None:
    """A table for these states that passes its own check, or None (use the full equation)."""
    p_lo, p_hi = float(np.min(p)) * 0.999, float(np.max(p)) * 1.001
    t_lo, t_hi = float(np.min(t)) - 0.05, float(np.max(t)) + 0.05
    rng = np.random.default_rng(0)
    for level in range(MAX_REFINE + 1):
        table = Table(fluid, p_lo, p_hi, t_lo, t_hi, START_NODES * 2 ** level, backend)
        # check points halfway between nodes, in the cells the states fall in (worst case for bilinear)
        pick = rng.choice(p.size, size=min(p.size, 64), replace=False)
        i = np.clip(np.searchsorted(table.lp, np.log(p[pick])) - 1, 0, len(table.lp) - 2)
        j = np.clip(np.searchsorted(table.t, t[pick]) - 1, 0, len(table.t) - 2)
        mid_p = np.exp(0.5 * (table.lp[i] + table.lp[i + 1]))
        mid_t = 0.5 * (table.t[j] + table.t[j + 1])
        if _check(table, mid_p, mid_t, backend) <= CHECK_REL_ERROR:
            return table
    return None


def tabulated_inlet_properties(fluids: list[Fluid | None], p: np.ndarray, t: np.ndarray, phase_given: np.ndarray,
                               backend: str = "HEOS", quality: np.ndarray | None = None,
                               min_states: int = MIN_STATES, groups: np.ndarray | None = None) -> dict[str, np.ndarray]:
    """``inlet_properties`` for many states: tables where they pay and pass their check, else the full equation.

    Units and layout as ``inlet_properties``.  groups: a label per state (the valve): one table per
    fluid and label, over the small rectangle that one valve visits (a table over all of a site's
    water services would need many more nodes).  Validity: single-phase states of pure fluids at
    least NEAR_SATURATION_K from saturation, and gas mixtures at least mixture_gas.MARGIN_K above
    their envelope, inside the rectangle of the states given; density and vapour pressure within
    PROMISED_REL_ERROR of the full equation (tests/test_property_tables.py).
    """
    n = len(fluids)
    p, t = np.asarray(p, float), np.asarray(t, float)
    quality = np.full(n, np.nan) if quality is None else np.asarray(quality, float)
    out = empty_inlet(n)
    full_needed = np.ones(n, dtype=bool)
    simple = np.isfinite(p) & np.isfinite(t) & ~np.isfinite(quality) & (p > 0)
    label = np.zeros(n, dtype=np.int64) if groups is None else np.asarray(groups)
    for fluid, idx in state_groups(fluids, label, simple):
        if idx.size < min_states:
            continue
        table = build_table(fluid, p[idx], t[idx], backend)
        if table is None:
            continue
        values, usable = table.lookup(p[idx], t[idx])
        given = np.asarray(phase_given, dtype=object)[idx]
        usable &= (given == "") | (given == values["phase"])  # a row that names the other phase: full equation
        place(out, idx[usable], {k: v[usable] for k, v in values.items()})
        full_needed[idx[usable]] = False
    rest = np.flatnonzero(full_needed)
    if rest.size:
        part = full_equation_inlet([fluids[k] for k in rest], p[rest], t[rest],
                                   np.asarray(phase_given, dtype=object)[rest], backend, quality[rest])
        place(out, rest, part)
    return out
