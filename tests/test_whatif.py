"""What-if studies: flow scaling, headroom, audit comparison, trim alternatives (issue 7)."""
import csv
import json

import numpy as np
import pytest
from typer.testing import CliRunner

from audit.cli import app
from audit.engine import Options, compute
from audit.io.loader import load_linelist
from audit.iec.sizing import size_valves
from conftest import SAMPLE_CSV

runner = CliRunner()


@pytest.fixture(scope="module")
def sample():
    return compute(load_linelist(SAMPLE_CSV))


def test_scale_flow_one_reproduces_the_plain_audit_byte_for_byte(tmp_path):
    for name, extra in (("plain", []), ("scaled", ["--scale-flow", "1"])):
        r = runner.invoke(app, ["run", str(SAMPLE_CSV), "--out", str(tmp_path / name), "--format", "csv", "--quiet",
                                *extra])
        assert r.exit_code == 0, r.output
    for f in ("results.csv", "valves.csv", "rejected.csv", "audit_info.json"):
        assert (tmp_path / "plain" / f).read_bytes() == (tmp_path / "scaled" / f).read_bytes(), f


def test_scaling_of_chosen_cases_and_areas(tmp_path, sample):
    areas = tmp_path / "areas.toml"
    areas.write_text('"100 Condensate" = 2.0\n')
    scaled = compute(load_linelist(SAMPLE_CSV), Options(flow_scale=1.2, scale_cases=("max",), area_scale={
        "100 Condensate": 2.0}))
    a, b = sample.cases.set_index(["tag", "case"]), scaled.cases.set_index(["tag", "case"])
    assert b.loc[("FV-2101", "max"), "w"] == pytest.approx(1.2 * a.loc[("FV-2101", "max"), "w"])
    assert b.loc[("FV-2101", "norm"), "w"] == a.loc[("FV-2101", "norm"), "w"]
    assert b.loc[("LV-1201", "max"), "w"] == pytest.approx(2.4 * a.loc[("LV-1201", "max"), "w"])
    r = runner.invoke(app, ["run", str(SAMPLE_CSV), "--out", str(tmp_path / "o"), "--format", "html", "--quiet",
                            "--scale-flow", "1.2", "--area-scale", str(areas)])
    assert r.exit_code == 0, r.output
    assert "What-if study: flows scaled" in (tmp_path / "o" / "report.html").read_text(encoding="utf-8")


def _travel_at(multiplier, tag, case):
    audit = compute(load_linelist(SAMPLE_CSV), Options(flow_scale=float(multiplier), scale_cases=(case,)))
    c = audit.cases
    return c[(c["tag"] == tag) & (c["case"] == case)]["travel_pct"].iloc[0]


def test_rerun_at_the_reported_multiplier_reaches_the_travel_limit(sample):
    v = sample.valves
    for tag in ("FV-2101", "PV-3101", "FV-2104", "TV-4105", "PV-5102", "FV-3109"):  # liquid, gas, choked, viscous
        row = v[v["tag"] == tag].iloc[0]
        case = row["headroom_case"]
        assert _travel_at(row["flow_mult_high_travel"], tag, case) == pytest.approx(90.0, rel=0.01), tag
        assert _travel_at(row["flow_mult_full_travel"], tag, case) == pytest.approx(100.0, rel=0.01), tag


def test_capacity_ceiling_is_the_fully_open_flow_far_below_the_choke_point(sample):
    c = sample.cases
    for tag in ("FV-2101", "PV-3101", "TV-4105", "PV-5101"):
        row = sample.valves[sample.valves["tag"] == tag].iloc[0]
        case = c[(c["tag"] == tag) & (c["case"] == row["headroom_case"])].iloc[0]
        ceiling_flow = case["w"] * case["capacity_ceiling_mult"]
        r = size_valves([case["phase"] == "gas"], [ceiling_flow], [case["p_in"]], [case["p_in"] * 0.002],
                        [case["t_in"]], [case["rho"]], [case["pv"]], [case["pc"]], [case["mu"]], [case["molar_mass"]],
                        [case["k"]], [case["valve_size"]], [max(case["pipe_in_id"], case["valve_size"])],
                        [max(case["pipe_out_id"], case["valve_size"])], [case["fl"]], [case["xt"]], [case["fd"]])
        assert r["choked"][0], tag
        assert r["cv"][0] == pytest.approx(case["rated_cv"], rel=0.01), tag


def _modified_sample(tmp_path):
    with open(SAMPLE_CSV, newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    header = list(rows[0])
    rows = [r for r in rows if r["tag"] != "TV-2301"]                 # removed
    copy = dict(next(r for r in rows if r["tag"] == "FV-6101"), tag="FV-6199")
    rows.append(copy)                                                 # added (same data as FV-6101)
    air = next(r for r in rows if r["tag"] == "FV-3109")
    air["p_out_max"] = "5 psig"                                       # instrument air valve now choked at max
    path = tmp_path / "modified.csv"
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.DictWriter(fh, fieldnames=header, lineterminator="\n")
        w.writeheader()
        w.writerows(rows)
    return path


def test_compare_reports_exactly_the_changes_made(tmp_path):
    for name, path in (("old", SAMPLE_CSV), ("new", _modified_sample(tmp_path))):
        r = runner.invoke(app, ["run", str(path), "--out", str(tmp_path / name), "--format", "csv", "--quiet"])
        assert r.exit_code == 0, r.output
    r = runner.invoke(app, ["compare", str(tmp_path / "old"), str(tmp_path / "new"), "--out", str(tmp_path / "cmp")])
    assert r.exit_code == 0, r.output
    with open(tmp_path / "cmp" / "comparison.csv", newline="", encoding="utf-8") as fh:
        changes = {(c["tag"], c["change"], c["old"], c["new"]) for c in csv.DictReader(fh)}
    worse = next(c for c in changes if c[1] == "choke ratio worse")
    assert changes == {("FV-6199", "added", "", ""), ("TV-2301", "removed", "", ""),
                       ("FV-3109", "new finding", "", "CHOKED"), worse}
    assert worse[0] == "FV-3109" and float(worse[3]) >= 1.0 > float(worse[2])
    assert (tmp_path / "cmp" / "comparison.html").exists()


def test_compare_refuses_other_output_versions(tmp_path):
    for name in ("old", "new"):
        runner.invoke(app, ["run", str(SAMPLE_CSV), "--out", str(tmp_path / name), "--format", "csv", "--quiet"])
    info = json.loads((tmp_path / "old" / "audit_info.json").read_text())
    info["output_format_version"] = "0"
    (tmp_path / "old" / "audit_info.json").write_text(json.dumps(info))
    r = runner.invoke(app, ["compare", str(tmp_path / "old"), str(tmp_path / "new"), "--out", str(tmp_path / "c")])
    assert r.exit_code == 3
    assert "output format version" in r.output
    assert not (tmp_path / "c" / "comparison.csv").exists()


TRIMS = """valve_size,rated_cv,characteristic,fl,xt,fd,xfz
25,4,equal_percentage,0.9,0.72,0.46,
25,8,equal_percentage,0.9,0.72,0.46,
25,12,equal_percentage,0.95,0.8,0.3,0.5
50,20,equal_percentage,0.9,0.72,0.46,
50,40,equal_percentage,0.95,0.8,0.35,0.6
50,60,linear,0.95,0.8,0.35,0.6
80,60,equal_percentage,0.9,0.72,0.46,
80,120,equal_percentage,0.95,0.8,0.3,0.6
"""


def _dn(text: str) -> float:
    """Nominal size DN of a size cell ('80', '3 in'), by the loader's own unit reading."""
    from audit.io.pipes import nominal_dn
    from audit.io.units import split_number
    value, unit, _ = split_number(text)
    return float(nominal_dn(np.array([value * (0.0254 if unit == "in" else 0.001)]))[0])


def _audit_with_trim(tmp_path, tag, trim):
    with open(SAMPLE_CSV, newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    header = list(rows[0])
    row = next(r for r in rows if r["tag"] == tag)
    row.update({"rated_cv": trim["rated_cv"], "rated_kv": "", "characteristic": trim["characteristic"],
                "fl": trim["fl"], "xt": trim["xt"], "fd": trim["fd"], "xfz": trim["xfz"], "valve_style": ""})
    path = tmp_path / f"{tag}.csv"
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.DictWriter(fh, fieldnames=header, lineterminator="\n")
        w.writeheader()
        w.writerow(row)
    return compute(load_linelist(path)).valves.iloc[0]


def test_trim_proposed_clears_the_findings_and_no_smaller_one_does(tmp_path):
    trims_file = tmp_path / "trims.csv"
    trims_file.write_text(TRIMS)
    r = runner.invoke(app, ["run", str(SAMPLE_CSV), "--out", str(tmp_path / "o"), "--format", "csv,html", "--quiet",
                            "--trims", str(trims_file)])
    assert r.exit_code == 0, r.output
    with open(tmp_path / "o" / "valves.csv", newline="", encoding="utf-8") as fh:
        valves = list(csv.DictReader(fh))
    trims = list(csv.DictReader(TRIMS.splitlines()))
    proposed = [v for v in valves if v["trim_alternative_cv"]]
    assert proposed, "the test needs at least one proposal"
    sizes = {r["tag"]: r["valve_size"] for r in csv.DictReader(open(SAMPLE_CSV, newline="", encoding="utf-8"))}
    for v in proposed:
        size = _dn(sizes[v["tag"]])  # bodies and trims meet by nominal size: a 3 in body takes DN80 trims
        fitting = sorted((t for t in trims if _dn(t["valve_size"]) == size), key=lambda t: float(t["rated_cv"]))
        chosen = next(t for t in fitting if float(t["rated_cv"]) == float(v["trim_alternative_cv"]))
        assert _audit_with_trim(tmp_path, v["tag"], chosen)["severity"] in ("clear", "note"), v["tag"]
        for smaller in fitting:
            if float(smaller["rated_cv"]) < float(chosen["rated_cv"]):
                assert _audit_with_trim(tmp_path, v["tag"], smaller)["severity"] not in ("clear", "note")
    html = (tmp_path / "o" / "report.html").read_text(encoding="utf-8")
    assert "A trim change needs the manufacturer's data and an engineer's check" in html
