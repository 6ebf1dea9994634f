"""Liquid valve noise, IEC 60534-8-4:2015, against its worked example and the `fluids` library.

`fluids.control_valve.control_valve_noise_l_2015` is an independent implementation of the same
standard; we use it only as a black box.  Caveat stated plainly: two pieces of our implementation
(the exponents of C, d and Fd in the peak-Strouhal relation, and the limited pressure drop inside
the cavitation efficiency) could not be recalled and were settled by probing that black box, so
agreement on those pieces is partly by construction.  The constants (0.036 in Cv form, 0.32, 6,
the exponent 0.57) are recalled from the standard (from memory), and the worked example's
printed 81.6 dBA is an independent check of the whole.
"""
import numpy as np
import pytest

from audit.iec import acoustics
from audit.iec.noise_liquid import estimate_xfz, liquid_noise

cv = pytest.importorskip("fluids.control_valve")

# IEC 60534-8-4:2015 worked example, inputs and result as the fluids documentation reproduces
# them (control_valve_noise_l_2015): 81.6 dBA.
EXAMPLE = dict(m=40.0, P1=1e6, P2=6.5e5, Psat=2.32e3, rho=997.0, c=1400.0, Kv=77.848, d=0.1, Di=0.1071,
               FL=0.92, Fd=0.42, t_pipe=0.0036, rho_pipe=7800.0, c_pipe=5000.0, rho_air=1.293, c_air=343.0,
               An=-4.6)


def ours(k, xfz=None):
    if xfz is None:
        xfz = estimate_xfz(k["Kv"], k["Fd"], k["FL"])
    return liquid_noise(k["m"], k["P1"], k["P2"], k["Psat"], k["rho"], k["c"], k["Kv"], k["d"], k["Di"],
                        k["t_pipe"], k["FL"], k["Fd"], xfz, an=k["An"],
                        rho_s=k.get("rho_pipe", 7800.0), c_s=k.get("c_pipe", 5000.0))


def test_worked_example_within_half_a_decibel():
    level = ours(EXAMPLE)["level_dba"][0]
    assert level == pytest.approx(81.6, abs=0.5)          # the standard's printed result
    assert level == pytest.approx(cv.control_valve_noise_l_2015(**EXAMPLE), abs=0.05)  # fluids: 81.582


def test_worked_example_is_cavitating_with_the_estimated_xfz():
    # xFz estimated from Fd, FL and C (IEC 60534-8-4) is 0.254; at 10 bar xFzp1 = 0.239 < xF = 0.351.
    r = ours(EXAMPLE)
    assert r["xfzp1"][0] == pytest.approx(0.2386, abs=5e-4)
    assert r["xf"][0] == pytest.approx(0.3508, abs=5e-4)
    assert r["eta_cav"][0] > 0


def random_cases(n, seed):
    rng = np.random.default_rng(seed)
    for _ in range(n):
        d = float(rng.choice([0.025, 0.05, 0.08, 0.1, 0.15, 0.2, 0.3]))
        p1 = float(rng.uniform(3e5, 6e6))
        psat = float(rng.uniform(1e3, 0.4 * p1))
        fl = float(rng.uniform(0.5, 0.98))
        kv = float(rng.uniform(0.03, 0.9) * d ** 2 * 1e4)
        xf = float(rng.uniform(0.02, 0.98))   # turbulent, cavitating and choked; never flashing
        yield dict(m=float(rng.uniform(0.1, 3.0)) * kv / 3.6, P1=p1, P2=p1 - xf * (p1 - psat), Psat=psat,
                   rho=float(rng.uniform(500, 1200)), c=float(rng.uniform(900, 1600)), Kv=kv, d=d,
                   Di=d * float(rng.uniform(1.0, 2.0)), FL=fl, Fd=float(rng.uniform(0.1, 1.0)),
                   t_pipe=float(rng.uniform(0.002, 0.02)), rho_pipe=7800.0, c_pipe=5000.0, rho_air=1.293,
                   c_air=343.0, An=-4.6)


def test_250_random_cases_agree_with_fluids_within_1_db():
    diffs, cavitating = [], 0
    for k in random_cases(250, seed=8404):
        r = ours(k)
        cavitating += int(r["eta_cav"][0] > 0)
        diffs.append(r["level_dba"][0] - cv.control_valve_noise_l_2015(**k))
    diffs = np.array(diffs)
    assert np.all(np.isfinite(diffs))
    assert np.abs(diffs).max() < 1.0
    assert 50 < cavitating < 225   # both regimes are really exercised


def test_given_xfz_is_used_as_given():
    # With xFz high enough that nothing cavitates, only the turbulent part remains, as in fluids.
    k = dict(EXAMPLE)
    level = ours(k, xfz=0.6)["level_dba"][0]
    assert level == pytest.approx(cv.control_valve_noise_l_2015(xFz=0.6, **k), abs=0.05)
    assert level < ours(k)["level_dba"][0] - 10   # cavitation adds well over 10 dB here


def test_flashing_outlet_gives_no_number():
    k = dict(EXAMPLE, P2=2.0e3)  # below the vapour pressure: flashing, outside IEC 60534-8-4
    assert np.isnan(ours(k)["level_dba"][0])


def test_thicker_wall_is_quieter_by_3_db_per_doubling():
    # The pipe-wall loss of IEC 60534-8-4 goes as -10 lg(ts): 3 dB per doubling of the wall, less the
    # small change of the 1 m distance term (fluids' implementation shows the same when probed).
    thin = ours(dict(EXAMPLE, t_pipe=0.004))["level_dba"][0]
    thick = ours(dict(EXAMPLE, t_pipe=0.008))["level_dba"][0]
    assert thin - thick == pytest.approx(3.0, abs=0.3)


def test_a_weighting_table_matches_the_closed_form():
    # IEC 61672-1 closed form of the A-weighting at the exact base-10 mid-band frequencies
    # (IEC 61260-1: 1000 Hz x 10^(k/10)), against the 0.1 dB table we sum with.
    exact = 1000.0 * 10.0 ** (np.arange(-19, 14) / 10.0)
    assert np.allclose(exact, acoustics.BANDS_HZ, rtol=0.03)   # the nominal names of those bands
    f2 = exact ** 2
    ra = (12194.0 ** 2 * f2 ** 2) / ((f2 + 20.6 ** 2) * np.sqrt((f2 + 107.7 ** 2) * (f2 + 737.9 ** 2))
                                     * (f2 + 12194.0 ** 2))
    assert np.abs(20 * np.log10(ra) + 2.0 - acoustics.A_WEIGHT_DB).max() <= 0.051
