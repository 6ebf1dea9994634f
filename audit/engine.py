"""The audit pipeline: line list -> properties -> sizing -> rules -> ranking.

All arrays here are SI and hold one element per valve-case.  The pipeline
has no loop over valves or cases except where CoolProp is asked for a
distinct state (see ``properties``).  A case that cannot be audited keeps
its row with a ``case_error`` and blank numbers; it never stops the run.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from audit.fluid import mixture_gas, outlet, outlet_tables, properties, tables
from audit.casetable import size_arrays, sizing_arrays
from audit.iec.characteristic import travel_percent
from audit.studies.headroom import add_case_headroom, add_valve_headroom
from audit.io.loader import LineList
from audit.workers import in_parts
from audit.memory import release_free_memory

R_GAS = properties.R_GAS
# The line list's CoolProp calls (one state a case) run on every core in contiguous parts of at least
# this many cases (a part costs a process fork, some 20 ms); each state is computed on its own, so the
# results do not depend on the parts (tests/test_engine_parts.py).
PART_MIN_STATES = 10_000


@dataclass
class Options:
    """Run options that change numbers (and so belong in the report's metadata)."""
    p_atm: float = 101325.0          # Pa, site atmospheric pressure for gauge units
    backend: str = "HEOS"            # CoolProp backend for pure fluids
    thresholds: dict = field(default_factory=dict)  # rule threshold overrides {rule: {name: value}}
    flow_scale: float = 1.0          # what-if multiplier on every case's flow
    scale_cases: tuple[str, ...] = ()  # cases the multiplier applies to (empty: all)
    area_scale: dict = field(default_factory=dict)  # {area: multiplier}, on top of flow_scale
    property_tables: bool = False    # many states (history samples): interpolate in checked tables (fluid.tables)
    summarise: bool = True           # False: case columns and finding codes only (no sentences, ranking or
                                     # headroom), for the history's samples, read only as counts
    rules: tuple[str, ...] | None = None  # codes of the rules to run (None: all); the history's samples run
                                          # only those whose columns and codes history.csv reads


@dataclass
class Audit:
    cases: pd.DataFrame        # one row per valve-case, SI, every computed column
    valves: pd.DataFrame       # one row per audited valve (line-list fields, SI)
    rejected: pd.DataFrame
    findings: pd.DataFrame     # one row per finding: case row, code, severity, sentence
    linelist: LineList
    options: Options
    valve_extra_columns: tuple[str, ...] = ()   # valves.csv columns beyond the contract
    history: object = None     # audit.history.study.HistoryResult, with --history


# The valve's own fields each case carries (the rules read them per case).
VALVE_FIELDS = ("tag", "area", "service", "valve_size", "rated_cv", "characteristic", "rangeability", "fl", "xt",
                "fd", "xfz_given", "pipe_in_id", "pipe_out_id", "pipe_out_wall", "noise_limit", "noise_an", "noise_stp",
                "velocity_limit", "custom", "phase_given", "typical_factors", "overridden", "sound_speed", "intent",
                "duty", "criticality", "dissolved_gas", "density", "vapour_pressure", "critical_pressure", "viscosity",
                "molar_mass", "k", "z")


def case_table(ll: LineList, options: Options) -> pd.DataFrame:
    """Join each case with its valve's fields, as flat SI arrays."""
    cases = ll.cases.copy()
    v = cases["valve"].to_numpy(int)
    vals = ll.valves
    for col in VALVE_FIELDS:
        # take on the column's own array: text stays in pandas' string storage (no Python object per case)
        cases[col if col != "sound_speed" else "sound_speed_given"] = vals[col].array.take(v)
    applies = np.isin(cases["case"], options.scale_cases) if options.scale_cases else np.ones(len(cases), bool)
    scale = np.where(applies, options.flow_scale, 1.0)
    if options.area_scale:
        area_factor = cases["area"].map(lambda a: options.area_scale.get(a, 1.0)).to_numpy(float)
        scale = scale * np.where(applies, area_factor, 1.0)
    cases["flow"] = cases["flow"].to_numpy(float) * scale
    cases["flow_scale"] = scale
    return cases


def add_properties(cases: pd.DataFrame, ll: LineList, options: Options) -> None:
    """Inlet properties: CoolProp, then the row's overrides, which win."""
    v = cases["valve"].to_numpy(int)
    ok = cases["case_error"].to_numpy(dtype=object) == ""
    fluid_objs = ll.valves["fluid_obj"].to_numpy(dtype=object)[v]
    fluids = [f if good else None for f, good in zip(fluid_objs, ok)]
    p1, t1 = cases["p_in"].to_numpy(float), cases["t_in"].to_numpy(float)
    phase_given = cases["phase_given"].to_numpy(dtype=object)
    quality = cases["quality_in"].to_numpy(float)
    if options.property_tables:  # one table per fluid and valve: the range one valve visits is small
        props = tables.tabulated_inlet_properties(fluids, p1, t1, phase_given, options.backend, quality, groups=v)
    else:
        props = in_parts(lambda a, b: mixture_gas.full_equation_inlet(fluids[a:b], p1[a:b], t1[a:b], phase_given[a:b],
                                                                     options.backend, quality=quality[a:b]),
                         len(fluids), PART_MIN_STATES)
    custom = cases["custom"].to_numpy(bool)
    # The temperature the properties were taken at: the given one, or the saturation temperature ('sat',
    # quality_in, or a state within the saturation tolerance).
    t1 = np.where(np.isfinite(props["t"]) & ~custom, props["t"], t1)
    cases["t_in"] = t1
    cases["inlet_note"] = props["note"]
    phase = np.where(custom, phase_given, props["phase"])
    over = {"rho": "density", "pv": "vapour_pressure", "pc": "critical_pressure", "mu": "viscosity",
            "molar_mass": "molar_mass", "k": "k", "z": "z", "sound_speed": "sound_speed_given"}
    out = {}
    for name, col in over.items():
        given = cases[col].to_numpy(float)
        out[name] = np.where(np.isfinite(given), given, props[name])
    gas = phase == "gas"
    # A gas row that overrides Z or M (not density) gets its density from p M / (Z R T).
    z_or_m = np.isfinite(cases["z"].to_numpy(float)) | np.isfinite(cases["molar_mass"].to_numpy(float))
    recompute = gas & (custom | z_or_m) & ~np.isfinite(cases["density"].to_numpy(float))
    ideal = properties.ideal_gas_density(p1, t1, out["molar_mass"], np.where(np.isfinite(out["z"]), out["z"], 1.0))
    out["rho"] = np.where(recompute, ideal, out["rho"])
    for name, arr in out.items():
        cases[name] = arr
    cases["h_in"] = props["h"]
    cases["jt_in"] = props["jt"]  # the outlet's first guess (add_outlet_state)
    cases["phase"] = phase
    err = cases["case_error"].to_numpy(dtype=object).copy()
    err = np.where((err == "") & (props["error"] != ""), props["error"], err)
    liquid = phase == "liquid"
    checks = [
        (custom & ~np.isfinite(t1), "t_in 'sat' or quality_in needs a CoolProp fluid (a custom fluid has no "
                                    "saturation data); give the inlet temperature"),
        # A saturated liquid has pv = p_in exactly (rounding aside); above that the inlet cannot be liquid.
        (liquid & (out["pv"] > p1 * (1.0 + 1e-6)), "the vapour pressure is above the inlet pressure, so the inlet "
                                                   "cannot be liquid; check vapour_pressure, p_in and t_in"),
        (liquid & ~(out["pc"] > out["pv"]), "the critical pressure must be above the vapour pressure"),
        (gas & ~np.isfinite(cases["xt"].to_numpy(float)), "the case is gas or vapour but column 'xt' is "
                                                            "blank and no 'valve_style' gives a typical value"),
    ]
    for mask, message in checks:
        err = np.where((err == "") & mask & ok, message, err)
    cases["case_error"] = err


def add_mass_flow(cases: pd.DataFrame, ll: LineList | None = None, options: Options | None = None) -> None:
    """Every flow basis to mass flow [kg/s] and inlet volume flow [m3/s].

    Standard gas volumes: the gas's density at the unit's reference state, real gas (CoolProp) where
    the fluid is a CoolProp fluid and a gas there, else ideal gas (custom fluids; the case says so).
    """
    flow = cases["flow"].to_numpy(float)
    basis = cases["flow_basis"].to_numpy(dtype=object)
    rho = cases["rho"].to_numpy(float)
    gas = cases["phase"].to_numpy(dtype=object) == "gas"
    std_t, std_p = cases["std_t"].to_numpy(float), cases["std_p"].to_numpy(float)
    rho_std = std_p * cases["molar_mass"].to_numpy(float) / 1000.0 / (R_GAS * std_t)
    std = basis == "std"
    if std.any() and ll is not None:
        fluids = ll.valves["fluid_obj"].to_numpy(dtype=object)[cases["valve"].to_numpy(int)]
        real = outlet.standard_density([f if want else None for f, want in zip(fluids, std)], std_t, std_p,
                                           options.backend if options else "HEOS")
        rho_std = np.where(np.isfinite(real), real, rho_std)
        ideal = std & ~np.isfinite(real)
        if ideal.any():
            cases["inlet_note"] = np.where(ideal, _join(cases["inlet_note"].to_numpy(dtype=object),
                                                        "standard volume converted as an ideal gas (no real-gas "
                                                        "data for this fluid at the reference state)"),
                                           cases["inlet_note"].to_numpy(dtype=object))
    bare = flow / 3600.0  # a bare number: m3/h for liquids, kg/h for gases (contract defaults)
    w = np.select([basis == "mass", basis == "volume", basis == "std", gas], [flow, flow * rho, flow * rho_std, bare],
                  bare * rho)
    cases["w"] = w
    cases["q_in"] = w / rho
    err = cases["case_error"].to_numpy(dtype=object)
    std_liquid = (basis == "std") & ~gas & (err == "")
    cases["case_error"] = np.where(std_liquid, "a standard gas volume flow (Nm3/h, Sm3/h, scfh, MMSCFD) was given "
                                               "for a liquid; give m3/h, l/min, gpm or a mass flow", err)


def impossible_choke(cases: pd.DataFrame, res: dict, ok: np.ndarray) -> np.ndarray:
    """Case errors where the given factors put the choked limit at or past the inlet pressure.

    A choked pressure ratio x_choked = F_gamma xTP of 1 or more (or a liquid dp_choked at or
    above p_in) would let the flow grow until the outlet is a vacuum: no physical valve does
    that, so the row's xt, k or fittings are wrong.  The case is refused with the numbers.
    """
    gas = cases["phase"].to_numpy(dtype=object) == "gas"
    p1 = cases["p_in"].to_numpy(float)
    k, xtp = cases["k"].to_numpy(float), res["xtp"]
    over_gas = ok & gas & (res["x_choked"] >= 1.0)
    over_liquid = ok & ~gas & (res["dp_choked"] >= p1)
    err = cases["case_error"].to_numpy(dtype=object).copy()
    msg = np.full(len(cases), "", dtype=object)
    for i in np.flatnonzero(over_gas):
        msg[i] = (f"the choked pressure ratio F_gamma xTP = {res['x_choked'][i]:.3f} (exponent {k[i]:.3g}, "
                  f"xTP {xtp[i]:.3g}) is 1 or more, which no valve reaches; check columns xt and k and the fittings")
    for i in np.flatnonzero(over_liquid):
        msg[i] = (f"the choked pressure drop {res['dp_choked'][i] / 1e5:.4g} bar reaches the inlet pressure "
                  f"{p1[i] / 1e5:.4g} bar(a), which no valve reaches; check columns fl, vapour_pressure and the "
                  "fittings")
    cases["case_error"] = np.where((err == "") & (msg != ""), msg, err)
    return msg


def add_sizing(cases: pd.DataFrame) -> None:
    """IEC 60534-2-1 sizing of every auditable case at once."""
    ok = cases["case_error"].to_numpy(dtype=object) == ""
    c = sizing_arrays(cases)
    res = {name: np.full(len(cases), np.nan) for name in ("kv", "cv", "fp", "flp", "xtp", "fr", "rev", "ff",
                                                           "y", "x", "x_choked", "dp_choked", "choke_ratio")}
    res["choked"] = np.zeros(len(cases), dtype=bool)
    res["converged"] = np.zeros(len(cases), dtype=bool)
    if ok.any():
        sized = size_arrays(sizing_arrays(cases, ok))
        for name in res:
            res[name][ok] = sized[name]
    bad = impossible_choke(cases, res, ok)
    for name, arr in res.items():
        if arr.dtype == bool:
            arr[bad != ""] = False
        else:
            arr[bad != ""] = np.nan
        cases[name] = arr
    cases["cv_ratio"] = res["cv"] / cases["rated_cv"].to_numpy(float)
    cases["travel_pct"] = travel_percent(cases["cv_ratio"].to_numpy(float), cases["characteristic"].to_numpy(),
                                         cases["rangeability"].to_numpy(float))
    cases["dp"] = c["p_in"] - c["p_out"]
    cases["sizing_failed"] = ok & ~res["converged"]


def add_outlet_state(cases: pd.DataFrame, ll: LineList, options: Options) -> None:
    """State after the valve: isenthalpic expansion from the inlet to p_out.

    Gases and flashing liquids of CoolProp fluids: an (h, p) flash gives the
    outlet vapour mass fraction, the outlet mixture density (homogeneous) and,
    single phase, the speed of sound.  A liquid that does not flash keeps its
    inlet density.  Custom fluids have no enthalpy data: a flashing custom
    liquid's vapour fraction is unknown (NaN, and the finding says so), a
    custom gas takes rho2 = rho1 p2 / p1 at the inlet temperature and Z, and
    c2 = sqrt(k Z R T / M).
    """
    ok = (cases["case_error"].to_numpy(dtype=object) == "") & cases["converged"].to_numpy(bool)
    custom = cases["custom"].to_numpy(bool)
    v = cases["valve"].to_numpy(int)
    fluid_objs = ll.valves["fluid_obj"].to_numpy(dtype=object)[v]
    p2 = cases["p_out"].to_numpy(float)
    gas = cases["phase"].to_numpy(dtype=object) == "gas"
    flashing = ~gas & (p2 <= cases["pv"].to_numpy(float))
    # A liquid that does not flash leaves as the same liquid (rho_out = rho_in); only flashing
    # liquids and gases need the (h, p) flash.
    need = ok & ~custom & (gas | flashing)
    fluids = [f if want else None for f, want in zip(fluid_objs, need)]
    h1, t1, p1 = (cases[c].to_numpy(float) for c in ("h_in", "t_in", "p_in"))
    if options.property_tables:  # many samples: gas outlets from checked tables, one per valve
        flash = outlet_tables.tabulated_outlet(fluids, p2, h1, options.backend, t_in=t1, gas=gas, groups=v)
    else:
        # A pure gas's Newton steps start from the Joule-Thomson estimate of the outlet temperature.
        jt = cases["jt_in"].to_numpy(float)
        start = np.where(np.isfinite(jt), t1 + jt * (p2 - p1), t1)
        flash = in_parts(lambda a, b: outlet.isenthalpic_outlet(fluids[a:b], p2[a:b], h1[a:b], options.backend,
                                                                t_in=t1[a:b], gas=gas[a:b], t_start=start[a:b]),
                         len(fluids), PART_MIN_STATES)
    rho1 = cases["rho"].to_numpy(float)
    k, m, z = (cases[c].to_numpy(float) for c in ("k", "molar_mass", "z"))
    z = np.where(np.isfinite(z), z, 1.0)
    rho_custom = np.where(gas, rho1 * p2 / p1, rho1)  # also every liquid that does not flash
    c_custom = np.where(gas, np.sqrt(k * z * R_GAS * t1 / (m / 1000.0)), np.nan)
    use_flash = need & (flash["error"] == "")
    cases["rho_out"] = np.where(use_flash, flash["rho"], rho_custom)
    cases["quality_out"] = np.where(use_flash, flash["quality"], np.where(gas, 1.0, np.where(flashing, np.nan, 0.0)))
    cases["t_out"] = np.where(use_flash, flash["t"], t1)
    cases["sound_speed_out"] = np.where(use_flash, flash["sound_speed"], c_custom)
    cases["outlet_note"] = np.where(need & ~use_flash, flash["error"], "")
    cases.loc[~ok, ["rho_out", "quality_out", "t_out", "sound_speed_out"]] = np.nan


def _join(notes: np.ndarray, extra: str) -> np.ndarray:
    return np.array([f"{n}; {extra}" if n else extra for n in notes], dtype=object)


def reject_unauditable(ll: LineList, cases: pd.DataFrame) -> tuple[LineList, pd.DataFrame]:
    """Move valves none of whose cases can be audited (found only once properties are known,
    such as a two-phase inlet at every case) from the audited valves to the rejected rows."""
    bad_case = cases["case_error"].to_numpy(dtype=object) != ""
    all_bad = pd.Series(bad_case).groupby(cases["valve"].to_numpy()).all()
    drop = all_bad.index[all_bad.to_numpy()].to_numpy(int)
    if drop.size == 0:
        return ll, cases
    reasons = cases[np.isin(cases["valve"], drop)].groupby("valve").apply(
        lambda g: "; ".join(f"case {c}: {e}" for c, e in zip(g["case"], g["case_error"])), include_groups=False)
    gone = ll.valves.iloc[drop]
    rejected = pd.concat([ll.rejected, pd.DataFrame({"row": gone["row"].to_numpy(), "tag": gone["tag"].to_numpy(),
                                                     "reason": reasons.loc[drop].to_numpy()})], ignore_index=True)
    rejected = rejected.sort_values("row", kind="stable").reset_index(drop=True)
    keep = np.setdiff1d(np.arange(len(ll.valves)), drop)
    remap = -np.ones(len(ll.valves), dtype=int)
    remap[keep] = np.arange(keep.size)
    valves = ll.valves.iloc[keep].reset_index(drop=True)
    cases = cases[~np.isin(cases["valve"], drop)].copy()
    cases["valve"] = remap[cases["valve"].to_numpy(int)]
    cases = cases.reset_index(drop=True)
    kept_cases = ll.cases[~np.isin(ll.cases["valve"], drop)].copy()
    kept_cases["valve"] = remap[kept_cases["valve"].to_numpy(int)]
    return LineList(valves, kept_cases.reset_index(drop=True), rejected, ll.ignored_columns, ll.rows_total,
                    source=ll.source, units=ll.units), cases


def compute(ll: LineList, options: Options | None = None) -> Audit:
    """Audit a loaded line list: every case sized, screened and ranked."""
    from rules import apply_rules  # the rules package depends on audit, not the reverse
    from audit.ranking import rank_valves

    from rules import effective_thresholds

    options = options or Options()
    cases = case_table(ll, options)
    add_properties(cases, ll, options)
    release_free_memory()  # after each large stage: what it freed goes back to the system (audit.memory)
    add_mass_flow(cases, ll, options)
    ll, cases = reject_unauditable(ll, cases)
    add_sizing(cases)
    add_outlet_state(cases, ll, options)
    release_free_memory()
    if not options.summarise:  # the history's samples: counted, never ranked, so no headroom either
        from rules.base import without_sentences

        with without_sentences():
            findings = apply_rules(cases, options.thresholds, options.rules, graded=False)
        return Audit(cases, ll.valves, ll.rejected, findings, ll, options)
    add_case_headroom(cases, effective_thresholds(options.thresholds)["travel"]["high_pct"])
    release_free_memory()
    findings = apply_rules(cases, options.thresholds, options.rules)
    release_free_memory()
    valves = rank_valves(ll.valves, cases, findings)
    extra = add_valve_headroom(cases, valves)
    release_free_memory()
    audit = Audit(cases, valves, ll.rejected, findings, ll, options)
    audit.valve_extra_columns = ("criticality",) + tuple(extra)
    return audit
