"""The record of a project: overview, contexts, relationships, one context, the change feed.

Every table reads ``RecordState`` through ``projects.record.reads`` exactly as
the API does, at the current revision or at ``?at=N``.
"""

from __future__ import annotations

from django.db.models import Q
from django.http import Http404

from chronology.interpretations.models import Reading
from chronology.models import CheckReport
from projects.models import ChangeLogEntry
from projects.models.record import ContextKind, RelationshipType
from projects.record import reads

from .common import frame, page, project_page, query_without, render_page, revision_of


def _current_phasing(project) -> tuple[object, dict[int, str], dict[str, str]]:
    """The current reading's version, its phase per context id and its phase names by key."""
    reading = Reading.objects.filter(project=project).select_related("version__interpretation").first()
    if reading is None:
        return None, {}, {}
    content = reading.version.content or {}
    names = {p["key"]: p["name"] for p in content.get("phases", [])}
    phase_of = {a["context"]: a["phase"] for a in content.get("assignments", []) if isinstance(a.get("context"), int)}
    return reading.version, phase_of, names


def _rev(request, project) -> int:
    at = revision_of(request, project)
    return project.revision if at is None else at


@project_page
def overview(request, project):
    from chronology.interpretations.models import Version
    from chronology.runs.models import Run

    revision = _rev(request, project)
    check = CheckReport.objects.filter(project=project).defer("report").order_by("-revision").first()
    version, _phase_of, _names = _current_phasing(project)
    return render_page(request, "web/project.html", frame(
        request, project, "overview", revision=revision,
        contexts=reads.states(project, "context", revision).count(),
        relationships=reads.states(project, "relationship", revision).count(),
        check=check, current=version,
        versions=Version.objects.filter(project=project).select_related("interpretation", "author")
        .order_by("-id")[:5],
        runs=Run.objects.filter(project=project).order_by("-created_at")[:5],
        changes=ChangeLogEntry.objects.filter(project=project).order_by("-id")[:8],
    ))


@project_page
def contexts(request, project):
    revision = _rev(request, project)
    version, phase_of, phase_names = _current_phasing(project)
    qs = reads.states(project, "context", revision)
    area, kind, phase, text = (request.GET.get(k, "").strip() for k in ("area", "kind", "phase", "q"))
    if area:
        qs = qs.filter(data__area=area)
    if kind:
        qs = qs.filter(data__kind=kind)
    if text:
        qs = qs.filter(Q(data__label__icontains=text) | Q(data__description__icontains=text))
    if phase:
        qs = qs.filter(object_id__in=[cid for cid, key in phase_of.items() if key == phase])
    rows = page(request, qs.only("object_id", "data"))
    items = [{**s.data, "phase": phase_names.get(phase_of.get(s.object_id), "")} for s in rows]
    # No ordering, or the states' default order would enter the DISTINCT and return every row.
    areas = sorted(set(reads.states(project, "context", revision).order_by().values_list("data__area", flat=True)
                       .distinct()))
    return render_page(request, "web/contexts.html", frame(
        request, project, "contexts", revision=revision, rows=rows, items=items, version=version,
        filters={"area": area, "kind": kind, "phase": phase, "q": text}, areas=[a for a in areas if a],
        kinds=ContextKind.choices, phases=sorted(phase_names.items(), key=lambda kv: kv[1]),
        paging=query_without(request, "page"),
    ))


def _relationship_rows(project, revision: int, states) -> list[dict]:
    data = [s.data for s in states]
    ids = {d["later_id"] for d in data} | {d["earlier_id"] for d in data}
    rows = reads.with_labels(data, reads.context_labels(project, revision, ids))
    return [{**r, "words": r["type"].replace("_", " ")} for r in rows]


@project_page
def relationships(request, project):
    revision = _rev(request, project)
    qs = reads.states(project, "relationship", revision)
    type_, certainty, text, ids = (request.GET.get(k, "").strip() for k in ("type", "certainty", "q", "ids"))
    if type_:
        qs = qs.filter(data__type=type_)
    if certainty:
        qs = qs.filter(data__certainty=certainty)
    if ids:
        qs = qs.filter(object_id__in=[int(i) for i in ids.split(",") if i.strip().isdigit()])
    if text:
        matching = list(reads.states(project, "context", revision).filter(data__label__icontains=text)
                        .values_list("object_id", flat=True)[:500])
        qs = qs.filter(Q(data__later_id__in=matching) | Q(data__earlier_id__in=matching) | Q(data__note__icontains=text))
    rows = page(request, qs.only("object_id", "data"))
    return render_page(request, "web/relationships.html", frame(
        request, project, "relationships", revision=revision, rows=rows,
        items=_relationship_rows(project, revision, rows), types=RelationshipType.choices,
        filters={"type": type_, "certainty": certainty, "q": text, "ids": ids},
        paging=query_without(request, "page"),
    ))


@project_page
def context_detail(request, project, context_id: int):
    revision = _rev(request, project)
    state = reads.states(project, "context", revision).filter(object_id=context_id).first()
    if state is None:
        raise Http404(f"no context {context_id} at revision {revision}")
    rels = reads.states(project, "relationship", revision).filter(
        Q(data__later_id=context_id) | Q(data__earlier_id=context_id))
    rows = _relationship_rows(project, revision, rels)
    samples = [s.data for s in reads.states(project, "sample", revision).filter(data__context_id=context_id)]
    sample_ids = [s["id"] for s in samples]
    determinations = [s.data for s in reads.states(project, "determination", revision)
                      .filter(data__sample_id__in=sample_ids)] if sample_ids else []
    dated = [s.data for kind in ("calendar_date", "terminus")
             for s in reads.states(project, kind, revision).filter(data__context_id=context_id)]
    history = ChangeLogEntry.objects.filter(project=project, object_kind="context", object_id=context_id,
                                            revision__lte=revision).order_by("-id")[:100]
    _version, phase_of, names = _current_phasing(project)
    return render_page(request, "web/context.html", frame(
        request, project, "contexts", revision=revision, context=state.data,
        # "Later than it": the relationships whose other, later end is another context; and the reverse.
        later=[r for r in rows if r["earlier_id"] == context_id], earlier=[r for r in rows if r["later_id"] == context_id],
        samples=samples, determinations=determinations, dated=dated, history=history,
        phase=names.get(phase_of.get(context_id), ""),
    ))


@project_page
def changes(request, project):
    """The change feed, newest first: who, which device, the request id, what changed (before → after)."""
    revision = revision_of(request, project)
    qs = ChangeLogEntry.objects.filter(project=project).order_by("-id")
    if revision is not None:
        qs = qs.filter(revision__lte=revision)
    action, who = request.GET.get("action", "").strip(), request.GET.get("who", "").strip()
    if action:
        qs = qs.filter(action__startswith=action)
    if who:
        qs = qs.filter(user_name=who)
    rows = page(request, qs)
    entries = [{"entry": e, "changed": e.changed_keys()} for e in rows]
    return render_page(request, "web/changes.html", frame(
        request, project, "changes", revision=revision if revision is not None else project.revision, rows=rows,
        entries=entries, filters={"action": action, "who": who}, paging=query_without(request, "page"),
    ))
