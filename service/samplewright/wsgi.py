"""WSGI entry point for gunicorn: ``samplewright.wsgi:app``."""

from .app import create_app

app = create_app()
