"""Process history (docs/history.md): reading, cleaning counts, per-sample audit, representative cases.

Sources: the cleaning rules and counts are the contract in docs/history.md (each test builds a file
whose expected counts follow from it by hand); choked flow is checked sample by sample against the
`fluids` library's scalar IEC 60534-2-1 functions; water and nitrogen properties from CoolProp.
"""
import importlib.util
import pathlib

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from audit.cli import app
from audit.history.read import parse_times, split_signal
from audit.history.samples import Series, clean, hold, series_of, stuck_records
from audit.history.study import travel_trend

ROOT = pathlib.Path(__file__).resolve().parents[1]
SAMPLE = ROOT / "sample_linelist"
H = 3_600 * 10**9  # one hour in ns
T0 = pd.Timestamp("2026-01-05T00:00:00Z")

WATER = ("tag,fluid,valve_size,rated_cv,fl,xt,fd,flow_min [m3/h],p_in_min [bar],p_out_min [bar],t_in_min [degC],"
         "flow_max [m3/h],p_in_max [bar],p_out_max [bar],t_in_max [degC],hist_flow,hist_p_in,hist_p_out,hist_t_in,"
         "hist_travel")


def times(n, start=T0, step_h=1.0):
    return [(start + pd.Timedelta(hours=step_h * i)).strftime("%Y-%m-%dT%H:%M:%SZ") for i in range(n)]


def write(tmp_path, linelist_rows, history: dict, header=WATER, name="h.csv"):
    ll = tmp_path / "ll.csv"
    ll.write_text(header + "\n" + "\n".join(linelist_rows) + "\n", encoding="utf-8")
    hist = tmp_path / name
    pd.DataFrame(history).to_csv(hist, index=False)
    return ll, hist


def run(tmp_path, ll, *hist, extra=()):
    out = tmp_path / "out"
    args = ["run", str(ll), "--out", str(out), "--format", "csv", "--quiet"]
    for h in hist:
        args += ["--history", str(h)]
    result = CliRunner().invoke(app, args + list(extra))
    return result, out


def history_row(out, tag="V-1"):
    table = pd.read_csv(out / "history.csv", keep_default_na=False)
    return table[table["tag"] == tag].iloc[0]


VALVE = "V-1,Water,50 mm,60,0.9,0.7,0.46,5,10,6,40,20,10,5,40,F1,P1,P2,T1,Z1"


def steady(n, **over):
    """n hourly samples of a steady, clean water service, with columns overridden by ``over``."""
    rng = np.random.default_rng(7)
    data = {"time": times(n), "F1 [m3/h]": 12 + rng.random(n), "P1 [bar]": 10 + 0.01 * rng.random(n),
            "P2 [bar]": 5.5 + 0.01 * rng.random(n), "T1 [degC]": 40 + 0.1 * rng.random(n),
            "Z1 [%]": 50 + rng.random(n)}
    data.update(over)
    return data


# ---- reading ---------------------------------------------------------------------------------------------

def test_split_signal_unit_in_brackets():
    assert split_signal("FI-101.PV [t/h]") == ("FI-101.PV", "t/h")
    assert split_signal(" FI-101.PV ") == ("FI-101.PV", "")


def test_parse_times_offsets_and_zone():
    # The same instant written three ways (ISO 8601): UTC 'Z', +01:00, and naive local time in Europe/Oslo
    # (UTC+1 in January, from the IANA zone database).
    ns, ok, amb = parse_times(["2026-01-05T10:00:00Z", "2026-01-05T11:00:00+01:00", "2026-01-05T11:00:00"],
                              "Europe/Oslo")
    assert ok.all() and not amb.any()
    assert ns[0] == ns[1] == ns[2]


def test_parse_times_daylight_saving_repeat_is_counted_not_placed():
    # 2026-10-25 02:30 happens twice in Europe/Oslo (clocks go back at 03:00 CEST, IANA zone database);
    # with an offset each is placed, without one it cannot be.
    ns, ok, amb = parse_times(["2026-10-25T02:30:00+02:00", "2026-10-25T02:30:00+01:00", "2026-10-25T02:30:00"],
                              "Europe/Oslo")
    assert ok[:2].all() and ns[1] - ns[0] == H
    assert amb[2] and not ok[2]


# ---- cleaning rules, one by one ----------------------------------------------------------------------------

def test_hold_is_inclusive_at_the_limit():
    s = Series(np.array([0, 10 * H]), np.array([1.0, 2.0]))
    h = hold(s, np.zeros(2, bool), np.array([2 * H, 2 * H + 1, 10 * H]), 2 * H)
    assert h.found.tolist() == [True, False, True]   # exactly 2 h old is within the hold; 1 ns more is not


def test_series_of_keeps_the_first_of_repeated_time_stamps():
    s = series_of(np.array([5, 1, 5, 3]), np.array([50.0, 10.0, 51.0, 30.0]))
    assert s.time.tolist() == [1, 3, 5] and s.value.tolist() == [10.0, 30.0, 50.0] and s.duplicates == 1


def test_stuck_needs_a_long_flat_run_while_flow_changes():
    t = np.arange(40) * H
    flat = Series(t, np.r_[np.full(30, 7.0), np.arange(10.0)])       # 30 records: 29 h from first to last
    moving = Series(t, np.arange(40.0))
    still = Series(t, np.full(40, 3.0))
    assert stuck_records(flat, moving, 24 * H).sum() == 30
    assert stuck_records(flat, still, 24 * H).sum() == 0             # the plant was steady: not a dead transmitter
    assert stuck_records(flat, moving, 29 * H).sum() == 0            # "longer than": 29 h is not longer than 29 h


def test_clean_counts_each_reason_first_one_wins():
    n = 10
    t = np.arange(n) * H
    flow = np.full(n, 10.0)
    flow[1] = np.nan          # bad_quality
    flow[2] = 0.1             # not_operating (below 2 % of 20)
    p_in = np.full(n, 1e6)
    p_in[3] = 4e5             # impossible: p_out above p_in
    p_in[4] = np.nan          # bad_quality, and also idle below: the first reason counts
    flow[4] = 0.1
    signals = {"flow": Series(t, flow), "p_in": Series(t, p_in), "p_out": Series(t[:8], np.full(8, 5e5))}
    stuck = {"p_in": np.zeros(n, bool), "p_out": np.zeros(8, bool)}
    stuck["p_in"][6] = True   # stuck
    s = clean(signals, stuck, {"t_in": lambda f: np.full(f.shape, 300.0)}, flow_floor=0.4, hold_ns=H // 2,
              plausible={"p_in": (1.0, 1e9), "p_out": (1.0, 1e9), "t_in": (1.0, 3000.0), "travel": (0.0, 110.0)})
    assert s.counts == {"bad_quality": 2, "gap": 2, "stuck": 1, "not_operating": 1, "impossible": 1}
    assert s.reason.tolist() == ["", "bad_quality", "not_operating", "impossible", "bad_quality", "", "stuck", "",
                                 "gap", "gap"]


def test_cleaning_counts_end_to_end(tmp_path):
    n = 60
    data = steady(n)
    p2 = data["P2 [bar]"].astype(object)
    p2[3], p2[4], p2[5] = "Bad", "I/O Timeout", ""           # 3 bad quality (blank counts as bad)
    data["P2 [bar]"] = p2
    flow = data["F1 [m3/h]"].copy()
    flow[10:14] = 0.1                                        # 4 not operating (2 % of 20 m3/h is 0.4)
    data["F1 [m3/h]"] = flow
    p1 = data["P1 [bar]"].copy()
    p1[20] = 5.0                                             # 1 impossible (p_out 5.5 above p_in 5.0)
    p1[30:57] = 10.0                                         # 27 h flat from 30 to 56 while flow moves: stuck
    data["P1 [bar]"] = p1
    ll, hist = write(tmp_path, [VALVE], data)
    result, out = run(tmp_path, ll, hist)
    assert result.exit_code == 0, result.output
    row = history_row(out)
    assert (row.samples_read, row.excluded_bad_quality, row.excluded_not_operating, row.excluded_impossible,
            row.excluded_stuck, row.excluded_gap) == (60, 3, 4, 1, 27, 0)
    assert row.samples_used == 60 - 3 - 4 - 1 - 27


def test_gap_and_duplicates_in_a_long_file(tmp_path):
    n = 30
    data = steady(n)
    rows = []
    for name, unit in (("F1", "m3/h"), ("P1", "bar"), ("P2", "bar"), ("T1", "degC")):
        for i, (t, v) in enumerate(zip(data["time"], data[f"{name} [{unit}]"])):
            if name == "P2" and 10 <= i < 16:
                continue                                     # six hours missing: 10, 11 held by 09; 12-15 gaps
            rows.append((t, name, v, unit))
    rows.append((data["time"][5], "F1", 99.0, "m3/h"))        # a repeated record: the first value is kept
    hist = tmp_path / "long.csv"
    pd.DataFrame(rows, columns=["time", "signal", "value", "unit"]).to_csv(hist, index=False)
    ll = tmp_path / "ll.csv"
    ll.write_text(WATER + "\n" + VALVE.replace(",Z1", ",") + "\n", encoding="utf-8")
    result, out = run(tmp_path, ll, hist)
    assert result.exit_code == 0, result.output
    row = history_row(out)
    assert (row.samples_read, row.excluded_gap, row.duplicates_dropped) == (30, 4, 1)


def test_parquet_history_reads_like_csv(tmp_path):
    pytest.importorskip("pyarrow")
    data = steady(24)
    ll, hist = write(tmp_path, [VALVE], data)
    frame = pd.DataFrame(data)
    frame["time"] = pd.to_datetime(frame["time"], utc=True)
    pq = tmp_path / "h.parquet"
    frame.to_parquet(pq)
    a, out_a = run(tmp_path, ll, hist)
    (tmp_path / "b").mkdir()
    b, out_b = run(tmp_path / "b", ll, pq)
    assert a.exit_code == b.exit_code == 0
    assert (out_a / "history.csv").read_text() == (out_b / "history.csv").read_text()


def test_long_parquet_history_reads_like_long_csv(tmp_path):
    # Same records, long layout: CSV (text times, a quality string among the values) and Parquet
    # (timestamp times, values as text) must give the same history.csv.
    pytest.importorskip("pyarrow")
    data = steady(30)
    rows = [(t, name, v, unit) for name, unit in (("F1", "m3/h"), ("P1", "bar"), ("P2", "bar"), ("T1", "degC"))
            for t, v in zip(data["time"], data[f"{name} [{unit}]"])]
    rows[3] = (rows[3][0], "F1", "I/O Timeout", "m3/h")
    frame = pd.DataFrame(rows, columns=["time", "signal", "value", "unit"])
    frame.to_csv(tmp_path / "long.csv", index=False)
    frame["time"] = pd.to_datetime(frame["time"], utc=True)
    frame["value"] = frame["value"].astype(str)
    frame.to_parquet(tmp_path / "long.parquet")
    ll = tmp_path / "ll.csv"
    ll.write_text(WATER + "\n" + VALVE.replace(",Z1", ",") + "\n", encoding="utf-8")
    a, out_a = run(tmp_path, ll, tmp_path / "long.csv")
    (tmp_path / "b").mkdir()
    b, out_b = run(tmp_path / "b", ll, tmp_path / "long.parquet")
    assert a.exit_code == b.exit_code == 0, a.output + b.output
    assert history_row(out_a).excluded_bad_quality == 1
    assert (out_a / "history.csv").read_text() == (out_b / "history.csv").read_text()


# ---- errors ------------------------------------------------------------------------------------------------

def test_unknown_signal_is_an_input_error_naming_it(tmp_path):
    ll, hist = write(tmp_path, [VALVE.replace(",P1,", ",PX-9,")], steady(5))
    result, _ = run(tmp_path, ll, hist)
    assert result.exit_code == 3 and "PX-9" in result.output


def test_history_matching_no_valve_is_an_input_error(tmp_path):
    ll, hist = write(tmp_path, ["V-1,Water,50 mm,60,0.9,0.7,0.46,5,10,6,40,20,10,5,40,,,,,"], steady(5))
    result, _ = run(tmp_path, ll, hist)
    assert result.exit_code == 3 and "matches no valve" in result.output


def test_unreadable_history_file_is_an_input_error(tmp_path):
    ll, _ = write(tmp_path, [VALVE], steady(5))
    bad = tmp_path / "bad.parquet"
    bad.write_bytes(b"not a parquet file at all")
    for path in (bad, tmp_path / "missing.csv"):
        result, _ = run(tmp_path, ll, path)
        assert result.exit_code == 3 and path.name in result.output


# ---- the audit of every sample -----------------------------------------------------------------------------

def test_share_choked_matches_fluids_sample_by_sample(tmp_path):
    """Share of time choked against a count made with fluids.control_valve's scalar IEC 60534-2-1 tests.

    Liquid: choked where dP >= FL^2 (P1 - FF Psat), FF from the critical pressure ratio (IEC 60534-2-1
    eq. 4/5, fluids.is_choked_turbulent_l, FF_critical_pressure_ratio_l). Gas: choked where x >= F_gamma xT
    with F_gamma = k / 1.4 and k the isentropic exponent rho c^2 / p (IEC 60534-2-1 eq. 14 and the
    definition of k; fluids.is_choked_turbulent_g). Properties from CoolProp. No fittings (FP = 1).
    """
    fluids_cv = pytest.importorskip("fluids.control_valve")
    import CoolProp.CoolProp as CP

    n = 2000
    rng = np.random.default_rng(11)
    t = times(n)
    p1w, p2w, tw = 10 + rng.random(n), 1.0 + 8 * rng.random(n), 20 + 60 * rng.random(n)
    p1g, p2g = 10 + rng.random(n), 2.0 + 7.5 * rng.random(n)
    data = {"time": t, "FW [m3/h]": 5 + 10 * rng.random(n), "PW1 [bar]": p1w, "PW2 [bar]": p2w, "TW [degC]": tw,
            "FG [kg/h]": 500 + 500 * rng.random(n), "PG1 [bar]": p1g, "PG2 [bar]": p2g, "TG [degC]": np.full(n, 27.0)
            + 0.01 * rng.random(n)}
    header = ("tag,fluid,valve_size,rated_cv,fl,xt,fd,flow_min,p_in_min [bar],p_out_min [bar],t_in_min [degC],"
              "flow_max,p_in_max [bar],p_out_max [bar],t_in_max [degC],hist_flow,hist_p_in,hist_p_out,hist_t_in")
    rows = ["W-1,Water,80 mm,150,0.9,0.7,0.46,5 m3/h,10,6,40,15 m3/h,10,5,40,FW,PW1,PW2,TW",
            "G-1,Nitrogen,50 mm,80,0.9,0.7,0.46,500 kg/h,10,6,27,1000 kg/h,10,5,27,FG,PG1,PG2,TG"]
    ll, hist = write(tmp_path, rows, data, header=header)
    result, out = run(tmp_path, ll, hist)
    assert result.exit_code == 0, result.output

    pc = CP.PropsSI("Pcrit", "Water")
    count_w = 0
    for a, b, c in zip(p1w * 1e5, p2w * 1e5, tw + 273.15):
        psat = CP.PropsSI("P", "T", c, "Q", 0, "Water")
        ff = fluids_cv.FF_critical_pressure_ratio_l(psat, pc)
        count_w += bool(fluids_cv.is_choked_turbulent_l(a - b, a, psat, ff, FL=0.9))
    count_g = 0
    tg = data["TG [degC]"] + 273.15
    for a, b, c in zip(p1g * 1e5, p2g * 1e5, tg):
        rho, sound = CP.PropsSI("D", "P", a, "T", c, "Nitrogen"), CP.PropsSI("A", "P", a, "T", c, "Nitrogen")
        k = rho * sound ** 2 / a
        count_g += bool(fluids_cv.is_choked_turbulent_g((a - b) / a, k / 1.4, xT=0.7))
    w, g = history_row(out, "W-1"), history_row(out, "G-1")
    assert w.samples_used == g.samples_used == n          # clean data: every sample audited
    assert 0 < count_w < n and 0 < count_g < n            # both sides of the limit are exercised
    assert round(w.share_choked * n) == count_w and w.share_choked == pytest.approx(count_w / n, abs=1e-12)
    assert round(g.share_choked * n) == count_g and g.share_choked == pytest.approx(count_g / n, abs=1e-12)


def test_assumed_quantities_follow_the_cases_between_flows(tmp_path):
    # Only a flow signal: p_in, p_out and t_in come from the cases, linear in flow between them and
    # the nearest case's value outside (docs/history.md); the representative cases show it.
    n = 101
    flows = np.linspace(0.0, 30.0, n)                      # m3/h; the cases span 5 to 20
    data = {"time": times(n), "F1 [m3/h]": flows}
    valve = "V-1,Water,50 mm,60,0.9,0.7,0.46,5,10,6,40,20,10,5,40,F1,,,,"
    ll, hist = write(tmp_path, [valve], data)
    result, out = run(tmp_path, ll, hist)
    assert result.exit_code == 0, result.output
    row = history_row(out)
    assert row.assumed == "p_in;p_out;t_in"
    res = pd.read_csv(out / "results.csv")
    rep = res[res["case"].str.startswith("hist_")].set_index("case")
    q = rep["flow_kg_h"] / 3600.0 / (res.loc[res["case"] == "min", "flow_kg_h"].iat[0] / 3600.0 / 5.0)  # m3/h
    expected = np.interp(q, [5.0, 20.0], [600.0, 500.0])   # p_out [kPa] between the cases, clamped outside
    # results.csv carries six significant figures (docs/outputs.md): 5e-6 relative is its rounding, twice
    assert np.allclose(rep["p_out_kpa"].to_numpy(), expected, rtol=5e-6)
    assert (rep["p_in_kpa"] == 1000.0).all()


def test_representative_cases_equal_the_same_values_as_line_list_cases(tmp_path):
    data = steady(200)
    data["F1 [m3/h]"] = np.linspace(6, 19, 200)
    ll, hist = write(tmp_path, [VALVE], data)
    result, out = run(tmp_path, ll, hist)
    assert result.exit_code == 0, result.output
    res = pd.read_csv(out / "results.csv", keep_default_na=False)
    rep = res[res["case"].str.startswith("hist_")]
    text = pd.read_csv(hist, dtype=str).set_index("time")
    names = list(rep["case"])
    cols = ["tag", "fluid", "valve_size", "rated_cv", "fl", "xt", "fd"]
    header = ",".join(cols + [f"{q}_{c}{u}" for c in ["min", "max"] + names for q, u in
                              (("flow", " [m3/h]"), ("p_in", " [bar]"), ("p_out", " [bar]"), ("t_in", " [degC]"),
                               ("travel", " [%]"))])
    base = "V-1,Water,50 mm,60,0.9,0.7,0.46,5,10,6,40,,20,10,5,40,"
    extra = [",".join(text.loc[t, c] for c in ("F1 [m3/h]", "P1 [bar]", "P2 [bar]", "T1 [degC]", "Z1 [%]"))
             for t in rep["time"]]
    plain = tmp_path / "plain.csv"
    plain.write_text(header + "\n" + base + "," + ",".join(extra) + "\n", encoding="utf-8")
    (tmp_path / "p").mkdir()
    result2, out2 = run(tmp_path / "p", plain)
    assert result2.exit_code == 0, result2.output
    res2 = pd.read_csv(out2 / "results.csv", keep_default_na=False)
    a = rep.drop(columns=["time"]).reset_index(drop=True)
    b = res2[res2["case"].str.startswith("hist_")].drop(columns=["time"]).reset_index(drop=True)
    pd.testing.assert_frame_equal(a, b)


def test_travel_trend_is_the_least_squares_slope_per_month():
    t = np.arange(0, 40 * 24) * H                         # 40 days hourly
    months = t / (30.44 * 24 * H)
    median, slope, days = travel_trend(t, 2.5 * months + 1.0)
    assert slope == pytest.approx(2.5, rel=1e-9) and days == pytest.approx(40 - 1 / 24)


def test_drift_finding_needs_thirty_days(tmp_path):
    for days, expected in ((31, True), (29, False)):
        n = days * 24
        data = steady(n)
        data["Z1 [%]"] = data["Z1 [%]"] + 3.0 * np.arange(n) / (30.44 * 24)   # 3 points a month
        d = tmp_path / str(days)
        d.mkdir()
        ll, hist = write(d, [VALVE], data)
        result, out = run(d, ll, hist)
        assert result.exit_code == 0, result.output
        assert ("TRAVEL_DRIFT" in (out / "valves.csv").read_text()) is expected
        assert history_row(out).travel_gap_trend_pct_per_month == pytest.approx(3.0, abs=0.3)


# ---- the demo history --------------------------------------------------------------------------------------

def _sample_module():
    spec = importlib.util.spec_from_file_location("make_sample", SAMPLE / "make_sample.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_sample_history_shows_what_it_was_built_for(tmp_path):
    built = _sample_module().HISTORY_BUILT_FOR
    result, out = run(tmp_path, SAMPLE / "fenmoor_unit.csv", SAMPLE / "fenmoor_history.csv",
                      SAMPLE / "fenmoor_history_area300.csv")
    assert result.exit_code == 0, result.output
    table = pd.read_csv(out / "history.csv", keep_default_na=False).set_index("tag")
    assert table.loc[built["stuck"], "excluded_stuck"] > 24
    assert table.loc[built["gap"], "excluded_gap"] > 0
    assert table.loc[built["shutdown"], "excluded_not_operating"] >= 24
    assert table.loc[built["bad_quality"], "excluded_bad_quality"] >= 6
    assert table.loc[built["drift"], "travel_gap_trend_pct_per_month"] > 3.0
    valves = pd.read_csv(out / "valves.csv", keep_default_na=False).set_index("tag")
    assert "TRAVEL_DRIFT" in valves.loc[built["drift"], "finding_codes"]
    res = pd.read_csv(out / "results.csv", keep_default_na=False)
    rep = res[res["case"].str.startswith("hist_")]
    assert len(rep) == 3 * len(table) and rep["time"].str.endswith("Z").all()


def test_standard_volume_flow_signal_against_mass_flow_cases(tmp_path):
    # Nitrogen cases in kg/h, its flow signal in Nm3/h: the operating floor (2 % of the largest case
    # flow, docs/history.md) is compared in the signal's basis. 1,000 kg/h of nitrogen is about
    # 800 Nm3/h (density 1.25 kg/m3 at 0 degC and 1 atm, CoolProp), so the floor is about 16 Nm3/h:
    # 1 Nm3/h is below it, 500 Nm3/h above.
    n = 50
    flows = np.r_[np.full(20, 1.0), np.full(30, 500.0)]
    data = {"time": times(n), "FG [Nm3/h]": flows, "PG1 [bar]": 10 + 0.01 * np.arange(n),
            "PG2 [bar]": 6 + 0.01 * np.arange(n), "TG [degC]": 27 + 0.01 * np.arange(n)}
    header = ("tag,fluid,valve_size,rated_cv,fl,xt,fd,flow_min,p_in_min [bar],p_out_min [bar],t_in_min [degC],"
              "flow_max,p_in_max [bar],p_out_max [bar],t_in_max [degC],hist_flow,hist_p_in,hist_p_out,hist_t_in")
    rows = ["G-1,Nitrogen,50 mm,80,0.9,0.7,0.46,500 kg/h,10,6,27,1000 kg/h,10,5,27,FG,PG1,PG2,TG"]
    ll, hist = write(tmp_path, rows, data, header=header)
    result, out = run(tmp_path, ll, hist)
    assert result.exit_code == 0, result.output
    row = history_row(out, "G-1")
    assert (row.excluded_not_operating, row.samples_used) == (20, 30)


def test_history_rules_are_all_the_shares_read(monkeypatch):
    # The samples run only HISTORY_RULES; with every rule run instead, history.csv must not change,
    # or a share depends on a rule that was left out.
    import audit.history.study as study
    from audit.engine import Options, compute
    from audit.history.study import HistorySettings, study_history
    from audit.io.loader import load_linelist

    base = compute(load_linelist(SAMPLE / "fenmoor_unit.csv"))
    settings = HistorySettings(files=(SAMPLE / "fenmoor_history.csv", SAMPLE / "fenmoor_history_area300.csv"))
    subset = study_history(base, settings, Options()).table
    monkeypatch.setattr(study, "HISTORY_RULES", None)
    every = study_history(base, settings, Options()).table
    assert subset["samples_used"].sum() > 1000
    pd.testing.assert_frame_equal(subset, every)


def test_history_in_chunks_on_workers_equals_one_chunk():
    # Chunks of a few valves on two worker processes against one chunk in this process: the same
    # history.csv, representative cases and traces (chunking and workers bound time and memory only).
    from audit.engine import Options, compute
    from audit.history.study import HistorySettings, study_history
    from audit.io.loader import load_linelist

    base = compute(load_linelist(SAMPLE / "fenmoor_unit.csv"))
    files = (SAMPLE / "fenmoor_history.csv", SAMPLE / "fenmoor_history_area300.csv")
    one = study_history(base, HistorySettings(files=files, chunk_samples=10**9, workers=1), Options())
    many = study_history(base, HistorySettings(files=files, chunk_samples=1500, workers=2), Options())
    pd.testing.assert_frame_equal(one.table, many.table)
    pd.testing.assert_frame_equal(one.cases, many.cases)
    assert one.traces.keys() == many.traces.keys() and len(one.traces) >= 5
    for tag in one.traces:
        pd.testing.assert_frame_equal(one.traces[tag], many.traces[tag])


def test_trace_keeps_every_nth_sample_as_the_plot_draws_it(monkeypatch):
    # The study keeps for the report's plot only the samples the plot draws (every n-th), so a year
    # of history is not held for it; the plot of the thinned trace is the plot of the whole one.
    import audit.history.study as study
    from audit.engine import Options, compute
    from audit.history.study import HistorySettings, study_history
    from audit.io.loader import load_linelist

    base = compute(load_linelist(SAMPLE / "fenmoor_unit.csv"))
    files = (SAMPLE / "fenmoor_history.csv", SAMPLE / "fenmoor_history_area300.csv")
    whole = study_history(base, HistorySettings(files=files, workers=1), Options())
    monkeypatch.setattr(study, "TRACE_POINTS", 100)
    thin = study_history(base, HistorySettings(files=files, workers=1), Options())
    tag = max(whole.traces, key=lambda k: len(whole.traces[k]))
    n = len(whole.traces[tag])
    assert n >= 300                                   # a month of hourly samples, thinned by 3 or more
    expected = whole.traces[tag].iloc[::n // 100].reset_index(drop=True)
    pd.testing.assert_frame_equal(thin.traces[tag], expected)
    assert len(expected) // 100 == 1                  # about TRACE_POINTS kept (1 to 2 times), all plotted
