"""Real export shapes (tests/data/, written by make_shapes.py) audit to the same results as the plain wide file.

The check is exact (byte-identical results.csv): each shape holds the same numbers in the same units,
only written differently, so any difference is a reading error, not rounding.
"""
import numpy as np
import pytest
from typer.testing import CliRunner

from audit.cli import app
from audit.engine import compute
from audit.io.loader import load_linelist
from conftest import ROOT

DATA = ROOT / "tests" / "data"
SHAPES = ["long.csv", "units_row.csv", "title_block.csv", "nominal_sizes.csv", "european.csv", "numeric_cells.xlsx"]


def _results(tmp_path, name):
    out = tmp_path / name
    r = CliRunner().invoke(app, ["run", str(DATA / name), "--out", str(out), "--format", "csv", "--quiet"])
    assert r.exit_code == 0, r.output
    return (out / "results.csv").read_bytes()


@pytest.mark.parametrize("shape", SHAPES)
def test_export_shape_audits_like_the_plain_layout(tmp_path, shape):
    assert _results(tmp_path, shape) == _results(tmp_path, "plain.csv")


def test_plain_layout_sizes_every_case():
    audit = compute(load_linelist(DATA / "plain.csv"))
    assert len(audit.valves) == 3 and len(audit.rejected) == 0
    assert np.isfinite(audit.cases["cv"].to_numpy(float)).all()


def test_title_block_keeps_the_file_row_numbers(tmp_path):
    # The header sits on line 4 (three title lines above it): the first valve is line 5, as an editor shows it.
    ll = load_linelist(DATA / "title_block.csv")
    assert list(ll.valves["row"]) == [5, 6, 7]
    assert any("title block" in n for n in ll.source.notes)


def test_long_layout_rows_that_disagree_reject_the_valve_naming_the_column(tmp_path):
    text = (DATA / "long.csv").read_text(encoding="utf-8").splitlines()
    text[2] = text[2].replace(",60,", ",61,", 1)  # LV-301's second row gives another rated_cv
    f = tmp_path / "long_bad.csv"
    f.write_text("\n".join(text) + "\n", encoding="utf-8")
    ll = load_linelist(f)
    assert list(ll.valves["tag"]) == ["FV-302", "PV-303"]
    reason = ll.rejected.set_index("tag").loc["LV-301", "reason"]
    assert "rated_cv" in reason and "'60'" in reason and "'61'" in reason
    assert ll.rejected["row"].tolist() == [2]


def test_long_layout_repeated_case_is_named(tmp_path):
    text = (DATA / "long.csv").read_text(encoding="utf-8").splitlines()
    text[2] = text[2].replace(",max,", ",min,")
    f = tmp_path / "long_dup.csv"
    f.write_text("\n".join(text) + "\n", encoding="utf-8")
    reason = load_linelist(f).rejected.set_index("tag").loc["LV-301", "reason"]
    assert "case 'min' appears on rows 2 and 3" in reason


def test_decimal_comma_file_refuses_an_ambiguous_dot(tmp_path):
    # In a semicolon export with decimal commas, '1.200' may be 1200 or 1.2: refused per cell, never guessed.
    text = (DATA / "european.csv").read_text(encoding="utf-8").replace(";8000;", ";8.000;", 1)
    f = tmp_path / "euro.csv"
    f.write_text(text, encoding="utf-8")
    ll = load_linelist(f)
    assert len(ll.valves) == 3
    err = ll.cases.set_index(["valve", "case"]).loc[(0, "min"), "case_error"]
    assert "8.000" in err and "ambiguous" in err
