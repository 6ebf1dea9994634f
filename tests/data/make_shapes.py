"""Write the export-shape files of this folder: one small invented line list in seven shapes.

Every file describes the same three valves of a fictional unit, so each must audit to the
same results as ``plain.csv``.  Run from anywhere: ``python tests/data/make_shapes.py``.
"""
from __future__ import annotations

import csv
from pathlib import Path

HERE = Path(__file__).resolve().parent

VALVES = [  # tag, area, service, fluid, size as plain / nominal, rated_cv, fl, xt, fd, pipe NPS, schedule
    ("LV-301", "300 Tank farm", "Tank transfer", "Water", "80 mm", "DN80", "60", "0.9", "0.72", "0.46", "", ""),
    ("FV-302", "300 Tank farm", "Fuel gas to heater", "Methane", "3 in", "NPS 3", "75", "0.9", "0.7", "0.46",
     "4", "40"),
    ("PV-303", "300 Tank farm", "Blanket nitrogen", "Nitrogen", "2 in", '2"', "20", "0.9", "0.7", "0.46", "", ""),
]
CASES = {  # tag: [(case, flow kg/h, p_in barg, p_out barg, t_in degC)]
    "LV-301": [("min", "8000", "6.5", "3.2", "25"), ("max", "40000", "6.2", "2.6", "25")],
    "FV-302": [("min", "900", "12.5", "6.8", "20"), ("max", "3000", "12", "4.1", "20")],
    "PV-303": [("min", "40", "7", "0.35", "15"), ("max", "250", "7", "0.3", "15")],
}
UNITS = {"flow": "kg/h", "p_in": "barg", "p_out": "barg", "t_in": "degC"}
VALVE_COLS = ["tag", "area", "service", "fluid", "valve_size", "rated_cv", "fl", "xt", "fd", "pipe_in_size",
              "pipe_in_schedule"]


def _valve_cells(v, nominal=False):
    tag, area, service, fluid, size, nom, cv, fl, xt, fd, nps, sched = v
    return [tag, area, service, fluid, nom if nominal else size, cv, fl, xt, fd, nps, sched]


def _case_header(with_units=True):
    out = []
    for case in ("min", "max"):
        for q in ("flow", "p_in", "p_out", "t_in"):
            out.append(f"{q}_{case} [{UNITS[q]}]" if with_units else f"{q}_{case}")
    return out


def _case_cells(tag):
    return [x for c in CASES[tag] for x in c[1:]]


def wide_rows(nominal=False, with_units=True):
    rows = [VALVE_COLS + _case_header(with_units)]
    rows += [_valve_cells(v, nominal) + _case_cells(v[0]) for v in VALVES]
    return rows


def _write(name, rows, delimiter=","):
    with open(HERE / name, "w", newline="", encoding="utf-8") as fh:
        csv.writer(fh, delimiter=delimiter, lineterminator="\n").writerows(rows)


def main():
    _write("plain.csv", wide_rows())
    _write("nominal_sizes.csv", wide_rows(nominal=True))
    # A units row under the header: bracketed for flow, bare for the rest.
    bare = wide_rows(with_units=False)
    units = [""] * len(VALVE_COLS) + [f"[{UNITS[h.split('_')[0]]}]" if h.startswith("flow") else
                                      UNITS[h.rsplit("_", 1)[0]] for h in bare[0][len(VALVE_COLS):]]
    _write("units_row.csv", [bare[0], units] + bare[1:])
    # A title block above the header, as instrument databases export.
    title = [["Fictional tank farm line list"], ["Revision C", "", "issued for audit"], []]
    _write("title_block.csv", title + wide_rows())
    # Long layout: one row per valve and case.
    long = [VALVE_COLS + ["case"] + [f"{q} [{UNITS[q]}]" for q in ("flow", "p_in", "p_out", "t_in")]]
    for v in VALVES:
        for case in CASES[v[0]]:
            long.append(_valve_cells(v) + list(case))
    _write("long.csv", long)
    # A European export: semicolons, decimal commas.
    euro = [[c.replace(".", ",") for c in r] for r in wide_rows()]
    _write("european.csv", euro, delimiter=";")
    _numeric_xlsx()


def _numeric_xlsx():
    """XLSX with numbers stored as numbers (schedule 40.0, rated Cv 60.0), as a spreadsheet saves them."""
    import openpyxl

    book = openpyxl.Workbook()
    sheet = book.active
    sheet.title = "valves"
    for r, row in enumerate(wide_rows()):
        out = []
        for c, cell in enumerate(row):
            header = wide_rows()[0][c]
            numeric = r > 0 and header.split(" [")[0] not in ("tag", "area", "service", "fluid", "valve_size")
            out.append(float(cell) if numeric and cell else cell)
        sheet.append(out)
    book.save(HERE / "numeric_cells.xlsx")


if __name__ == "__main__":
    main()
