"""The pages in a real headless Chromium, one scenario per kind of person.

The browser is the operating system's Chromium, launched by its path; the
test tool never downloads one.  Every scenario runs against pytest-django's
one live server on the test database.  Screenshots of the main pages go to a
``screenshots`` folder under the test's temporary folder and are checked to
be more than one flat colour.

All database work (the site, the second project, the URLs) is done in
fixtures before the browser starts: with Playwright's event loop running,
the ORM would open a second connection and keep it past the teardown.  What
the scenarios assert afterwards, they read from the pages.
"""

from __future__ import annotations

import json
import re
import shutil

import pytest
from django.urls import reverse

from projects.models import Project, Role

from .conftest import page_urls

CHROMIUM = shutil.which("chromium") or "/usr/bin/chromium"

pytestmark = [
    pytest.mark.browser,
    pytest.mark.skipif(shutil.which(CHROMIUM) is None, reason="no Chromium from the system packages"),
]


@pytest.fixture
def known(site, users, outsider, org):
    """Both demo sites, and every name and URL a scenario needs (read before the browser starts)."""
    Project.objects.create(organisation=org, code="VML25", name="Vellmarsh evaluation trench")
    project = site["project"]
    args = (project.organisation.slug, project.code)
    return {
        "base": args,
        "urls": page_urls(site),
        "first": site["first"].pk,
        "second": site["second"].pk,
        "first_label": str(site["first"]),
        "names": {role: user.get_username() for role, user in users.items()} | {"outsider": outsider.get_username()},
        "approve": reverse("web:version-action", args=(*args, site["first"].pk, "approve")),
    }


@pytest.fixture
def browser(monkeypatch):
    # Playwright's sync API runs an event loop in this thread; the test itself
    # makes no ORM call once it is running (see the module's docstring).
    monkeypatch.setenv("DJANGO_ALLOW_ASYNC_UNSAFE", "true")
    from playwright.sync_api import sync_playwright

    with sync_playwright() as pw:
        chromium = pw.chromium.launch(executable_path=CHROMIUM, headless=True,
                                      args=["--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage"])
        try:
            yield chromium
        finally:
            chromium.close()


@pytest.fixture
def shots(tmp_path):
    folder = tmp_path / "screenshots"
    folder.mkdir()
    return folder


def _sign_in(browser, live_server, username: str):
    """A fresh browser context signed in through the sign-in form (test users' password is ``pw-`` + name)."""
    page = browser.new_context(viewport={"width": 1280, "height": 900}).new_page()
    page.set_default_timeout(90_000)  # a loaded two-core machine
    page.goto(live_server.url + "/")
    page.fill("#id_username", username)
    page.fill("#id_password", "pw-" + username)
    page.click("#login-form button[type=submit]")
    page.wait_for_load_state("networkidle")
    return page


def _not_blank(path) -> bool:
    """More than a flat image: the pixel values vary (common practice for a smoke check of a screenshot)."""
    import numpy as np
    from PIL import Image

    with Image.open(path) as image:
        pixels = np.asarray(image.convert("L"), dtype=float)
    return pixels.std() > 5.0


def _shoot(page, shots, name: str, full_page: bool = True):
    path = shots / f"{name}.png"
    page.screenshot(path=str(path), full_page=full_page)
    assert _not_blank(path), name
    return path


def test_a_manager_compares_two_versions_and_approves_one_that_becomes_current(known, live_server, shots, browser):
    page = _sign_in(browser, live_server, known["names"][Role.MANAGER])
    home = page.inner_text("#projects")
    assert "VML24" in home and "VML25" in home and "2 awaiting approval" in home and "no runs" in home
    assert "awaiting approval" in page.inner_text("#attention")
    _shoot(page, shots, "home")

    page.click("text=VML24")
    page.click("nav.tabs >> text=Interpretations")
    page.select_option("#c-a", str(known["second"]))
    page.select_option("#c-b", str(known["first"]))
    page.click("#compare-form button[type=submit]")
    page.wait_for_load_state("networkidle")
    assert page.locator(".side-by-side svg").count() == 2
    assert page.locator(".side-by-side .context.marked").count() >= 2  # outlined in both diagrams
    _shoot(page, shots, "compare")

    page.locator("section h3 a", has_text=known["first_label"]).click()
    page.fill("#approve-reason", "matches the section drawings")
    page.click("#approve-form button[type=submit]")
    page.wait_for_load_state("networkidle")
    assert page.inner_text("#version-status") == "approved"
    assert page.is_visible("#is-current")
    _shoot(page, shots, "version")
    page.goto(live_server.url + known["urls"]["versions"])
    row = page.locator("#versions tr", has_text=known["first_label"])
    assert "current" in row.inner_text() and "matches the section drawings" in row.inner_text()


def test_an_analyst_submits_a_run_watches_it_reach_done_and_opens_the_results_and_plot(known, live_server, shots,
                                                                                       browser):
    page = _sign_in(browser, live_server, known["names"][Role.ANALYST])
    page.goto(live_server.url + known["urls"]["runs"])
    page.select_option("#r-version", str(known["first"]))
    page.fill("#r-chains", "2")
    page.fill("#r-iterations", "400")
    page.fill("#r-warmup", "100")
    page.uncheck("#r-converge")
    page.fill("#r-seed", "11")
    page.click("#run-form button[type=submit]")
    page.wait_for_url(re.compile(r"/runs/[0-9a-f-]{36}/$"))
    page.wait_for_selector("#run-state.done", timeout=60_000)
    assert page.inner_text("[data-overall]") == "100"
    assert page.locator("[data-chain-state]").all_inner_texts() == ["done", "done"]
    results = page.inner_text("#results")
    assert "Beginning of Early" in results and "R-hat" in results
    cells = page.locator("#outliers + table tbody tr").first.locator("td").all_inner_texts()
    assert all(cell.strip() for cell in cells) and not cells[1].startswith("ctx:")  # named, with both chances
    assert page.evaluate("document.getElementById('run-plot').naturalWidth") > 0  # the plot drew on the page
    _shoot(page, shots, "run")

    with page.expect_navigation() as opened:
        page.click("#run-plot")
    assert opened.value.headers["content-type"] == "image/svg+xml"
    # A bare SVG document has no page to scroll: the screenshot is of the window.
    _shoot(page, shots, "run-plot", full_page=False)


def test_a_recorder_creates_a_device_token_sees_its_key_once_and_revokes_it(known, live_server, shots, browser):
    page = _sign_in(browser, live_server, known["names"][Role.RECORDER])
    page.click("nav.top-links >> text=My devices")
    page.fill("#t-name", "trench tablet 7")
    page.click("#token-form button[type=submit]")
    page.wait_for_load_state("networkidle")
    key = page.inner_text("#new-key code.key")
    assert len(key) > 20
    _shoot(page, shots, "tokens")

    page.reload()
    assert key not in page.content()  # shown once only
    row = page.locator("#tokens tr", has_text="trench tablet 7")
    assert "active" in row.inner_text()
    row.locator("button", has_text="Revoke").click()
    page.wait_for_load_state("networkidle")
    assert "revoked" in page.locator("#tokens tr", has_text="trench tablet 7").inner_text()


def test_a_viewer_finds_no_write_control_and_a_forced_post_is_refused(known, live_server, shots, browser):
    page = _sign_in(browser, live_server, known["names"][Role.VIEWER])
    allowed = {"/organisation/", "/accounts/logout/"}
    for name, url in known["urls"].items():
        response = page.goto(live_server.url + url)
        assert response.status == 200, name
        actions = page.eval_on_selector_all("form[method=post]", "forms => forms.map(f => f.getAttribute('action'))")
        assert set(actions) <= allowed, (name, actions)
        if name in ("project", "contexts", "context", "changes", "diagram", "check", "evidence", "determination",
                    "versions", "runs", "people"):
            _shoot(page, shots, name)

    page.goto(live_server.url + known["urls"]["version"])
    token = next(c["value"] for c in page.context.cookies() if c["name"] == "csrftoken")
    forced = page.request.post(live_server.url + known["approve"], form={"reason": "forced"},
                               headers={"X-CSRFToken": token, "Referer": live_server.url + known["urls"]["version"]})
    assert forced.status == 403
    page.reload()
    assert page.inner_text("#version-status") == "proposed"


def test_a_user_of_the_second_organisation_gets_404_on_every_page_of_the_first(known, live_server, browser):
    page = _sign_in(browser, live_server, known["names"]["outsider"])
    statuses = {name: page.goto(live_server.url + url).status for name, url in known["urls"].items()}
    assert {name: status for name, status in statuses.items() if status != 404} == {}


def test_a_run_page_follows_the_progress_its_poll_reports_until_the_run_ends(known, live_server, browser):
    page = _sign_in(browser, live_server, known["names"][Role.ANALYST])
    answers = iter([
        {"state": "running", "terminal": False, "converged": None,
         "progress": {"fraction": 0.5, "chains": [{"chain": 0, "state": "running", "sweeps_done": 250,
                                                   "sweeps_total": 500, "fraction": 0.5}]}},
    ])

    def poll(route):
        # The fixture's run is queued with no worker; the poll's answers are played here instead.
        answer = next(answers, None)
        if answer is None:
            route.abort()
        else:
            route.fulfill(status=200, content_type="application/json", body=json.dumps(answer))

    page.route("**" + known["urls"]["run progress"], poll)
    page.goto(live_server.url + known["urls"]["run"])
    assert page.inner_text("#run-state") == "queued"
    page.wait_for_function("document.getElementById('run-state').textContent === 'running'")
    assert page.inner_text("[data-overall]") == "50"
    assert page.inner_text('[data-chain="0"] [data-chain-sweeps]') == "250 / 500"
