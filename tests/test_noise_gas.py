"""Gas valve noise, IEC 60534-8-3:2010, against the standard's Annex A and the `fluids` library.

Annex A values: IEC 60534-8-3:2010, Annex A, Tables A.1 (examples 1 to 6, one valve and cage in five
flow regimes) and A.2 (the DN 200 pipe's transmission loss in all 33 bands), as printed in the
standard and copied into the conformance tests of the open-source `phonometry` project (that
copy notes the annex computed with FP = 0.984 where it prints 0.98; we follow it).
`fluids.control_valve.control_valve_noise_g_2011` is used only as a black box.  Two terms (the
sqrt(f) wall term of the transmission loss and the valve-size term below 0.15 m) were recovered by
probing that black box; the Annex A checks below pin both independently: the 33-band loss needs the
first, example 1's printed 92 dBA the second (93.3 dBA without it).
"""
import numpy as np
import pytest

from audit.iec import acoustics
from audit.iec.noise_gas import gas_noise, outlet_flow_power, size_correction_db, transmission_loss

cv = pytest.importorskip("fluids.control_valve")

R = 8.314462618
CV_TO_KV = 1 / 1.156
# Annex A common data: p1 10 bar, 5.3 kg/m3, 450 K, k 1.22, M 19.8 kg/kmol, FLP/FP = 0.792/0.984,
# Fd 0.296, 8 mm steel wall of 8000 kg/m3; An -3.8, Stp 0.2.
FL_A = 0.792 / 0.984
# Fd of the annex's cage from its own geometry (Equations 8a to 8c: six passages of 0.00137 m2 with
# a 0.181 m perimeter): 0.296, printed rounded as 0.30.  Its printed peak frequency needs 0.296.
FD_A = 4 * 0.00137 / 0.181 / np.sqrt(4 * 6 * 0.00137 / np.pi)
C2_A = np.sqrt(1.22 * R * 450 / 0.0198)
# Table A.1: mass flow, p2, C (Cv), valve outlet d, pipe Di; printed regime, Wa [W], Lpi [dB], LpAe [dBA]
TABLE_A1 = {
    1: (2.22, 7.2e5, 90.0, 0.1, 0.2031, 1, 22.3, 155.3, 92.0),
    2: (2.29, 6.9e5, 90.0, 0.1, 0.2031, 2, 30.4, 156.5, 93.0),
    3: (2.59, 4.8e5, 90.0, 0.1, 0.2031, 3, 141.3, 161.7, 98.0),
    4: (1.18, 4.2e5, 40.0, 0.2031, 0.2031, 4, 86.1, 158.8, 94.0),
    5: (1.19, 5.0e4, 40.0, 0.2031, 0.2031, 5, 291.9, 157.0, 97.0),
    6: (0.89, 5.0e4, 30.0, 0.1, 0.15, 5, 218.3, 158.4, 94.0),   # 94 with the outlet flow (clause 7)
}
# Table A.2: transmission loss of the DN 200 pipe (Di 0.200 m, 8 mm wall, rho2 11.1 kg/m3, c2 408 m/s)
TL_A2 = [-94.1, -92.0, -90.0, -88.1, -86.1, -84.1, -82.2, -80.2, -78.1, -76.2, -74.3, -72.2, -70.4, -68.5,
         -66.5, -64.5, -62.6, -60.7, -58.7, -56.9, -55.1, -53.0, -51.2, -49.4, -51.1, -52.8, -54.4, -56.1,
         -57.9, -60.0, -62.2, -64.6, -66.8]


def annex(i):
    m, p2, c, d, di, *_ = TABLE_A1[i]
    return gas_noise(m, 1e6, p2, 5.3, 1.22, c * CV_TO_KV, FL_A, FD_A, d, di, 0.008, 5.3 * p2 / 1e6, C2_A,
                     rho_s=8000.0)


@pytest.mark.parametrize("i", sorted(TABLE_A1))
def test_annex_a_examples(i):
    *_, regime, wa, lpi, lpae = TABLE_A1[i]
    r = annex(i)
    assert r["regime"][0] == regime
    assert r["internal_level_db"][0] == pytest.approx(lpi, abs=0.1)   # printed to 0.1 dB
    assert round(r["level_dba"][0]) == lpae                              # printed to the decibel
    assert r["level_dba"][0] == pytest.approx(lpae, abs=0.5)
    assert r["outlet_flow"][0] == (i == 6)   # only example 6 has outlet Mach above 0.3 into a larger pipe


def test_annex_a_example_1_peak_frequency():
    # Printed 7778 Hz (regime I: Stp Uvc / Dj with Dj = N14 Fd sqrt(C FL), C as Cv, N14 = 4.6e-3).
    assert FD_A == pytest.approx(0.296, abs=5e-4)
    assert annex(1)["fp"][0] == pytest.approx(7778, rel=0.002)


def test_annex_a_sound_power_per_regime():
    # Wa of Equation (11) in each regime, printed to 0.1 W; the regime formulas differ in every column.
    from audit.iec.noise_gas import source_power
    for i, (m, p2, c, *_rest) in TABLE_A1.items():
        wa, _, _ = source_power(np.array([m]), 1e6, p2, 5.3, 1.22, c * CV_TO_KV, FL_A, FD_A, -3.8, 0.2)
        assert wa[0] == pytest.approx(TABLE_A1[i][6], rel=0.005)


def test_annex_a_example_6_outlet_flow_chain():
    # Clause 7 intermediates printed for example 6: W_aR 42.0 W, f_pR 920 Hz.
    w, fp = outlet_flow_power(0.89, 0.1, 0.15, 5.3 * 0.05, C2_A)
    assert w == pytest.approx(42.0, rel=0.01)
    assert fp == pytest.approx(920.0, rel=0.005)
    assert round(annex(6)["level_dba"][0]) == 94   # printed: the trim and the outlet flow together
    # The trim alone, against fluids (which adds no outlet-flow noise): 93.37 dBA there.
    m, p2, c, d, di, *_ = TABLE_A1[6]
    trim = gas_noise(m, 1e6, p2, 5.3, 1.22, c * CV_TO_KV, FL_A, FD_A, d, di, 0.008, 5.3 * p2 / 1e6, C2_A,
                     rho_s=8000.0, outlet_flow=False)["level_dba"][0]
    ref = cv.control_valve_noise_g_2011(m=m, P1=1e6, P2=p2, T1=450, rho=5.3, gamma=1.22, MW=19.8, Kv=c * CV_TO_KV,
                                        d=d, Di=di, FL=FL_A, Fd=FD_A, t_pipe=0.008, rho_pipe=8000.0, c_pipe=5000.0,
                                        rho_air=1.293, c_air=343.0, An=-3.8, Stp=0.2)
    assert trim == pytest.approx(ref, abs=0.1)
    assert annex(6)["level_dba"][0] > trim + 0.3   # the outlet flow adds a little over half a decibel


def test_annex_a2_transmission_loss_in_33_bands():
    tl = transmission_loss(acoustics.BANDS_HZ.reshape(1, -1), np.array([[0.2]]), np.array([[0.008]]),
                           np.array([[11.1]]), np.array([[408.0]]), rho_s=8000.0)[0]
    assert np.abs(tl - np.array(TL_A2)).max() <= 0.1   # printed to 0.1 dB


def test_size_term_ends_and_one_probed_value():
    # The valve-size term: 0 above 0.15 m, -9 dB at and below 0.05 m (where the cubic meets the floor),
    # a cubic between.  -1.54 dB at 0.1 m is what probing fluids showed (a 0.2 m valve against a
    # 0.1 m one, everything else equal); Annex A example 1 (d 0.1 m) is the independent check above.
    assert size_correction_db(np.array([0.05]))[0] == pytest.approx(-9.0, abs=0.02)
    assert size_correction_db(np.array([0.2]))[0] == 0.0
    assert size_correction_db(np.array([0.1]))[0] == pytest.approx(-1.54, abs=0.01)


def test_issue_worked_example_within_half_a_decibel():
    # The example as the fluids documentation gives it (FP 0.98, Fd 0.296): 91.7 dBA.
    kw = dict(m=2.22, P1=1e6, P2=7.2e5, T1=450, rho=5.3, gamma=1.22, MW=19.8, Kv=77.85, d=0.1, Di=0.2031,
              FL=None, FLP=0.792, FP=0.98, Fd=0.296, t_pipe=0.008, rho_pipe=8000.0, c_pipe=5000.0,
              rho_air=1.293, c_air=343.0, An=-3.8, Stp=0.2)
    ours = gas_noise(2.22, 1e6, 7.2e5, 5.3, 1.22, 77.85, 0.792 / 0.98, 0.296, 0.1, 0.2031, 0.008, 5.3 * 0.72,
                     C2_A, rho_s=8000.0)["level_dba"][0]
    assert ours == pytest.approx(91.7, abs=0.5)
    assert ours == pytest.approx(cv.control_valve_noise_g_2011(**kw), abs=0.1)


def random_cases(n, seed, sonic=False):
    """Ideal-gas cases across all five regimes with the valve outlet at Mach 0.3 or less
    (where the two implementations do the same thing: neither adds outlet-flow noise), or with
    ``sonic`` at Mach 1 or more (a choked valve outlet) into a pipe running at Mach 0.3 or less (above
    that, in the pipe, the two implementations part by tens of dB: a pipe flow that fast is outside
    what the method describes, and the case's note says so)."""
    rng = np.random.default_rng(seed)
    found = 0
    while found < n:
        d = float(rng.choice([0.025, 0.05, 0.08, 0.1, 0.15, 0.2, 0.3, 0.4]))
        di, t = d * float(rng.uniform(1.0, 4.0 if sonic else 2.5)), float(rng.uniform(0.003, 0.02))
        p1, t1 = float(rng.uniform(2e5, 1e7)), float(rng.uniform(250, 700))
        mw, k = float(rng.uniform(2, 80)), float(rng.uniform(1.1, 1.67))
        rho = p1 * mw / 1000 / (R * t1)
        fl, fd = float(rng.uniform(0.5, 0.95)), float(rng.uniform(0.05, 1.0))
        kv = float(rng.uniform(0.02, 0.8)) * d ** 2 * 1e4
        p2 = p1 * (1 - float(rng.uniform(0.01, 0.99)))
        m = float(rng.uniform(0.05, 1.0)) * kv * np.sqrt(rho * (p1 - p2) * 1e-5) / 3600 * 31.6
        rho2, c2 = rho * p2 / p1, np.sqrt(k * R * t1 / mw * 1000)
        mach = 4 * m / (np.pi * d ** 2 * rho2 * c2)
        if (mach < 1.0 or mach * (d / di) ** 2 > 0.3) if sonic else (mach > 0.3):
            continue
        found += 1
        yield (dict(m=m, P1=p1, P2=p2, T1=t1, rho=rho, gamma=k, MW=mw, Kv=kv, d=d, Di=di, FL=fl, Fd=fd,
                    t_pipe=t, rho_pipe=7800.0, c_pipe=5000.0, rho_air=1.293, c_air=343.0, An=-3.8, Stp=0.2),
               rho2, c2)


def test_250_random_cases_agree_with_fluids_within_1_db():
    diffs, regimes = [], set()
    for kw, rho2, c2 in random_cases(250, seed=8403):
        r = gas_noise(kw["m"], kw["P1"], kw["P2"], kw["rho"], kw["gamma"], kw["Kv"], kw["FL"], kw["Fd"], kw["d"],
                      kw["Di"], kw["t_pipe"], rho2, c2)
        regimes.add(int(r["regime"][0]))
        diffs.append(r["level_dba"][0] - cv.control_valve_noise_g_2011(**kw))
    assert np.all(np.isfinite(diffs))
    assert np.abs(diffs).max() < 1.0
    assert regimes == {1, 2, 3, 4, 5}


def test_sonic_valve_outlet_trim_noise_agrees_with_fluids_within_2_db():
    # A choked valve outlet (Mach 1 or more): the trim noise of clause 5 still applies (it rests on the inlet
    # state and the pressure ratio).  fluids adds no clause 7 outlet-flow noise, so ours is compared trim alone
    # (outlet_flow=False); the issue that asked for this check set the tolerance at 2 dB.
    diffs = []
    for kw, rho2, c2 in random_cases(150, seed=8413, sonic=True):
        r = gas_noise(kw["m"], kw["P1"], kw["P2"], kw["rho"], kw["gamma"], kw["Kv"], kw["FL"], kw["Fd"], kw["d"],
                      kw["Di"], kw["t_pipe"], rho2, c2, outlet_flow=False)
        assert r["mach_outlet"][0] >= 1.0
        diffs.append(r["level_dba"][0] - cv.control_valve_noise_g_2011(**kw))
    assert np.all(np.isfinite(diffs))
    assert np.abs(diffs).max() < 2.0, max(diffs, key=abs)


def test_sonic_valve_outlet_gets_a_number_with_the_outlet_flow_noise():
    # 2.22 kg/s through a 25 mm outlet at 0.5 bar: outlet Mach far above 1.  The level is given (the
    # case's note says it is at the method's edge), and the outlet-flow noise only adds to the trim's.
    args = (2.22, 1e6, 5e4, 5.3, 1.22, 77.85, FL_A, 0.3, 0.025, 0.2031, 0.008, 0.265, C2_A)
    full, trim = gas_noise(*args), gas_noise(*args, outlet_flow=False)
    assert full["mach_outlet"][0] > 1 and np.isfinite(full["level_dba"][0])
    assert full["level_dba"][0] >= trim["level_dba"][0]
