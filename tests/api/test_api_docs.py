"""The API reference page works offline: every script, style and font it names is one of
our own static files, none from another host."""

from __future__ import annotations

from html.parser import HTMLParser

from django.conf import settings
from django.contrib.staticfiles import finders


class _References(HTMLParser):
    """Every src and href of a page, and whether it has inline script or style."""

    def __init__(self) -> None:
        super().__init__()
        self.urls: list[str] = []
        self.inline: list[str] = []
        self._open: str | None = None

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        named = dict(attrs)
        self.urls += [value for key, value in attrs if key in {"src", "href"} and value]
        if tag == "style" or (tag == "script" and "src" not in named):
            self._open = tag

    def handle_data(self, data: str) -> None:
        if self._open and data.strip():
            self.inline.append(self._open)

    def handle_endtag(self, tag: str) -> None:
        self._open = None


def test_the_docs_page_loads_only_our_static_files(client):
    response = client.get("/api/docs/")
    assert response.status_code == 200
    page = _References()
    page.feed(response.content.decode())
    assert page.urls, "the page names its script"
    static_url = "/" + settings.STATIC_URL.lstrip("/")
    for url in page.urls:
        assert url.startswith(static_url), f"{url} is not one of our static files"
        assert finders.find(url.removeprefix(static_url)), f"{url} is not in the static files"
    assert "//" not in response.content.decode().replace("://", ""), "no protocol-relative URL"
    assert "http://" not in response.content.decode()
    assert "https://" not in response.content.decode()
    # A Content-Security-Policy of 'self' only allows no inline script or style.
    assert page.inline == []
    assert 'spec-url="/api/schema/"' in response.content.decode()
