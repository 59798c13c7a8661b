"""The planner and API reference pages as files: served with their media types and policy,
shipped as package data, and free of anything fetched from outside this service."""

from __future__ import annotations

import fnmatch
import re
import tomllib
from html.parser import HTMLParser
from pathlib import Path

import pytest

from samplewright.api.pages import PAGE_POLICY
from samplewright.web import ASSETS, asset

ROOT = Path(__file__).resolve().parents[2]
PAGES = {"/": "index.html", "/docs": "docs.html"}
ASSET_ROUTES = {f"/assets/{name}": name for name in ASSETS if not name.endswith(".html")}


class _Links(HTMLParser):
    """Every src and href of a page, and every form control's id and label target."""

    def __init__(self):
        super().__init__()
        self.links: list[str] = []
        self.controls: list[str] = []
        self.labelled: set[str] = set()

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        for key in ("src", "href"):
            if key in attrs:
                self.links.append(attrs[key])
        if tag in {"input", "select", "textarea"} and attrs.get("type") != "hidden":
            self.controls.append(attrs.get("id", ""))
        if tag == "label" and "for" in attrs:
            self.labelled.add(attrs["for"])


def _parse(name: str) -> _Links:
    parser = _Links()
    parser.feed(asset(name).decode("utf-8"))
    return parser


@pytest.mark.parametrize(("path", "name"), [*PAGES.items(), *ASSET_ROUTES.items()])
def test_pages_and_assets_are_served(client, path, name):
    """Each page and asset: 200, its media type, the shipped bytes and the pages' own policy."""
    response = client.get(path)
    assert response.status_code == 200
    assert response.mimetype == ASSETS[name]
    assert response.get_data() == asset(name)
    assert response.headers["Content-Security-Policy"] == PAGE_POLICY
    assert response.headers["X-Content-Type-Options"] == "nosniff"


def test_api_responses_keep_the_strict_policy(client):
    """JSON responses still carry the API's default-src 'none' policy (only pages relax it)."""
    response = client.get("/healthz")
    assert response.headers["Content-Security-Policy"].startswith("default-src 'none'")
    assert "script-src" not in response.headers["Content-Security-Policy"]


def test_policy_allows_only_this_service():
    """The pages may run their own script and style and connect to their own origin, nothing else."""
    directives = dict(part.strip().split(" ", 1) for part in PAGE_POLICY.split(";"))
    assert directives["default-src"] == "'none'"
    assert directives["script-src"] == "'self'"
    assert directives["connect-src"] == "'self'"
    assert "unsafe" not in PAGE_POLICY


@pytest.mark.parametrize("name", PAGES.values())
def test_pages_link_only_to_served_routes(app, name):
    """Every src/href of a page is a route of this app, a fragment, or the empty favicon."""
    routes = {rule.rule for rule in app.url_map.iter_rules()}
    for link in _parse(name).links:
        if link.startswith("#") or link == "data:,":
            continue
        resolved = "/" + link.lstrip("./") if link not in {"./"} else "/"
        assert resolved in routes, f"{name} links to {link!r}, which is not served"


@pytest.mark.parametrize("name", ASSETS)
def test_nothing_is_fetched_from_outside(name):
    """No file names an outside address (works offline, no CDN)."""
    text = asset(name).decode("utf-8")
    assert not re.search(r"(https?:)?//[A-Za-z0-9.-]+\.[A-Za-z]{2,}", text), name
    assert "@import" not in text
    assert "url(" not in text


def test_every_control_of_the_planner_has_a_label():
    """Each input, select and textarea in the planner's markup has a <label for> (groups rows are labelled by the script)."""
    page = _parse("index.html")
    unlabelled = [c for c in page.controls if c not in page.labelled]
    assert not unlabelled, unlabelled


def test_assets_are_package_data():
    """pyproject's package-data patterns cover every shipped file, so the wheel carries the pages."""
    config = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    patterns = config["tool"]["setuptools"]["package-data"]["samplewright.web"]
    for name in ASSETS:
        assert any(fnmatch.fnmatch(f"static/{name}", p) for p in patterns), name


def test_pages_are_in_the_openapi_document(client):
    """/ and /docs are documented as text/html pages (tag "pages")."""
    spec = client.get("/openapi.json").get_json()
    for path in PAGES:
        op = spec["paths"][path]["get"]
        assert op["tags"] == ["pages"]
        assert "text/html" in op["responses"]["200"]["content"]
