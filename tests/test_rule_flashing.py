"""Flashing: the switch at the vapour pressure, and the outlet vapour fraction against an energy
balance by hand with IAPWS-IF97 (the `iapws` package)."""
import pytest

iapws = pytest.importorskip("iapws")

from helpers_linelist import audit_rows  # noqa: E402

HEADER = "tag,fluid,valve_size,rated_cv,fl,fd,xt,flow_max,p_in_max,p_out_max,t_in_max"


def test_vapour_fraction_matches_an_if97_energy_balance(tmp_path):
    # Hot condensate 150 degC at 6 bar(a) let down to 2 bar(a): h1 = h(6 bar, 150 degC);
    # x2 = (h1 - h'(2 bar)) / (h''(2 bar) - h'(2 bar)).
    audit = audit_rows(tmp_path, HEADER, ["A,Water,50,60,0.9,0.46,0.7,5,6,2,150"])
    h1 = iapws.IAPWS97(P=0.6, T=423.15).h
    liq, vap = iapws.IAPWS97(P=0.2, x=0), iapws.IAPWS97(P=0.2, x=1)
    x2 = (h1 - liq.h) / (vap.h - liq.h)
    case = audit.cases.iloc[0]
    assert bool(case["flashing"]) and case["cavitation"] == "flashing"
    assert case["vapour_fraction_out"] == pytest.approx(x2, rel=5e-3)
    rho_mix = 1.0 / (x2 / vap.rho + (1 - x2) / liq.rho)   # homogeneous mixture
    assert case["rho_out"] == pytest.approx(rho_mix, rel=1e-2)
    assert "FLASHING" in case["findings"]


def test_p_out_just_above_and_just_below_the_vapour_pressure(tmp_path):
    pv = iapws.IAPWS97(T=423.15, x=0).P * 10.0  # bar
    audit = audit_rows(tmp_path, HEADER, [f"A,Water,50,60,0.9,0.46,0.7,5,8,{pv * 1.002:.6f},150",
                                          f"B,Water,50,60,0.9,0.46,0.7,5,8,{pv * 0.998:.6f},150"])
    flags = dict(zip(audit.cases["tag"], audit.cases["flashing"]))
    assert flags == {"A": False, "B": True}
