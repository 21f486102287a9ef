"""A register file as rows of text cells: CSV (UTF-8, with or without a byte-order mark) or XLSX.

Row numbers are those a person sees in the file: the header is row 1.
Spreadsheet numbers that are whole (context 1001 stored as 1001.0) read as
whole numbers; empty cells read as "".
"""

from __future__ import annotations

import csv
import io
from dataclasses import dataclass

from projects.record.errors import RecordInvalid

MAX_ROWS = 200_000
MAX_BYTES = 50 * 1024 * 1024


@dataclass(frozen=True)
class Sheet:
    header: list[str]
    rows: list[tuple[int, dict[str, str]]]  # (row number, header -> cell)


def _refuse(reason: str, code: str) -> RecordInvalid:
    return RecordInvalid(f"the register cannot be read: {reason}", field="file", code=code)


def _cell(value) -> str:
    if value is None:
        return ""
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value).strip()


def read_register(data: bytes, name: str) -> Sheet:
    """The rows of a register; ``name`` (the file name) says whether it is XLSX or CSV."""
    if len(data) > MAX_BYTES:
        raise _refuse(f"{len(data)} bytes; at most {MAX_BYTES}", "too-large")
    if name.lower().endswith((".xlsx", ".xlsm")) or data[:2] == b"PK":
        table = _xlsx_rows(data)
    else:
        try:
            text = data.decode("utf-8-sig")
        except UnicodeDecodeError as exc:
            raise _refuse(f"not UTF-8 text (byte {exc.start})", "not-utf8") from None
        try:
            table = [[_cell(c) for c in row] for row in csv.reader(io.StringIO(text, newline=""))]
        except csv.Error as exc:
            raise _refuse(str(exc), "malformed-csv") from None
    if not table or not any(table[0]):
        raise _refuse("no header row", "no-header")
    header = [h.strip() for h in table[0]]
    if len(table) > MAX_ROWS:
        raise _refuse(f"{len(table)} rows; at most {MAX_ROWS}", "too-many-rows")
    rows = []
    for number, cells in enumerate(table[1:], start=2):
        if not any(cells):
            continue
        rows.append((number, {h: (cells[i] if i < len(cells) else "") for i, h in enumerate(header) if h}))
    return Sheet(header, rows)


def _xlsx_rows(data: bytes) -> list[list[str]]:
    from openpyxl import load_workbook

    try:
        book = load_workbook(io.BytesIO(data), read_only=True, data_only=True)
    except Exception as exc:  # openpyxl raises many kinds for a bad file
        raise _refuse(f"not a readable spreadsheet ({type(exc).__name__})", "bad-spreadsheet") from None
    try:
        sheet = book.worksheets[0]
        return [[_cell(c) for c in row] for row in sheet.iter_rows(values_only=True, max_row=MAX_ROWS + 1)]
    finally:
        book.close()
