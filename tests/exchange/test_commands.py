"""The export and import commands: a project out to a zip file and back into a new project."""

from __future__ import annotations

import io
import zipfile

import pytest
from django.core.management import CommandError, call_command

from projects.models import Project, Role
from tests.exchange.conftest import build_full_site


@pytest.fixture
def small_site(project, users):
    return build_full_site(project, users, run=False)


@pytest.mark.django_db
def test_export_project_writes_a_package_that_prints_the_head_digest(small_site, project, tmp_path):
    out, stdout = tmp_path / "site.zip", io.StringIO()
    call_command("export_project", project.code, "--out", str(out), stdout=stdout)
    project.refresh_from_db()
    assert f"head digest {project.head_digest}" in stdout.getvalue()
    assert project.head_digest in zipfile.ZipFile(out).read("README.md").decode()


@pytest.mark.django_db
def test_import_project_creates_the_target_and_replays_every_revision(small_site, project, target, other_org, users,
                                                                      tmp_path):
    out = tmp_path / "site.zip"
    call_command("export_project", project.code, "--out", str(out), stdout=io.StringIO())
    call_command("import_project", str(out), "--into", "QHX09", "--org", other_org.slug,
                 "--user", users[Role.MANAGER].username, stdout=io.StringIO())
    copy = Project.objects.get(organisation=other_org, code="QHX09")
    project.refresh_from_db()
    assert (copy.revision, copy.name) == (project.revision, project.name)


@pytest.mark.django_db
def test_import_project_refuses_a_project_that_is_not_empty(small_site, project, users, tmp_path):
    out = tmp_path / "site.zip"
    call_command("export_project", project.code, "--out", str(out), stdout=io.StringIO())
    with pytest.raises(CommandError, match="not empty"):
        call_command("import_project", str(out), "--into", project.code, "--user", users[Role.MANAGER].username,
                     stdout=io.StringIO(), stderr=io.StringIO())
