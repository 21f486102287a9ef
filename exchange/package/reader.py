"""Reading a project package back, refusing anything not exactly as described.

``check_package`` runs before anything is written: the zip itself (names,
sizes, compression ratio — a package is untrusted input), the descriptor,
every file's SHA-256 and size, and every row of every table against its
Table Schema (column count, types, enums, required cells, primary-key
uniqueness, foreign keys).  It collects every refused row with its table,
row number and reason.  ``rows`` then streams the typed rows of one table
for the replay.
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import posixpath
import zipfile
from datetime import datetime, timezone
from typing import Iterator

from chronology.engine.csv_cells import restore
from projects.record.errors import RecordInvalid

from . import schemas

#: Limits on what a package may unpack to (zip-bomb guard; common practice).
MAX_TOTAL_BYTES = 4 * 1024**3
MAX_RATIO = 200
MAX_MEMBERS = 100_000
MAX_LISTED = 500

csv.field_size_limit(64 * 1024 * 1024)


class PackageRefused(RecordInvalid):
    """The package is not valid; ``details['items']`` lists each problem found."""

    code = "package-refused"


class _Problems:
    def __init__(self):
        self.items: list[dict] = []
        self.count = 0

    def add(self, table: str | None, row: int | None, reason: str, *, field: str | None = None, code: str) -> None:
        self.count += 1
        if len(self.items) < MAX_LISTED:
            self.items.append({"table": table, "row": row, "field": field, "code": code, "reason": reason})

    def raise_if_any(self) -> None:
        if self.count:
            more = f" (the first {MAX_LISTED} listed)" if self.count > MAX_LISTED else ""
            raise PackageRefused(f"the package was refused: {self.count} problem(s){more}; nothing was written",
                                 field="package", items=self.items, problems=self.count)


def _safe_name(name: str) -> bool:
    if not name or name.startswith(("/", "\\")) or "\\" in name or ":" in name.split("/")[0]:
        return False
    parts = name.split("/")
    return ".." not in parts and posixpath.normpath(name) == name.rstrip("/")


def open_package(source) -> zipfile.ZipFile:
    """Open the zip and check its members' names and sizes before reading any of them."""
    try:
        zf = zipfile.ZipFile(source)
    except (zipfile.BadZipFile, OSError) as exc:
        raise PackageRefused(f"not a zip file: {exc}", field="package", items=[
            {"table": None, "row": None, "field": None, "code": "not-a-zip", "reason": str(exc)}]) from None
    problems = _Problems()
    members = zf.infolist()
    if len(members) > MAX_MEMBERS:
        problems.add(None, None, f"{len(members)} files; at most {MAX_MEMBERS}", code="too-many-files")
    total = 0
    for info in members:
        if not _safe_name(info.filename):
            problems.add(info.filename, None, "the file name leaves the package (absolute path or '..')",
                         code="unsafe-name")
        total += info.file_size
        if info.compress_size and info.file_size / info.compress_size > MAX_RATIO:
            problems.add(info.filename, None, f"compressed {info.file_size / info.compress_size:.0f} to 1; at most "
                         f"{MAX_RATIO} to 1 is accepted", code="compression-ratio")
    if total > MAX_TOTAL_BYTES:
        problems.add(None, None, f"unpacks to {total} bytes; at most {MAX_TOTAL_BYTES}", code="too-large")
    problems.raise_if_any()
    return zf


def _read_limited(zf: zipfile.ZipFile, name: str, limit: int) -> Iterator[bytes]:
    """A member's bytes, never more than its declared size (a lying header cannot inflate it)."""
    seen = 0
    with zf.open(name) as stream:
        while chunk := stream.read(1 << 20):
            seen += len(chunk)
            if seen > limit:
                raise PackageRefused(f"{name} unpacks to more than it declares", field="package", items=[
                    {"table": name, "row": None, "field": None, "code": "size-mismatch",
                     "reason": "more bytes than declared"}])
            yield chunk


def descriptor(zf: zipfile.ZipFile) -> dict:
    try:
        info = zf.getinfo("datapackage.json")
    except KeyError:
        raise PackageRefused("the package has no datapackage.json", field="package", items=[
            {"table": "datapackage.json", "row": None, "field": None, "code": "missing-file",
             "reason": "no datapackage.json"}]) from None
    try:
        found = json.loads(b"".join(_read_limited(zf, "datapackage.json", info.file_size)))
    except ValueError as exc:
        raise PackageRefused("datapackage.json is not JSON", field="package", items=[
            {"table": "datapackage.json", "row": None, "field": None, "code": "invalid-json", "reason": str(exc)}]
        ) from None
    if found.get("tellstack:format") != schemas.FORMAT:
        raise PackageRefused(f"not a {schemas.FORMAT} package", field="package", items=[
            {"table": "datapackage.json", "row": None, "field": "tellstack:format", "code": "unknown-format",
             "reason": f"format {found.get('tellstack:format')!r}"}])
    return found


def _check_file(zf, entry: dict, problems: _Problems, label: str) -> None:
    path = entry.get("path", "")
    try:
        info = zf.getinfo(path)
    except KeyError:
        problems.add(label, None, f"{path} is listed but missing", code="missing-file")
        return
    sha, size = hashlib.sha256(), 0
    for chunk in _read_limited(zf, path, info.file_size):
        sha.update(chunk)
        size += len(chunk)
    if entry.get("hash") != f"sha256:{sha.hexdigest()}":
        problems.add(label, None, f"the SHA-256 of {path} does not match datapackage.json", code="checksum-mismatch")
    if entry.get("bytes") is not None and entry["bytes"] != size:
        problems.add(label, None, f"{path} has {size} bytes, datapackage.json says {entry['bytes']}",
                     code="size-mismatch")


# -- cells -----------------------------------------------------------------------

def parse_cell(field: schemas.Field, text: str):
    """The typed value of one cell; raises ValueError with the reason."""
    if text == "":
        return None
    kind = field.type
    if kind == "string":
        return text
    if kind == "integer":
        return int(text)
    if kind == "number":
        return float(text)
    if kind == "boolean":
        if text not in ("true", "false"):
            raise ValueError(f"{text!r} is not true or false")
        return text == "true"
    if kind == "datetime":
        return datetime.strptime(text, schemas.DATETIME_FORMAT).replace(tzinfo=timezone.utc)
    if kind in ("object", "array"):
        value = json.loads(text)
        if not isinstance(value, dict if kind == "object" else list):
            raise ValueError(f"not a JSON {kind}")
        return value
    raise ValueError(f"unknown type {kind}")


def _typed_rows(zf, table: schemas.Table, problems: _Problems | None, on_refused=None) -> Iterator[tuple[int, dict]]:
    """(row number, typed row) of a table; row numbers count the header as row 1.

    ``on_refused(row_number, typed)`` is told of each refused row with the
    cells that did parse, so its key still counts for the rows referring to
    it (one bad cell is reported once, not again at every reference).
    """
    text = io.TextIOWrapper(zf.open(table.path), encoding="utf-8", newline="")
    reader = csv.reader(text, strict=True)
    try:
        header = next(reader, None)
        if header != table.names:
            if problems is not None:
                problems.add(table.name, 1, f"the header is {header}, expected {table.names}", code="bad-header")
            return
        for row_number, cells in enumerate(reader, start=2):
            if len(cells) != len(table.fields):
                if problems is not None:
                    problems.add(table.name, row_number, f"{len(cells)} cells, the header has {len(table.fields)} "
                                 "(a cut-off or malformed row)", code="wrong-cell-count")
                continue
            typed, ok = {}, True
            for f, value in zip(table.fields, cells):
                try:
                    typed[f.name] = parse_cell(f, restore(value))
                except ValueError as exc:
                    ok = False
                    if problems is not None:
                        problems.add(table.name, row_number, f"{value[:60]!r} is not a valid {f.type}: {exc}",
                                     field=f.name, code="bad-type")
                    continue
                if typed[f.name] is None and f.required:
                    ok = False
                    if problems is not None:
                        problems.add(table.name, row_number, f"{f.name} is required", field=f.name, code="required")
                elif typed[f.name] is not None and f.enum is not None and typed[f.name] not in f.enum:
                    ok = False
                    if problems is not None:
                        problems.add(table.name, row_number, f"{value!r} is not one of {', '.join(f.enum)}",
                                     field=f.name, code="bad-enum")
            if ok:
                yield row_number, typed
            elif on_refused is not None:
                on_refused(row_number, typed)
    except (csv.Error, UnicodeDecodeError) as exc:
        if problems is not None:
            problems.add(table.name, reader.line_num, f"unreadable CSV: {exc} (a truncated file?)",
                         code="malformed-csv")


def check_package(zf: zipfile.ZipFile) -> dict:
    """Check everything; return the descriptor, or raise ``PackageRefused`` listing every problem."""
    found = descriptor(zf)
    problems = _Problems()
    resources = {r.get("name"): r for r in found.get("resources", [])}
    for table in schemas.TABLES:
        entry = resources.get(table.name)
        if entry is None or entry.get("path") != table.path:
            problems.add(table.name, None, f"the package has no table {table.name} at {table.path}",
                         code="missing-table")
            continue
        _check_file(zf, entry, problems, table.name)
    for entry in found.get("tellstack:files", []):
        if not _safe_name(entry.get("path", "")):
            problems.add(entry.get("path"), None, "the file name leaves the package", code="unsafe-name")
            continue
        _check_file(zf, entry, problems, entry.get("path"))
    problems.raise_if_any()  # rows are read only from files known to be intact
    keys: dict[str, set] = {}
    for table in schemas.TABLES:
        keys[table.name] = _check_rows(zf, table, resources[table.name], keys, problems)
    problems.raise_if_any()
    return found


def _check_rows(zf, table: schemas.Table, entry: dict, keys: dict[str, set], problems: _Problems) -> set:
    own: set = set()
    # A table that refers to itself (versions' parents, runs' parents) is checked after reading it all.
    self_refs = [(f, other_f) for f, other, other_f in table.foreign_keys if other == table.name]
    pending: list[tuple[int, str, object]] = []
    count = 0

    def refused(_row_number: int, typed: dict) -> None:
        nonlocal count
        count += 1
        if table.primary_key and all(typed.get(k) is not None for k in table.primary_key):
            own.add(tuple(typed[k] for k in table.primary_key))

    for row_number, row in _typed_rows(zf, table, problems, refused):
        count += 1
        pk = tuple(row[k] for k in table.primary_key)
        if table.primary_key:
            if pk in own:
                problems.add(table.name, row_number, f"duplicate key {', '.join(map(str, pk))}",
                             field=table.primary_key[0], code="duplicate-key")
            own.add(pk)
        for f, other, _other_f in table.foreign_keys:
            value = row[f]
            if value is None:
                continue
            if other == table.name:
                pending.append((row_number, f, value))
            elif (value,) not in keys.get(other, set()):
                problems.add(table.name, row_number, f"{f} {value!r} is not in {other}", field=f,
                             code="missing-reference")
    for row_number, f, value in pending:
        if (value,) not in own:
            problems.add(table.name, row_number, f"{f} {value!r} is not in {table.name}", field=f,
                         code="missing-reference")
    declared = entry.get("tellstack:rows")
    if declared is not None and declared != count and not problems.count:
        problems.add(table.name, None, f"{count} rows read, datapackage.json says {declared} (a truncated table?)",
                     code="row-count")
    return own if table.primary_key and len(table.primary_key) == 1 else set()


def rows(zf: zipfile.ZipFile, name: str) -> Iterator[dict]:
    """The typed rows of one table of a checked package, streamed."""
    for _n, row in _typed_rows(zf, schemas.BY_NAME[name], None):
        yield row


def refuse(table: str, row, reason: str, code: str, field: str | None = None):
    return PackageRefused(f"the package was refused: {reason}; nothing was written", field="package",
                          items=[{"table": table, "row": row, "field": field, "code": code, "reason": reason}])
