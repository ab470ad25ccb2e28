"""Project error hierarchy: every user-facing failure names what went wrong."""

from __future__ import annotations


class VentsetError(Exception):
    """Base class for errors ventset reports to the user in one line."""


class InputError(ValueError, VentsetError):
    """A user input is invalid; `field` names it so the GUI can mark the widget."""

    def __init__(self, field: str, value: object, reason: str, unit: str = "") -> None:
        self.field = field
        self.value = value
        self.reason = reason
        self.unit = unit
        super().__init__(str(self))

    def __str__(self) -> str:
        shown = "" if self.value is None or self.value == "" else f" {self.value!s}"
        shown = shown if len(shown) <= 60 else shown[:57] + "..."
        return f"{self.field}:{shown} — {self.reason}"


class DataError(VentsetError):
    """A data file in resources/ (or a user data file) is malformed."""
