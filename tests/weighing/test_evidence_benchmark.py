"""The evidence benchmark's 24-event case: built through the write path, reported with its versions' sizes."""

from __future__ import annotations

import pytest

from chronology.benchmarks import evidence
from chronology.benchmarks.evidence_site import CODE, ensure_site
from chronology.engine.marginal_likelihood import SteppingStoneSettings
from projects.models import ChangeLogEntry, Project

TINY = SteppingStoneSettings(stones=4, draws=20, thin=1, warmup=10, repeats=2)

pytestmark = pytest.mark.django_db


def test_the_benchmark_site_has_two_committed_versions_of_24_events_built_through_the_write_path():
    first, second = ensure_site()
    assert (first.status, second.status) == ("committed", "committed")
    # every record object came with a change-log entry (the one write path)
    assert ChangeLogEntry.objects.filter(project=first.project).count() > 40
    result = evidence.run(settings=TINY, cases=("24-events",))
    assert result["events"] == {"Pits in turn v1": 24, "Pits together v1": 24}
    assert set(result) == {"suite", "seconds", "bayes_factor", "relative_mcse", "events", "cases"}
    assert result["cases"]["24-events"]["bayes_factor"] == result["bayes_factor"]


def test_building_the_benchmark_site_again_reuses_it():
    first = ensure_site()
    again = ensure_site()
    assert [v.pk for v in first] == [v.pk for v in again]
    assert Project.objects.filter(code=CODE).count() == 1
