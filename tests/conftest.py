"""Shared test helpers.  Hypothesis runs derandomised (a fixed seed) so CI is repeatable."""
from __future__ import annotations

from pathlib import Path

import numpy as np
from hypothesis import HealthCheck, settings

settings.register_profile("repeatable", derandomize=True, deadline=None,
                          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
settings.load_profile("repeatable")

ROOT = Path(__file__).resolve().parents[1]
import sys  # noqa: E402
sys.path.insert(0, str(ROOT / "benchmarks"))  # the reference loop and synthetic line lists
SAMPLE_CSV = ROOT / "sample_linelist" / "fenmoor_unit.csv"
SAMPLE_XLSX = ROOT / "sample_linelist" / "fenmoor_unit.xlsx"
R = 8.314462618


def gas_case(**kw):
    """Arguments of sizing.size_valves for one gas case given standard-volume flow.

    q_normal: flow at 0 degC and 101.325 kPa [m3/h]; other keys SI.
    """
    m, z, t, p1 = kw["molar_mass"], kw["z"], kw["t1"], kw["p1"]
    rho1 = p1 * m / 1000.0 / (z * R * t)
    rho_n = 101325.0 * m / 1000.0 / (R * 273.15)
    return dict(is_gas=[True], w=[kw["q_normal"] / 3600.0 * rho_n], p1=[p1], p2=[kw["p2"]], t1=[t], rho1=[rho1],
                pv=[np.nan], pc=[np.nan], mu=[kw["mu"]], molar_mass=[m], k=[kw["k"]], d=[kw["d"]], d1=[kw["d1"]],
                d2=[kw["d2"]], fl=[kw["fl"]], xt=[kw["xt"]], fd=[kw["fd"]])


def liquid_case(**kw):
    """Arguments of sizing.size_valves for one liquid case; q in m3/h, the rest SI."""
    return dict(is_gas=[False], w=[kw["q"] / 3600.0 * kw["rho"]], p1=[kw["p1"]], p2=[kw["p2"]], t1=[300.0],
                rho1=[kw["rho"]], pv=[kw["pv"]], pc=[kw["pc"]], mu=[kw["mu"]], molar_mass=[np.nan], k=[np.nan],
                d=[kw["d"]], d1=[kw["d1"]], d2=[kw["d2"]], fl=[kw["fl"]], xt=[np.nan], fd=[kw["fd"]])
