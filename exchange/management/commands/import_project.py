"""``python manage.py import_project FILE.zip --into CODE``: replay a package into an empty project.

The package is checked first (every refused row listed with its table, row
and reason); nothing is written unless all of it is valid.  With ``--org``
the target project is created when it does not exist yet.
"""

from __future__ import annotations

from django.core.management.base import BaseCommand, CommandError
from django.db import transaction

from exchange.package import reader
from exchange.package.reader import PackageRefused
from exchange.replay import import_package
from projects.models import Organisation, Project

from ._common import acting_user, find_project


class Command(BaseCommand):
    help = "Import a project package into an empty project, replaying its history."

    def add_arguments(self, parser):
        parser.add_argument("file", help="The package (zip).")
        parser.add_argument("--into", required=True, help="Target project code, or ORG:CODE.")
        parser.add_argument("--org", help="Organisation slug in which to create the project if it does not exist.")
        parser.add_argument("--name", help="Name of a project created by the import (default: the source's).")
        parser.add_argument("--user", help="Username of the importing manager (default: the organisation's only one).")

    def handle(self, *args, file: str, into: str, org: str | None, name: str | None, user: str | None, **options):
        project = find_project(into)
        if project is None:
            if not org:
                raise CommandError(f"no project {into!r}; give --org to create it")
            organisation = Organisation.objects.filter(slug=org).first()
            if organisation is None:
                raise CommandError(f"no organisation {org!r}")
            project = Project(organisation=organisation, code=into.split(":")[-1], name=name or into)
        importer = acting_user(project, user)
        try:
            with transaction.atomic():  # a refused package leaves no created project behind
                if project.pk is None:
                    if not name:
                        with reader.open_package(file) as zf:
                            project.name = (reader.descriptor(zf).get("tellstack:project", {}).get("name")
                                            or project.code)
                    project.save()
                done = import_package(file, project, importer)
        except PackageRefused as exc:
            for item in exc.details.get("items", []):
                where = ", ".join(f"{k} {item[k]}" for k in ("table", "row", "field") if item.get(k) is not None)
                self.stderr.write(f"{where or 'package'}: {item['reason']} [{item['code']}]")
            raise CommandError(exc.message) from None
        except FileNotFoundError as exc:
            raise CommandError(str(exc)) from None
        self.stdout.write(f"{done.source_project} -> {project.organisation.slug}:{project.code}: "
                          f"{done.revisions} revision(s) replayed by {importer.username}"
                          + (f"; actors without an account here: {', '.join(done.unknown_actors)}"
                             if done.unknown_actors else ""))
