"""Reading a tabular export as it comes: bytes in, a header and rows of cells out.

The one place that knows file shapes (docs/input.md, "File shapes"):
- CSV (comma, semicolon or tab separated, UTF-8 or Windows-1252) and XLSX
  (the first visible sheet, or the one named), from a path or standard input (`-`);
- a title block above the header: the header is the first row that names
  `tag` and at least two other known columns;
- a units row under the header (`[barg]` cells or bare units): merged into the
  header's units;
- true row numbers: a CSV's line number or a spreadsheet's row number, so a
  blank line or a title block never shifts the numbers rejected.csv reports.

The file is read once, into memory, and hashed from those bytes: the digest
in the outputs describes exactly what was audited.
"""
from __future__ import annotations

import csv
import hashlib
import io
import re
import sys
import unicodedata
from dataclasses import dataclass, field
from pathlib import Path

HEADER_SEARCH_ROWS = 30     # how far down a title block may push the header
XLSX_MAGIC = b"PK\x03\x04"
# Characters that are not text: C0/C1 controls (tab and line breaks aside) and invisible format marks.
_INVISIBLE = re.compile("[\u0000-\u0008\u000b\u000c\u000e-\u001f\u007f-\u009f\u200b-\u200f\u2028-\u202e"
                        "\u2060-\u2064\ufeff]")


_BREAKS = str.maketrans({"\r": " ", "\n": " ", "\t": " "})


class InputError(Exception):
    """The input as a whole cannot be read (missing, unreadable, over a limit)."""


@dataclass
class Limits:
    """Refusal limits for an input, so a huge or hostile file is refused, not ground through."""
    max_bytes: int = 50_000_000
    max_rows: int = 100_000
    max_cell_chars: int = 1_000
    max_unpacked_bytes: int = 300_000_000   # an XLSX's parts, uncompressed
    max_columns: int = 2_000                # declared or found in a sheet
    max_cases_per_valve: int = 50
    max_cases: int = 2_000_000


@dataclass
class RawTable:
    """A header (text as written) and rows of cells, each with its row number in the file."""
    header: list[str]
    rows: list[list]
    row_numbers: list[int]
    source: str                 # the file name, or 'standard input'
    sheet: str = ""             # the sheet read (XLSX), '' for CSV
    digest: str = ""            # SHA-256 of the bytes read
    decimal_comma: bool = False  # a semicolon-separated export: commas are decimal marks
    units_row: list[str] = field(default_factory=list)  # units found in a row under the header
    notes: list[str] = field(default_factory=list)      # what the reader did that a person should know
    unread_rows: list[int] = field(default_factory=list)  # rows with text only in columns not read
    uncached: set = field(default_factory=set)  # (file row number, column index) of formulas with no stored value


_PLAIN = re.compile(r"[\x20-\x7e]*")  # printable ASCII: nothing to clean (most cells)


def clean_text(value: str) -> str:
    """Text without control characters or invisible marks, line breaks and tabs as spaces, NFKC-normalised."""
    if _PLAIN.fullmatch(value):
        return value
    return unicodedata.normalize("NFKC", _INVISIBLE.sub("", value)).translate(_BREAKS)


def normalise_header(raw) -> tuple[str, str]:
    """'P_in max [barg]' -> ('p_in_max', 'barg').  Spaces and hyphens count as underscores."""
    text = clean_text(str(raw)).strip()
    unit = ""
    m = re.match(r"^(.*?)\s*\[(.*)\]\s*$", text)
    if m:
        text, unit = m.group(1), m.group(2).strip()
    name = re.sub(r"[\s\-]+", "_", text.strip().lower())
    return name, unit


def read_bytes(path: str | Path, limits: Limits) -> tuple[bytes, str]:
    """The file's bytes (``-``: standard input) and a name for messages; refused over the size limit."""
    if str(path) == "-":
        data = sys.stdin.buffer.read(limits.max_bytes + 1)
        name = "standard input"
    else:
        path = Path(path)
        if not path.exists():
            raise InputError(f"the file '{path}' does not exist")
        if path.is_dir():
            raise InputError(f"'{path}' is a folder; give a CSV or XLSX file")
        size = path.stat().st_size
        if size > limits.max_bytes:
            raise InputError(f"'{path.name}' is {size:,} bytes, over the limit of {limits.max_bytes:,} "
                             "(raise it with --max-bytes if the file is genuine)")
        try:
            data = path.read_bytes()
        except OSError as exc:
            raise InputError(f"could not read '{path}': {exc.strerror or exc}") from None
        name = path.name
    if len(data) > limits.max_bytes:
        raise InputError(f"{name} is over the limit of {limits.max_bytes:,} bytes "
                         "(raise it with --max-bytes if the file is genuine)")
    return data, name


def read_source(path: str | Path, sheet: str | None, limits: Limits, is_known=None,
                is_unit=None) -> RawTable:
    """Read a CSV or XLSX (path or ``-``) into a RawTable.

    is_known(name) -> bool tells a normalised column name the caller
    understands (to find the header below a title block); is_unit(text) ->
    bool tells a unit cell (to find a units row).  Raises InputError when the file as a whole cannot be read.
    """
    data, name = read_bytes(path, limits)
    digest = hashlib.sha256(data).hexdigest()
    suffix = Path(str(path)).suffix.lower() if str(path) != "-" else ""
    is_zip = data[:4] == XLSX_MAGIC
    try:
        if is_zip or suffix in (".xlsx", ".xlsm"):
            if not is_zip:
                raise InputError(f"'{name}' is named .xlsx but is not a workbook")
            inspect_xlsx(data, name, limits)
            grid, numbers, sheet_name = _xlsx_rows(data, sheet, name)
            uncached = _uncached_formulas(data, sheet_name, grid)
            decimal_comma = False
        elif suffix in (".csv", ".txt", ".tsv", ""):
            uncached = set()
            grid, numbers, decimal_comma = _csv_rows(data, name)
            sheet_name = ""
            if sheet:
                raise InputError(f"--sheet '{sheet}' was given, but '{name}' is a CSV file with no sheets")
        else:
            raise InputError(f"'{name}': expected a .csv or .xlsx file")
    except InputError:
        raise
    except Exception as exc:  # any reader failure is the file's, not the tool's
        raise InputError(f"could not read '{name}': {str(exc)[:200]}") from None
    table = _locate_header(grid, numbers, name, is_known, is_unit)
    table.source, table.sheet, table.digest, table.decimal_comma = name, sheet_name, digest, decimal_comma
    table.uncached = uncached
    if decimal_comma:
        table.notes.append("semicolon-separated export: commas read as decimal marks")
    if len(table.rows) > limits.max_rows:
        raise InputError(f"'{name}' has {len(table.rows):,} rows, over the limit of {limits.max_rows:,} "
                         "(raise it with --max-rows if the file is genuine)")
    return table


_DIMENSION = re.compile(rb'<dimension[^>]*ref="[A-Z]+[0-9]+:([A-Z]+)([0-9]+)"')


def _column_number(letters: bytes) -> int:
    n = 0
    for ch in letters:
        n = n * 26 + ch - 64
    return n


def inspect_xlsx(data: bytes, name: str, limits: Limits) -> None:
    """Refuse, before any parsing, a workbook whose parts or declared sheet sizes are over the limits.

    A few kilobytes of XLSX can declare a sheet of 16,384 x 1,048,576 cells, or hold a
    gigabyte-long string compressed to a megabyte: a reader that believed them would exhaust
    memory.  The zip directory gives each part's uncompressed size, and each sheet's first bytes
    its declared dimension, without unpacking anything large.
    """
    import zipfile

    with zipfile.ZipFile(io.BytesIO(data)) as book:
        parts = book.infolist()
        unpacked = sum(p.file_size for p in parts)
        if unpacked > limits.max_unpacked_bytes:
            raise InputError(f"'{name}' unpacks to {unpacked:,} bytes, over the limit of {limits.max_unpacked_bytes:,} "
                             "(a workbook that large is not a line list; save the sheet as CSV if it is genuine)")
        for part in parts:
            if not (part.filename.startswith("xl/worksheets/") and part.filename.endswith(".xml")):
                continue
            with book.open(part) as fh:
                head = fh.read(4096)
            m = _DIMENSION.search(head)
            if not m:
                continue
            cols, rows = _column_number(m.group(1)), int(m.group(2))
            if cols > limits.max_columns or rows > limits.max_rows + HEADER_SEARCH_ROWS + 2:
                raise InputError(f"'{name}' declares a sheet of {rows:,} rows and {cols:,} columns, over the limits "
                                 f"({limits.max_rows:,} rows, {limits.max_columns:,} columns); clear the unused "
                                 "cells or save the sheet as CSV")


def _csv_rows(data: bytes, name: str) -> tuple[list[list], list[int], bool]:
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = data.decode("cp1252", errors="replace")  # a spreadsheet's "CSV" on Windows
    csv.field_size_limit(max(len(data), 131072))  # a long cell rejects its row (max_cell), not the file
    sample = "\n".join(text.splitlines()[:50])
    delimiter = _delimiter(sample)
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter)
    grid, numbers, start = [], [], 1
    for record in reader:
        grid.append(record)
        numbers.append(start)
        start = reader.line_num + 1
    return grid, numbers, delimiter == ";"


def _delimiter(sample: str) -> str:
    """Comma, semicolon or tab: the one that splits the header-like lines most consistently."""
    best, best_score = ",", -1
    for d in (",", ";", "\t"):
        counts = [len(next(csv.reader([line], delimiter=d))) for line in sample.splitlines() if line.strip()]
        if not counts:
            continue
        widest = max(counts)
        score = widest * sum(c == widest for c in counts) if widest > 1 else 0
        if score > best_score:
            best, best_score = d, score
    return best


def _xlsx_rows(data: bytes, sheet: str | None, name: str) -> tuple[list[list], list[int], str]:
    """Rows of the chosen sheet (the first visible one by default), values as stored.

    Through calamine when installed (fast), else openpyxl read-only; neither evaluates a
    formula nor follows an external link.
    """
    try:
        from python_calamine import CalamineWorkbook
    except ImportError:
        return _openpyxl_rows(data, sheet, name)
    book = CalamineWorkbook.from_filelike(io.BytesIO(data))
    visible = [m.name for m in book.sheets_metadata if str(m.visible).split(".")[-1] == "Visible"]
    chosen = _choose_sheet(book.sheet_names, visible, sheet, name)
    rows = book.get_sheet_by_name(chosen).to_python(skip_empty_area=False)
    return [list(r) for r in rows], list(range(1, len(rows) + 1)), chosen


def _uncached_formulas(data: bytes, sheet: str, grid: list[list]) -> set:
    """(row number, column index) of the sheet's formula cells that carry no stored value.

    A workbook written by a program, or never recalculated, can hold formulas without their
    result; the value readers then see a blank.  Such a cell is not blank, it is unknown: the
    loader rejects its row by name.  Only looked for where the workbook holds a formula at all.
    """
    import zipfile

    with zipfile.ZipFile(io.BytesIO(data)) as book:
        if not any(b"<f" in book.read(p.filename) for p in book.infolist()
                   if p.filename.startswith("xl/worksheets/") and p.filename.endswith(".xml")):
            return set()
    import openpyxl

    wb = openpyxl.load_workbook(io.BytesIO(data), read_only=True, data_only=False, keep_links=False)
    found = set()
    for r, row in enumerate(wb[sheet].iter_rows(values_only=True)):
        for c, value in enumerate(row):
            if isinstance(value, str) and value.startswith("=") and r < len(grid) and \
                    (c >= len(grid[r]) or _blank(grid[r][c])):
                found.add((r + 1, c))
    wb.close()
    return found


def _openpyxl_rows(data: bytes, sheet: str | None, name: str) -> tuple[list[list], list[int], str]:
    import openpyxl

    book = openpyxl.load_workbook(io.BytesIO(data), read_only=True, data_only=True, keep_links=False)
    visible = [ws.title for ws in book.worksheets if ws.sheet_state == "visible"]
    chosen = _choose_sheet(book.sheetnames, visible, sheet, name)
    rows = [list(r) for r in book[chosen].iter_rows(values_only=True)]
    book.close()
    return rows, list(range(1, len(rows) + 1)), chosen


def _choose_sheet(names: list[str], visible: list[str], sheet: str | None, name: str) -> str:
    if sheet:
        if sheet not in names:
            raise InputError(f"'{name}' has no sheet '{sheet}'; it has {', '.join(names)}")
        return sheet
    if not visible:
        raise InputError(f"'{name}' has no visible sheet; name one with --sheet ({', '.join(names)})")
    return visible[0]


def _blank(cell) -> bool:
    return cell is None or (isinstance(cell, str) and not cell.strip())


def _locate_header(grid: list[list], numbers: list[int], name: str, is_known, is_unit) -> RawTable:
    """The header row (below any title block), an optional units row, and the data rows."""
    if not grid:
        raise InputError(f"'{name}' is empty")
    at = 0
    if is_known is not None:
        for i, row in enumerate(grid[:HEADER_SEARCH_ROWS]):
            names = {normalise_header(c)[0] for c in row if not _blank(c)}
            if "tag" in names and sum(map(is_known, names)) >= 3:
                at = i
                break
        else:
            at = next((i for i, r in enumerate(grid[:HEADER_SEARCH_ROWS]) if any(not _blank(c) for c in r)), 0)
    header = ["" if _blank(c) else str(c) for c in grid[at]]
    width = len(header)
    notes = [f"the header is on row {numbers[at]}; the {at} row(s) above it were read as a title block"] if at else []
    body, body_numbers = grid[at + 1:], numbers[at + 1:]
    units_row: list[str] = []
    if body and is_unit is not None and _is_units_row(body[0], header, is_unit):
        units_row = ["" if _blank(c) else str(c).strip().strip("[]").strip() for c in body[0]]
        units_row += [""] * (width - len(units_row))
        notes.append(f"row {body_numbers[0]} holds units; they apply to the columns above them")
        body, body_numbers = body[1:], body_numbers[1:]
    # Cells beyond the header's width: a column with no header name.  Kept, so the caller can refuse it.
    extra = max((len(r) for r in body), default=0) - width
    if extra > 0:
        header += [""] * extra
        units_row += [""] * extra if units_row else []
        width = len(header)
    rows = [list(r) + [""] * (width - len(r)) for r in body]
    return RawTable(header, rows, body_numbers, name, units_row=units_row[:width], notes=notes)


def _is_units_row(row: list, header: list[str], is_unit) -> bool:
    filled = [(h, c) for h, c in zip(header, row) if not _blank(c)]
    tag_cell = next((c for h, c in zip(header, row) if normalise_header(h)[0] == "tag"), "")
    if not filled or not _blank(tag_cell):
        return False
    return all(isinstance(c, str) and is_unit(c.strip().strip("[]").strip()) for _, c in filled)
