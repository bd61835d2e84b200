"""The admin as a staff user drives it: forms submitted with the values the page shows."""

from __future__ import annotations

from html.parser import HTMLParser
from typing import Any

import pytest
from django.test import Client

from tests.factories import UserFactory


class _FormValues(HTMLParser):
    """What a browser would submit from the admin's change form, as it stands."""

    def __init__(self) -> None:
        super().__init__()
        self.data: dict[str, Any] = {}
        self._select: str | None = None
        self._textarea: str | None = None
        self._in_form = False

    def _add(self, name: str, value: str) -> None:
        held = self.data.get(name)
        if held is None:
            self.data[name] = value
        else:
            self.data[name] = [*held, value] if isinstance(held, list) else [held, value]

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        a = {k: v or "" for k, v in attrs}
        if tag == "form" and a.get("id", "").endswith("_form"):  # not the sign-out form
            self._in_form = True
        if not self._in_form or "name" not in a:
            if tag == "option" and self._select is not None and "selected" in a:
                self._add(self._select, a.get("value", ""))
            return
        if tag == "input":
            kind = a.get("type", "text")
            if kind in ("submit", "button", "image", "file"):
                return
            if kind in ("checkbox", "radio") and "checked" not in a:
                return
            self._add(a["name"], a.get("value", "on" if kind == "checkbox" else ""))
        elif tag == "select":
            self._select = a["name"]
        elif tag == "textarea":
            self._textarea = a["name"]
            self.data[a["name"]] = ""

    def handle_endtag(self, tag: str) -> None:
        if tag == "select":
            self._select = None
        elif tag == "textarea":
            self._textarea = None
        elif tag == "form":
            self._in_form = False

    def handle_data(self, data: str) -> None:
        if self._textarea is not None:
            self.data[self._textarea] += data.removeprefix("\n")


def form_values(client: Client, url: str) -> dict[str, Any]:
    """The change form at ``url`` as the page fills it."""
    response = client.get(url)
    assert response.status_code == 200, response.status_code
    parser = _FormValues()
    parser.feed(response.content.decode())
    return parser.data


@pytest.fixture
def admin_user(db):
    return UserFactory(username="keeper", is_staff=True, is_superuser=True)


@pytest.fixture
def admin_client(admin_user) -> Client:
    client = Client()
    client.force_login(admin_user)
    return client
