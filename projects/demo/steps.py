"""The steps of the demo, in the order of the path of the data.

Each step takes the shared ``state`` dict (``out`` folder, ``files`` written,
and what earlier steps left there) and a stream for progress lines.
"""

from __future__ import annotations

import json

from projects.demo.load import load_demo_record
from projects.demo.outputs import write_output as _write


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


def _steps():
    from chronology.demo import STEPS as order_steps
    from chronology.evidence.demo import STEPS as evidence_steps
    from chronology.interpretations.demo import STEPS as interpretation_steps
    from chronology.runs.demo import STEPS as run_steps

    return [record_step, *order_steps, *evidence_steps, *interpretation_steps, *run_steps]


STEPS = _steps()
