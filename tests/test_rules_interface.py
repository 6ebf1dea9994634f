"""The rule set: discovery, thresholds, site overrides, `valve-audit rules`."""
import pytest
from typer.testing import CliRunner

from audit.cli import app
from rules import ThresholdError, all_rules, effective_thresholds
from helpers_linelist import audit_rows
from audit.engine import Options


def test_every_rule_module_is_discovered():
    import pkgutil
    import rules
    modules = {m.name for m in pkgutil.iter_modules(rules.__path__)} - {"base", "severity", "levels", "docs"}  # the interface, not rules
    assert {r.code for r in all_rules()} == modules


def test_rules_command_prints_every_threshold_with_its_source(tmp_path):
    out = CliRunner().invoke(app, ["rules"]).output
    for rule in all_rules():
        assert f"[{rule.code}]" in out
        for t in rule.thresholds:
            line = next(line for line in out.splitlines() if line.strip().startswith(f"{t.name} ="))
            assert t.source in line
    site = tmp_path / "site.toml"
    site.write_text("[choking]\nwatch = 0.7\n")
    out = CliRunner().invoke(app, ["rules", "--rules", str(site)]).output
    assert "watch = 0.7" in out and "site file" in out


def test_unknown_rule_or_threshold_is_refused():
    with pytest.raises(ThresholdError):
        effective_thresholds({"chokng": {"watch": 0.7}})
    with pytest.raises(ThresholdError):
        effective_thresholds({"choking": {"wach": 0.7}})
    with pytest.raises(ThresholdError):
        effective_thresholds({"choking": {"watch": "high"}})


def test_site_threshold_changes_the_finding(tmp_path):
    header = "tag,fluid,valve_size,rated_cv,fl,fd,xt,flow_max,p_in_max,p_out_max,t_in_max"
    row = ["A,Water,50,60,0.9,0.46,0.7,10,10,4.5,20"]  # choke ratio about 0.68
    plain = audit_rows(tmp_path, header, row)
    assert 0.6 < plain.cases["choke_ratio"].iloc[0] < 0.8
    assert "CHOKE_NEAR" not in plain.cases["findings"].iloc[0]
    site = audit_rows(tmp_path, header, row, options=Options(thresholds={"choking": {"watch": 0.6}}))
    assert "CHOKE_NEAR" in site.cases["findings"].iloc[0]
