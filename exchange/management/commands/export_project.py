"""``python manage.py export_project CODE --out FILE.zip``: write a project's package.

The package is a Frictionless Data Package (see ``exchange.package``); the
command prints the record revision, the head digest of the history chain
and the package's size.
"""

from __future__ import annotations

from pathlib import Path

from django.core.management.base import BaseCommand, CommandError

from exchange.package_jobs import write_to

from ._common import find_project


class Command(BaseCommand):
    help = "Write a project's complete record as a package (zip of CSV tables with datapackage.json)."

    def add_arguments(self, parser):
        parser.add_argument("code", help="Project code, or ORG:CODE when several organisations use the code.")
        parser.add_argument("--out", required=True, help="Path of the zip file to write.")

    def handle(self, *args, code: str, out: str, **options):
        project = find_project(code)
        if project is None:
            raise CommandError(f"no project {code!r}")
        path = Path(out)
        if path.parent and not path.parent.exists():
            raise CommandError(f"no directory {path.parent}")
        descriptor = write_to(project, path)
        rows = sum(r["tellstack:rows"] for r in descriptor["resources"])
        self.stdout.write(f"{project.organisation.slug}:{project.code} revision {descriptor['tellstack:revision']} "
                          f"-> {path} ({path.stat().st_size} bytes, {rows} rows)\n"
                          f"head digest {descriptor['tellstack:head_digest'] or '(empty record)'}")
