"""Gas mixtures above their two-phase envelope: full-equation states with the gas phase imposed.

CoolProp's (p, T) update of a multi-component mixture first searches for a
second phase (a stability test and flash): some 15 ms a state for a
three-component natural gas on this machine.  Above the mixture's
cricondentherm (the highest temperature of its two-phase envelope) no liquid
can form at any pressure, so that search can be skipped by imposing the gas
phase: the same equation of state gives the same state (equal to the last
digit in tests/test_mixture_gas.py) in about 30 us.  A table of a valve's
states (``fluid.tables``) is then cheap to build for a mixture too.

The envelope is traced by CoolProp's phase-envelope routine once per mixture;
states within ``MARGIN_K`` of its highest temperature, or a mixture whose
envelope cannot be traced, are left to the full flash (``inlet_properties``).
``full_equation_inlet`` is ``inlet_properties`` with that route taken where it
applies: the line list's cases and the history's leftover states go through it.
"""
from __future__ import annotations

import numpy as np

import CoolProp.CoolProp as CP
from CoolProp import AbstractState

from audit.fluid.names import Fluid
from audit.fluid.properties import (INLET_FIELDS, empty_inlet, inlet_properties, place, read_state, state_for,
                                    state_groups)

MARGIN_K = 10.0  # above the traced cricondentherm: room for the envelope's numerical tracing

_CRICONDENTHERM: dict[Fluid, float] = {}


def cricondentherm(fluid: Fluid) -> float:
    """Highest temperature [K] of the mixture's two-phase envelope; NaN if CoolProp cannot trace it."""
    if fluid not in _CRICONDENTHERM:
        # On a state of its own: an AbstractState holding a phase envelope consults it in every
        # later (p, T) update, which then costs 15 ms again even with the phase imposed.
        traced = AbstractState("HEOS", "&".join(fluid.components))
        traced.set_mole_fractions(list(fluid.fractions))
        try:
            traced.build_phase_envelope("")
            t_max = float(np.max(traced.get_phase_envelope_data().T))
        except (ValueError, RuntimeError):
            t_max = float("nan")
        _CRICONDENTHERM[fluid] = t_max
    return _CRICONDENTHERM[fluid]


def gas_mixture_properties(fluid: Fluid, p: np.ndarray, t: np.ndarray) -> dict[str, np.ndarray]:
    """Inlet properties of a gas mixture at (p [Pa], t [K]) states above its envelope; layout of ``inlet_properties``.

    Validity: t at least MARGIN_K above the cricondentherm (any pressure); other states,
    and every state of a mixture whose envelope cannot be traced, carry an error (the
    caller takes the full flash for them).  pv is NaN: no bubble point exists up there.
    Always the HEOS backend, as for every mixture.
    """
    n = len(p)
    out = empty_inlet(n)
    st = state_for(fluid, "HEOS")
    limit = cricondentherm(fluid) + MARGIN_K
    if not np.isfinite(limit):
        out["error"][:] = "the mixture's two-phase envelope could not be traced"
        return out
    above = np.isfinite(p) & np.isfinite(t) & (t >= limit) & (p > 0)
    out["error"][~above] = f"below {limit:.1f} K: the mixture may form liquid"
    s = st.state
    s.specify_phase(CP.iphase_gas)
    try:
        for i in np.flatnonzero(above):
            try:
                s.update(CP.PT_INPUTS, float(p[i]), float(t[i]))
                values = read_state(st, "gas", float("nan"))
            except ValueError as exc:
                out["error"][i] = f"CoolProp could not evaluate the gas mixture ({str(exc)[:120]})"
                continue
            for name, v in zip(INLET_FIELDS, values):
                out[name][i] = v
            out["phase"][i] = "gas"
    finally:
        s.unspecify_phase()  # the State is shared with the full flash
    return out


def full_equation_inlet(fluids: list[Fluid | None], p: np.ndarray, t: np.ndarray, phase_given: np.ndarray,
                        backend: str = "HEOS", quality: np.ndarray | None = None) -> dict[str, np.ndarray]:
    """``inlet_properties``, with gas mixtures above their envelope on the imposed-gas route.

    Units, layout and results as ``inlet_properties`` (the same full-equation states; a plain
    flash of a three-component gas costs some 15-25 ms here, the imposed-gas state 30 us).
    A mixture state takes the route where its row gives a temperature, no quality, and no
    phase other than gas, and lies MARGIN_K or more above the cricondentherm; every other
    state, and every pure fluid, goes to ``inlet_properties`` as before.
    """
    n = len(fluids)
    p, t = np.asarray(p, float), np.asarray(t, float)
    quality = np.full(n, np.nan) if quality is None else np.asarray(quality, float)
    given = np.asarray(phase_given, dtype=object)
    out = empty_inlet(n)
    need = np.ones(n, dtype=bool)
    simple = np.isfinite(p) & np.isfinite(t) & ~np.isfinite(quality) & (p > 0) & ((given == "") | (given == "gas"))
    for fluid, idx in state_groups(fluids, np.zeros(n, dtype=np.int64), simple):
        if not fluid.is_mixture:
            continue
        # each distinct state once (a site's fuel gas repeats a few), spread back to its cases
        states, back = np.unique(np.stack([p[idx], t[idx]], axis=1), axis=0, return_inverse=True)
        once = gas_mixture_properties(fluid, states[:, 0], states[:, 1])
        part = {name: values[back.ravel()] for name, values in once.items()}
        good = part["error"] == ""
        place(out, idx[good], {k: v[good] for k, v in part.items()})
        need[idx[good]] = False
    rest = np.flatnonzero(need)
    if rest.size:
        place(out, rest, inlet_properties([fluids[k] for k in rest], p[rest], t[rest], given[rest], backend,
                                             quality[rest]))
    return out
