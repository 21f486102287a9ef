"""Legacy registers in: the demo site as a spreadsheet, contradictions with their cycles, re-imports.

The spreadsheet is written by the test with openpyxl in the layout a unit
keeps on paper: a context per row, with the labels of the contexts it lies
above, cuts, fills and so on in list columns.
"""

from __future__ import annotations

import csv
import io
import json
import uuid

import pytest
from django.core.management import call_command
from openpyxl import Workbook

from chronology import order_service
from demo import vellmarsh
from exchange.registers import plan
from projects.models import ChangeLogEntry, Context, Relationship, Role
from projects.record.changes import Actor
from projects.record.sync import sync_batch
from tests.conftest import token_client

HEADERS = ["Context", "Type", "Area", "Description", "Above", "Below", "Cuts", "Cut by", "Fills", "Filled by",
           "Same as", "Abuts", "Bonded with", "Contemporary with"]
COLUMN_OF = {"above": "Above", "cuts": "Cuts", "fills": "Fills", "same_as": "Same as", "abuts": "Abuts",
             "bonded_with": "Bonded with", "contemporary_with": "Contemporary with"}


def demo_register(contexts=vellmarsh.CONTEXTS, relationships=vellmarsh.RELATIONSHIPS) -> bytes:
    """The demo site as a context-per-row spreadsheet (XLSX)."""
    lists: dict[tuple[str, str], list[str]] = {}
    for subject, wording, obj, _certainty, _note in relationships:
        lists.setdefault((subject, COLUMN_OF[wording]), []).append(obj)
    book = Workbook()
    sheet = book.active
    sheet.append(HEADERS)
    for label, kind, area, description in contexts:
        row = {"Context": int(label), "Type": kind, "Area": area, "Description": description}
        row.update({column: ", ".join(labels) for (subject, column), labels in lists.items() if subject == label})
        sheet.append([row.get(h, "") for h in HEADERS])
    out = io.BytesIO()
    book.save(out)
    return out.getvalue()


def _order(project) -> set[tuple]:
    """The reduced order as (type, later, earlier, strict, direct) of each relationship behind an edge."""
    body = order_service.export(order_service.record_order(project), "csv", reduced=True)
    return {(r["type"], r["later_label"], r["earlier_label"], r["strict"], r["direct"])
            for r in csv.DictReader(io.StringIO(body))}


@pytest.fixture
def importer(users):
    return Actor(user=users[Role.RECORDER], device="office scanner")


@pytest.mark.django_db
def test_the_demo_site_as_a_spreadsheet_imports_to_the_same_order_as_the_demo_record(project, other_project,
                                                                                    importer):
    sync_batch(project, importer, batch_id=uuid.uuid4(),
               contexts=[{"label": c[0], "kind": c[1], "area": c[2], "description": c[3]} for c in vellmarsh.CONTEXTS],
               relationships=[{"subject": s, "type": w, "object": o, "certainty": c, "note": n}
                              for s, w, o, c, n in vellmarsh.RELATIONSHIPS])
    report = plan.commit(other_project, importer, demo_register(), "vellmarsh.xlsx")
    assert report["ok"] and report["revision"] == 1
    assert (report["contexts"]["new"], report["relationships"]["new"]) == (128, 212)
    assert _order(other_project) == _order(project)


@pytest.mark.django_db
def test_a_register_with_a_contradiction_is_refused_with_the_cycle_it_would_close(other_project, importer):
    mistake = (*vellmarsh.MISTAKE[:3], "certain", "")
    data = demo_register(relationships=[*vellmarsh.RELATIONSHIPS, mistake])
    report = plan.dry_run(other_project, data, "vellmarsh.xlsx")
    mistake_row = 2 + [c[0] for c in vellmarsh.CONTEXTS].index("2011")
    assert not report["ok"]
    assert report["contradictions"]
    for found in report["contradictions"]:
        steps = found["cycle"]
        # Each cycle runs later-to-earlier step by step back to where it starts, through the mistake,
        # and names the register row of every step.
        assert all(step["to"] == after["from"] for step, after in zip(steps, [*steps[1:], steps[0]]))
        assert {"from": "2011", "type": "above", "to": "1016", "row": mistake_row} in steps
        assert all(step["row"] for step in steps)
    with pytest.raises(plan.RegisterRefused):
        plan.commit(other_project, importer, data, "vellmarsh.xlsx")
    assert not Context.objects.filter(project=other_project).exists()


@pytest.mark.django_db
def test_importing_the_same_register_again_changes_nothing(other_project, importer):
    data = demo_register()
    plan.commit(other_project, importer, data, "vellmarsh.xlsx")
    entries = ChangeLogEntry.objects.filter(project=other_project).count()
    again = plan.commit(other_project, importer, data, "vellmarsh.xlsx")
    other_project.refresh_from_db()
    assert again["revision"] is None and other_project.revision == 1
    assert (again["contexts"]["unchanged"], again["relationships"]["unchanged"]) == (128, 212)
    assert ChangeLogEntry.objects.filter(project=other_project).count() == entries


@pytest.mark.django_db
def test_a_relationship_per_row_csv_with_a_column_mapping_imports(other_project, importer):
    contexts = "Context no.,Kind\n5001,deposit\n5002,layer\n5003,cut\n"
    plan.commit(other_project, importer, contexts.encode(), "contexts.csv", {"label": "Context no."})
    rows = "From,Relation,To,Sure\n5001,above,5002,certain\n5003,cut by,5002,uncertain\n"
    report = plan.commit(other_project, importer, rows.encode(), "links.csv",
                         {"subject": "From", "type": "Relation", "object": "To", "certainty": "Sure"})
    assert report["layout"] == "relationship-per-row" and report["relationships"]["new"] == 2
    cut = Relationship.objects.get(project=other_project, recorded_as="cut_by")
    assert (cut.later.label, cut.type, cut.earlier.label, cut.certainty) == ("5002", "cuts", "5003", "uncertain")


@pytest.mark.django_db
def test_the_dry_run_lists_every_refused_row_with_its_reason(other_project):
    data = "Context,Type,Above\n6001,deposit,6002\n,deposit,\n6002,rubble,\n6003,deposit,9999\n".encode()
    report = plan.dry_run(other_project, data, "register.csv")
    assert [(p["row"], p["field"], p["code"]) for p in report["refused"]] == [
        (3, "label", "required"), (4, "kind", "bad-enum"), (2, "object", "unknown-context"),
        (5, "object", "unknown-context")]
    assert not Context.objects.filter(project=other_project).exists()


@pytest.mark.django_db
def test_the_api_dry_run_writes_nothing_and_the_commit_is_one_revision(other_project, outsider):
    client = token_client(outsider, "office")
    data = "Context,Type,Above\n7001,deposit,7002\n7002,deposit,\n"
    dry = client.post("/api/v1/projects/QHX01/imports/", {"file": io.BytesIO(data.encode())}, format="multipart")
    assert dry.status_code == 200 and dry.json()["ok"]
    assert not Context.objects.filter(project=other_project).exists()
    upload = io.BytesIO(data.encode())
    upload.name = "register.csv"
    done = client.post("/api/v1/projects/QHX01/imports/", {"file": upload, "dry_run": "false",
                                                           "mapping": json.dumps({"label": "Context"})},
                       format="multipart")
    other_project.refresh_from_db()
    assert done.status_code == 201 and other_project.revision == 1


@pytest.mark.django_db
def test_the_command_reports_a_contradiction_and_writes_nothing(other_project, outsider, tmp_path):
    path = tmp_path / "register.csv"
    path.write_text("Context,Type,Above\n8001,deposit,8002\n8002,deposit,8001\n")
    out = io.StringIO()
    with pytest.raises(Exception, match="refused"):
        call_command("import_register", str(path), "--into", "QHX01", "--user", outsider.username, stdout=out)
    assert "cycle: 8002 above 8001" in out.getvalue() or "cycle: 8001" in out.getvalue()
    assert not Context.objects.filter(project=other_project).exists()
