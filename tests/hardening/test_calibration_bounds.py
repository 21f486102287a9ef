"""Bounded work per calibration request: steps, sigma, curve extent, value counts, caches and throttles."""

from __future__ import annotations

import pytest
from django.core.cache import cache

from chronology.evidence import curves as stored_curves
from chronology.evidence import writes
from chronology.evidence.curve_cache import ByteLRU, shared
from chronology.models import Job
from projects.models import Role
from tests.api.conftest import assert_error_body, url
from tests.evidence.conftest import _fresh_curve_cache, contexts, curve, curve_text  # noqa: F401  (fixtures)

pytestmark = pytest.mark.usefixtures("project")


def _calibrate(client, **body):
    return client.post(url("VML24", "calibrate"), body, format="json")


def _value(curve, **extra):
    return {"cra": 2450, "error": 30, "curve": curve.id, **extra}


@pytest.mark.parametrize("step", [0.0021, 0.0022, 0.7, 1e-9, 3])
def test_a_grid_step_outside_the_fixed_set_is_refused(step, client_for, curve):
    response = _calibrate(client_for(Role.VIEWER), values=[_value(curve)], step=step)
    error = assert_error_body(response, 400, "step-not-allowed")
    assert error["field"] == "step" and 1.0 in error["allowed"]


def test_many_distinct_steps_leave_the_curve_cache_no_larger_than_its_budget(client_for, curve, settings):
    settings.TELLSTACK_CURVE_CACHE_BYTES = 2_000_000
    client = client_for(Role.VIEWER)
    for step in [0.0021 + i / 10_000 for i in range(20)] + [0.5, 1, 2, 5, 10, 20, 50, 100]:
        _calibrate(client, values=[_value(curve)], step=step)
    assert 0 < shared.bytes <= 2_000_000


def test_the_cache_evicts_the_least_recently_used_entry_when_over_its_byte_budget():
    import numpy as np

    lru = ByteLRU(budget=2_000)
    lru.put("a", np.zeros(100))
    lru.put("b", np.zeros(100))
    lru.get("a")
    lru.put("c", np.zeros(100))
    assert (lru.get("a") is not None, lru.get("b"), lru.get("c") is not None, lru.bytes <= 2_000) == (
        True, None, True, True)


def test_an_entry_larger_than_the_whole_budget_is_not_kept():
    import numpy as np

    lru = ByteLRU(budget=100)
    lru.put("big", np.zeros(1000))
    assert (len(lru), lru.bytes) == (0, 0)


def test_an_ad_hoc_error_of_1e300_years_is_refused_with_400(client_for, curve):
    response = _calibrate(client_for(Role.VIEWER), values=[_value(curve, error=1e300)])
    assert assert_error_body(response, 400, "error-too-large")["field"] == "values[0].error"


def test_a_determination_with_a_cra_sigma_of_1e300_is_refused_with_400(client_for, project, actor, contexts, curve):
    writes.add_sample(project, actor, context="1011", code="S1", material="charcoal")
    body = {"sample": "S1", "lab_code": "VXL-9001", "cra": 2450, "cra_sigma": 1e300, "curve": curve.id}
    response = client_for(Role.RECORDER).post(url("VML24", "determinations"), body, format="json")
    assert assert_error_body(response, 400, "error-too-large")["field"] == "cra_sigma"


def _import(client, table, **extra):
    return client.post("/api/v1/curves/", {"table": table, "organisation": "northfold", **extra}, format="json")


def test_a_curve_spanning_a_billion_years_is_refused(client_for):
    table = "# name: WIDE-TEST\n# citation: test\n# licence: test\n0,0,10\n500000000,500000000,10\n1000000000,1000000000,10\n"
    response = _import(client_for(Role.MANAGER), table, max_step=1e12)
    assert_error_body(response, 400)
    assert response.json()["errors"][0]["field"] in ("max_step", "table")


def test_a_curve_spanning_a_billion_years_is_refused_even_without_a_max_step(client_for):
    table = "# name: WIDE-TEST\n# citation: test\n# licence: test\n0,0,10\n1000000000,1000000000,10\n"
    assert_error_body(_import(client_for(Role.MANAGER), table), 400, "curve-span-too-large")


def test_a_max_step_of_1e12_years_is_refused(client_for):
    response = _import(client_for(Role.MANAGER), curve_text(), max_step=1e12)
    assert assert_error_body(response, 400, "out-of-range")["field"] == "max_step"


def test_a_curve_with_a_gap_of_thousands_of_years_between_rows_is_refused(client_for):
    table = "# name: GAP-TEST\n# citation: test\n# licence: test\n0,0,10\n5,5,10\n9000,9000,10\n"
    assert_error_body(_import(client_for(Role.MANAGER), table), 400, "curve-gap")


def test_two_thousand_values_answer_202_with_a_job_at_once(client_for, curve, django_capture_on_commit_callbacks):
    with django_capture_on_commit_callbacks(execute=False):
        response = _calibrate(client_for(Role.VIEWER), values=[_value(curve)] * 2000, density=True)
    assert response.status_code == 202, response.content
    job = Job.objects.get(pk=response.json()["id"])
    assert (job.kind, job.state, response["Location"].endswith(f"/jobs/{job.pk}/")) == ("calibration", "queued", True)


def test_more_values_than_the_limit_are_refused_with_400(client_for, curve):
    response = _calibrate(client_for(Role.VIEWER), values=[_value(curve)] * 2001)
    assert assert_error_body(response, 400, "too-many-values")["limit"] == 2000


def test_a_calibration_job_gives_the_answer_the_request_would_have_given(client_for, curve, settings,
                                                                          django_capture_on_commit_callbacks):
    values = [_value(curve), _value(curve, cra=3100, error=40), _value(curve, cra=1800, error=25)]
    client = client_for(Role.VIEWER)
    inline = _calibrate(client, values=values).json()
    settings.TELLSTACK_CALIBRATE_INLINE_VALUES = 2
    with django_capture_on_commit_callbacks(execute=True):
        job_id = _calibrate(client, values=values).json()["id"]
    job = client.get(url("VML24", "jobs", job_id)).json()
    assert (job["state"], job["result"]) == ("done", inline)


def test_a_job_with_densities_over_the_cell_limit_fails_with_the_reason(client_for, curve, settings,
                                                                         django_capture_on_commit_callbacks):
    settings.TELLSTACK_CALIBRATE_INLINE_VALUES = 1
    settings.TELLSTACK_CALIBRATE_MAX_DENSITY_CELLS = 100
    with django_capture_on_commit_callbacks(execute=True):
        job_id = _calibrate(client_for(Role.VIEWER), values=[_value(curve)] * 2, density=True).json()["id"]
    job = Job.objects.get(pk=job_id)
    assert (job.state, job.error["code"]) == ("failed", "density-too-large")


def test_a_viewer_over_the_heavy_rate_gets_429_in_the_error_body(client_for, curve, settings):
    cache.clear()
    settings.TELLSTACK_THROTTLE_RATES = {"heavy": {Role.VIEWER: "2/minute", Role.MANAGER: "100/minute"}}
    client = client_for(Role.VIEWER)
    answers = [_calibrate(client, values=[_value(curve)]).status_code for _ in range(3)]
    response = _calibrate(client, values=[_value(curve)])
    assert answers[:2] == [200, 200]
    assert_error_body(response, 429, "throttled")
    assert int(response["Retry-After"]) > 0


def test_the_heavy_rate_is_set_by_role(client_for, curve, settings):
    cache.clear()
    settings.TELLSTACK_THROTTLE_RATES = {"heavy": {Role.VIEWER: "1/minute", Role.MANAGER: "100/minute"}}
    manager = client_for(Role.MANAGER)
    assert [_calibrate(manager, values=[_value(curve)]).status_code for _ in range(3)] == [200, 200, 200]


def test_forgetting_the_curves_empties_the_shared_cache(curve):
    stored_curves.curve_on_grid(curve)
    stored_curves.forget()
    assert shared.bytes == 0
