"""``python manage.py import_register FILE.csv|FILE.xlsx [--into CODE] [--mapping JSON] [--dry-run]``.

Reads a legacy context register (a context per row with lists of related
labels, or a relationship per row), checks it against the project's record
and prints every refused row and every contradiction with the cycle it
would close.  Without ``--dry-run`` (and with ``--into``) a register with
no problem is committed as one record revision; re-importing the same file
changes nothing.  Without ``--into`` the register is checked on its own.
"""

from __future__ import annotations

import json
from pathlib import Path

from django.core.management.base import BaseCommand, CommandError

from exchange.registers import plan
from projects.models import Organisation, Project
from projects.record.changes import Actor
from projects.record.errors import RecordError

from ._common import acting_user, find_project


class Command(BaseCommand):
    help = "Check a legacy context register against a project's record, then import it as one revision."

    def add_arguments(self, parser):
        parser.add_argument("file", help="The register: .csv (UTF-8) or .xlsx (first sheet).")
        parser.add_argument("--into", help="Project code, or ORG:CODE.")
        parser.add_argument("--mapping", help='Column mapping as JSON, or a JSON file: {"label": "Context no.", ...}')
        parser.add_argument("--dry-run", action="store_true", help="Check and report only; write nothing.")
        parser.add_argument("--user", help="Username of the importing manager (default: the organisation's only one).")
        parser.add_argument("--json", action="store_true", help="Print the report as JSON.")

    def handle(self, *args, file, into, mapping, dry_run: bool, user, json: bool, **options):
        path = Path(file)
        if not path.exists():
            raise CommandError(f"no file {file}")
        columns = _mapping(mapping)
        if into:
            project = find_project(into)
            if project is None:
                raise CommandError(f"no project {into!r}")
        else:
            dry_run = True
            project = Project(organisation=Organisation(slug="-"), code="(none)", name="empty record")
            project.pk = -1  # never saved: a record with nothing in it
        data = path.read_bytes()
        try:
            if dry_run:
                report = plan.dry_run(project, data, path.name, columns)
            else:
                actor = Actor(user=acting_user(project, user), device="import_register command")
                report = plan.commit(project, actor, data, path.name, columns)
        except plan.RegisterRefused as exc:
            self._print({"ok": False, "refused": exc.details["refused"],
                         "contradictions": exc.details["contradictions"]}, json)
            raise CommandError(exc.message) from None
        except RecordError as exc:
            raise CommandError(f"{exc.message} ({exc.code})") from None
        self._print(report, json)
        if dry_run and not report["ok"]:
            raise CommandError("the register would be refused (see above); nothing was written")

    def _print(self, report: dict, as_json: bool) -> None:
        if as_json:
            self.stdout.write(json.dumps(report, indent=1, default=str))
            return
        for item in report.get("refused", []):
            self.stdout.write(f"row {item['row']}: {item['field'] or ''} {item['reason']} [{item['code']}]")
        for item in report.get("contradictions", []):
            steps = " -> ".join(f"{s['from']} {s['type']} {s['to']} (row {s['row'] or 'recorded'})"
                                for s in item["cycle"])
            self.stdout.write(f"row {item['row']}: {item['reason']}; cycle: {steps}")
        if "contexts" in report:
            self.stdout.write(f"{report['layout']}: {report['contexts']['new']} new context(s), "
                              f"{report['contexts']['unchanged']} unchanged; {report['relationships']['new']} new "
                              f"relationship(s), {report['relationships']['unchanged']} unchanged"
                              + (f"; revision {report['revision']}" if report.get("revision") else ""))


def _mapping(value: str | None) -> dict | None:
    if not value:
        return None
    text = Path(value).read_text() if not value.lstrip().startswith("{") and Path(value).exists() else value
    try:
        found = json.loads(text)
    except ValueError as exc:
        raise CommandError(f"--mapping is not JSON: {exc}") from None
    if not isinstance(found, dict) or not all(isinstance(k, str) and isinstance(v, str) for k, v in found.items()):
        raise CommandError('--mapping is a JSON object of field names to column headers: {"label": "Context no."}')
    return found
