"""The interpretations step of the demo (see demo/steps.py).

Two competing readings of Vellmarsh Lane (VML24), both invented:

* "Hearth with the floor" accepts the doubtful link between hearth 2032 and
  clay floor 2030 (recorded as an uncertain "contemporary with") and phases
  every context as ``demo.vellmarsh.PHASE_OF`` does;
* "Hearth apart" leaves that link undecided, leaves the two uncertain cuts
  (1060 through 1004, 3030 through 3052) undecided too, and puts post-hole
  3080 and its fill 3081 with the stone building's construction instead of
  the settlement.

Both are committed and proposed; the first is approved and becomes the
project's current reading.  Their diff (text and JSON) and the analysis of the
second one's alternatives are written out.  Running the step again reuses
what exists: a version whose content hash matches is not made twice.
"""

from __future__ import annotations

import json
import time

from django.db import transaction

from chronology import jobs
from chronology.models import JobState
from demo import vellmarsh
from demo.outputs import write_output as _write
from projects.models import Relationship
from projects.record.changes import Actor

from chronology.interpretations import alternatives, services
from chronology.interpretations.content import content_hash
from chronology.interpretations.models import Interpretation, Reading, Status, Version

__all__ = ["interpretations_step"]

FIRST = "Hearth with the floor"
SECOND = "Hearth apart"
MOVED_TO_BUILDING = ("3080", "3081")


def _key(name: str) -> str:
    return name.lower().replace(" ", "-")


def _relationship(project, subject: str, type_: str, obj: str) -> int:
    rel = (Relationship.objects.filter(project=project, retracted_revision__isnull=True, type=type_)
           .filter(later__label=subject, earlier__label=obj).first())
    if rel is None:
        raise LookupError(f"the demo record has no active {subject} {type_} {obj}")
    return rel.id


def _evidence_slots(state) -> list[dict]:
    """How the dating evidence of the evidence step is used (both readings alike)."""
    found = state.get("evidence") or {}
    slots = []
    for lab, ident in sorted((found.get("determinations") or {}).items()):
        # VXL-0107 is oak heartwood charcoal from the hearth: old wood, so only an upper bound on its date.
        use = "residual" if lab == "VXL-0107" else "included"
        slots.append({"evidence": f"determination:{ident}", "use": use, "outlier_prior": 0.05})
    for ident in (found.get("calendar_dates") or {}).values():
        slots.append({"evidence": f"calendar_date:{ident}", "use": "included", "outlier_prior": 0.0})
    for ident in (found.get("termini") or {}).values():
        slots.append({"evidence": f"terminus:{ident}", "use": "included", "outlier_prior": 0.0})
    return slots


def _content(project, state, *, hearth_with_floor: bool) -> dict:
    phases = [{"key": _key(name), "name": name, "to_next": {"arrangement": "sequential"}}
              for name in vellmarsh.PHASES]
    phases[-1].pop("to_next")
    phase_of = dict(vellmarsh.PHASE_OF)
    hearth = _relationship(project, "2032", "contemporary_with", "2030")
    doc = {
        "phases": phases,
        "equalities": [{"relationship": hearth, "decision": "accepted" if hearth_with_floor else "undecided",
                        "reason": "burnt clay of the hearth runs under the floor's edge" if hearth_with_floor
                        else "no physical link survives between hearth and floor"}],
        "evidence": _evidence_slots(state),
        "estimate": ["2030"],
        "questions": [
            {"kind": "duration", "phase": "settlement", "label": "How long did the settlement last?"},
            {"kind": "gap", "from": "phase:enclosure:close", "to": "phase:settlement:beginning",
             "label": "Gap between the enclosure and the settlement"},
            {"kind": "precedence", "earlier": "phase:settlement:close", "later": "phase:stone-building:beginning"},
        ],
    }
    if not hearth_with_floor:
        for label in MOVED_TO_BUILDING:
            phase_of[label] = "Stone building"
        doc["uncertain"] = [{"relationship": _relationship(project, "1060", "cuts", "1004"), "decision": "undecided"},
                            {"relationship": _relationship(project, "3030", "cuts", "3052"), "decision": "undecided"}]
    doc["assignments"] = [{"context": label, "phase": _key(phase)} for label, phase in phase_of.items()]
    return doc


def _ensure_proposed(project, actor: Actor, name: str, description: str, content: dict) -> Version:
    """The interpretation's version with this content, committed and proposed; made only if missing."""
    revision = project.revision
    wanted = services.prepare_content(project, revision, content)
    interpretation = Interpretation.objects.filter(project=project, name=name).first()
    if interpretation is None:
        _interp, version = services.create_interpretation(project, actor, name=name, description=description,
                                                          content=wanted, message="first reading of the demo record")
    else:
        digest = content_hash(wanted, revision)
        version = interpretation.versions.filter(content_hash=digest).order_by("-number").first()
        if version is None:
            draft = interpretation.versions.filter(status=Status.DRAFT).order_by("-number").first()
            if draft is not None:
                version = services.edit_draft(draft, actor, if_match=draft.etag, content=wanted,
                                              record_revision=revision)
            else:
                latest = interpretation.versions.order_by("-number").first()
                version = services.new_draft(latest, actor, content=wanted, record_revision=revision,
                                             message="the demo reading again")
    if version.status == Status.DRAFT:
        version = services.commit(version, actor)
    if version.status == Status.COMMITTED:
        version = services.propose(version, actor)
    return version


def _alternatives_report(version: Version, actor: Actor) -> dict:
    """Reuse a finished analysis of this version, else run one now."""
    job = (version.project.jobs.filter(kind=alternatives.JOB_KIND, state=JobState.DONE, params__version=version.pk)
           .order_by("-created_at").first())
    if job is None:
        with transaction.atomic():
            job = alternatives.start(version, actor, time_budget=20.0)
        job = _wait(job)
        if job.state == JobState.QUEUED:  # no worker took it (or an enclosing transaction defers it): run it here
            job = jobs.execute(job.pk, alternatives.run)
    page = alternatives.choices(job, offset=0, limit=20)
    return {"job": str(job.pk), "state": job.state, "version": version.pk, "result": job.result,
            "first_choices": page, "error": job.error}


def _wait(job, seconds: float = 30.0):
    """The job once a worker has finished it, or as it stands after ``seconds``."""
    deadline = time.monotonic() + seconds
    job.refresh_from_db()
    while job.state in (JobState.QUEUED, JobState.RUNNING) and time.monotonic() < deadline:
        if job.state == JobState.QUEUED and transaction.get_connection().in_atomic_block:
            break  # the task is enqueued only when the enclosing transaction commits
        time.sleep(0.2)
        job.refresh_from_db()
    return job


def _alternatives_markdown(version: Version, report: dict) -> str:
    result = report.get("result") or {}
    analysis = result.get("analysis") or {}
    lines = [f"# Vellmarsh Lane (VML24) — alternatives of {version}", ""]
    if report["state"] != "done":
        return "\n".join(lines + [f"The analysis ended {report['state']}: {report.get('error')}", ""])
    text = {i["relationship"]: i["text"] for i in result["items"]}
    lines += ["Undecided items:", ""]
    lines += [f"- #{i['relationship']} {i['text']} ({i['kind']})" for i in result["items"]]
    lines += ["", result["limits"]["statement"],
              f"Distinct temporal orders among them: {analysis['distinct_orders']}.", ""]
    conflicts = analysis.get("minimal_conflicts") or []
    lines.append("Minimal conflicts: " + ("; ".join(" + ".join(text.get(r, f"#{r}") for r in c) for c in conflicts)
                                          if conflicts else "none (every combination is consistent)."))
    lines += ["", "First consistent choices (accepted items):", ""]
    for choice in report["first_choices"]["results"]:
        accepted = ", ".join(text.get(r, f"#{r}") for r in choice["accepted"]) or "none"
        lines.append(f"{choice['index']}. {accepted}")
    return "\n".join(lines) + "\n"


def interpretations_step(state, stdout):
    """Interpretations: two competing readings of VML24 committed and proposed, one approved as the current reading."""
    project = state["project"]
    project.refresh_from_db()
    users = state["users"]
    cleo = Actor(user=users["cleo.analyst"], device="demo: post-excavation desk")
    dan = Actor(user=users["dan.manager"], device="demo: manager's office")

    first = _ensure_proposed(project, cleo, FIRST, "The hearth was built with the clay floor; phasing as excavated.",
                             _content(project, state, hearth_with_floor=True))
    second = _ensure_proposed(project, cleo, SECOND, "The hearth may be later than the floor; post-hole 3080 "
                              "belongs to the building's construction.", _content(project, state,
                                                                                  hearth_with_floor=False))
    if first.status == Status.PROPOSED:
        first = services.approve(first, dan, reason="phasing and hearth reading agreed at the post-excavation meeting")
    reading = Reading.objects.filter(project=project).first()
    if reading is None or reading.version_id != first.pk:
        services.make_current(first, dan)

    diff = services.diff_versions(first, second)
    _write(state, "interpretations-diff.md", "# Vellmarsh Lane (VML24) — two interpretations compared\n\n"
           + diff["text"])
    _write(state, "interpretations-diff.json", json.dumps(diff, indent=2, ensure_ascii=False))
    report = _alternatives_report(second, cleo)
    _write(state, "interpretations-alternatives.json", json.dumps(report, indent=2, ensure_ascii=False))
    _write(state, "interpretations-alternatives.md", _alternatives_markdown(second, report))

    state["approved_version"] = first
    state["interpretations"] = {"approved": first.pk, "competing": second.pk}
    analysis = (report.get("result") or {}).get("analysis") or {}
    stdout.write(f"  {first} approved and current ({'valid' if first.is_valid else 'INVALID'}); "
                 f"{second} proposed; {len(diff['text'].splitlines()) - 1} differences; "
                 f"alternatives of {second}: {analysis.get('consistent_count', '?')} consistent of "
                 f"2^{analysis.get('k', '?')} ({'exact' if analysis.get('exact') else 'bounded'})")
