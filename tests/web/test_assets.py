"""The service serves its own assets: the pages' CSS and script, and the API docs' viewers (no CDN)."""

from __future__ import annotations

import re

import pytest


@pytest.mark.parametrize("path", ["/static/web/tellstack.css", "/static/web/tellstack.js"])
def test_the_pages_assets_are_served_by_the_service(client, path):
    response = client.get(path)
    assert response.status_code == 200
    assert b"".join(response.streaming_content if response.streaming else [response.content])


def test_the_api_docs_load_nothing_from_outside(users, client):
    from projects.models import Role

    client.force_login(users[Role.VIEWER])
    html = client.get("/api/v1/docs/").content.decode()
    sources = re.findall(r'(?:src|href)="([^"]+)"', html) + re.findall(r'"(https?://[^"]+\.(?:js|css))"', html)
    assert sources and all(not s.startswith(("http://", "https://", "//")) for s in sources), sources
    for src in sources:
        if src.startswith("/static/"):
            assert client.get(src).status_code == 200, src


def test_the_sign_in_page_is_html_with_a_csrf_token(client):
    html = client.get("/accounts/login/").content.decode()
    assert 'name="csrfmiddlewaretoken"' in html and 'id="login-form"' in html


def test_an_unknown_page_is_an_html_404_and_an_unknown_api_path_the_json_body(client):
    assert b"Not found" in client.get("/no-such-page/").content
    assert client.get("/api/v1/no-such/").json()["code"] == "not-found"
