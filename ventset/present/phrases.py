"""Sentences written once with named numbers, shown in the reader's units.

A template names its numbers by their unit suffix (``{pao2_mmhg}``, ``{vt_ml}``, ``{rate_per_min}``), so
the same caution reads "58 mmHg" or "7.73 kPa" without rewriting text. Words (part or species names,
limit descriptions) fill ``{name}`` places from ``texts`` as they are, never as markup.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass

from ventset.present.quantities import MMHG, Units, show_named

_PLACE = re.compile(r"\{([A-Za-z_][A-Za-z0-9_]*)\}")


def render(template: str, values: Iterable[tuple[str, float]] = (), texts: Iterable[tuple[str, str]] = (),
           units: Units = MMHG) -> str:
    """Fill ``{name}`` places: numbers from ``values`` shown with their unit, words from ``texts``.

    A place with no value is left as written, so a stored plain sentence renders as itself.
    """
    nums: Mapping[str, float] = dict(values)
    words: Mapping[str, str] = dict(texts)

    def fill(m: re.Match[str]) -> str:
        key = m.group(1)
        if key in words:
            return words[key]
        if key in nums:
            return show_named(key, nums[key], units)
        return m.group(0)

    return _PLACE.sub(fill, template)


@dataclass(frozen=True)
class Phrase:
    """A sentence with its numbers and words kept apart until it is shown."""

    template: str
    values: tuple[tuple[str, float], ...] = ()
    texts: tuple[tuple[str, str], ...] = ()

    def text(self, units: Units = MMHG) -> str:
        return render(self.template, self.values, self.texts, units)

    def __str__(self) -> str:
        return self.text()


def phrase(template: str, texts: Mapping[str, str] | None = None, **values: float) -> Phrase:
    """Build a Phrase: ``phrase("PaCO2 {paco2_mmhg}", paco2_mmhg=52.1)``."""
    return Phrase(template, tuple((k, float(v)) for k, v in values.items()), tuple((texts or {}).items()))
