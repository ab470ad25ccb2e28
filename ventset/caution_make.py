"""Building a Caution: its sentence template with the numbers and words kept apart (rendered by ventset.present)."""

from __future__ import annotations

from ventset.model import Caution


def caution(severity: str, code: str, template: str, texts: dict[str, str] | None = None, /,
            **values: float) -> Caution:
    """A Caution with its numbers (named by unit suffix) and words kept apart from the sentence.

    The first four are positional only, so a number's name can never be taken for one of them."""
    return Caution(severity, code, template, tuple((k, float(v)) for k, v in values.items()),
                   tuple((texts or {}).items()))
