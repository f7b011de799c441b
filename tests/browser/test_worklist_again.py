"""A manager presses "Send today's work list now" twice in a real browser (Chromium): the
second press asks, per depot, before anything goes again."""

from __future__ import annotations

from typing import Any

import pytest
from django.core import mail

from fleetfuel.planning.models import WorkListDispatch
from tests import factories as f
from tests.browser.conftest import screenshot

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]


@pytest.mark.parametrize(("width", "height"), [(1280, 800), (768, 1024)])
def test_second_press_asks_and_a_confirmed_resend_goes_once(
    login_page: Any, width: int, height: int
) -> None:
    depots = [f.site_make(name="Heron Pit"), f.site_make(name="Lark Yard")]
    manager = f.user_make("manager", username="mara", sites=depots)
    manager.email, manager.first_name, manager.last_name = "mara@depot.example", "Mara", "Voss"
    manager.save()
    page = login_page(manager, width=width, height=height)
    send = page.get_by_role("button", name="Send today's work list now")
    send.click()
    page.wait_for_load_state("networkidle")
    assert page.locator(".messages li").count() == 2 and len(mail.outbox) == 2
    page.get_by_role("button", name="Send today's work list now").click()
    page.wait_for_load_state("networkidle")
    question = page.locator("#send-again")
    assert question.is_visible() and len(mail.outbox) == 2  # asked, nothing sent
    text = question.inner_text()
    assert text.count("by Mara Voss to mara@depot.example; send again?") == 2
    wide = page.evaluate("document.scrollingElement.scrollWidth <= window.innerWidth")
    assert wide, "the question scrolls sideways"
    screenshot(page, f"worklist-again-{width}")
    page.get_by_role("checkbox").first.uncheck()  # only the second depot again
    page.get_by_role("button", name="Send again").click()
    page.wait_for_load_state("networkidle")
    said = page.locator(".messages li").all_inner_texts()
    assert said == ["Lark Yard: work list sent again to mara@depot.example."]
    assert len(mail.outbox) == 3
    assert WorkListDispatch.objects.filter(resend=1).get().site.name == "Lark Yard"
