"""The three operations as functions of a raw request dict: validate, compute, report.

These are shared by the single-question routes and anything that answers many
questions at once; they know nothing of Flask's request object. Each is the engine of
``batch.answer_many`` asked one question, so a single answer and the same question in a
batch are produced by the same code. A response carries ``provenance`` (``provenance.py``).
``answer_text`` gives the same response as JSON text, as the routes send it.
"""

from __future__ import annotations

from .batch import CAUTIONS, answer, answer_text

__all__ = ["CAUTIONS", "answer_text", "detectable_effect", "power", "sample_size"]


def power(body: dict) -> dict:
    """POST /v1/power."""
    return answer("power", body)


def sample_size(body: dict) -> dict:
    """POST /v1/sample-size."""
    return answer("sample-size", body)


def detectable_effect(body: dict) -> dict:
    """POST /v1/detectable-effect."""
    return answer("detectable-effect", body)
