"""Dating evidence of a project (samples, determinations with calibration plots, dates, termini) and the curves."""

from __future__ import annotations

from django.contrib.auth.decorators import login_required
from django.http import Http404
from django.shortcuts import render

from api.views.evidence import measurements_at, sample_codes
from chronology.evidence import calibrate
from chronology.evidence.curves import curve_summary
from chronology.evidence.models import Curve
from projects.record import reads

from ..access import current_organisation
from .common import frame, project_page, render_page, revision_of


def _labelled(project, revision: int, rows: list[dict]) -> list[dict]:
    """Rows with the context label and sample code in force at the same revision (as the API joins them)."""
    context_ids = {r["context_id"] for r in rows if r.get("context_id") is not None}
    sample_ids = {r["sample_id"] for r in rows if r.get("sample_id") is not None}
    labels = reads.context_labels(project, revision, context_ids) if context_ids else {}
    codes = sample_codes(project, revision, sample_ids) if sample_ids else {}
    return [{**r, "context": labels.get(r.get("context_id"), ""), "sample": codes.get(r.get("sample_id"), "")}
            for r in rows]


def _rows(project, kind: str, revision: int) -> list[dict]:
    return _labelled(project, revision, [s.data for s in reads.states(project, kind, revision)[:1000]])


@project_page
def evidence(request, project):
    at = revision_of(request, project)
    revision = project.revision if at is None else at
    return render_page(request, "web/evidence.html", frame(
        request, project, "evidence", revision=revision,
        samples=_rows(project, "sample", revision), determinations=_rows(project, "determination", revision),
        calendar_dates=_rows(project, "calendar_date", revision), termini=_rows(project, "terminus", revision),
    ))


@project_page
def determination(request, project, determination_id: int):
    """One determination: its calibrated date (HPD 68.3 % and 95.4 %) and the plot against its curve."""
    at = revision_of(request, project)
    revision = project.revision if at is None else at
    state = reads.states(project, "determination", revision).filter(object_id=determination_id).first()
    if state is None:
        raise Http404(f"no determination {determination_id} at revision {revision}")
    row = _labelled(project, revision, [state.data])[0]
    m = measurements_at(project, revision, [determination_id])[0]
    (date, curve), = calibrate.calibrate_measurements([m])
    summary = calibrate.summarise(m, date, curve)
    images = calibrate.plot_measurement(m, title=f"{m.label} (sample {row['sample']}): {m.cra:.0f} ± {m.sigma:.0f} BP")
    svg = images.svg.decode() if isinstance(images.svg, bytes) else images.svg
    return render_page(request, "web/determination.html", frame(
        request, project, "evidence", revision=revision, row=row, summary=summary, svg=_strip_xml_declaration(svg),
    ))


def _strip_xml_declaration(svg: str) -> str:
    """An SVG document inlined in HTML drops its XML declaration and doctype."""
    start = svg.find("<svg")
    return svg[start:] if start >= 0 else svg


@login_required
def curves(request):
    """Curves the chosen organisation may use: its own and the global ones, with citation and licence."""
    org = current_organisation(request)
    rows = [] if org is None else [curve_summary(c) for c in Curve.objects.visible_to_organisation(org.pk)
                                   .select_related("table", "organisation").order_by("name", "id")]
    return render(request, "web/curves.html", {"organisation": org, "curves": rows})
