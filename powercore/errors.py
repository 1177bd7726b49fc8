"""Errors raised by powercore.

Both are ``ValueError`` subclasses that carry their parts, so that the app and
the CLI can show the message at the field that caused it.
"""
from __future__ import annotations

__all__ = ["InvalidParameter", "NoSolution", "RecordError"]


class InvalidParameter(ValueError):
    """A scenario value is outside its domain or of the wrong type."""

    def __init__(self, field: str, constraint: str, value: object) -> None:
        self.field = field
        self.constraint = constraint
        self.value = value
        super().__init__(f"{field} {constraint}, got {value!r}")


class NoSolution(ValueError):
    """The quantity asked for does not exist under the scenario (and why)."""

    def __init__(self, field: str, reason: str, value: object = None) -> None:
        self.field = field
        self.reason = reason
        self.value = value
        tail = "" if value is None else f" (got {value!r})"
        super().__init__(f"no {field} exists: {reason}{tail}")


class RecordError(ValueError):
    """A JSON scenario or record could not be read; ``field`` names the part at fault."""

    def __init__(self, field: str, problem: str) -> None:
        self.field = field
        self.problem = problem
        super().__init__(f"{field}: {problem}")
