"""Ranking by consequence, severities by intent and duty, and sentences that quote the worst case.

Sources: the ranking order and the adjustments are the output contract (docs/outputs.md,
docs/severity.md); the installed gain checks follow from the inherent characteristics'
definitions (IEC 60534-2-4): for a linear trim Phi = h, for an equal-percentage trim Phi = R^(h-1).
"""
import importlib.util

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
import pytest
from typer.testing import CliRunner

from audit.cli import app
from audit.engine import Options, compute
from audit.io.loader import load_linelist
from conftest import ROOT, SAMPLE_CSV
from helpers_linelist import audit_rows
from rules.controllability import installed_gain
from rules.severity import BY_CODE, TABLE

spec = importlib.util.spec_from_file_location("make_sample", ROOT / "sample_linelist" / "make_sample.py")
make_sample = importlib.util.module_from_spec(spec)
spec.loader.exec_module(make_sample)
BUILT_FOR = make_sample.BUILT_FOR
LEVEL = {"urgent": 4, "plan": 3, "watch": 2, "note": 1, "clear": 0}


@pytest.fixture(scope="module")
def sample():
    return compute(load_linelist(SAMPLE_CSV))


def _valve(audit, tag):
    return audit.valves.set_index("tag").loc[tag]


def test_every_urgent_valve_ranks_above_every_plan_valve_and_so_on_down(sample):
    levels = [LEVEL[s] for s in sample.valves["severity"]]
    assert levels == sorted(levels, reverse=True)
    assert list(sample.valves["rank"]) == list(range(1, len(sample.valves) + 1))


def test_within_a_severity_high_criticality_then_smallest_capacity_margin_first(sample):
    v = sample.valves
    crit = v["criticality"].map({"high": 0, "medium": 1, "low": 2}).to_numpy()
    margin = v["capacity_margin"].to_numpy(float)
    for level in set(v["severity"]):
        sel = (v["severity"] == level).to_numpy()
        key = list(zip(crit[sel], np.nan_to_num(margin[sel], nan=np.inf)))
        assert key == sorted(key), level


def test_the_valve_that_cannot_pass_its_flow_is_first_among_the_urgent(sample):
    v = _valve(sample, BUILT_FOR["over_capacity"])
    assert v["rank"] == 1 and v["severity"] == "urgent"
    assert v["capacity_margin"] < 1.0
    assert "Cannot pass the flow" in v["findings"]


def test_designed_to_flash_ranks_below_its_equal_twin(sample):
    a, b = _valve(sample, BUILT_FOR["designed_flash"]), _valve(sample, BUILT_FOR["flash_twin"])
    assert a["capacity_margin"] == pytest.approx(b["capacity_margin"])  # equal valves, equal service
    assert LEVEL[a["severity"]] < LEVEL[b["severity"]] and a["rank"] > b["rank"]
    f = sample.findings
    rows = sample.cases["tag"].to_numpy()[f["case_row"].to_numpy(int)]
    flashing = f[(rows == BUILT_FOR["designed_flash"]) & (f["code"] == "FLASHING")]
    assert (flashing["severity"] == 1).all() and flashing["sentence"].str.contains("designed to flash").all()


def test_designed_choke_keeps_the_findings_intent_does_not_explain(sample):
    f = sample.findings
    tags = sample.cases["tag"].to_numpy()[f["case_row"].to_numpy(int)]
    own = f[tags == BUILT_FOR["designed_choke"]].set_index("code")
    assert own.loc["CHOKED", "severity"] == 1                 # choked by design: a note
    # A choked outlet is not what "designed to run choked" means (that is the trim): it keeps its level.
    assert own.loc["OUTLET_CHOKED", "severity"] == BY_CODE["OUTLET_CHOKED"].severity


def test_startup_duty_noise_is_not_urgent(sample):
    f = sample.findings
    tags = sample.cases["tag"].to_numpy()[f["case_row"].to_numpy(int)]
    noise = f[(tags == BUILT_FOR["startup_noise"]) & f["code"].str.startswith("NOISE")]
    assert len(noise) and (noise["severity"] < 4).all()
    assert noise["sentence"].str.contains("how long people may be exposed").all()


def test_each_built_for_valve_shows_its_finding(sample):
    expected = {"below_range": "BELOW_RANGE", "oversized": "OVERSIZED", "capacity_margin": "CAPACITY_MARGIN",
                "line_velocity": "LINE_VELOCITY", "body_small": "BODY_SMALL", "cv_implausible": "CV_IMPLAUSIBLE",
                "dissolved_gas": "DISSOLVED_GAS"}
    for key, code in expected.items():
        assert code in _valve(sample, BUILT_FOR[key])["finding_codes"].split(";"), key


def test_dissolved_gas_liquid_has_no_cavitation_level_as_if_pure(sample):
    c = sample.cases[sample.cases["tag"] == BUILT_FOR["dissolved_gas"]]
    assert set(c["cavitation"]) <= {"none", "not_assessed"}
    assert not any(code.startswith("CAV_") for codes in c["findings"] for code in codes.split(";"))


HEADER = "tag,fluid,valve_size,rated_cv,characteristic,rangeability,fl,fd,xt,flow_a,p_in_a,p_out_a,t_in_a," \
         "flow_b,p_in_b,p_out_b,t_in_b,flow_c,p_in_c,p_out_c,t_in_c"


def test_sentence_names_the_case_with_the_highest_choke_ratio(tmp_path):
    # Three cases, all choked (water at 20 degC, outlet near vacuum), the worst in the middle column.
    row = "C-1,Water,50,60,linear,50,0.9,0.46,0.7,20,10,1.1,20,22,12,1.05,20,21,11,1.08,20"
    audit = audit_rows(tmp_path, HEADER, [row])
    c = audit.cases
    assert c["choked"].all()
    worst = c.loc[c["choke_ratio"].idxmax()]
    sentence = next(s for s in audit.valves["findings"].iloc[0].split(". ") if s.startswith("Choked"))
    assert f"at case {worst['case']}" in sentence and f"choke ratio {worst['choke_ratio']:.2f}" in sentence
    assert "Also at case" in audit.valves["findings"].iloc[0]


def test_installed_gain_linear_constant_dp_is_one():
    # Linear trim on a constant pressure drop: w is proportional to travel, so the gain is 1 for every pair.
    travel = np.array([20.0, 45.0, 80.0])
    w = travel / 100.0 * 7.0
    gain, prev = installed_gain(np.zeros(3, int), w, travel, np.full(3, 7.0))
    assert np.isnan(gain[0]) and list(prev) == [-1, 0, 1]
    assert gain[1:] == pytest.approx([1.0, 1.0], rel=1e-12)


def test_installed_gain_equal_percentage_is_ln_r_times_relative_flow():
    # Equal percentage, constant dp: w/w_full = R^(h-1), so d(w/w_full)/dh = ln R * w/w_full.  Two cases 1 % of
    # travel apart: the difference quotient equals the derivative at the midpoint to (ln R dh)^2 / 24 = 6e-5.
    r, h = 50.0, np.array([0.60, 0.61])
    w = r ** (h - 1.0)
    gain, _ = installed_gain(np.zeros(2, int), w, h * 100.0, np.ones(2))
    assert gain[1] == pytest.approx(np.log(r) * r ** (0.605 - 1.0), rel=1e-4)


def test_installed_gain_through_the_audit_on_a_linear_liquid_valve(tmp_path):
    # Water, equal pressures in every case, linear trim, no reducers, turbulent: Cv is proportional to flow
    # (IEC 60534-2-1, non-choked liquid), so the predicted travel is too and every gain is 1.
    row = "G-1,Water,80,100,linear,50,0.9,0.46,0.7,20,5,4,20,40,5,4,20,60,5,4,20"
    audit = audit_rows(tmp_path, HEADER, [row])
    v = audit.valves.iloc[0]
    assert v["gain_min"] == pytest.approx(1.0, rel=1e-3) and v["gain_max"] == pytest.approx(1.0, rel=1e-3)


def test_rules_command_prints_the_severity_table_with_sources():
    out = CliRunner().invoke(app, ["rules"]).output
    for g in TABLE:
        line = next(line for line in out.splitlines() if line.strip().startswith(g.code + " "))
        assert g.severity.label in line and g.source in line


def test_site_file_overrides_a_severity_table_threshold(tmp_path):
    # Choked cavitation at about 9 bar drop: plan by default, urgent once the site lowers the urgent drop to 5 bar.
    header = "tag,fluid,valve_size,rated_cv,fl,fd,xt,flow_max,p_in_max,p_out_max,t_in_max"
    row = ["K-1,Water,25,8,0.9,0.46,0.7,4,10,1.1,80"]
    plain = audit_rows(tmp_path, header, row)
    assert "CAV_CHOKED" in plain.cases["findings"].iloc[0] and plain.valves["severity"].iloc[0] == "plan"
    site = audit_rows(tmp_path, header, row, options=Options(thresholds={"cavitation": {"urgent_dp_kpa": 500}}))
    assert site.valves["severity"].iloc[0] == "urgent"


def _family_summary_by_definition(cases, findings):
    """family_summary's docstring, group by group in plain Python (the reference for the sorted version)."""
    from rules.base import Severity

    rows = []
    for i, (r, fam, code, sev, value, sentence) in enumerate(zip(
            findings["case_row"], findings["family"], findings["code"], findings["severity"], findings["value"],
            findings["sentence"])):
        rows.append(dict(i=i, valve=int(cases["valve"][r]), family=fam, code=code, severity=int(sev),
                         value=-np.inf if np.isnan(value) else value, case=cases["case"][r],
                         order=int(cases["case_order"][r]), sentence=sentence))
    groups = {}
    for x in rows:
        groups.setdefault((x["valve"], x["family"]), []).append(x)
    out = []
    for (valve, family), members in groups.items():
        members.sort(key=lambda x: (-x["severity"], -x["value"], x["order"], x["i"]))
        worst, firsts = members[0], {}
        for x in members:
            firsts.setdefault(x["case"], x)   # a case's own worst row
        others = sorted((x for c, x in firsts.items() if c != worst["case"]), key=lambda x: x["order"])
        also = ", ".join(x["case"] if x["severity"] == worst["severity"]
                         else f"{x['case']} ({Severity(x['severity']).label})" for x in others)
        out.append(dict(valve=valve, family=family, code=worst["code"], severity=worst["severity"],
                        case=worst["case"], also=also,
                        sentence=worst["sentence"] + (f" Also at case {also}." if also else "")))
    out.sort(key=lambda x: (x["valve"], -x["severity"], x["family"]))
    return out


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 3), st.sampled_from(["choke", "noise", "travel"]), st.integers(0, 2),
                          st.integers(1, 4), st.sampled_from([np.nan, 0.5, 1.0, 2.0])), min_size=1, max_size=40))
def test_family_summary_equals_its_definition(found):
    # Ties in level and value, blank values, several findings of one case: the sorted, vectorised
    # grouping must give what the docstring defines (one row per valve and family, worst first).
    import pandas as pd

    from audit.ranking import family_summary

    names = ["min", "norm", "max"]
    cases = pd.DataFrame({"valve": [v for v in range(4) for _ in names], "case": names * 4,
                          "case_order": [0, 1, 2] * 4})
    findings = pd.DataFrame({"case_row": [3 * v + c for v, _, c, _, _ in found],
                             "family": [f for _, f, _, _, _ in found],
                             "code": [f"{f.upper()}_{s}" for _, f, _, s, _ in found],
                             "severity": [s for _, _, _, s, _ in found], "value": [x for *_, x in found],
                             "sentence": [f"s{i}." for i in range(len(found))]})
    got = family_summary(cases, findings).to_dict("records")
    assert [{k: (int(v) if k in ("valve", "severity") else v) for k, v in r.items()} for r in got] == \
        _family_summary_by_definition(cases, findings)
