"""``python manage.py verify_record CODE``: recompute a project's digest chain.

Exit status 0 and the head digest when every link matches; non-zero and the
first broken link otherwise.  Compare the head with one printed in an
earlier export to tell whether the history was rewritten since.
"""

from __future__ import annotations

from django.core.management.base import BaseCommand, CommandError

from projects.models import Project
from projects.record.history import verify


class Command(BaseCommand):
    help = "Recompute a project's record digest chain and report the first broken link."

    def add_arguments(self, parser):
        parser.add_argument("code", help="Project code, or ORG:CODE when several organisations use the code.")

    def handle(self, *args, code: str, **options):
        project = _project(code)
        head, broken, links = verify(project)
        if broken is not None:
            self.stderr.write(f"{project.code}: {broken}")
            raise CommandError(f"the record of {project.code} does not verify ({links} link(s) good before it)")
        self.stdout.write(f"{project.code}: {links} link(s) verified; head digest {head or '(empty record)'}")


def _project(ref: str) -> Project:
    org, code = ref.split(":", 1) if ":" in ref else (None, ref)
    found = Project.objects.filter(code=code)
    if org is not None:
        found = found.filter(organisation__slug=org)
    projects = list(found[:2])
    if not projects:
        raise CommandError(f"no project {ref!r}")
    if len(projects) > 1:
        raise CommandError(f"several organisations have a project {ref!r}; use ORG:CODE")
    return projects[0]
