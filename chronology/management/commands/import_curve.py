"""``python manage.py import_curve FILE --name ... --citation ... --licence ...``.

Imports a calibration curve from a plain comma-separated table (columns: cal
BP, 14C BP, one-sigma), read by the engine's parser.  Without
``--organisation`` the curve is global (every organisation may use it).  The
rows are stored once per checksum; importing the same table under the same
name again changes nothing.  A malformed table is refused with the line that
is wrong.
"""

from __future__ import annotations

from pathlib import Path

from django.core.management.base import BaseCommand, CommandError

from chronology.evidence.curves import import_curve
from projects.models import Organisation
from projects.record.errors import RecordError


class Command(BaseCommand):
    help = "Import a calibration curve table (cal BP, 14C BP, sigma) as a global or organisation curve."

    def add_arguments(self, parser):
        parser.add_argument("file", help="The comma-separated table.")
        parser.add_argument("--name", default="", help="Curve name (else the table's '# name:' line).")
        parser.add_argument("--citation", default="", help="How to cite the curve (else '# citation:').")
        parser.add_argument("--licence", default="", help="Terms of use of the data (else '# licence:').")
        parser.add_argument("--organisation", default=None, help="Slug of the organisation; global if omitted.")
        parser.add_argument("--max-step", type=float, default=None, dest="max_step",
                            help="Largest calendar gap allowed between neighbouring rows.")

    def handle(self, *args, file, name, citation, licence, organisation, max_step, **options):
        path = Path(file)
        try:
            text = path.read_text(encoding="utf-8")
        except (OSError, UnicodeDecodeError) as exc:
            raise CommandError(f"cannot read {path}: {exc}") from exc
        org = None
        if organisation:
            org = Organisation.objects.filter(slug=organisation).first()
            if org is None:
                raise CommandError(f"no organisation {organisation!r}")
        try:
            curve, created = import_curve(text, name=name, citation=citation, licence=licence,
                                          organisation=org, max_step=max_step)
        except RecordError as exc:
            line = exc.details.get("line")
            where = f" (line {line})" if line else ""
            raise CommandError(f"{path}{where}: {exc.message} [{exc.field}: {exc.code}]") from exc
        scope = f"organisation {org.slug}" if org else "global"
        verb = "imported" if created else "already stored"
        self.stdout.write(f"{verb}: curve {curve.name} (id {curve.id}, {scope}), {curve.table.n_rows} rows, "
                          f"checksum {curve.table.checksum}")
        if curve.synthetic:
            self.stdout.write("note: SYNTHETIC curve, not for dating real samples")
