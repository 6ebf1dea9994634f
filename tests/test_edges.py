"""Physics at the edges: two-phase and sonic outlets, saturated and wet inlets, standard volumes, AIV.

Sources beside each check: iapws (IAPWS-IF97) as an independent property source for the
homogeneous-equilibrium speed of sound; CoolProp for the real-gas standard density; the
definitions of the models for the rest.
"""
import importlib.util

import numpy as np
import pytest
from iapws import IAPWS97

import CoolProp.CoolProp as CP
from CoolProp import AbstractState

from audit.engine import compute
from audit.io.loader import load_linelist
from audit.fluid.outlet import hem_sound_speed
from conftest import ROOT, SAMPLE_CSV
from helpers_linelist import audit_rows
from rules.vibration import sound_power_level

spec = importlib.util.spec_from_file_location("make_sample", ROOT / "sample_linelist" / "make_sample.py")
make_sample = importlib.util.module_from_spec(spec)
spec.loader.exec_module(make_sample)
BUILT_FOR = make_sample.BUILT_FOR


@pytest.fixture(scope="module")
def sample():
    return compute(load_linelist(SAMPLE_CSV))


def test_hem_sound_speed_water_1_bar_10_percent_quality_against_iapws():
    # Hand computation with iapws: (dp/drho) along the isentrope through 1 bar(a), quality 0.1, by a central
    # difference of +-0.5 kPa (IAPWS-IF97, independent of CoolProp).  The two equations of state differ by
    # far less than 0.5 % in density there, so the speeds agree to 0.5 %.
    ref_state = IAPWS97(P=0.1, x=0.1)
    lo, hi = IAPWS97(P=0.0995, s=ref_state.s), IAPWS97(P=0.1005, s=ref_state.s)
    by_hand = np.sqrt(2 * 0.0005e6 / (hi.rho - lo.rho))
    s = AbstractState("HEOS", "Water")
    s.update(CP.PQ_INPUTS, 1e5, 0.1)
    assert hem_sound_speed(s, 1e5, s.smass()) == pytest.approx(by_hand, rel=5e-3)
    assert 100 < by_hand < 130  # far below the speed of either phase (472 m/s vapour, 1500 m/s liquid)


def test_flashing_outlet_at_mach_one_is_a_choked_outlet_with_the_velocity_limited(sample):
    c = sample.cases[sample.cases["tag"] == BUILT_FOR["outlet_choked_flashing"]]
    choked = c[c["findings"].str.contains("OUTLET_CHOKED")]
    assert len(choked)
    assert (choked["mach_out"] >= 1.0).all()
    # The reported velocity never exceeds the outlet's speed of sound.
    assert np.allclose(choked["velocity_out_m_s"], choked["sound_speed_out"])
    sentence = sample.valves.set_index("tag").loc[BUILT_FOR["outlet_choked_flashing"], "findings"]
    assert "outlet bore of about" in sentence


def test_no_outlet_velocity_above_the_speed_of_sound(sample):
    c = sample.cases
    has = np.isfinite(c["sound_speed_out"].to_numpy(float)) & np.isfinite(c["velocity_out_m_s"].to_numpy(float))
    gas_or_flash = (c["phase"] == "gas").to_numpy() | c["flashing"].to_numpy(bool)
    sel = has & gas_or_flash
    assert (c["velocity_out_m_s"].to_numpy(float)[sel] <= c["sound_speed_out"].to_numpy(float)[sel] * (1 + 1e-9)).all()


def test_sonic_gas_outlet_gets_a_noise_level_and_a_choked_outlet_finding(sample):
    c = sample.cases[sample.cases["tag"] == BUILT_FOR["sonic_gas"]].iloc[0]
    assert c["mach_out"] >= 1.0 and np.isfinite(c["noise_dba"])
    assert "OUTLET_CHOKED" in c["findings"] and "edge of the method" in c["noise_note"]


def test_saturated_and_wet_rows_are_audited_not_rejected(sample):
    tags = [BUILT_FOR[k] for k in ("wet_steam", "saturated_liquid", "below_dew_point")]
    assert not set(tags) & set(sample.rejected["tag"])
    c = sample.cases[sample.cases["tag"].isin(tags)]
    assert (c["case_error"] == "").all() and c["converged"].all()


HEADER = "tag,fluid,phase,valve_size,rated_cv,fl,xt,fd,flow_a [kg/h],p_in_a [bar],p_out_a [bar],t_in_a,quality_in_a"


def _one(tmp_path, phase, t_in, quality, p_out=4.0):
    return audit_rows(tmp_path, HEADER, [f"S,Water,{phase},50,60,0.9,0.72,0.46,3000,11,{p_out},{t_in},{quality}"])


def test_sat_temperature_is_the_saturation_temperature_at_p_in(tmp_path):
    audit = _one(tmp_path, "steam", "sat", "")
    t_sat = CP.PropsSI("T", "P", 11e5, "Q", 1, "Water")  # CoolProp, the saturation curve
    assert audit.cases["t_in"].iloc[0] == pytest.approx(t_sat, abs=1e-6)
    assert audit.cases["rho"].iloc[0] == pytest.approx(CP.PropsSI("D", "P", 11e5, "Q", 1, "Water"), rel=1e-9)


def test_saturated_liquid_row_flashes(tmp_path):
    audit = _one(tmp_path, "", "", "0")
    c = audit.cases.iloc[0]
    assert c["phase"] == "liquid" and c["flashing"] and c["cavitation"] == "flashing"


def test_wet_steam_uses_the_mixture_density(tmp_path):
    audit = _one(tmp_path, "", "", "0.95")
    c = audit.cases.iloc[0]
    assert c["phase"] == "gas"
    assert c["rho"] == pytest.approx(CP.PropsSI("D", "P", 11e5, "Q", 0.95, "Water"), rel=1e-9)
    assert "wet inlet" in c["inlet_note"]


@pytest.mark.parametrize("phase, offset, side", [("steam", -0.6, "gas"), ("liquid", 0.1, "liquid")])
def test_states_just_across_saturation_are_audited_as_saturated(tmp_path, phase, offset, side):
    # Saturated steam written 0.6 K low, and a saturated liquid written 0.1 K high: within the 1 K tolerance,
    # audited as the saturated state of the stated phase, with a note (not refused).
    t_sat = CP.PropsSI("T", "P", 11e5, "Q", 0, "Water") - 273.15
    audit = _one(tmp_path, phase, f"{t_sat + offset:.3f}", "")
    c = audit.cases.iloc[0]
    assert c["case_error"] == "" and c["phase"] == side and "within 1 K of saturation" in c["inlet_note"]


def test_low_quality_inlet_is_a_case_error_not_a_lost_valve(tmp_path):
    header = HEADER + ",flow_b [kg/h],p_in_b [bar],p_out_b [bar],t_in_b"
    audit = audit_rows(tmp_path, header, ["S,Water,,50,60,0.9,0.72,0.46,3000,11,4,,0.5,3000,11,4,250"])
    assert len(audit.valves) == 1
    err = audit.cases.set_index("case")["case_error"]
    assert "two-phase inlet" in err["a"] and err["b"] == ""


def test_standard_volume_of_propane_uses_the_real_gas_density(tmp_path):
    # 1000 Sm3/h of propane (15 degC, 101.325 kPa): CoolProp's real-gas density there is 1.8 % above the ideal gas's.
    header = "tag,fluid,valve_size,rated_cv,fl,xt,fd,flow_a,p_in_a [bar],p_out_a [bar],t_in_a"
    audit = audit_rows(tmp_path, header, ["P,Propane,50,60,0.9,0.72,0.46,1000 Sm3/h,5,3,60"])
    rho_std = CP.PropsSI("D", "T", 288.15, "P", 101325.0, "Propane")
    assert audit.cases["w"].iloc[0] == pytest.approx(1000 / 3600 * rho_std, rel=1e-9)
    ideal = 101325.0 * CP.PropsSI("M", "Propane") / (8.314462618 * 288.15)
    assert rho_std / ideal - 1 == pytest.approx(0.018, abs=0.001)


def test_aiv_sound_power_follows_its_exponents():
    # Carucci and Mueller (1982), from memory: 10 lg[(dp/p1)^3.6 W^2 (T/M)^1.2] + 126.1.  Its exponents give
    # +6.02 dB for twice the flow and +10.84 dB for twice the pressure ratio; and the value of one case by hand.
    base = sound_power_level(0.5, 10.0, 300.0, 20.0)
    assert sound_power_level(0.5, 20.0, 300.0, 20.0) - base == pytest.approx(20 * np.log10(2), abs=1e-9)
    assert sound_power_level(1.0, 10.0, 300.0, 20.0) - base == pytest.approx(36 * np.log10(2), abs=1e-9)
    by_hand = 10 * np.log10(0.5 ** 3.6 * 100 * 15 ** 1.2) + 126.1  # = 149.4 dB
    assert base == pytest.approx(by_hand, abs=1e-9) and base == pytest.approx(149.4, abs=0.05)


def test_compare_calls_a_noise_finding_that_can_no_longer_be_predicted_not_cleared():
    import pandas as pd
    from audit.studies.compare import compare_frames
    old = pd.DataFrame({"tag": ["V"], "worst_case": ["max"], "choke_ratio_max": ["0.9"], "finding_codes": ["NOISE"]})
    new = old.assign(finding_codes=["NOISE_NO_DATA"])
    changes = compare_frames(old, new)
    assert "cleared finding" not in set(changes["change"])
    assert "no longer predicted" in set(changes["change"])
