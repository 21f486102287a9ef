"""Broken packages are refused before anything is written, naming the exact place of each problem.

A package is untrusted input: each test breaks one thing in an otherwise
good package (a missing foreign key, a bad enum, a truncated table, a wrong
checksum, a zip bomb, a file name leaving the package) and checks the
refusal names the table, the row and the field, and that the target project
is still empty.  The checks follow the Frictionless Data "Data Package" and
"Table Schema" specifications (hash, bytes, enum constraints, foreign keys).
"""

from __future__ import annotations

import hashlib
import io
import json
import zipfile

import pytest

from exchange.models import PackageImport
from exchange.package.reader import PackageRefused
from exchange.package.writer import write_package
from exchange.replay import import_package
from projects.models import ChangeLogEntry, Context, Role
from tests.conftest import token_client
from tests.exchange.conftest import build_full_site

_GOOD: dict[str, bytes] = {}


@pytest.fixture
def good(project, users) -> dict[str, bytes]:
    """The members of a good package of the small site (built once, copied per test)."""
    if not _GOOD:
        build_full_site(project, users, run=False)
        out = io.BytesIO()
        write_package(project, out)
        with zipfile.ZipFile(io.BytesIO(out.getvalue())) as zf:
            _GOOD.update({name: zf.read(name) for name in zf.namelist()})
    return dict(_GOOD)


def _zip(members: dict[str, bytes], *, rehash: bool = True) -> io.BytesIO:
    """A package of ``members``; with ``rehash`` the descriptor's hash and bytes match the files again."""
    members = dict(members)
    if rehash:
        descriptor = json.loads(members["datapackage.json"])
        for resource in descriptor["resources"]:
            data = members[resource["path"]]
            resource["hash"], resource["bytes"] = f"sha256:{hashlib.sha256(data).hexdigest()}", len(data)
        members["datapackage.json"] = json.dumps(descriptor).encode()
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", compression=zipfile.ZIP_DEFLATED) as zf:
        for name, data in members.items():
            zf.writestr(name, data)
    out.seek(0)
    return out


def _edit(members: dict[str, bytes], path: str, row: int, column: str, value: str) -> None:
    """Set one cell (row numbers count the header as row 1, as in the refusals)."""
    lines = members[path].decode().split("\r\n")
    header = lines[0].split(",")
    cells = lines[row - 1].split(",")
    cells[header.index(column)] = value
    lines[row - 1] = ",".join(cells)
    members[path] = "\r\n".join(lines).encode()


def _refusal(package, target, importer) -> list[dict]:
    with pytest.raises(PackageRefused) as caught:
        import_package(package, target, importer)
    target.refresh_from_db()
    assert target.revision == 0
    assert not ChangeLogEntry.objects.filter(project=target).exists()
    assert not Context.objects.filter(project=target).exists()
    assert not PackageImport.objects.filter(project=target).exists()
    return [{k: item[k] for k in ("table", "row", "field", "code")} for item in caught.value.details["items"]]


@pytest.mark.django_db
def test_a_relationship_naming_a_context_not_in_the_package_is_refused_at_its_row(good, target, users):
    _edit(good, "data/relationships.csv", 3, "later", "00000000-0000-4000-8000-000000000000")
    found = _refusal(_zip(good), target, users[Role.MANAGER])
    assert {"table": "relationships", "row": 3, "field": "later", "code": "missing-reference"} in found


@pytest.mark.django_db
def test_a_context_kind_outside_the_enum_is_refused_at_its_row(good, target, users):
    _edit(good, "data/contexts.csv", 2, "kind", "bogus")
    found = _refusal(_zip(good), target, users[Role.MANAGER])
    assert found == [{"table": "contexts", "row": 2, "field": "kind", "code": "bad-enum"}]


@pytest.mark.django_db
def test_a_table_cut_off_after_it_was_described_is_refused_by_its_size_and_checksum(good, target, users):
    good["data/changes.csv"] = good["data/changes.csv"][: len(good["data/changes.csv"]) // 2]
    found = _refusal(_zip(good, rehash=False), target, users[Role.MANAGER])
    assert {"table": "changes", "row": None, "field": None, "code": "checksum-mismatch"} in found
    assert {"table": "changes", "row": None, "field": None, "code": "size-mismatch"} in found


@pytest.mark.django_db
def test_a_table_cut_off_in_the_middle_of_a_row_is_refused_at_that_row(good, target, users):
    lines = good["data/contexts.csv"].decode().rstrip("\r\n").split("\r\n")
    lines[-1] = lines[-1][:10]
    good["data/contexts.csv"] = ("\r\n".join(lines) + "\r\n").encode()
    found = _refusal(_zip(good), target, users[Role.MANAGER])
    assert found == [{"table": "contexts", "row": len(lines), "field": None, "code": "wrong-cell-count"}]


@pytest.mark.django_db
def test_a_file_that_does_not_match_its_checksum_is_refused(good, target, users):
    good["data/contexts.csv"] = good["data/contexts.csv"].replace(b"dark silt", b"dark sand")
    found = _refusal(_zip(good, rehash=False), target, users[Role.MANAGER])
    assert found == [{"table": "contexts", "row": None, "field": None, "code": "checksum-mismatch"}]


@pytest.mark.django_db
def test_a_zip_bomb_is_refused_before_any_member_is_unpacked(good, target, users):
    good["data/padding.bin"] = bytes(20 * 1024 * 1024)  # deflates about a thousand to one
    found = _refusal(_zip(good), target, users[Role.MANAGER])
    assert found == [{"table": "data/padding.bin", "row": None, "field": None, "code": "compression-ratio"}]


@pytest.mark.django_db
def test_a_file_name_leaving_the_package_is_refused(good, target, users):
    good["../../etc/cron.d/evil"] = b"* * * * * root true\n"
    found = _refusal(_zip(good), target, users[Role.MANAGER])
    assert found == [{"table": "../../etc/cron.d/evil", "row": None, "field": None, "code": "unsafe-name"}]


@pytest.mark.django_db
def test_the_api_lists_every_refused_row_with_table_row_and_reason(good, target, users):
    _edit(good, "data/contexts.csv", 2, "kind", "bogus")
    _edit(good, "data/contexts.csv", 3, "kind", "worse")
    response = token_client(users[Role.MANAGER], "office").post(
        "/api/v1/projects/QHX02/package/", {"file": _zip(good)}, format="multipart")
    items = response.json()["errors"][0]["items"]
    assert response.status_code == 400
    assert [(i["table"], i["row"], i["field"]) for i in items] == [("contexts", 2, "kind"), ("contexts", 3, "kind")]
    assert all("not one of" in i["reason"] for i in items)
    assert not ChangeLogEntry.objects.filter(project=target).exists()
