"""The main pages cost the same number of SQL queries whatever the size of the project.

Both projects are built by the pages benchmark's own builder (the record's
sync write path, two committed versions phasing it differently), at two small
sizes; the benchmark prints the same counts for 20,000 contexts.
"""

from __future__ import annotations

import pytest
from django.core.cache import cache

from web.benchmarks import build, page_urls, query_count, signed_in


@pytest.fixture
def two_sizes(db):
    cache.clear()  # the comparison of committed versions is kept; both sizes are measured cold
    yield [build(12, 14, tag="small"), build(48, 70, tag="larger")]
    cache.clear()


def _counts(built) -> dict[str, int]:
    client = signed_in(built["user"])
    return {name: query_count(client, url) for name, url in page_urls(built).items()}


def test_each_main_page_costs_the_same_queries_for_a_project_four_times_larger(two_sizes):
    small, larger = (_counts(b) for b in two_sizes)
    assert small == larger


def test_the_builder_makes_exactly_the_contexts_and_relationships_asked_for(two_sizes):
    from projects.record import reads

    project = two_sizes[1]["project"]
    assert reads.states(project, "context", project.revision).count() == 48
    assert reads.states(project, "relationship", project.revision).count() == 70


def test_a_second_look_at_a_comparison_of_committed_versions_is_served_from_what_was_kept(two_sizes):
    built = two_sizes[0]
    client = signed_in(built["user"])
    url = page_urls(built)["version comparison"]
    first, again = query_count(client, url), query_count(client, url)
    assert again < first
    assert 'class="diff"' in client.get(url).content.decode()
