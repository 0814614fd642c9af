"""Real-browser fixtures: Debian's Chromium, driven by Playwright, against the live server.

Never downloads a browser: the Debian package provides /usr/bin/chromium.  In CI (``CI`` set)
a missing Chromium fails the tests; on a workstation without it they are skipped with the
command that installs it.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest

# Playwright's sync API runs an event loop in this thread; Django would otherwise refuse the
# test's own ORM calls as "async-unsafe".  Only the tests' thread is affected.
os.environ["DJANGO_ALLOW_ASYNC_UNSAFE"] = "true"

CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = ["--headless=new", "--no-sandbox", "--disable-gpu", "--disable-quic",
                 "--no-first-run", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync"]
SCREENSHOTS = Path(__file__).resolve().parents[2] / "test-artifacts" / "screenshots"
# A 10-inch tablet held upright.
TABLET = {"width": 800, "height": 1280}


def require_chromium(path: str = CHROMIUM, *, ci: bool | None = None) -> str:
    """The Chromium to drive; without one, fail in CI (``CI`` set) and skip elsewhere."""
    if os.path.exists(path):
        return path
    message = f"No Chromium at {path}: install Debian's package with `apt-get install -y chromium`."
    if os.environ.get("CI") if ci is None else ci:
        pytest.fail(message)
    pytest.skip(message)


@pytest.fixture(scope="session")
def browser():
    executable = require_chromium()
    from playwright.sync_api import sync_playwright

    with sync_playwright() as playwright:
        chromium = playwright.chromium.launch(executable_path=executable, args=CHROMIUM_ARGS)
        yield chromium
        chromium.close()


@pytest.fixture
def page(browser, live_server):
    context = browser.new_context(viewport=TABLET, base_url=live_server.url)
    tab = context.new_page()
    tab.set_default_timeout(20_000)
    yield tab
    context.close()


@pytest.fixture
def sign_in(page):
    """Sign in through the login page, as a person would."""
    from tests.conftest import PASSWORDS

    def sign_in(user, role: str):
        page.goto("/accounts/login/")
        page.get_by_label("Username").fill(user.get_username())
        page.get_by_label("Password").fill(PASSWORDS[role])
        page.get_by_role("button", name="Sign in").click()
        page.wait_for_url(lambda url: "/accounts/login/" not in url)

    return sign_in


@pytest.fixture
def screenshot(page):
    """Save a full-page screenshot under test-artifacts/screenshots/ (git-ignored)."""
    SCREENSHOTS.mkdir(parents=True, exist_ok=True)

    def take(name: str) -> Path:
        path = SCREENSHOTS / f"{name}.png"
        page.screenshot(path=str(path), full_page=True)
        return path

    return take
