"""End to end through the command: the sample line list and the output contract."""
import csv

from typer.testing import CliRunner

from audit.cli import app
from conftest import SAMPLE_CSV

RESULTS = ["tag", "case", "phase", "cv_required", "cv_ratio", "travel_pct", "travel_observed_pct", "dp_kpa",
           "dp_choked_kpa", "x", "x_choked", "choke_ratio", "choked", "sigma", "xf", "xfz", "cavitation", "flashing",
           "vapour_fraction_out", "velocity_out_m_s", "mach_out", "k_used", "noise_dba", "findings"]
VALVES = ["rank", "tag", "area", "service", "worst_case", "choke_ratio_max", "capacity_margin", "travel_min_pct",
          "travel_max_pct", "gain_min", "gain_max", "severity", "findings"]


def _rows(path):
    with open(path, newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh))


def test_sample_audit_writes_the_three_contract_files(tmp_path):
    result = CliRunner().invoke(app, ["run", str(SAMPLE_CSV), "--out", str(tmp_path), "--format", "csv", "--quiet"])
    assert result.exit_code == 0, result.output
    results, valves = _rows(tmp_path / "results.csv"), _rows(tmp_path / "valves.csv")
    assert list(results[0])[:len(RESULTS)] == RESULTS
    assert list(valves[0])[:len(VALVES)] == VALVES
    assert list(_rows(tmp_path / "rejected.csv")) == [] and (tmp_path / "rejected.csv").read_text().startswith(
        "row,tag,reason")
    with open(SAMPLE_CSV, newline="") as fh:
        assert len(valves) == sum(1 for _ in csv.DictReader(fh))
    levels = [["clear", "note", "watch", "plan", "urgent"].index(v["severity"]) for v in valves]
    assert levels == sorted(levels, reverse=True)  # ranked by severity first (docs/outputs.md)
    assert all(r["choked"] in ("true", "false") for r in results)


def test_help_explains_every_option():
    result = CliRunner().invoke(app, ["run", "--help"])
    assert result.exit_code == 0
    for option in ("--out", "--sheet", "--p-atm", "--rules", "--format", "--quiet", "--scale-flow", "--trims"):
        assert option in result.output
    assert "Exit status" in result.output


def test_missing_file_is_an_input_error_not_a_traceback(tmp_path):
    result = CliRunner().invoke(app, ["run", str(tmp_path / "nope.csv"), "--out", str(tmp_path), "--format", "csv"])
    assert result.exit_code == 3
    assert "Traceback" not in result.output
