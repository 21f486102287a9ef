"""An invented site with two committed 24-event versions, for the evidence benchmark.

Rookham Field (project ``EVB24``), an invented evaluation site of the
invented unit "Benchmark unit (invented)", in the story's own dates: an
enclosure ditch, then two groups of pits in areas A and B with no physical
link between them, then garden soils over both.  Sixteen fills carry one
radiocarbon determination each (short-lived material; ages simulated from
invented true dates through the engine's labelled SYNTHETIC curve, fixed
seed), so each version compiles to 16 dated events and 8 phase boundaries.
The two readings use the same evidence and differ only in how the pits of
the two areas are arranged:

* "Pits in turn": area A's pits before area B's (``sequential``);
* "Pits together": the two groups overlapping (``overlapping``), which is how
  the invented true dates were drawn.

Everything goes through the public write path (sync batches for contexts
and relationships, the evidence writes, the interpretation services) with
deterministic client uids; when the project exists already its committed
versions are reused.
"""

from __future__ import annotations

import uuid

import numpy as np
from django.contrib.auth import get_user_model

from chronology.engine.curves import curve_to_csv, interpolate
from chronology.engine.grid import CalendarGrid
from chronology.engine.synthetic_curve import synthetic_curve
from projects.models import Membership, Organisation, Project, Role
from projects.record.changes import Actor
from projects.record.sync import sync_batch

__all__ = ["CODE", "PHASES", "DATED", "SEQUENTIAL", "OVERLAPPING", "ensure_site"]

CODE = "EVB24"
SEED = 2426
NAMESPACE = uuid.UUID("6f1d2a4e-9b3c-4c55-8e21-7d0b5a4c2e10")

#: (key, name, area) earliest first
PHASES = [("ditch", "Enclosure ditch", "A"), ("pits-a", "Pits of area A", "A"),
          ("pits-b", "Pits of area B", "B"), ("garden", "Garden soils", "B")]

#: (label, phase, invented true date (astronomical year), lab error) for every dated fill
DATED = [
    ("1101", "ditch", -420.0, 27.0), ("1102", "ditch", -395.0, 30.0),
    ("1103", "ditch", -370.0, 25.0), ("1104", "ditch", -340.0, 28.0),
    ("1201", "pits-a", -260.0, 26.0), ("1202", "pits-a", -230.0, 29.0),
    ("1203", "pits-a", -175.0, 27.0), ("1204", "pits-a", -140.0, 30.0),
    ("2301", "pits-b", -240.0, 28.0), ("2302", "pits-b", -200.0, 25.0),
    ("2303", "pits-b", -150.0, 27.0), ("2304", "pits-b", -95.0, 29.0),
    ("2401", "garden", 10.0, 26.0), ("2402", "garden", 35.0, 30.0),
    ("2403", "garden", 70.0, 27.0), ("2404", "garden", 110.0, 28.0),
]

#: Undated contexts: the ditch's cut, the pits' cuts and a levelling layer.
UNDATED = [("1100", "cut", "A"), ("1200", "cut", "A"), ("2300", "cut", "B"), ("2400", "deposit", "B")]

#: (later, type, earlier) as recorded
RELATIONSHIPS = [
    ("1101", "fills", "1100"), ("1102", "above", "1101"), ("1103", "above", "1102"), ("1104", "above", "1103"),
    ("1200", "cuts", "1104"), ("1201", "fills", "1200"), ("1202", "fills", "1200"),
    ("1203", "above", "1201"), ("1204", "above", "1202"),
    ("2300", "cuts", "1104"), ("2301", "fills", "2300"), ("2302", "fills", "2300"),
    ("2303", "above", "2301"), ("2304", "above", "2302"),
    ("2400", "above", "1203"), ("2400", "above", "1204"), ("2400", "above", "2303"), ("2400", "above", "2304"),
    ("2401", "above", "2400"), ("2402", "above", "2400"), ("2403", "above", "2401"), ("2404", "above", "2402"),
]

SEQUENTIAL = "Pits in turn"
OVERLAPPING = "Pits together"


def _uid(*parts) -> str:
    return str(uuid.uuid5(NAMESPACE, "/".join(str(p) for p in parts)))


def _simulated_ages(curve) -> dict[str, float]:
    """Radiocarbon ages from the invented true dates: curve value plus curve and lab scatter."""
    rng = np.random.default_rng(SEED)
    years = np.array([d[2] for d in DATED])
    grid = CalendarGrid(float(years.min()) - 1.0, 1.0, int(years.max() - years.min()) + 3)
    mu, sd = interpolate(curve, grid)
    out = {}
    for label, _phase, year, sigma in DATED:
        i = int(round(grid.index_of(year)))
        out[label] = float(round(mu[i] + rng.normal(0.0, sd[i]) + rng.normal(0.0, sigma)))
    return out


def _record(project: Project, actor: Actor) -> None:
    contexts = [{"uid": _uid(CODE, "context", label), "label": label, "kind": kind, "area": area}
                for label, kind, area in UNDATED]
    area_of = {key: area for key, _name, area in PHASES}
    contexts += [{"uid": _uid(CODE, "context", label), "label": label, "kind": "fill", "area": area_of[phase]}
                 for label, phase, _year, _sigma in DATED]
    rels = [{"uid": _uid(CODE, "relationship", a, t, b), "subject": a, "type": t, "object": b}
            for a, t, b in RELATIONSHIPS]
    sync_batch(project, actor, batch_id=_uid(CODE, "batch", "contexts"), contexts=contexts)
    sync_batch(project, actor, batch_id=_uid(CODE, "batch", "relationships"), relationships=rels)


def _evidence(project: Project, actor: Actor) -> list[int]:
    from chronology.evidence import writes
    from chronology.evidence.curves import import_curve

    engine = synthetic_curve()
    curve, _created = import_curve(curve_to_csv(engine))
    ages = _simulated_ages(engine)
    ids = []
    for n, (label, _phase, _year, sigma) in enumerate(DATED):
        code = f"R{label}"
        writes.add_sample(project, actor, uid=_uid(CODE, "sample", code), context=label, code=code,
                          material="charred cereal grain", short_lived=True, notes="invented sample")
        det = writes.add_determination(project, actor, uid=_uid(CODE, "determination", label), sample=code,
                                       lab_code=f"VXL-{2401 + n:04d}", cra=ages[label], cra_sigma=sigma,
                                       curve=curve.id, delta13c=-24.0).object
        ids.append(det.id)
    return ids


def _content(determinations: list[int], arrangement: str) -> dict:
    phases = [{"key": key, "name": name, "to_next": {"arrangement": "sequential"}} for key, name, _a in PHASES]
    phases[1]["to_next"] = {"arrangement": arrangement}
    phases[-1].pop("to_next")
    return {
        "phases": phases,
        "assignments": [{"context": label, "phase": phase} for label, phase, _y, _s in DATED],
        "evidence": [{"evidence": f"determination:{i}", "use": "included", "outlier_prior": 0.05}
                     for i in determinations],
    }


def _versions(project: Project) -> list:
    from chronology.interpretations.models import Interpretation

    found = []
    for name in (SEQUENTIAL, OVERLAPPING):
        interp = Interpretation.objects.filter(project=project, name=name).first()
        version = None if interp is None else interp.versions.exclude(status="draft").order_by("-number").first()
        found.append(version)
    return found


def ensure_site() -> list:
    """The committed versions "Pits in turn" and "Pits together" of ``EVB24``, built first when missing."""
    from chronology.interpretations import services

    project = Project.objects.filter(code=CODE).order_by("pk").first()
    if project is not None and all(_versions(project)):
        return _versions(project)
    if project is None:
        org = Organisation.objects.create(slug=f"bench-{uuid.uuid4().hex[:8]}", name="Benchmark unit (invented)")
        project = Project.objects.create(organisation=org, code=CODE, name="Rookham Field (invented)")
    user, _ = get_user_model().objects.get_or_create(username=f"bench-analyst-{project.organisation.slug}")
    Membership.objects.get_or_create(user=user, organisation=project.organisation, defaults={"role": Role.ANALYST})
    actor = Actor(user=user, device="bench loader")
    _record(project, actor)
    determinations = _evidence(project, actor)
    project.refresh_from_db()
    for name, arrangement in ((SEQUENTIAL, "sequential"), (OVERLAPPING, "overlapping")):
        _interp, version = services.create_interpretation(
            project, actor, name=name, description=f"the pits of areas A and B {arrangement}",
            content=services.prepare_content(project, project.revision, _content(determinations, arrangement)),
            message="a reading of the benchmark site")
        services.commit(version, actor)
    return _versions(project)
