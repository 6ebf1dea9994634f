"""A hostile line list: one defect per row, beside valid rows (issue 5).

Every row must be accounted for, each defect rejected with the right reason, and the valid rows
audited with the same numbers as when they stand alone.
"""
import csv

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from openpyxl import Workbook

from audit.engine import Options, compute
from audit.io.loader import load_linelist
from audit.io.outputs import neutralise
from audit.pipeline import run_files

HEADER = ["tag", "service", "fluid", "phase", "valve_size", "rated_cv", "fl", "xt", "fd", "pipe_in_id",
          "flow_max", "p_in_max", "p_out_max", "t_in_max", "flow_norm", "p_in_norm", "p_out_norm", "t_in_norm"]
GOOD = dict(service="ok", fluid="Water", phase="", valve_size="50", rated_cv="40", fl="0.9", xt="0.7", fd="0.46",
            pipe_in_id="", flow_max="20", p_in_max="10", p_out_max="5", t_in_max="20",
            flow_norm="", p_in_norm="", p_out_norm="", t_in_norm="")


def row(tag, **changes):
    r = dict(GOOD, tag=tag)
    r.update(changes)
    return r


# (row, expected: "valid" or a fragment of the reason)
ROWS = [
    (row("GOOD-1"), "valid"),
    (row(""), "column 'tag' is blank"),
    (row("DUP-1"), "appears more than once"),
    (row("DUP-1", rated_cv="41"), "appears more than once"),
    (row("FLUID-1", fluid="Watter"), "unknown fluid 'Watter'"),
    (row("UNIT-1", p_in_max="10 furlongs"), "unknown unit 'furlongs'"),
    (row("PREV-1", p_out_max="12"), "above p_in"),
    (row("FLOW-1", flow_max="-20"), "not a positive flow"),
    (row("FL-1", fl="1.2"), "0 < FL <= 1"),
    (row("XT-1", xt="1.0"), "0 < xT < 1"),
    (row("FD-1", fd="0"), "0 < Fd <= 1"),
    (row("CV-1", rated_cv="-5"), "must be above 0"),
    (row("TEXTCV-1", rated_cv="abc"), "column 'rated_cv': value 'abc' is not a number"),
    (row("SIZE-1", valve_size="0"), "column 'valve_size'"),
    (row("PIPE-1", valve_size="100", pipe_in_id="20"), "much smaller than the valve size"),
    (row("TEMP-1", t_in_max="-300"), "below absolute zero"),
    # Water at its boiling point: audited as saturated liquid with a note (docs/input.md, "At saturation").
    (row("SAT-1", p_in_max="1.01325", p_out_max="0.5", t_in_max="100"), "valid"),
    (row("COMMA-1", p_out_max="4,5"), "valid"),
    (row("MINUS-1", fluid="Propane", t_in_max="\u221220", p_in_max="10", p_out_max="6"), "valid"),
    (row("T" * 5000), "a cell of 5,000 characters"),
    (row("<b>MARK-1</b>", service='=HYPERLINK("http://example.invalid","click")'), "valid"),
    (row("+SUM(A1)", service="@cmd"), "valid"),
    (row("ZERO-DP-1", flow_norm="15", p_in_norm="10", p_out_norm="10", t_in_norm="20"), "valid"),
]


def _write_csv(path, rows):
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.DictWriter(fh, fieldnames=HEADER)
        w.writeheader()
        for i, r in enumerate(rows):
            w.writerow(r)
            if i == 5:
                fh.write("," * (len(HEADER) - 1) + "\n")  # a blank row in the middle
    return path


def _write_xlsx(path, rows):
    book = Workbook()
    sheet = book.active
    sheet.append(HEADER)
    for i, r in enumerate(rows):
        sheet.append([r[h] for h in HEADER])
        if i == 5:
            sheet.append([None] * len(HEADER))
    for cells in sheet.iter_rows(min_row=2):
        for c in cells:
            if isinstance(c.value, str):
                c.data_type = "s"  # as a person typed it: text, not a formula
    book.save(path)
    return path


@pytest.fixture(params=["csv", "xlsx"])
def hostile(request, tmp_path):
    rows = [r for r, _ in ROWS]
    path = tmp_path / f"hostile.{request.param}"
    (_write_csv if request.param == "csv" else _write_xlsx)(path, rows)
    return path


def test_every_row_accounted_with_the_right_reason(hostile):
    audit = compute(load_linelist(hostile))
    assert audit.linelist.rows_total == len(ROWS)  # the blank row skipped silently
    assert len(audit.valves) + len(audit.rejected) == len(ROWS)
    rejected = {int(r): reason for r, reason in zip(audit.rejected["row"], audit.rejected["reason"])}
    audited_rows = set(audit.linelist.valves["row"])
    for i, (r, expected) in enumerate(ROWS):
        spreadsheet_row = i + 2 + (1 if i > 5 else 0)
        if expected == "valid":
            assert spreadsheet_row in audited_rows, (r["tag"][:20], rejected.get(spreadsheet_row))
        else:
            assert spreadsheet_row in rejected, r["tag"][:20]
            assert expected in rejected[spreadsheet_row], (expected, rejected[spreadsheet_row])
            assert rejected[spreadsheet_row].count(";") <= 2  # one defect, one reason (plus its own detail)


def test_valid_rows_give_the_same_numbers_as_alone(hostile, tmp_path):
    together = compute(load_linelist(hostile)).cases.set_index(["tag", "case"])
    for r, expected in ROWS:
        if expected != "valid":
            continue
        alone = compute(load_linelist(_write_csv(tmp_path / "alone.csv", [r]))).cases.set_index(["tag", "case"])
        for key in alone.index:
            for col in ("cv", "choke_ratio", "travel_pct", "velocity_out_m_s"):
                a, b = alone.loc[key, col], together.loc[key, col]
                assert (np.isnan(a) and np.isnan(b)) or a == b, (key, col)


def test_bad_case_is_reported_and_good_case_kept(tmp_path):
    audit = compute(load_linelist(_write_csv(tmp_path / "h.csv", [r for r, _ in ROWS])))
    c = audit.cases[audit.cases["tag"] == "ZERO-DP-1"].set_index("case")
    assert c.loc["max", "cv"] > 0 and c.loc["max", "case_error"] == ""
    assert "no pressure drop" in c.loc["norm", "case_error"]


def test_outputs_neutralise_formulas_and_escape_markup(tmp_path):
    path = _write_csv(tmp_path / "h.csv", [r for r, _ in ROWS])
    run_files(path, tmp_path / "out", Options(), formats={"csv", "html", "xlsx"}, quiet=True)
    for name in ("results.csv", "valves.csv", "rejected.csv"):
        with open(tmp_path / "out" / name, newline="", encoding="utf-8") as fh:
            for rec in csv.reader(fh):
                for cell in rec:
                    first = cell[:1]
                    assert not (first and (first in "=@" or (first in "+-" and cell[1:2].isalpha()))), (name, cell)
    valves = (tmp_path / "out" / "valves.csv").read_text(encoding="utf-8")
    assert "'=HYPERLINK" in valves and "'+SUM(A1)" in valves and "'@cmd" in valves
    html = (tmp_path / "out" / "report.html").read_text(encoding="utf-8")
    assert "&lt;b&gt;MARK-1&lt;/b&gt;" in html and "<b>MARK-1</b>" not in html
    from openpyxl import load_workbook
    sheet = load_workbook(tmp_path / "out" / "worklist.xlsx").active
    for cells in sheet.iter_rows(min_row=2):
        for c in cells:
            assert c.data_type != "f", c.value


# The OWASP rule for CSV injection: a leading =, +, -, @, tab or CR in a text cell, whatever follows.
@pytest.mark.parametrize("value,expected", [("=1+2", "'=1+2"), ("+A1", "'+A1"), ("-cmd", "'-cmd"), ("@x", "'@x"),
                                            ("-5", "'-5"), ("plain", "plain"), ('-"x"', "'-\"x\""),
                                            ("+1+cmd|' /C calc'!A0", "'+1+cmd|' /C calc'!A0"), ("-1+1", "'-1+1"),
                                            ("\t=1", "'\t=1"), ("a\r\n=1+1", "a  =1+1"), (-5.0, -5.0)])
def test_neutralise(value, expected):
    assert neutralise(value) == expected


def test_text_columns_neutralised_as_cell_by_cell():
    """A pandas text column's fast path (a regular expression finds the risky cells) gives the cells
    the per-cell rule above gives; missing text is an empty cell."""
    import pandas as pd

    from audit.io import outputs

    values = ["=1+2", "+A1", "-cmd", "@x", "\t=1", "\r=1", "a\r\n=1+1", "x\ny", "plain", "", None, "x=1", " =1",
              "é@", "==", "1-2"]
    column = pd.Series(values, dtype="str")
    assert isinstance(column.dtype, pd.StringDtype)   # the fast path is the one tested
    expected = ["" if v is None else neutralise(v) for v in values]
    assert outputs.to_csv_text(pd.DataFrame({"c": column})) == _csv_module_text({"c": expected})


def _csv_module_text(columns: dict) -> str:
    """The reference: Python's csv module (minimal quoting, '\\n' line ends), floats as format(v, '.6g')."""
    import csv
    import io

    def cell(v):
        if isinstance(v, float):
            return "" if v != v else format(v, ".6g")
        if isinstance(v, bool):
            return "true" if v else "false"
        return v

    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow(list(columns))
    writer.writerows(zip(*([cell(v) for v in values] for values in columns.values())))
    return buf.getvalue()


def test_to_csv_text_one_column_with_missing_numbers():
    """A row of one empty cell is written '""' by the csv module (a blank line would be no row)."""
    import pandas as pd

    from audit.io import outputs

    values = [1.0, float("nan"), -0.0, 1234567.0]
    expected = 'c\n1\n""\n-0\n1.23457e+06\n'
    assert outputs.to_csv_text(pd.DataFrame({"c": values})) == _csv_module_text({"c": values}) == expected


_FLOATS = st.floats(allow_nan=True, allow_infinity=True) | st.sampled_from([0.0, -0.0, 1e-5, 123456.5, 999999.5])
_TEXTS = st.text(alphabet=st.sampled_from(list('ab ,"%=+-@\t\r\n\'é1.')), max_size=8)


@settings(max_examples=150, deadline=None)
@given(st.data())
def test_to_csv_text_matches_the_csv_module(data):
    """Each row is one line template filled by '%' (floats by '%.6g', a missing float by '%.0s'), one
    template per pattern of missing floats; the text must be what the csv module writes from cells
    formatted one by one.  Blocks of 3 rows, so patterns differ between blocks too."""
    import pandas as pd

    from audit.io import outputs

    rows = data.draw(st.integers(0, 9))
    kinds = data.draw(st.lists(st.sampled_from(["float", "bool", "int", "str", "object"]), min_size=1, max_size=6))
    columns, expected = {}, {}
    for k, kind in enumerate(kinds):
        name = f"c{k}%s"  # a '%' in a name must not reach a line template
        if kind == "float":
            values = data.draw(st.lists(_FLOATS, min_size=rows, max_size=rows))
            columns[name], expected[name] = pd.Series(values, dtype=float), values
        elif kind == "bool":
            values = data.draw(st.lists(st.booleans(), min_size=rows, max_size=rows))
            columns[name], expected[name] = pd.Series(values, dtype=bool), values
        elif kind == "int":
            values = data.draw(st.lists(st.integers(-10**12, 10**12), min_size=rows, max_size=rows))
            columns[name], expected[name] = pd.Series(values, dtype="int64"), values
        else:
            values = data.draw(st.lists(_TEXTS | st.none(), min_size=rows, max_size=rows))
            dtype = "str" if kind == "str" else object
            columns[name] = pd.Series(values, dtype=dtype)
            expected[name] = ["" if v is None else neutralise(v) for v in values]
    frame = pd.DataFrame(columns)
    old_block = outputs.CSV_BLOCK_ROWS
    outputs.CSV_BLOCK_ROWS = 3
    try:
        text = outputs.to_csv_text(frame)
    finally:
        outputs.CSV_BLOCK_ROWS = old_block
    assert text == _csv_module_text(expected)


def test_xlsx_formulas_are_not_evaluated(tmp_path):
    # A formula cell is read as the value the spreadsheet stored (none here: never calculated),
    # never evaluated by us: the row is rejected for a blank value, not audited with a made-up one.
    book = Workbook()
    sheet = book.active
    sheet.append(HEADER)
    sheet.append([GOOD.get(h, "") if h != "tag" else "F-1" for h in HEADER])
    sheet["F2"] = "=20*2"          # rated_cv as a formula
    sheet["B2"] = '=WEBSERVICE("http://example.invalid")'
    book.save(tmp_path / "f.xlsx")
    audit = compute(load_linelist(tmp_path / "f.xlsx"))
    assert len(audit.valves) == 0
    assert "rated_cv" in audit.rejected["reason"].iloc[0]


def test_oversized_input_is_refused(tmp_path):
    from audit.io.loader import InputError, Limits
    path = _write_csv(tmp_path / "h.csv", [r for r, _ in ROWS])
    with pytest.raises(InputError, match="rows"):
        load_linelist(path, limits=Limits(max_rows=5))
    with pytest.raises(InputError, match="bytes"):
        load_linelist(path, limits=Limits(max_bytes=100))


def test_unknown_fluid_suggests_the_nearest_names(tmp_path):
    audit = compute(load_linelist(_write_csv(tmp_path / "h.csv", [row("F", fluid="Methan")])))
    assert "Methane" in audit.rejected["reason"].iloc[0]


def test_xlsx_reader_without_calamine_gives_the_same_rows(tmp_path, monkeypatch):
    # The openpyxl path (read-only, cached values, no external links) must read what calamine reads.
    import builtins
    path = _write_xlsx(tmp_path / "h.xlsx", [r for r, _ in ROWS])
    fast = load_linelist(path)
    real_import = builtins.__import__

    def no_calamine(name, *args, **kwargs):
        if name == "python_calamine":
            raise ImportError("hidden for this test")
        return real_import(name, *args, **kwargs)

    monkeypatch.setattr(builtins, "__import__", no_calamine)
    slow = load_linelist(path)
    assert list(slow.valves["tag"]) == list(fast.valves["tag"])
    assert list(slow.rejected["reason"]) == list(fast.rejected["reason"])
