"""The planner page, the API reference page and their assets, served from package data.

Every other response carries the API's ``default-src 'none'`` policy; these pages carry
their own, which lets them run their own script and style and call only this service.
"""

from __future__ import annotations

from flask import current_app

from ..web import ASSETS, asset

#: Own scripts and styles only, requests to this origin only, blob: for the fetched chart.
PAGE_POLICY = (
    "default-src 'none'; script-src 'self'; style-src 'self'; img-src 'self' blob: data:; "
    "connect-src 'self'; base-uri 'none'; form-action 'self'; frame-ancestors 'none'"
)


def serve(name: str):
    """One shipped file with its media type and the pages' content security policy."""
    response = current_app.response_class(asset(name), mimetype=ASSETS[name])
    response.headers["Content-Security-Policy"] = PAGE_POLICY
    return response
