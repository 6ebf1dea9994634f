"""Outlet velocity: continuity by hand, u = W / (rho A), for liquid, gas and flashing cases.
Densities by hand from IAPWS-IF97 (`iapws`)."""
import math

import pytest

iapws = pytest.importorskip("iapws")

from helpers_linelist import audit_rows  # noqa: E402

HEADER = "tag,fluid,phase,valve_size,rated_cv,fl,fd,xt,flow_max,p_in_max,p_out_max,t_in_max"
AREA_50 = math.pi * 0.05 ** 2 / 4


def test_liquid_gas_and_flashing_outlet_velocity(tmp_path):
    audit = audit_rows(tmp_path, HEADER, [
        "L,Water,,50,60,0.9,0.46,0.7,36000 kg/h,10,6,20",
        "G,Water,steam,50,60,0.9,0.46,0.7,3600 kg/h,10,6,250",
        "F,Water,,50,60,0.9,0.46,0.7,3600 kg/h,6,2,150",
    ])
    u = dict(zip(audit.cases["tag"], audit.cases["velocity_out_m_s"]))
    # liquid: inlet density stays (incompressible): 10 kg/s
    rho_l = iapws.IAPWS97(P=1.0, T=293.15).rho
    assert u["L"] == pytest.approx(10.0 / (rho_l * AREA_50), rel=2e-3)
    # steam: isenthalpic to 6 bar(a)
    h_steam = iapws.IAPWS97(P=1.0, T=523.15).h
    rho_g = iapws.IAPWS97(P=0.6, h=h_steam).rho
    assert u["G"] == pytest.approx(1.0 / (rho_g * AREA_50), rel=5e-3)
    # flashing: homogeneous mixture at 2 bar(a)
    h1 = iapws.IAPWS97(P=0.6, T=423.15).h
    liq, vap = iapws.IAPWS97(P=0.2, x=0), iapws.IAPWS97(P=0.2, x=1)
    x = (h1 - liq.h) / (vap.h - liq.h)
    rho_f = 1.0 / (x / vap.rho + (1 - x) / liq.rho)
    assert u["F"] == pytest.approx(1.0 / (rho_f * AREA_50), rel=1e-2)
    mach = audit.cases.set_index("tag").loc["G", "mach_out"]
    assert mach == pytest.approx(u["G"] / iapws.IAPWS97(P=0.6, h=h_steam).w, rel=5e-3)


def test_per_valve_velocity_limit_wins(tmp_path):
    header = HEADER + ",velocity_limit"
    audit = audit_rows(tmp_path, header, ["A,Water,,50,60,0.9,0.46,0.7,36000 kg/h,10,6,20,",
                                          "B,Water,,50,60,0.9,0.46,0.7,36000 kg/h,10,6,20,3"])
    codes = dict(zip(audit.cases["tag"], audit.cases["findings"]))
    assert "VELOCITY" not in codes["A"]   # 5.1 m/s under the 10 m/s default (common practice)
    assert "VELOCITY" in codes["B"]       # over the line list's 3 m/s
