"""Every mistake a person can make gets a plain message naming what was wrong, and the documented exit code.

Exit codes as the README documents them: 2 for the command line, 3 for an input file that cannot be
used.  A mistake is never exit 70 (that is for bugs) and never passes silently with exit 0.
"""
import csv
import shutil

import pytest
from typer.testing import CliRunner

from audit.cli import app
from conftest import ROOT, SAMPLE_CSV

PLAIN = ROOT / "tests" / "data" / "plain.csv"
runner = CliRunner()


def _run(tmp_path, *args, linelist=PLAIN, input=None):
    r = runner.invoke(app, ["run", str(linelist), "--out", str(tmp_path / "out"), "--format", "csv", *args],
                      input=input)
    assert "Traceback" not in r.output
    return r


@pytest.mark.parametrize("args, code, named", [
    (["--format", "csv,docx"], 2, "docx"),
    (["--scale-flow", "-1"], 2, "--scale-flow"),
    (["--p-atm", "0"], 2, "--p-atm"),
    (["--backend", "FOO"], 2, "FOO"),
    (["--scale-cases", "maxx"], 2, "maxx"),
    (["--max-rows", "0"], 2, "--max-rows"),
])
def test_bad_option_value_is_a_command_line_error(tmp_path, args, code, named):
    r = _run(tmp_path, *args)
    assert r.exit_code == code, r.output
    assert named in r.output


def test_unknown_case_names_the_valid_ones(tmp_path):
    r = _run(tmp_path, "--scale-cases", "maxx")
    assert "min" in r.output and "max" in r.output


def test_unknown_area_in_the_area_file_names_the_valid_ones(tmp_path):
    f = tmp_path / "areas.toml"
    f.write_text('"300 Tank farn" = 1.2\n')
    r = _run(tmp_path, "--area-scale", str(f))
    assert r.exit_code == 3
    assert "300 Tank farn" in r.output and "300 Tank farm" in r.output


@pytest.mark.parametrize("toml, named", [
    ("[choking]\nwatch = 1.5\n", "watch = 1.5"),
    ("[velocity]\nliquid_m_s = -3\n", "liquid_m_s = -3"),
    ("[travel]\nlow_pct = 95\n", "low_pct = 95"),
    ("[noise]\nlimit_dba = " + "9" * 400 + "\n", "limit_dba"),
    ("[chokng]\nwatch = 0.8\n", "chokng"),
])
def test_rule_file_out_of_range_is_an_input_error_naming_the_key(tmp_path, toml, named):
    f = tmp_path / "site.toml"
    f.write_text(toml)
    r = _run(tmp_path, "--rules", str(f))
    assert r.exit_code == 3, r.output
    assert named in r.output


def test_rule_file_that_is_a_folder(tmp_path):
    r = _run(tmp_path, "--rules", str(tmp_path))
    assert r.exit_code == 3 and "folder" in r.output


def test_trim_characteristic_is_checked(tmp_path):
    f = tmp_path / "trims.csv"
    f.write_text("valve_size,rated_cv,characteristic,fl,xt,fd\n80,60,bananas,0.9,0.7,0.46\n")
    r = _run(tmp_path, "--trims", str(f))
    assert r.exit_code == 3
    assert "bananas" in r.output and "equal_percentage" in r.output


def test_missing_required_column_is_named_with_a_near_miss(tmp_path):
    text = PLAIN.read_text(encoding="utf-8").replace("rated_cv", "ratedcv", 1)
    f = tmp_path / "l.csv"
    f.write_text(text, encoding="utf-8")
    r = _run(tmp_path, linelist=f)
    assert r.exit_code == 3
    assert "rated_cv" in r.output and "ratedcv" in r.output and "did you mean" in r.output


def test_misspelt_optional_column_is_shown_on_the_terminal(tmp_path):
    with open(PLAIN, newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    rows[0].append("noise_limt")
    for r in rows[1:]:
        r.append("80")
    f = tmp_path / "l.csv"
    with open(f, "w", newline="", encoding="utf-8") as fh:
        csv.writer(fh).writerows(rows)
    r = _run(tmp_path, linelist=f)
    assert r.exit_code == 0
    assert "noise_limt" in r.output and "did you mean 'noise_limit'" in r.output


def test_bare_small_valve_size_is_refused_as_probably_inches(tmp_path):
    text = PLAIN.read_text(encoding="utf-8").replace(",80 mm,", ",3,", 1)
    f = tmp_path / "l.csv"
    f.write_text(text, encoding="utf-8")
    r = _run(tmp_path, linelist=f)
    assert r.exit_code == 1
    rejected = list(csv.DictReader(open(tmp_path / "out" / "rejected.csv", encoding="utf-8")))
    assert rejected[0]["tag"] == "LV-301"
    assert "probably inches" in rejected[0]["reason"] and "valve_size" in rejected[0]["reason"]


def test_version_and_short_help():
    assert runner.invoke(app, ["--version"]).output.startswith("valve-audit ")
    r = runner.invoke(app, ["run", "-h"])
    assert r.exit_code == 0 and "--out" in r.output and "kPa" in r.output


def test_standard_input_is_read_with_dash(tmp_path):
    r = _run(tmp_path, linelist="-", input=PLAIN.read_text(encoding="utf-8"))
    assert r.exit_code == 0, r.output
    assert (tmp_path / "out" / "results.csv").read_bytes() == _plain_results(tmp_path)


def _plain_results(tmp_path):
    other = tmp_path / "plain"
    runner.invoke(app, ["run", str(PLAIN), "--out", str(other), "--format", "csv", "--quiet"])
    return (other / "results.csv").read_bytes()


def test_the_last_line_says_where_the_outputs_are(tmp_path):
    r = _run(tmp_path)
    last = r.output.strip().splitlines()[-1]
    assert last.startswith("Outputs in ") and str((tmp_path / "out").resolve()) in last
    assert "results.csv" in last


def test_csv_only_run_removes_the_previous_reports(tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    for name in ("report.html", "report.pdf", "worklist.xlsx"):
        (out / name).write_text("from an earlier audit of another line list")
    (out / "my_notes.txt").write_text("not ours: kept")
    r = _run(tmp_path)
    assert r.exit_code == 0
    left = sorted(p.name for p in out.iterdir() if not p.name.startswith("."))
    assert left == ["audit_info.json", "my_notes.txt", "rejected.csv", "results.csv", "valves.csv"]


def test_output_folder_that_is_a_file_is_refused_before_the_audit(tmp_path):
    f = tmp_path / "out"
    f.write_text("a file")
    r = runner.invoke(app, ["run", str(PLAIN), "--out", str(f), "--format", "csv"])
    assert r.exit_code == 3 and "cannot write" in r.output


def test_one_inch_trim_fits_a_dn25_body(tmp_path):
    # Trims meet bodies by nominal size: '1 in' (25.4 mm) and DN25 (25 mm) are the same nominal size.
    from audit.io.pipes import nominal_dn
    import numpy as np
    assert nominal_dn(np.array([0.0254]))[0] == nominal_dn(np.array([0.025]))[0] == 25
    assert nominal_dn(np.array([0.0762]))[0] == 80


def test_compare_of_an_edited_valves_csv_is_an_input_error(tmp_path):
    a = tmp_path / "a"
    runner.invoke(app, ["run", str(PLAIN), "--out", str(a), "--format", "csv", "--quiet"])
    b = tmp_path / "b"
    shutil.copytree(a, b)
    (b / "valves.csv").write_text("tag;severity\nLV-301;plan\n", encoding="utf-8")
    r = runner.invoke(app, ["compare", str(a), str(b), "--out", str(tmp_path / "c")])
    assert r.exit_code == 3 and "valves.csv" in r.output and "Traceback" not in r.output
