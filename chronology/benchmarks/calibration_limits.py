"""Benchmark of the bounds on calibration requests: what arbitrary steps and large requests now cost.

On the configured database: a viewer sends calibrations at many distinct grid
steps (all refused), then at every allowed step; the peak memory of the
process and the bytes kept in the curve cache are reported. Then 100 values
with densities are answered in the request, 2,000 values answer 202 with a
job (timed to the answer; the job is not left queued), and the job's work for
those 2,000 values is timed on its own. Throttles are off: this measures work.
"""

from __future__ import annotations

import resource
import time
import uuid

from django.contrib.auth import get_user_model
from django.db import transaction
from django.test.utils import override_settings
from rest_framework.test import APIClient

from chronology.engine.curves import curve_to_csv
from chronology.engine.synthetic_curve import synthetic_curve
from chronology.evidence import calibrate_request
from chronology.evidence.curve_cache import shared
from chronology.evidence.curves import import_curve
from projects.models import ApiToken, Membership, Organisation, Project, Role

QUICK = {"distinct_steps": 20, "values": 500}


def _peak_mb() -> float:
    return round(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024, 1)


def run(distinct_steps: int = 200, values: int = 2000) -> dict:
    suffix = uuid.uuid4().hex[:8]
    org = Organisation.objects.create(slug=f"bench-{suffix}", name="Benchmark unit (invented)")
    user = get_user_model().objects.create_user(username=f"bench-{suffix}")
    Membership.objects.create(user=user, organisation=org, role=Role.VIEWER)
    project = Project.objects.create(organisation=org, code="BENCH", name="Benchmark site (invented)")
    curve, _ = import_curve(curve_to_csv(synthetic_curve(0, 55000, 5)), name=f"BENCH-SYNTHETIC-{suffix}")
    _token, key = ApiToken.issue(user, "bench")
    client = APIClient()
    client.credentials(HTTP_AUTHORIZATION=f"Token {key}")
    path = f"/api/v1/projects/{org.slug}:BENCH/calibrate/"
    value = {"cra": 2450, "error": 30, "curve": curve.id}
    out: dict = {"suite": "calibration-limits", "peak_rss_mb_at_start": _peak_mb()}
    with override_settings(TELLSTACK_THROTTLE_RATES={"heavy": {}}):
        started, refused = time.perf_counter(), 0
        for i in range(distinct_steps):
            step = round(0.0021 + i / 10_000, 4)
            refused += client.post(path, {"values": [value], "step": step}, format="json").status_code == 400
        out.update(distinct_steps=distinct_steps, distinct_steps_refused=refused,
                   distinct_steps_s=round(time.perf_counter() - started, 3))
        for step in (0.5, 1, 2, 5, 10, 20, 50, 100):
            client.post(path, {"values": [value], "step": step}, format="json")
        out.update(peak_rss_mb_after_steps=_peak_mb(), curve_cache_bytes=shared.bytes,
                   curve_cache_budget=shared.budget)

        started = time.perf_counter()
        inline = client.post(path, {"values": [value] * 100, "density": True}, format="json")
        out.update(inline_100_status=inline.status_code, inline_100_density_s=round(time.perf_counter() - started, 3))

        with transaction.atomic():  # the job row is rolled back: nothing is left queued
            started = time.perf_counter()
            big = client.post(path, {"values": [value] * values, "density": True}, format="json")
            out.update(many_values=values, many_status=big.status_code,
                       many_answer_s=round(time.perf_counter() - started, 3))
            transaction.set_rollback(True)

        params = {"values": [value] * values, "density": True, "step": None, "at": None, "determinations": []}
        started = time.perf_counter()
        revision, found = calibrate_request.measurements(project, params)
        calibrate_request.answer(revision, found, params)
        out.update(many_job_work_s=round(time.perf_counter() - started, 3), peak_rss_mb_at_end=_peak_mb())
    return out
