"""The valve's outlet state: isenthalpic expansion from the inlet to p_out, and standard-condition density.

A gas outlet is found by Newton iteration on temperature at the outlet pressure
(enthalpy held); a two-phase outlet uses the homogeneous equilibrium model's
speed of sound.  Results are SI arrays, one per valve-case.
"""
from __future__ import annotations

import numpy as np

import CoolProp.CoolProp as CP
from CoolProp import AbstractState

from audit.fluid.mixture_gas import MARGIN_K, cricondentherm
from audit.fluid.names import Fluid
from audit.fluid.properties import State, saturation_pressure, sound_speed_of, state_for

HEM_STEP = 0.005  # relative pressure step of the central difference along the isentrope


def hem_sound_speed(state: AbstractState, p: float, s: float) -> float:
    """Homogeneous-equilibrium speed of sound [m/s] of a two-phase mixture: sqrt((dp/drho) at constant s).

    state: a CoolProp AbstractState of the fluid (left at the upper point); p [Pa], s [J/kg/K]
    of the mixture.  A central difference of +-0.5 % in pressure along the isentrope, each
    point a (p, s) flash: phases in equilibrium at every point (HEM, the homogeneous
    equilibrium model).  Its error is second order in the step, well under 0.1 % inside the
    dome (checked against iapws in tests/test_edges.py).  NaN where a flash fails.
    """
    try:
        state.update(CP.PSmass_INPUTS, p * (1.0 - HEM_STEP), s)
        rho_low = state.rhomass()
        state.update(CP.PSmass_INPUTS, p * (1.0 + HEM_STEP), s)
        rho_high = state.rhomass()
    except ValueError:
        return float("nan")
    d_rho = rho_high - rho_low
    return float(np.sqrt(2.0 * HEM_STEP * p / d_rho)) if d_rho > 0 else float("nan")


def _mixture_gas_outlet(st: State, h: float, p: float, t_guess: float):
    """(h, p) state of a single-phase gas mixture by a secant on T with (p, T) flashes.

    CoolProp's direct (h, p) flash of a mixture takes about 0.4 s; a secant on
    temperature with (p, T) flashes of 15 ms each gets the same state to 1e-3 K in a
    handful of steps.  Returns None where the outlet turns two-phase (the caller then
    uses the direct flash).
    """
    s = st.state
    # Well above the mixture's two-phase envelope the gas phase is imposed: the same states
    # without CoolProp's search for a liquid (30 us a flash in place of 15 ms; fluid.mixture_gas).
    limit = cricondentherm(st.fluid) + MARGIN_K
    imposed = t_guess - 5.0 >= limit
    if imposed:
        s.specify_phase(CP.iphase_gas)

    def h_at(t):
        s.update(CP.PT_INPUTS, p, t)
        return s.hmass() - h

    try:
        t0, t1 = t_guess, t_guess - 5.0
        f0, f1 = h_at(t0), h_at(t1)
        for _ in range(20):
            if f1 == f0:
                break
            t0, t1, f0 = t1, t1 - f1 * (t1 - t0) / (f1 - f0), f1
            if imposed and not t1 >= limit:
                return None  # the outlet may hold liquid: the direct flash decides
            f1 = h_at(t1)
            if abs(t1 - t0) < 1e-3:
                break
        two_phase = not imposed and 0.0 <= s.Q() <= 1.0
        if two_phase or abs(f1) > 1.0:
            return None
        return (1.0, s.rhomass(), s.T(), sound_speed_of(s))
    finally:
        if imposed:
            s.unspecify_phase()


def _pure_gas_outlet(st: State, h: float, p: float, t_guess: float):
    """(h, p) state of a pure-fluid gas by Newton steps on T with (p, T) updates.

    From the Joule-Thomson start (``audit.engine.add_outlet_state``) two (p, T) updates (10-25 us
    each) usually land within 1e-7 of h, against 70 us for the direct (h, p) flash; from the inlet
    temperature it took three (2.4 against 3.3 updates a state on the benchmark's gases, saturation
    checks included).  Returns None if the state leaves the gas side, so the caller uses the direct
    flash, which handles a wet outlet.
    """
    s = st.state
    t = t_guess
    for _ in range(4):
        s.update(CP.PT_INPUTS, p, t)
        if s.phase() in (CP.iphase_liquid, CP.iphase_supercritical_liquid, CP.iphase_twophase):
            return None
        miss = s.hmass() - h
        if abs(miss) < 1e-7 * abs(h) + 1e-3:
            return (1.0, s.rhomass(), s.T(), sound_speed_of(s))
        t = t - miss / s.cpmass()
        if not (st.state.Tmin() < t < st.state.Tmax()):
            return None
        if st.tc > t and p > saturation_pressure(st, t):
            return None  # below the dew point: the outlet is wet
    return None


def isenthalpic_outlet(fluids: list[Fluid | None], p_out: np.ndarray, h_in: np.ndarray,
                       backend: str = "HEOS", t_in: np.ndarray | None = None,
                       gas: np.ndarray | None = None, t_start: np.ndarray | None = None) -> dict[str, np.ndarray]:
    """State after an isenthalpic expansion to p_out: vapour mass fraction and density.

    fluids: per case (None skips the case); p_out [Pa abs]; h_in: inlet
    specific enthalpy [J/kg].  Returns quality (0 liquid, 1 vapour, between
    for a flashing mixture), density [kg/m3], t [K], sound_speed [m/s]
    (single phase: the fluid's; two-phase: the homogeneous-equilibrium one,
    ``hem_sound_speed``), error.  Energy balance of an adiabatic valve with
    negligible kinetic energy change: h_out = h_in.  t_in [K] and gas (bool)
    per case, when given, let gases take the faster routes by (p, T) updates; t_start [K], when
    given, is a pure gas's first guess of the outlet temperature (NaN: t_in).
    """
    n = len(fluids)
    quality = np.full(n, np.nan)
    rho = np.full(n, np.nan)
    temp = np.full(n, np.nan)
    sound = np.full(n, np.nan)
    error = np.full(n, "", dtype=object)
    for i in range(n):
        fluid = fluids[i]
        if fluid is None or not (np.isfinite(p_out[i]) and np.isfinite(h_in[i])):
            continue
        st = state_for(fluid, backend)
        key = ("hp", round(float(p_out[i]), 3), round(float(h_in[i]), 3))
        if key not in st.cache and gas is not None and gas[i]:
            if fluid.is_mixture:  # from t_in: its margin above the envelope decides the imposed-gas route
                shortcut, guess = _mixture_gas_outlet, float(t_in[i])
            else:
                guess = float(t_in[i]) if t_start is None or not np.isfinite(t_start[i]) else float(t_start[i])
                shortcut = _pure_gas_outlet
            try:
                found = shortcut(st, float(h_in[i]), float(p_out[i]), guess)
            except ValueError:
                found = None
            if found is not None:
                st.cache[key] = found
        if key not in st.cache:
            try:
                st.state.update(CP.HmassP_INPUTS, float(h_in[i]), float(p_out[i]))
                q = st.state.Q()
                two_phase = 0.0 <= q <= 1.0
                if not two_phase:
                    q = 1.0 if st.state.phase() in (CP.iphase_gas, CP.iphase_supercritical_gas) else 0.0
                rho_out, temp_out = st.state.rhomass(), st.state.T()
                c = hem_sound_speed(st.state, float(p_out[i]), st.state.smass()) if two_phase \
                    else sound_speed_of(st.state)
                st.cache[key] = (q, rho_out, temp_out, c)
            except ValueError as exc:
                if backend != "HEOS":  # outside a tabular backend's range: the full equation of state
                    full = isenthalpic_outlet([fluid], p_out[i:i + 1], h_in[i:i + 1], "HEOS",
                                              None if t_in is None else t_in[i:i + 1],
                                              None if gas is None else gas[i:i + 1])
                    st.cache[key] = (full["error"][0]
                                     or tuple(full[k][0] for k in ("quality", "rho", "t", "sound_speed")))
                else:
                    st.cache[key] = f"CoolProp could not flash to the outlet pressure ({str(exc)[:120]})"
        value = st.cache[key]
        if isinstance(value, str):
            error[i] = value
            continue
        quality[i], rho[i], temp[i], sound[i] = value
    return {"quality": quality, "rho": rho, "t": temp, "sound_speed": sound, "error": error}


def standard_density(fluids: list[Fluid | None], t_std: np.ndarray, p_std: np.ndarray,
                     backend: str = "HEOS") -> np.ndarray:
    """Density [kg/m3] of each fluid as a gas at its standard-volume reference state (t_std [K], p_std [Pa]).

    Real gas (CoolProp) where the fluid is a gas there; NaN where it is not (it would be liquid, or
    CoolProp has no state), so the caller falls back to the ideal gas and says so.  For propane at
    15 degC and 101.325 kPa the real gas is about 1.8 % denser than the ideal one.
    """
    out = np.full(len(fluids), np.nan)
    for i, fluid in enumerate(fluids):
        if fluid is None or not (np.isfinite(t_std[i]) and np.isfinite(p_std[i])):
            continue
        st = state_for(fluid, backend)
        key = ("std", float(t_std[i]), float(p_std[i]))
        if key not in st.cache:
            try:
                st.state.update(CP.PT_INPUTS, float(p_std[i]), float(t_std[i]))
                gas = st.state.phase() in (CP.iphase_gas, CP.iphase_supercritical_gas, CP.iphase_supercritical)
                st.cache[key] = st.state.rhomass() if gas else float("nan")
            except ValueError:
                st.cache[key] = float("nan")
        out[i] = st.cache[key]
    return out
