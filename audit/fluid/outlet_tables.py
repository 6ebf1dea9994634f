"""Gas outlet states by interpolation, for many samples: the isenthalpic expansion read off a checked table.

A gas valve's outlet is the state at p_out with the inlet's enthalpy
(``fluid.outlet.isenthalpic_outlet``): two to five full-equation updates a
state, 40-100 us for a pure fluid and far more for a mixture.  For a valve's
history (thousands of samples over a small range) a ``fluid.tables.Table`` is
built over the outlet's (log p, T) rectangle from full-equation nodes; at each
of the two node rows that bracket p_out the temperature whose enthalpy equals
h_in is found between the two nodes that bracket it (enthalpy rises with
temperature in a single phase), density (as its logarithm) and speed of sound
are read there, and the two rows are weighed in log p.

Like the inlet tables, the table checks itself before it is used: at the
middle of every cell its samples fall in (the worst place for linear
interpolation) the full-equation state is known exactly (its (p, T) and so its
h), and the lookup from (p, h) must return its temperature within
``T_CHECK_K`` and its density and speed of sound within
``tables.CHECK_REL_ERROR``, else the table is refined or given up.  A sample
outside the table, next to a node that is not gas, or within
``tables.NEAR_SATURATION_K`` of the dew point takes the full calculation.
Only gas outlets are tabulated: a flashing liquid's outlet is two-phase.
"""
from __future__ import annotations

import numpy as np

from audit.fluid.names import Fluid
from audit.fluid.outlet import isenthalpic_outlet
from audit.fluid.properties import state_groups
from audit.fluid.tables import (CHECK_REL_ERROR, MAX_REFINE, MIN_STATES, NEAR_SATURATION_K, START_NODES, Table,
                                fluid_states)

T_CHECK_K = 0.05        # outlet temperature from the table against the full equation, at the check points
PROBES = 12             # full outlet calculations that find the temperature range a valve's outlet visits
OUTLET_FIELDS = ("quality", "rho", "t", "sound_speed")


def _row(table: Table, i: np.ndarray, h: np.ndarray) -> tuple[dict, np.ndarray]:
    """At node row i (per sample): the fields where the row's enthalpy equals h, and whether that is a gas cell."""
    h_rows = table.values["h"][i]                              # (samples, nodes)
    nodes = h_rows.shape[1]
    below = np.where(np.isfinite(h_rows), h_rows < h[:, None], False)
    j = np.clip(below.sum(axis=1) - 1, 0, nodes - 2)
    r = np.arange(len(h))
    h0, h1 = h_rows[r, j], h_rows[r, j + 1]
    with np.errstate(invalid="ignore", divide="ignore"):
        w = (h - h0) / (h1 - h0)
    gas = (table.phase[i, j] == "gas") & (table.phase[i, j + 1] == "gas")
    good = table.ok[i, j] & table.ok[i, j + 1] & gas & (w >= 0.0) & (w <= 1.0)
    rho = np.exp((1 - w) * table.values["rho"][i, j] + w * table.values["rho"][i, j + 1])  # stored as log
    sound = (1 - w) * table.values["sound_speed"][i, j] + w * table.values["sound_speed"][i, j + 1]
    temp = (1 - w) * table.t[j] + w * table.t[j + 1]
    return {"rho": rho, "sound_speed": sound, "t": temp}, good


def lookup_outlet(table: Table, p: np.ndarray, h: np.ndarray) -> tuple[dict, np.ndarray]:
    """(outlet fields, answered) at p [Pa] and h [J/kg]; fields as ``isenthalpic_outlet`` returns them."""
    lp = np.log(p)
    i = np.clip(np.searchsorted(table.lp, lp) - 1, 0, len(table.lp) - 2)
    u = (lp - table.lp[i]) / (table.lp[i + 1] - table.lp[i])
    low, ok_low = _row(table, i, h)
    high, ok_high = _row(table, i + 1, h)
    out = {name: (1 - u) * low[name] + u * high[name] for name in ("sound_speed", "t")}
    out["rho"] = np.exp((1 - u) * np.log(low["rho"]) + u * np.log(high["rho"]))
    out["quality"] = np.ones(len(p))
    t_sat = np.interp(lp, table.lp, table.t_sat, left=np.nan, right=np.nan)
    usable = ((lp >= table.lp[0]) & (lp <= table.lp[-1]) & ok_low & ok_high
              & ~(out["t"] - t_sat < NEAR_SATURATION_K)                    # NaN (no saturation) passes
              & np.isfinite(out["rho"]) & np.isfinite(out["sound_speed"]))
    return out, usable


def _worst_miss(table: Table, p: np.ndarray, h: np.ndarray, backend: str) -> tuple[float, float]:
    """(largest relative error of rho and c, largest temperature error [K]) at the middles of the cells p, h fall in."""
    found, usable = lookup_outlet(table, p, h)
    if not usable.any():
        return 0.0, 0.0
    lp = np.log(p[usable])
    i = np.clip(np.searchsorted(table.lp, lp) - 1, 0, len(table.lp) - 2)
    j = np.clip(np.searchsorted(table.t, found["t"][usable]) - 1, 0, len(table.t) - 2)
    mid_p = np.exp(0.5 * (table.lp[i] + table.lp[i + 1]))
    mid_t = 0.5 * (table.t[j] + table.t[j + 1])
    exact = fluid_states(table.fluid, mid_p, mid_t, backend)
    known = (exact["error"] == "") & (exact["phase"] == "gas")
    if not known.any():
        return 0.0, 0.0
    got, answered = lookup_outlet(table, mid_p[known], exact["h"][known])
    if not answered.any():
        return 0.0, 0.0
    rel = max(float(np.max(np.abs(got[k][answered] / exact[k][known][answered] - 1.0))) for k in ("rho", "sound_speed"))
    dt = float(np.max(np.abs(got["t"][answered] - mid_t[known][answered])))
    return rel, dt


def build_outlet_table(fluid: Fluid, p_out: np.ndarray, h_in: np.ndarray, t_in: np.ndarray,
                       backend: str = "HEOS") -> Table | None:
    """A (log p, T) table that answers these gas outlets and passes its check, or None (the full calculation).

    p_out [Pa], h_in [J/kg], t_in [K] (the first guess of the full calculation) of one valve's gas states.
    """
    # The outlet temperatures are not known before the expansion: a few full calculations at the
    # extremes of p_out and h_in (and some at random) find the range, padded for the rest.
    rng = np.random.default_rng(0)
    extremes = [np.argmin(p_out), np.argmax(p_out), np.argmin(h_in), np.argmax(h_in)]
    pick = np.unique(np.concatenate([extremes, rng.choice(p_out.size, size=min(p_out.size, PROBES), replace=False)]))
    probe = isenthalpic_outlet([fluid] * pick.size, p_out[pick], h_in[pick], backend,
                               t_in=t_in[pick], gas=np.ones(pick.size, dtype=bool))
    t_probe = probe["t"][(probe["error"] == "") & (probe["quality"] == 1.0)]
    if t_probe.size == 0:
        return None
    pad = 2.0 + 0.25 * float(np.ptp(t_probe))
    t_lo, t_hi = float(np.min(t_probe)) - pad, float(np.max(t_probe)) + pad
    p_lo, p_hi = float(np.min(p_out)) * 0.999, float(np.max(p_out)) * 1.001
    check = rng.choice(p_out.size, size=min(p_out.size, 64), replace=False)
    for level in range(MAX_REFINE + 1):
        table = Table(fluid, p_lo, p_hi, t_lo, t_hi, START_NODES * 2 ** level, backend)
        rel, dt = _worst_miss(table, p_out[check], h_in[check], backend)
        if rel <= CHECK_REL_ERROR and dt <= T_CHECK_K:
            return table
    return None


def tabulated_outlet(fluids: list[Fluid | None], p_out: np.ndarray, h_in: np.ndarray, backend: str = "HEOS",
                     t_in: np.ndarray | None = None, gas: np.ndarray | None = None,
                     groups: np.ndarray | None = None, min_states: int = MIN_STATES) -> dict[str, np.ndarray]:
    """``isenthalpic_outlet`` for many states: gas outlets from checked tables where they pay, the rest in full.

    Units and layout as ``isenthalpic_outlet``.  groups: a label per state (the valve): one table
    per fluid and label with at least min_states gas states.  Validity: single-phase gas outlets at
    least NEAR_SATURATION_K above the dew point (pure fluids) or mixture_gas.MARGIN_K above the
    envelope (mixtures), inside the table; density and speed of sound within tables.PROMISED_REL_ERROR
    and temperature within 0.1 K of the full calculation (tests/test_outlet_tables.py).
    """
    n = len(fluids)
    p_out, h_in = np.asarray(p_out, float), np.asarray(h_in, float)
    gas = np.zeros(n, dtype=bool) if gas is None else np.asarray(gas, bool)
    label = np.zeros(n, dtype=np.int64) if groups is None else np.asarray(groups)
    t_guess = np.full(n, np.nan) if t_in is None else np.asarray(t_in, float)
    simple = gas & np.isfinite(t_guess) & np.isfinite(p_out) & np.isfinite(h_in) & (p_out > 0)
    found = {name: np.full(n, np.nan) for name in OUTLET_FIELDS}
    answered = np.zeros(n, dtype=bool)
    for fluid, idx in state_groups(fluids, label, simple):
        if idx.size < min_states:
            continue
        table = build_outlet_table(fluid, p_out[idx], h_in[idx], t_guess[idx], backend)
        if table is None:
            continue
        values, usable = lookup_outlet(table, p_out[idx], h_in[idx])
        for name in OUTLET_FIELDS:
            found[name][idx[usable]] = values[name][usable]
        answered[idx[usable]] = True
    rest = [None if a else f for a, f in zip(answered.tolist(), fluids)]
    out = isenthalpic_outlet(rest, p_out, h_in, backend, t_in=t_in, gas=gas)
    for name in OUTLET_FIELDS:
        out[name] = np.where(answered, found[name], out[name])
    return out
