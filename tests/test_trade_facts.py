"""Facts of the trade (common practice), checked on the engine."""
import numpy as np
import pytest

from audit.iec.sizing import flow_through, size_valves
from audit.iec.characteristic import cv_ratio_at_travel
from conftest import R


def test_no_pressure_drop_with_flow_is_reported_not_crashed(tmp_path):
    # Same pressure on both sides: a valve passes no flow, so the case cannot be met.
    from audit.engine import compute
    from audit.io.loader import load_linelist
    f = tmp_path / "l.csv"
    f.write_text("tag,fluid,valve_size,rated_cv,fl,fd,xt,flow_max,p_in_max,p_out_max,t_in_max,"
                 "flow_norm,p_in_norm,p_out_norm,t_in_norm\n"
                 "FV-1,Water,50,40,0.9,0.46,0.7,10,5,5,20,8,5,4,20\n")
    audit = compute(load_linelist(f))
    cases = audit.cases.set_index("case")
    assert "no pressure drop" in cases.loc["max", "case_error"]
    assert np.isnan(cases.loc["max", "cv"])
    assert cases.loc["norm", "case_error"] == "" and cases.loc["norm", "cv"] > 0
    assert "CASE_INVALID" in cases.loc["max", "findings"]


def _liquid_flow(dp):
    # 24 bar(a) inlet, water-like liquid, a valve at 50 % travel of an equal-percentage Cv 100 trim.
    kv = 100 / 1.156 * cv_ratio_at_travel(50.0, "equal_percentage", 50.0)
    p1 = 24e5
    return flow_through(kv, False, p1, p1 - dp, 300.0, 997.0, 3.5e3, 22.06e6, np.nan, np.nan, 0.1, 0.1, 0.1,
                        0.9, np.nan)


def test_liquid_flow_rises_with_root_dp_then_stays_flat_past_choking():
    dp = np.linspace(1e4, 23e5, 400)
    w = _liquid_flow(dp)
    ff = 0.96 - 0.28 * np.sqrt(3.5e3 / 22.06e6)
    dp_choked = 0.9 ** 2 * (24e5 - ff * 3.5e3)
    below = dp < dp_choked * 0.99
    ratio = w[below] / np.sqrt(dp[below])
    assert np.ptp(ratio) / ratio.mean() < 1e-9           # W proportional to sqrt(dp)
    plateau = w[dp > dp_choked * 1.01]
    assert np.ptp(plateau) / plateau.mean() < 1e-12       # flat beyond dp_choked
    assert plateau.mean() == pytest.approx(w[below][-1] * np.sqrt(dp_choked / dp[below][-1]), rel=1e-3)


def test_gas_flow_stops_rising_at_x_choked():
    p1, t, m, k = 24e5, 300.0, 16.04, 1.31
    rho1 = p1 * m / 1000 / (R * t)
    x = np.linspace(0.01, 0.95, 400)
    w = flow_through(50.0, True, p1, p1 * (1 - x), t, rho1, np.nan, np.nan, m, k, 0.05, 0.05, 0.05, 0.9, 0.7)
    x_choked = k / 1.4 * 0.7
    assert np.all(np.diff(w[x < x_choked]) > 0)
    plateau = w[x >= x_choked]
    assert np.ptp(plateau) / plateau.mean() < 1e-12


def test_sizing_is_the_inverse_of_the_flow_it_passes():
    # Size for the flow a Kv 40 valve passes at 6 bar drop; the answer is Kv 40 (turbulent).
    p1 = 10e5
    w = flow_through(40.0, False, p1, 4e5, 300.0, 997.0, 3.5e3, 22.06e6, np.nan, np.nan, 0.08, 0.1, 0.1, 0.9, np.nan)
    r = size_valves([False], w, [p1], [4e5], [300.0], [997.0], [3.5e3], [22.06e6], [1e-3], [np.nan], [np.nan],
                    [0.08], [0.1], [0.1], [0.9], [np.nan], [0.46])
    assert r["kv"][0] == pytest.approx(40.0, rel=1e-3)
