"""A manager signs in through a real headless Chromium and sees the organisation home.

The browser is the operating system's Chromium, launched by its path; the
test tool never downloads one.  Screenshots go under the test's temporary
folder and are checked to hold more than one colour.
"""

from __future__ import annotations

import shutil

import pytest

from projects.models import Role

CHROMIUM = shutil.which("chromium") or "/usr/bin/chromium"

pytestmark = [
    pytest.mark.browser,
    pytest.mark.skipif(shutil.which(CHROMIUM) is None, reason="no Chromium from the system packages"),
]


@pytest.fixture
def browser_page(monkeypatch):
    # Playwright's sync API runs an event loop in this thread; the ORM calls the
    # test makes around it are still plain synchronous ones.
    monkeypatch.setenv("DJANGO_ALLOW_ASYNC_UNSAFE", "true")
    from playwright.sync_api import sync_playwright

    with sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=CHROMIUM, headless=True, args=["--no-sandbox"])
        try:
            page = browser.new_page(viewport={"width": 1280, "height": 900})
            yield page
        finally:
            browser.close()


def _not_blank(path) -> bool:
    from PIL import Image

    with Image.open(path) as image:
        colours = image.convert("RGB").getcolors(maxcolors=1_000_000)
    return colours is None or len(colours) > 1


@pytest.fixture
def manager_login(site, users):
    """The manager's user name and a known password, set before the browser's event loop starts.

    With that loop running, the ORM would open a second connection in another
    context and leave it open past the test database's teardown.
    """
    manager = users[Role.MANAGER]
    manager.set_password("pw-browser")
    manager.save()
    return manager.username, "pw-browser"


def test_a_manager_signs_in_and_sees_the_project_on_the_home_page(manager_login, live_server, browser_page, tmp_path):
    username, password = manager_login
    page = browser_page
    page.goto(live_server.url + "/")
    page.fill("#id_username", username)
    page.fill("#id_password", password)
    page.click("#login-form button[type=submit]")
    page.wait_for_load_state("networkidle")
    body = page.inner_text("body")
    assert "VML24" in body and "Vellmarsh Lane" in body
    assert "awaiting approval" in body  # both versions of the fixture are proposed
    shot = tmp_path / "screenshots" / "home.png"
    shot.parent.mkdir()
    page.screenshot(path=str(shot), full_page=True)
    assert _not_blank(shot)
