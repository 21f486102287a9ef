"""Bad input to the exchange endpoints is a 4xx with the API's JSON error body, never a 500."""

from __future__ import annotations

import io

import pytest

from projects.models import Role


def _file(data: bytes, name: str) -> io.BytesIO:
    upload = io.BytesIO(data)
    upload.name = name
    return upload


@pytest.mark.django_db
def test_a_package_that_is_not_a_zip_is_a_400_naming_it(project, client_for):
    response = client_for(Role.MANAGER).post("/api/v1/projects/VML24/package/",
                                             {"file": _file(b"not a zip at all", "p.zip")}, format="multipart")
    assert (response.status_code, response.json()["errors"][0]["items"][0]["code"]) == (400, "not-a-zip")


@pytest.mark.django_db
def test_a_spreadsheet_that_is_not_one_is_a_400_naming_the_file(project, client_for):
    response = client_for(Role.RECORDER).post("/api/v1/projects/VML24/imports/",
                                              {"file": _file(b"PK\x03\x04junk", "r.xlsx")}, format="multipart")
    assert (response.status_code, response.json()["errors"][0]["field"]) == (400, "file")


@pytest.mark.django_db
def test_a_mapping_that_is_not_json_is_a_400_naming_the_mapping(project, client_for):
    response = client_for(Role.RECORDER).post("/api/v1/projects/VML24/imports/", {
        "file": _file(b"Context\n1\n", "r.csv"), "mapping": "{label"}, format="multipart")
    assert (response.status_code, response.json()["errors"][0]["field"]) == (400, "mapping")


@pytest.mark.django_db
def test_a_viewer_may_not_import_a_register(project, client_for):
    response = client_for(Role.VIEWER).post("/api/v1/projects/VML24/imports/",
                                            {"file": _file(b"Context\n1\n", "r.csv")}, format="multipart")
    assert response.status_code == 403


@pytest.mark.django_db
@pytest.mark.parametrize("path", ["package/", "imports/", "package.jsonld"])
def test_options_on_an_exchange_endpoint_describes_it(project, client_for, path):
    response = client_for(Role.MANAGER).options(f"/api/v1/projects/VML24/{path}")
    assert response.status_code == 200, response.content
