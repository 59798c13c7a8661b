"""Errors raised by the computational core.

Each names the parameter, echoes the offending value and says what is allowed, so the
HTTP layer can turn it into a field-keyed problem without rewording it.
"""

from __future__ import annotations

from typing import Any


def show(value: Any, limit: int = 60) -> str:
    """A short, JSON-safe rendering of a value for an error message."""
    text = repr(value)
    return text if len(text) <= limit else text[: limit - 3] + "..."


class InvalidParameter(ValueError):
    """A parameter is outside what the method allows."""

    def __init__(self, field: str, value: Any, allowed: str) -> None:
        self.field = field
        self.value = value
        self.allowed = allowed
        super().__init__(f"{field}: {allowed} (got {show(value)})")


class NoSolution(ValueError):
    """The question has no answer within the service's bounds (e.g. the size cap)."""

    def __init__(self, field: str, value: Any, reason: str) -> None:
        self.field = field
        self.value = value
        self.reason = reason
        super().__init__(f"{field}: {reason} (got {show(value)})")
