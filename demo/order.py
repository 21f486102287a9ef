"""The order steps of the demo: the full check, the diagram and the exports."""

from __future__ import annotations

import json

from django.db import transaction

from chronology import jobs, order_service
from chronology.models import CheckReport
from chronology.tasks import run_order_check
from demo.outputs import write_output as _write
from demo.vellmarsh import PHASE_OF, PHASES
from projects.record import reads


def order_step(state, stdout):
    """Order: full check of the record as a background job, the diagram and the exports."""
    project = state["project"]
    revision = project.revision
    if not CheckReport.objects.filter(project=project, revision=revision).exists():
        with transaction.atomic():
            jobs.submit(project, state["users"]["cleo.analyst"], "order-check", {"revision": revision}, run_order_check)
    stored = CheckReport.objects.get(project=project, revision=revision)
    report = stored.report
    _write(state, "check-report.json", json.dumps(report, indent=2, default=str))
    lines = [f"# Vellmarsh Lane (VML24) — full check at revision {revision}", "",
             f"Result: {'no errors' if report['ok'] else 'ERRORS FOUND'}; "
             f"{stored.summary['warnings']} warning(s); {stored.summary['redundant']} redundant relationship(s) "
             f"(kept in the record, hidden in the diagram); deepest sequence {report['longest_path_length']} steps:",
             "  " + " → ".join(report["longest_path_labels"]), "", "## Issues"]
    for issue in report["issues"]:
        lines.append(f"- [{issue['severity']}] {issue['code']}: {issue['message']}")
    lines += ["", "## Redundant relationships and the direct paths that imply them"]
    for item in report.get("redundant_relationships", [])[:40]:
        lines.append(f"- #{item['id']}: implied by {item['implied_by']}")
    _write(state, "check-report.md", "\n".join(lines) + "\n")

    order = order_service.record_order(project, revision)
    labels = {c.id: c.label for c in reads.snapshot(project, revision)[0]}
    phase_of = {cid: PHASE_OF[label] for cid, label in labels.items() if label in PHASE_OF}
    svg = order_service.diagram_svg(order, phases=PHASES, phase_of=phase_of,
                                    title="Vellmarsh Lane (VML24) — temporal order by phase")
    _write(state, "diagram.svg", svg)
    for fmt, (_type, ext) in order_service.EXPORTS.items():
        for reduced in (False, True):
            body = order_service.export(order, fmt, reduced=reduced)
            if fmt == "json":
                body = json.dumps(body, indent=1)
            _write(state, f"order{'-reduced' if reduced else ''}.{ext}", body)
    stdout.write(f"  check ok={report['ok']}, {len(report['issues'])} issue(s); diagram and exports written")
