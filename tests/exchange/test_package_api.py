"""The package over HTTP: export at once or through a job, import into an empty project by a manager."""

from __future__ import annotations

import io
import zipfile

import pytest

from projects.models import ChangeLogEntry, Role
from tests.conftest import token_client
from tests.exchange.conftest import build_full_site


@pytest.fixture
def small_site(project, users):
    return build_full_site(project, users, run=False)


def _package(client, code="VML24") -> bytes:
    response = client.get(f"/api/v1/projects/{code}/package/")
    assert response.status_code == 200, response.content[:500]
    return b"".join(response.streaming_content)


def _post(client, data: bytes, code="QHX02"):
    return client.post(f"/api/v1/projects/{code}/package/", {"file": io.BytesIO(data)}, format="multipart")


@pytest.mark.django_db
def test_a_small_project_is_served_its_package_at_once_with_the_head_digest(small_site, project, client_for):
    response = client_for(Role.VIEWER).get("/api/v1/projects/VML24/package/")
    project.refresh_from_db()
    assert response.status_code == 200
    assert response["X-Record-Head-Digest"] == project.head_digest
    assert "datapackage.json" in zipfile.ZipFile(io.BytesIO(b"".join(response.streaming_content))).namelist()


@pytest.mark.django_db
def test_a_large_project_gets_a_job_whose_file_is_then_served(small_site, project, client_for, settings,
                                                              django_capture_on_commit_callbacks):
    settings.TELLSTACK_PACKAGE_INLINE_CHANGES = 1
    client = client_for(Role.VIEWER)
    with django_capture_on_commit_callbacks(execute=True):
        started = client.get("/api/v1/projects/VML24/package/")
    assert started.status_code == 202
    assert client.get(started.json()["url"]).json()["state"] == "done"
    served = client.get(started.json()["file_url"])
    assert served.status_code == 200
    assert zipfile.ZipFile(io.BytesIO(b"".join(served.streaming_content))).testzip() is None


@pytest.mark.django_db
def test_the_file_of_an_unfinished_export_job_is_a_409(small_site, project, client_for, settings):
    settings.TELLSTACK_PACKAGE_INLINE_CHANGES = 1
    client = client_for(Role.VIEWER)
    started = client.get("/api/v1/projects/VML24/package/")  # the task is queued on commit, which never comes
    response = client.get(started.json()["file_url"])
    assert (response.status_code, response.json()["code"]) == (409, "job-not-done")


@pytest.mark.django_db
def test_a_manager_imports_a_package_into_an_empty_project(small_site, project, target, users, client_for):
    data = _package(client_for(Role.VIEWER))
    response = _post(token_client(users[Role.MANAGER], "office"), data)
    target.refresh_from_db()
    project.refresh_from_db()
    assert response.status_code == 201, response.json()
    assert (response.json()["revision"], target.revision) == (project.revision, project.revision)


@pytest.mark.django_db
def test_an_analyst_may_not_import_a_package(small_site, project, target, users, client_for):
    data = _package(client_for(Role.VIEWER))
    response = _post(token_client(users[Role.ANALYST], "desk"), data)
    assert response.status_code == 403
    assert not ChangeLogEntry.objects.filter(project=target).exists()


@pytest.mark.django_db
def test_a_package_is_not_imported_into_a_project_with_a_record(small_site, project, client_for):
    data = _package(client_for(Role.VIEWER))
    response = _post(client_for(Role.MANAGER), data, code="VML24")
    assert (response.status_code, response.json()["code"]) == (400, "project-not-empty")


@pytest.mark.django_db
def test_an_import_without_a_file_names_the_missing_field(target, users):
    response = token_client(users[Role.MANAGER], "office").post("/api/v1/projects/QHX02/package/", {},
                                                                format="multipart")
    assert (response.status_code, response.json()["errors"][0]["field"]) == (400, "file")
