"""The planner page and the API reference page: static files shipped as package data.

Plain HTML, CSS and JavaScript with no third-party code, no build step and no network
access beyond this service's own API, so they work offline and behind strict proxies.
"""

from __future__ import annotations

import functools
from importlib import resources

#: The files served, with their media types (nothing else in the folder is reachable).
ASSETS = {
    "index.html": "text/html",
    "docs.html": "text/html",
    "samplewright.css": "text/css",
    "planner.js": "text/javascript",
    "docs.js": "text/javascript",
}


@functools.cache
def asset(name: str) -> bytes:
    """The bytes of one shipped file (read once per process)."""
    if name not in ASSETS:
        raise KeyError(name)
    return resources.files(__package__).joinpath("static", name).read_bytes()
