"""Writing a project package: CSV tables streamed into a zip, then ``datapackage.json``.

Rows go from the database cursor through ``csv.writer`` straight into the
zip entry, hashed on the way (SHA-256, recorded as the resource's ``hash``
and ``bytes``), so memory stays flat whatever the size of the log.  The
descriptor follows the Frictionless Data Package specification (Frictionless
Data, "Data Package" and "Tabular Data Package", v1).
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import zipfile
from datetime import datetime, timezone as dt_timezone
from pathlib import Path

from django.utils import timezone

from chronology.engine.csv_cells import neutralise_reversibly

from ..portable import KeyMap
from . import readme, schemas, tables


class _HashingWriter(io.RawIOBase):
    """A binary stream that hashes and counts what passes into ``target``."""

    def __init__(self, target):
        self.target = target
        self.sha = hashlib.sha256()
        self.bytes = 0

    def writable(self) -> bool:
        return True

    def write(self, data) -> int:
        self.sha.update(data)
        self.bytes += len(data)
        self.target.write(data)
        return len(data)


def cell(value) -> str:
    """One CSV cell: empty for missing, JSON for objects, exact repr for numbers."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return repr(value)
    if isinstance(value, datetime):
        return value.astimezone(dt_timezone.utc).strftime(schemas.DATETIME_FORMAT)
    if isinstance(value, (dict, list)):
        return json.dumps(value, sort_keys=True, separators=(",", ":"), ensure_ascii=False)
    return str(value)


def _write_table(zf: zipfile.ZipFile, table: schemas.Table, rows) -> dict:
    with zf.open(table.path, "w", force_zip64=True) as raw:
        hashing = _HashingWriter(raw)
        text = io.TextIOWrapper(io.BufferedWriter(hashing, buffer_size=1 << 16), encoding="utf-8", newline="")
        writer = csv.writer(text, lineterminator="\r\n")
        writer.writerow(table.names)
        count = 0
        for row in rows:
            # Spreadsheet-safe and still lossless: the reader restores each cell (OWASP, "CSV Injection").
            writer.writerow([neutralise_reversibly(cell(v)) for v in row])
            count += 1
        text.flush()
        text.detach().detach()
    return {
        "name": table.name, "title": table.title, "description": table.about, "path": table.path,
        "profile": "tabular-data-resource", "format": "csv", "mediatype": "text/csv", "encoding": "utf-8",
        "hash": f"sha256:{hashing.sha.hexdigest()}", "bytes": hashing.bytes, "tellstack:rows": count,
        "schema": table.schema(),
    }


def _write_file(zf: zipfile.ZipFile, name: str, source: Path) -> dict:
    sha, size = hashlib.sha256(), 0
    with zf.open(name, "w", force_zip64=True) as out, open(source, "rb") as src:
        while chunk := src.read(1 << 20):
            sha.update(chunk)
            size += len(chunk)
            out.write(chunk)
    return {"path": name, "hash": f"sha256:{sha.hexdigest()}", "bytes": size}


def _write_text(zf: zipfile.ZipFile, name: str, text: str) -> dict:
    data = text.encode("utf-8")
    zf.writestr(name, data)
    return {"path": name, "hash": f"sha256:{hashlib.sha256(data).hexdigest()}", "bytes": len(data)}


def _sample_files(project, keys: KeyMap):
    from chronology.runs.models import Run

    for run in Run.objects.filter(project=project).order_by("created_at", "id"):
        path = run.path("samples.nc")
        if path.exists():
            yield tables.samples_path(keys.run_key(run)), path


def write_package(project, out, *, on_table=None) -> dict:
    """Write ``project``'s package to ``out`` (a path or a binary file); returns the descriptor.

    ``on_table(name)`` is called before each table (progress for jobs).
    """
    project.refresh_from_db()
    keys = KeyMap.of_project(project)
    exported_at = timezone.now()
    resources, files = [], []
    with zipfile.ZipFile(out, "w", compression=zipfile.ZIP_DEFLATED, compresslevel=6, allowZip64=True) as zf:
        for table in schemas.TABLES:
            if on_table is not None:
                on_table(table.name)
            resources.append(_write_table(zf, table, tables.ROWS[table.name](project, keys)))
        for name, path in _sample_files(project, keys):
            files.append({**_write_file(zf, name, path), "format": "netcdf", "mediatype": "application/x-netcdf",
                          "description": "Every chain's kept draws as ArviZ InferenceData."})
        descriptor = {
            "profile": "tabular-data-package",
            "name": _package_name(project),
            "title": f"{project.name} ({project.code}): the complete record",
            "created": cell(exported_at),
            "resources": resources,
            "tellstack:format": schemas.FORMAT,
            "tellstack:project": {"code": project.code, "name": project.name, "organisation": project.organisation.slug,
                                  "description": project.description},
            "tellstack:revision": project.revision,
            # The newest link of the digest chain (workflow entries included) and the latest revision's
            # digest: whoever keeps this package can later tell a rewrite of the history.
            "tellstack:head_digest": project.head_digest or "",
            "tellstack:record_digest": project.record_digest or "",
            "tellstack:files": files,
        }
        files.append(_write_text(zf, "README.md", readme.render(descriptor)))
        zf.writestr("datapackage.json", json.dumps(descriptor, indent=1, ensure_ascii=False))
    return descriptor


def _package_name(project) -> str:
    return f"tellstack-{project.organisation.slug}-{project.code}".lower().replace("_", "-")
