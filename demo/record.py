"""Load the invented demo site through the public write path.

Everything goes through ``projects.record`` (sync batches and single posts),
with deterministic client uids, so running the demo again is a replay: it
changes nothing and returns the same answers.
"""

from __future__ import annotations

import json
import uuid

from django.contrib.auth import get_user_model

from projects.models import ApiToken, Membership, Organisation, Project, Role
from projects.record import writes
from projects.record.changes import Actor
from projects.record.errors import RecordConflict
from projects.record.sync import sync_batch

from demo import vellmarsh
from demo.outputs import write_output as _write

NAMESPACE = uuid.UUID("6f1c8f7e-58a1-4d8e-9a53-6c1d2b7b9e10")

PEOPLE = [
    ("ada.recorder", Role.RECORDER),
    ("ben.recorder", Role.RECORDER),
    ("cleo.analyst", Role.ANALYST),
    ("dan.manager", Role.MANAGER),
    ("eve.viewer", Role.VIEWER),
]


def uid_for(*parts) -> str:
    return str(uuid.uuid5(NAMESPACE, "/".join(str(p) for p in parts)))


def ensure_people():
    """The two organisations and the demo users (idempotent)."""
    northfold, _ = Organisation.objects.get_or_create(slug="northfold", defaults={"name": "Northfold Field Archaeology"})
    quillmoor, _ = Organisation.objects.get_or_create(slug="quillmoor", defaults={"name": "Quillmoor Heritage Ltd"})
    User = get_user_model()
    users = {}
    for name, role in PEOPLE:
        user, created = User.objects.get_or_create(username=name)
        if created:
            user.set_password(f"demo-{name}")
            user.save()
        Membership.objects.get_or_create(user=user, organisation=northfold, defaults={"role": role})
        users[name] = user
    rival, created = User.objects.get_or_create(username="quill.manager")
    Membership.objects.get_or_create(user=rival, organisation=quillmoor, defaults={"role": Role.MANAGER})
    Project.objects.get_or_create(organisation=quillmoor, code="QHL01", defaults={"name": "Quillmoor evaluation"})
    return northfold, users


def _token(user, name):
    token = ApiToken.objects.filter(user=user, name=name, revoked_at__isnull=True).first()
    return token or ApiToken.issue(user, name)[0]


def _batch(project, actor, key, contexts, relationships):
    return sync_batch(
        project,
        actor,
        batch_id=uid_for(project.code, "batch", key),
        contexts=[
            {"uid": uid_for(project.code, "ctx", label), "label": label, "kind": kind, "area": area, "description": desc}
            for label, kind, area, desc in contexts
        ],
        relationships=[
            {"uid": uid_for(project.code, "rel", s, w, o), "subject": s, "type": w, "object": o,
             "certainty": certainty, "note": note}
            for s, w, o, certainty, note in relationships
        ],
    )


def load_demo_record() -> dict:
    """Create or reuse the demo organisation, users and both projects; load the record.

    Returns a summary including the refused mistake and its cycle.
    """
    northfold, users = ensure_people()
    vml24, _ = Project.objects.get_or_create(
        organisation=northfold, code="VML24",
        defaults={"name": "Vellmarsh Lane", "description": "Rescue excavation ahead of housing, Vellmarsh (invented)."},
    )
    vml25, _ = Project.objects.get_or_create(
        organisation=northfold, code="VML25", defaults={"name": "Vellmarsh Lane evaluation trench"}
    )
    ada = Actor(user=users["ada.recorder"], token=_token(users["ada.recorder"], "ada's trench tablet"))
    ben = Actor(user=users["ben.recorder"], token=_token(users["ben.recorder"], "ben's field phone"))

    by_area: dict[str, list] = {}
    for ctx in vellmarsh.CONTEXTS:
        by_area.setdefault(ctx[2], []).append(ctx)
    area_of = {c[0]: c[2] for c in vellmarsh.CONTEXTS}
    answers = []
    for index, area in enumerate(sorted(by_area)):
        # Relationships within the area go with it; those across areas come last.
        rels = [r for r in vellmarsh.RELATIONSHIPS if area_of[r[0]] == area and area_of[r[2]] == area]
        actor = ada if index % 2 == 0 else ben
        answers.append(_batch(vml24, actor, f"area-{area}", by_area[area], rels))
    cross = [r for r in vellmarsh.RELATIONSHIPS if area_of[r[0]] != area_of[r[2]]]
    answers.append(_batch(vml24, ada, "cross-area", [], cross))
    _batch(vml25, ben, "trench-1", vellmarsh.EVALUATION_CONTEXTS, vellmarsh.EVALUATION_RELATIONSHIPS)

    subject, wording, obj, certainty, note = vellmarsh.MISTAKE
    refused = None
    try:
        writes.add_relationship(vml24, ben, subject=subject, type=wording, object=obj, certainty=certainty, note=note)
    except RecordConflict as exc:
        refused = {"relationship": f"{subject} {wording} {obj}", **exc.as_error()}
    vml24.refresh_from_db()
    return {
        "project": vml24,
        "users": users,
        "batches": [{"batch_id": a["batch_id"], "revision": a.get("revision"),
                     "contexts": len(a["contexts"]), "relationships": len(a["relationships"])} for a in answers],
        "refused": refused,
    }


def record_step(state, stdout):
    """Record: load Vellmarsh Lane (VML24) through the write path and show a refused mistake."""
    summary = load_demo_record()
    project = summary["project"]
    state["project"] = project
    state["users"] = summary["users"]
    refused = summary["refused"]
    lines = [
        "# Vellmarsh Lane (VML24) — record",
        "",
        "Invented demonstration site of Northfold Field Archaeology; not a real excavation.",
        "",
        f"Record revision: {project.revision}",
        f"Contexts: {project.context_set.filter(retracted_revision__isnull=True).count()}",
        f"Relationships: {project.relationship_set.filter(retracted_revision__isnull=True).count()}",
        "",
        "## Sync batches",
    ]
    for batch in summary["batches"]:
        lines.append(f"- batch {batch['batch_id']}: {batch['contexts']} contexts, {batch['relationships']} relationships "
                     f"(revision {batch['revision']})")
    lines += ["", "## Relationship refused at the write-time check"]
    if refused:
        lines.append(f"Posted: {refused['relationship']} — refused ({refused['code']}): {refused['message']}")
        lines.append("")
        lines.append("The cycle it would close, as recorded relationships:")
        for step in refused.get("cycle", []):
            ident = "proposed" if step["proposed"] else f"#{step['id']}"
            lines.append(f"  {step['relationship']} ({ident})")
    else:
        lines.append("(none: the mistake was not refused — this is a bug)")
    _write(state, "record-report.md", "\n".join(lines) + "\n")
    _write(state, "record-refused.json", json.dumps(refused, indent=2))
    stdout.write(f"  {project.code} at revision {project.revision}; mistake refused: {bool(refused)}")
