"""Export, import into another organisation's empty project, export again: the same tables."""

from __future__ import annotations

import zipfile

import frictionless
import pytest

from exchange.package.writer import write_package
from exchange.replay import import_package
from projects.models import Role


def _rows(path, name):
    return zipfile.ZipFile(path).read(name).decode().splitlines()


@pytest.mark.django_db
def test_the_package_passes_frictionless_validation_with_no_error(full_site, project, tmp_path):
    # Frictionless Data, "Data Package" and "Table Schema" specifications, checked by the frictionless library.
    out = tmp_path / "p.zip"
    write_package(project, out)
    zipfile.ZipFile(out).extractall(tmp_path / "x")
    report = frictionless.validate(str(tmp_path / "x" / "datapackage.json"))
    assert report.valid, report.flatten(["rowNumber", "fieldName", "type", "note"])


@pytest.mark.django_db
def test_a_copy_exports_the_same_record_tables_and_record_at_every_revision(full_site, project, target, users,
                                                                           tmp_path):
    first, second = tmp_path / "p.zip", tmp_path / "q.zip"
    write_package(project, first)
    import_package(first, target, users[Role.MANAGER])
    write_package(target, second)
    assert target.revision == project.revision
    for name in ("contexts", "relationships", "samples", "curves", "curve_rows", "determinations",
                 "calendar_dates", "termini", "interpretations", "versions", "runs", "record_states"):
        assert _rows(first, f"data/{name}.csv") == _rows(second, f"data/{name}.csv"), name
