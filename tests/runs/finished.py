"""One finished run of the small invented site, shared by a module's output tests.

The site is built through the write paths and sampled in this process,
inside a transaction that is rolled back afterwards; what the output tests
read — the results document, the record's facts for the report, the HTML,
PDF and CSV — is kept as plain data, so each test reads it without sampling
again.
"""

from __future__ import annotations

import json

from django.contrib.auth import get_user_model
from django.db import transaction
from django.test import override_settings

from projects.models import Membership, Organisation, Project, Role
from projects.record.changes import Actor

from .conftest import build_site

__all__ = ["finished_outputs", "QUICK"]

QUICK = {"chains": 2, "iterations": 200, "warmup": 50, "thin": 1, "converge": False}


def _user(org, name, role):
    user = get_user_model().objects.create_user(username=name, password="pw-" + name)
    Membership.objects.create(user=user, organisation=org, role=role)
    return user


def finished_outputs(media_root, *, seed: int = 7) -> dict:
    """Build, sample and report on the small site; return its outputs as plain data (nothing stays stored)."""
    from chronology.evidence.curves import forget as forget_curves
    from chronology.interpretations import services as interpretations
    from chronology.runs.report import html_to_pdf, ranges_csv, render_report, report_facts
    from chronology.runs.service import run_inline, start_inline
    from projects.record import order_cache

    forget_curves()
    order_cache.forget()
    try:
        with override_settings(MEDIA_ROOT=media_root), transaction.atomic():
            org = Organisation.objects.create(slug="northfold", name="Northfold Field Archaeology")
            project = Project.objects.create(organisation=org, code="VML24", name="Vellmarsh Lane")
            recorder = _user(org, "ada.recorder", Role.RECORDER)
            analyst = Actor(user=_user(org, "cleo.analyst", Role.ANALYST), device="test desk")
            site = build_site(project, Actor(user=recorder, device="test"), analyst)
            version = interpretations.commit(site["draft"], analyst)
            run = run_inline(start_inline(project, version, analyst.user, seed=seed, **QUICK))
            assert run.state == "done", run.error
            results = json.loads(run.path("results.json").read_text())
            facts = report_facts(run, results)
            html = render_report(results, facts)
            out = {"results": results, "facts": facts, "html": html, "pdf": html_to_pdf(render_report(results, facts, images="png")),
                   "csv": ranges_csv(results), "lab_codes": [d.lab_code for d in site["determinations"]],
                   "site": project.name, "plot_svg": run.path("plot.svg").read_bytes()}
            transaction.set_rollback(True)
    finally:
        forget_curves()
        order_cache.forget()
    return out
