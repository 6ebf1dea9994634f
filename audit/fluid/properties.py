"""Fluid properties at the valve inlet and outlet, through CoolProp's AbstractState.

One AbstractState per fluid (pure fluid or mixture) is built once and
reused for every state of that fluid in the run; states are evaluated once
per distinct (p, T) and shared by the cases that repeat them, which matters
for mixtures, whose flash costs milliseconds.  Results are SI arrays.

Phase at the inlet is decided against the saturation curve (pure fluids)
or from the flash's vapour quality (mixtures).  A pure fluid within
SATURATION_TOLERANCE_K of its saturation temperature is audited as
saturated, on the side the row's `phase` column (or its temperature) says,
with a note; a mixture's two-phase inlet is refused.

Mixture critical pressure uses Kay's rule (mole-fraction weighted
pseudo-critical pressure) because a mixture's true critical point is not a
property the FF factor was built on; the result says so.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

import CoolProp.CoolProp as CP
from CoolProp import AbstractState

from audit.fluid.names import MIXTURE_COMPONENT, Fluid, known_fluids, suggest


R_GAS = 8.314462618  # J/(mol K)


SATURATION_TOLERANCE_K = 1.0  # an inlet this close to its saturation temperature is audited as saturated


WET_GAS_MIN = 0.9  # lowest inlet vapour quality sized as a (wet) gas


class StateError(ValueError):
    """A state the sizing cannot use, with a message for the plant engineer."""


INLET_FIELDS = ("rho", "pv", "pc", "mu", "molar_mass", "z", "k", "sound_speed", "h", "t", "jt")


@dataclass
class State:
    """The reusable AbstractState of one fluid and its cache of evaluated states."""
    fluid: Fluid
    backend: str
    state: AbstractState = field(init=False)
    cache: dict = field(default_factory=dict)

    def __post_init__(self):
        backend = "HEOS" if self.fluid.is_mixture else self.backend
        self.state = AbstractState(backend, "&".join(self.fluid.components))
        if self.fluid.is_mixture:
            self.state.set_mole_fractions(list(self.fluid.fractions))
        self.molar_mass = self.state.molar_mass() * 1000.0
        if self.fluid.is_mixture:
            self.pc = sum(x * CP.PropsSI("pcrit", c) for c, x in zip(self.fluid.components, self.fluid.fractions))
            self.tc = sum(x * CP.PropsSI("Tcrit", c) for c, x in zip(self.fluid.components, self.fluid.fractions))
        else:
            self.pc = self.state.p_critical()
            self.tc = self.state.T_critical()


_STATES: dict[tuple[Fluid, str], State] = {}


def state_for(fluid: Fluid, backend: str) -> State:
    key = (fluid, backend)
    if key not in _STATES:
        _STATES[key] = State(fluid, backend)
    return _STATES[key]


def saturation_pressure(st: State, t: float) -> float:
    """Saturation (pure) or bubble-point (mixture) pressure at t [K]; NaN above critical."""
    if not st.fluid.is_mixture and t >= st.tc:
        return float("nan")
    st.state.update(CP.QT_INPUTS, 0.0, t)
    return st.state.p()


def sound_speed_of(s: AbstractState) -> float:
    """Speed of sound [m/s] of the current state; NaN where CoolProp has none (two-phase, some backends)."""
    try:
        return s.speed_sound()
    except ValueError:
        return float("nan")


def isentropic_exponent(rho: float, sound: float, p: float) -> float:
    """The exponent that governs critical flow: kappa = rho c^2 / p [-]; NaN where there is no speed of sound.

    rho [kg/m3], sound: speed of sound [m/s], p [Pa] at the inlet state (the caller falls back
    to the ideal gas's cp0/cv0 where this is NaN).  For a perfect gas kappa equals
    cp/cv; for a real gas near saturation or at high pressure cp/cv is far above the exponent
    of the isentrope p rho^-kappa = const that a nozzle follows, and it is that exponent which
    sets the critical pressure ratio (2/(kappa+1))^(kappa/(kappa-1)) and so F_gamma = kappa/1.40
    in IEC 60534-2-1 (checked against CoolProp's isentropic nozzle in tests/test_isentropic_exponent.py).
    """
    if np.isfinite(sound) and sound > 0 and rho > 0 and p > 0:
        return rho * sound * sound / p
    return float("nan")


def _ideal_ratio(st: State) -> float:
    """cp0/cv0 of the ideal gas at the current temperature; NaN where the backend has none."""
    try:
        cp0 = st.state.cp0mass()
    except ValueError:
        return float("nan")
    return cp0 / (cp0 - R_GAS / (st.molar_mass / 1000.0))


def read_state(st: State, phase: str, pv: float) -> tuple:
    s = st.state
    sound = sound_speed_of(s)
    rho = s.rhomass()
    z = s.p() * st.molar_mass / 1000.0 / (rho * R_GAS * s.T())  # Z = p M / (rho R T); not every backend has it
    if phase == "gas":
        # cp0/cv0 only where there is no speed of sound: for a mixture it costs some 40 ms a state.
        kappa = isentropic_exponent(rho, sound, s.p())
        kappa = kappa if np.isfinite(kappa) else _ideal_ratio(st)
    else:
        kappa = s.cpmass() / s.cvmass()
    jt = _joule_thomson(s) if phase == "gas" and not st.fluid.is_mixture else float("nan")
    return (rho, pv, st.pc, s.viscosity(), st.molar_mass, z, kappa, sound, s.hmass(), s.T(), jt)


def _joule_thomson(s: AbstractState) -> float:
    """(dT/dp) at constant h [K/Pa] of the current state; NaN where the backend has none.

    Only the outlet's first guess T1 + mu_JT (p2 - p1) uses it: within a few tenths of a kelvin
    of the isenthalpic outlet for most gas valves, so its Newton steps start close.
    """
    try:
        return s.first_partial_deriv(CP.iT, CP.iP, CP.iHmass)
    except ValueError:
        return float("nan")


def _inlet_state(st: State, p: float, t: float, phase_given: str, quality: float = float("nan")) -> tuple:
    """Properties of one inlet state: (INLET_FIELDS values, phase, note), or raises StateError.

    t may be NaN for `t_in = sat` (the saturation temperature at p); quality is the row's
    `quality_in` (NaN when not given).
    """
    s = st.state
    if st.fluid.is_mixture:
        if not np.isfinite(t) or np.isfinite(quality):
            raise StateError("saturated or wet inlets (t_in 'sat', quality_in) are read for pure fluids only; "
                             "give the mixture's inlet temperature")
        pv = _safe_bubble(st, t)
        s.update(CP.PT_INPUTS, p, t)
        q = s.Q()
        if 0.0 <= q <= 1.0:
            raise StateError(f"the inlet is two-phase at {p / 1e5:.4g} bar(a) and {t - 273.15:.4g} degC "
                             f"(vapour fraction {q:.2f}); the sizing methods need a single-phase inlet")
        phase = phase_given or ("liquid" if s.phase() == CP.iphase_liquid else "gas")
        return read_state(st, phase, pv), phase, ""
    if not np.isfinite(t) or np.isfinite(quality):
        return _saturated_inlet(st, p, phase_given, quality)
    psat = saturation_pressure(st, t)
    if np.isnan(psat):
        phase = phase_given or "gas"  # supercritical: compressible-flow equations
        s.update(CP.PT_INPUTS, p, t)
        return read_state(st, phase, float("nan")), phase, ""
    t_sat = _saturation_temperature(st, p)
    if np.isfinite(t_sat) and abs(t - t_sat) <= SATURATION_TOLERANCE_K:
        # Exactly at saturation (within 1 mK, rounding of the two curves) counts as the liquid side.
        side = phase_given or ("liquid" if t <= t_sat + 1e-3 else "gas")
        values, phase, _ = _saturated_inlet(st, p, side, 0.0 if side == "liquid" else 1.0)
        word = "liquid" if phase == "liquid" else "vapour"
        note = (f"t_in {t - 273.15:.4g} degC is within {SATURATION_TOLERANCE_K:g} K of saturation "
                f"({t_sat - 273.15:.4g} degC at p_in): audited as saturated {word}"
                + ("" if phase_given else "; state the phase in column 'phase' if it is the other side"))
        return values, phase, note
    phase = phase_given or ("liquid" if p > psat else "gas")
    if phase == "liquid" and p < psat:
        raise StateError(f"column 'phase' says liquid, but at {p / 1e5:.4g} bar(a) and {t - 273.15:.4g} degC "
                         f"the fluid is vapour (saturation pressure {psat / 1e5:.4g} bar(a))")
    if phase == "gas" and p > psat:
        raise StateError(f"column 'phase' says gas, but at {p / 1e5:.4g} bar(a) and {t - 273.15:.4g} degC "
                         f"the fluid is liquid (saturation pressure {psat / 1e5:.4g} bar(a))")
    s.update(CP.PT_INPUTS, p, t)
    return read_state(st, phase, psat), phase, ""


def _saturation_temperature(st: State, p: float) -> float:
    """Saturation temperature [K] of a pure fluid at p; NaN at or above the critical pressure."""
    if p >= st.pc:
        return float("nan")
    try:
        st.state.update(CP.PQ_INPUTS, p, 0.0)
    except ValueError:
        return float("nan")
    return st.state.T()


def _saturated_inlet(st: State, p: float, phase_given: str, quality: float) -> tuple:
    """A saturated or wet inlet at p: saturated liquid (quality 0), saturated vapour (1), or wet vapour.

    Wet vapour of quality WET_GAS_MIN or more (wet steam) is sized as a gas with the homogeneous
    mixture's density and the saturated vapour's isentropic exponent (common practice for wet
    steam; two-phase inlets are outside IEC 60534-2-1, and the note says so).  A lower quality is a
    two-phase inlet the sizing methods do not cover: refused for that case.
    """
    if p >= st.pc:
        raise StateError(f"p_in {p / 1e5:.4g} bar(a) is at or above the critical pressure: there is no "
                         "saturation there; give the inlet temperature")
    if not np.isfinite(quality):
        if not phase_given:
            raise StateError("t_in 'sat' needs column 'phase' (liquid or gas) or quality_in to say which side of "
                             "saturation the inlet is on")
        quality = 0.0 if phase_given == "liquid" else 1.0
    if phase_given == "liquid" and quality > 0.0 or phase_given == "gas" and quality < WET_GAS_MIN:
        raise StateError(f"quality_in {quality:g} does not fit column 'phase' ({phase_given})")
    if 0.0 < quality < WET_GAS_MIN:
        raise StateError(f"quality_in {quality:g}: a two-phase inlet the sizing methods do not cover (wet vapour "
                         f"of quality {WET_GAS_MIN:g} or more is sized as a gas)")
    s = st.state
    if quality == 0.0:
        s.update(CP.PQ_INPUTS, p, 0.0)
        return read_state(st, "liquid", s.p()), "liquid", "saturated liquid at p_in"
    s.update(CP.PQ_INPUTS, p, 1.0)
    vapour = read_state(st, "gas", s.p())
    if quality >= 1.0:
        return vapour, "gas", "saturated vapour at p_in"
    s.update(CP.PQ_INPUTS, p, quality)
    wet = list(vapour)
    wet[INLET_FIELDS.index("rho")] = s.rhomass()
    wet[INLET_FIELDS.index("h")] = s.hmass()
    wet[INLET_FIELDS.index("z")] = p * st.molar_mass / 1000.0 / (s.rhomass() * R_GAS * s.T())
    return tuple(wet), "gas", (f"wet inlet, quality {quality:g}: sized as a gas with the homogeneous mixture's density "
                               "(common practice for wet steam; two-phase inlets are outside IEC 60534-2-1)")


def _safe_bubble(st: State, t: float) -> float:
    try:
        return saturation_pressure(st, t)
    except ValueError:
        return float("nan")


def _key_number(x: float) -> float:
    """A cache-key form of a number: rounded, with NaN as -1 (no inlet temperature or quality is -1)."""
    return round(float(x), 6) if math.isfinite(x) else -1.0


def empty_inlet(n: int) -> dict[str, np.ndarray]:
    """The layout ``inlet_properties`` returns, for n cases, with nothing evaluated yet."""
    out = {name: np.full(n, np.nan) for name in INLET_FIELDS}
    out["phase"] = np.full(n, "", dtype=object)
    out["note"] = np.full(n, "", dtype=object)
    out["error"] = np.full(n, "", dtype=object)
    return out


def place(out: dict[str, np.ndarray], idx: np.ndarray, part: dict[str, np.ndarray]) -> None:
    """Write ``part`` (fields in ``empty_inlet``'s layout, one value per index) into ``out`` at ``idx``."""
    for name, values in part.items():
        out[name][idx] = values


def state_groups(fluids: list[Fluid | None], label: np.ndarray, mask: np.ndarray) -> list[tuple[Fluid, np.ndarray]]:
    """The states in ``mask`` grouped by fluid and label: [(fluid, indices in ascending order)].

    Vectorised (a history holds millions of states): fluids are told apart by identity, as the
    engine hands every case of a valve the same fluid object; equal fluids held in distinct
    objects only make more, smaller groups.  None (a custom fluid) is never grouped.
    """
    n = len(fluids)
    ids = np.fromiter(map(id, fluids), dtype=np.int64, count=n)
    keep = np.flatnonzero(np.asarray(mask, bool) & (ids != id(None)))
    if keep.size == 0:
        return []
    fluid_code, _ = pd.factorize(ids[keep])          # hashing, not sorting: few distinct values
    label_code, labels = pd.factorize(np.asarray(label)[keep])
    key = fluid_code.astype(np.int64) * max(len(labels), 1) + label_code
    order = np.argsort(key, kind="stable")           # ascending indices within each group
    groups = np.split(keep[order], np.flatnonzero(np.diff(key[order])) + 1)
    return [(fluids[g[0]], g) for g in groups]


def inlet_properties(fluids: list[Fluid | None], p: np.ndarray, t: np.ndarray,
                     phase_given: np.ndarray, backend: str = "HEOS",
                     quality: np.ndarray | None = None) -> dict[str, np.ndarray]:
    """Inlet properties for every valve-case whose fluid is a CoolProp fluid.

    fluids: resolved fluid per case (None for custom fluids, skipped);
    p: inlet pressure [Pa abs]; t: inlet temperature [K] (NaN: saturated at
    p); phase_given: 'liquid', 'gas' or '' per case; backend: CoolProp
    backend for pure fluids ('HEOS', or a tabular one such as 'BICUBIC&HEOS';
    a state outside a table's range falls back to HEOS); quality: inlet
    vapour mass fraction per case (NaN: not given).  A pure fluid within
    SATURATION_TOLERANCE_K of saturation is audited as saturated, on the side
    its phase (or its temperature) says, with a note.
    Returns arrays rho [kg/m3], pv [Pa], pc [Pa], mu [Pa s], molar_mass
    [kg/kmol], z, k (gas: the isentropic exponent rho c^2 / p, see
    ``isentropic_exponent``; liquid: cp/cv, unused), sound_speed [m/s],
    h [J/kg], t [K] (the temperature used), jt [K/Pa] (Joule-Thomson
    coefficient of a pure gas; NaN otherwise), phase, note, error.
    """
    n = len(fluids)
    quality = np.full(n, np.nan) if quality is None else np.asarray(quality, float)
    out = empty_inlet(n)
    # Plain Python numbers in the loop and the results placed once at the end: numpy elements read or
    # written one at a time cost more than the cache look-up.
    p_list, t_list, q_list, phases = *(np.asarray(a, float).tolist() for a in (p, t, quality)), list(phase_given)
    done, values_of = [], []
    for i in range(n):
        fluid = fluids[i]
        if fluid is None or not math.isfinite(p_list[i]):
            continue
        st = state_for(fluid, backend)
        # NaN (t_in 'sat', no quality) becomes a sentinel: NaN != NaN would make every such key a miss.
        key = (round(p_list[i], 3), _key_number(t_list[i]), phases[i], _key_number(q_list[i]))
        value = st.cache.get(key)
        if value is None:
            value = st.cache[key] = _inlet_value(st, fluid, backend, p_list[i], t_list[i], phases[i], q_list[i])
        if isinstance(value, str):
            out["error"][i] = value
        else:
            done.append(i)
            values_of.append(value)
    if done:
        out["phase"][done], out["note"][done] = [v[1] for v in values_of], [v[2] for v in values_of]
        numbers = np.array([v[0] for v in values_of], dtype=float).reshape(len(done), len(INLET_FIELDS))
        for k, name in enumerate(INLET_FIELDS):
            out[name][done] = numbers[:, k]
    return out


def _inlet_value(st: State, fluid: Fluid, backend: str, p: float, t: float, phase_given: str, quality: float):
    """One inlet state for the cache: (INLET_FIELDS values, phase, note), or the reason it has none."""
    try:
        return _inlet_state(st, p, t, phase_given, quality)
    except StateError as exc:
        return str(exc)
    except ValueError as exc:
        if backend != "HEOS":  # outside a tabular backend's range: the full equation of state
            full = inlet_properties([fluid], np.array([p]), np.array([t]), np.array([phase_given], dtype=object),
                                    "HEOS", np.array([quality]))
            return full["error"][0] or (tuple(full[name][0] for name in INLET_FIELDS), full["phase"][0],
                                        full["note"][0])
        return (f"CoolProp could not evaluate {'&'.join(fluid.components)} at {p / 1e5:.4g} bar(a) and "
                f"{t - 273.15:.4g} degC ({str(exc)[:120]})")


def ideal_gas_density(p, t, molar_mass, z):
    """Gas density rho = p M / (Z R T) [kg/m3]; p [Pa], t [K], molar_mass [kg/kmol]."""
    return p * molar_mass / 1000.0 / (z * R_GAS * t)


def resolve_fluid(text: str) -> tuple[Fluid | None, str]:
    """Parse a `fluid` cell: a CoolProp name, or a mixture 'A[0.9]&B[0.1]'.

    Returns (fluid, '') or (None, message with the nearest known names).
    """
    text = str(text).strip()
    if "&" in text or "[" in text:
        parts = text.split("&")
        comps, fracs = [], []
        for part in parts:
            m = MIXTURE_COMPONENT.match(part)
            if not m:
                return None, (f"column 'fluid': '{text[:60]}' is not a mixture of the form "
                              "'Methane[0.9]&Ethane[0.1]'")
            comps.append(m.group(1))
            fracs.append(float(m.group(2)))
        for c in comps:
            if c not in known_fluids():
                return None, f"column 'fluid': unknown component '{c[:40]}'; nearest CoolProp names: {suggest(c)}"
        twice = sorted({c for c in comps if comps.count(c) > 1})
        if twice:
            return None, f"column 'fluid': component '{twice[0][:40]}' appears twice in '{text[:60]}'; name it once"
        total = sum(fracs)
        if not all(f > 0 for f in fracs) or abs(total - 1.0) > 0.01:
            return None, (f"column 'fluid': mole fractions in '{text[:60]}' must be positive and add up to 1 "
                          f"(they add up to {total:g})")
        fluid = Fluid(tuple(comps), tuple(f / total for f in fracs))
        try:
            state_for(fluid, "HEOS")  # CoolProp needs interaction data for every pair: ask now, per row
        except ValueError as exc:
            return None, f"column 'fluid': CoolProp cannot model the mixture '{text[:60]}' ({str(exc)[:120]})"
        return fluid, ""
    if text not in known_fluids():
        lower = {n.lower(): n for n in known_fluids()}
        if text.lower() in lower:
            return Fluid((lower[text.lower()],)), ""
        hint = suggest(text)
        return None, (f"column 'fluid': unknown fluid '{text[:40]}'; expected a CoolProp name"
                      + (f" (nearest: {hint})" if hint else "") + " or 'custom'")
    return Fluid((text,)), ""
