"""What the pages show: home, record tables, the past record, the change feed, diagrams, comparison, evidence."""

from __future__ import annotations

import pytest
from django.urls import reverse

from projects.models import Role
from tests.api.conftest import foreign_record  # noqa: F401  (fixture)

from .conftest import page_urls, signed_in


def test_a_user_of_another_organisation_sees_only_their_own_projects_at_home(site, outsider, other_project):
    html = signed_in(outsider).get(reverse("web:home")).content.decode()
    assert "QHX01" in html and "VML24" not in html


def test_a_signed_out_visitor_is_sent_to_sign_in(site, client):
    for url in [reverse("web:home"), *page_urls(site).values()]:
        response = client.get(url)
        assert response.status_code == 302 and response["Location"].startswith(reverse("web:login")), url


def test_home_lists_the_project_with_its_revision_state_and_awaiting_approval(site, web_client):
    html = web_client(Role.MANAGER).get(reverse("web:home")).content.decode()
    assert "VML24" in html and f">{site['project'].revision}<" in html
    assert "awaiting approval" in html and "Two phases v1" in html


def test_home_search_keeps_only_matching_projects(site, web_client, org):
    from projects.models import Project

    Project.objects.create(organisation=org, code="VML25", name="Evaluation trench")
    html = web_client(Role.VIEWER).get(reverse("web:home") + "?q=trench").content.decode()
    assert "VML25" in html and "Vellmarsh Lane</span>" not in html


def test_home_sorts_projects_by_revision_descending(site, web_client, org):
    from projects.models import Project

    Project.objects.create(organisation=org, code="AAA01", name="Empty site")
    html = web_client(Role.VIEWER).get(reverse("web:home") + "?sort=-revision").content.decode()
    assert html.index("VML24") < html.index("AAA01")


def test_reading_contexts_at_a_past_revision_shows_only_what_existed_then(site, web_client):
    project = site["project"]
    url = reverse("web:contexts", args=(project.organisation.slug, project.code))
    html = web_client(Role.VIEWER).get(url + "?at=1").content.decode()
    assert ">1001<" in html and ">1002<" not in html


def test_an_unknown_revision_is_refused_not_a_server_error(site, web_client):
    project = site["project"]
    url = reverse("web:contexts", args=(project.organisation.slug, project.code))
    assert web_client(Role.VIEWER).get(url + "?at=9999").status_code == 400


def test_context_page_lists_relationships_both_ways(site, web_client):
    project = site["project"]
    url = reverse("web:context", args=(project.organisation.slug, project.code, site["contexts"]["1003"].id))
    html = web_client(Role.VIEWER).get(url).content.decode()
    later, earlier = html.split("Later than it (1)")[1].split("Earlier than it (1)")
    assert ">1004</a>" in later and ">1002</a>" not in later
    assert ">1002</a>" in earlier and ">1004</a>" not in earlier


def test_change_feed_names_who_which_device_and_the_request(site, web_client):
    project = site["project"]
    html = web_client(Role.VIEWER).get(reverse("web:changes", args=(project.organisation.slug, project.code))).content.decode()
    assert "ada.recorder" in html and "test tablet" in html and "record.context.added" in html


def test_the_diagram_is_inline_svg_with_clickable_contexts(site, web_client):
    project = site["project"]
    html = web_client(Role.VIEWER).get(reverse("web:diagram", args=(project.organisation.slug, project.code))).content.decode()
    assert "<svg" in html and 'class="context" data-id=' in html and "data-pan-zoom" in html


def test_each_box_of_the_diagram_is_named_by_its_contexts_record_id_so_a_click_opens_that_context(site, web_client):
    import re

    project = site["project"]
    html = web_client(Role.VIEWER).get(reverse("web:diagram", args=(project.organisation.slug, project.code))).content.decode()
    boxes = dict(re.findall(r'<g class="context" data-id="(\d+)".*?<text[^>]*>([^<]+)</text>', html, re.S))
    assert boxes[str(site["contexts"]["1003"].id)] == "1003"


def test_the_comparison_shows_the_text_difference_and_two_diagrams(site, web_client):
    project = site["project"]
    url = reverse("web:compare", args=(project.organisation.slug, project.code))
    html = web_client(Role.VIEWER).get(url + f"?a={site['second'].pk}&b={site['first'].pk}").content.decode()
    assert html.count("<svg") == 2 and 'class="diff"' in html
    assert "data-marked=\"" + str(site["contexts"]["1005"].id) in html


def test_determination_page_draws_the_calibration_and_names_the_synthetic_curve(site, web_client):
    project = site["project"]
    url = reverse("web:determination", args=(project.organisation.slug, project.code, site["determinations"][0].id))
    html = web_client(Role.VIEWER).get(url).content.decode()
    assert "<svg" in html and "95.4% range" in html and "not for dating real samples" in html.lower()


def test_a_foreign_determination_id_is_not_found_in_this_project(site, web_client, foreign_record):
    project = site["project"]
    url = reverse("web:determination", args=(project.organisation.slug, project.code, 10**9))
    assert web_client(Role.MANAGER).get(url).status_code == 404


def test_a_comparison_too_large_to_draw_says_so_and_links_each_area_of_each_version(site, web_client, monkeypatch):
    project = site["project"]
    url = reverse("web:compare", args=(project.organisation.slug, project.code))
    client = web_client(Role.VIEWER)
    client.get(url)  # the pages' modules are loaded through the URLs, as in a running server
    from web import comparison

    monkeypatch.setattr(comparison, "MAX_DRAWN", 3)
    html = client.get(url + f"?a={site['second'].pk}&b={site['first'].pk}").content.decode()
    assert "<svg" not in html and "too many to draw side by side" in html
    assert f"?version={site['first'].pk}&amp;area=A" in html and f"?version={site['second'].pk}&amp;area=A" in html
    assert html.count('&amp;area=A">A</a>') == 2  # each area once per version, not once per context


def test_the_diagram_of_a_version_can_be_drawn_one_area_at_a_time(site, web_client):
    project = site["project"]
    url = reverse("web:diagram", args=(project.organisation.slug, project.code))
    html = web_client(Role.VIEWER).get(url + f"?version={site['first'].pk}&area=A").content.decode()
    assert "cannot be drawn" not in html, html[html.find("cannot be drawn"):][:300]
    assert "<svg" in html and "area A" in html
