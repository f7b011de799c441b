"""Playwright driving Debian's Chromium (/usr/bin/chromium) against Django's live server.

No browser is downloaded: the Python playwright package brings its driver, and the browser
is the system one. Locally a missing Chromium skips these tests; in CI it fails them.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import pytest

from tests.conftest import need
from tests.factories import PASSWORD

# Playwright's sync API runs an event loop in this thread; Django's ORM refuses to run
# beside one unless told it is safe (it is: the test drives both in turn).
os.environ.setdefault("DJANGO_ALLOW_ASYNC_UNSAFE", "true")

CHROMIUM = os.environ.get("CHROMIUM_PATH", "/usr/bin/chromium")
SHOTS = Path(__file__).resolve().parents[2] / "var" / "screenshots"
CHROMIUM_ARGS = [
    "--headless=new",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
]

pytestmark = pytest.mark.browser


@pytest.fixture(scope="session")
def browser() -> Iterator[Any]:
    need(Path(CHROMIUM).exists(), f"needs Chromium at {CHROMIUM} (apt-get install chromium)")
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        yield b
        b.close()


@pytest.fixture
def login_page(browser: Any, live_server: Any) -> Iterator[Callable[..., Any]]:
    """login_page(user, width=1280, height=800) -> a logged-in Playwright page."""
    contexts: list[Any] = []

    def make(user: Any, *, width: int = 1280, height: int = 800) -> Any:
        context = browser.new_context(
            viewport={"width": width, "height": height}, base_url=live_server.url
        )
        contexts.append(context)
        page = context.new_page()
        page.set_default_timeout(15_000)
        page.goto("/login/")
        page.fill("input[name=username]", user.username)
        page.fill("input[name=password]", PASSWORD)
        page.click("button[type=submit]")
        page.wait_for_load_state("networkidle")
        return page

    yield make
    for context in contexts:
        context.close()


def screenshot(page: Any, name: str) -> None:
    """Keep a picture of what the user saw (var/screenshots/, not committed)."""
    SHOTS.mkdir(parents=True, exist_ok=True)
    page.screenshot(path=str(SHOTS / f"{name}.png"), full_page=True)
