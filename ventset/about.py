"""What the About box says: version, purpose, licence, the data's versions and where its numbers come from.

Qt-free, so it is tested without a window. The counts walk the loaded library: every number that carries a
source (``Sourced``, ``Span``) is counted once, by the kind of source the house rules allow: a citation,
"common practice", or "from memory".
"""

from __future__ import annotations

import dataclasses
from collections import Counter
from collections.abc import Iterator

from ventset import __version__
from ventset.library import Library
from ventset.model import STANDING_NOTICE
from ventset.schema import Sourced, Span

PURPOSE = ("ventset drafts starting mechanical-ventilation settings (tidal volume, rate, inspiratory time and "
           "flow, PEEP, pressure limit, oxygen and fresh gas) for animals under general anaesthesia, from the "
           "species, body mass and metabolic rate and from the real circuit's dead space, and shows every "
           "assumption with its source.")
LICENCE = "MIT licence"


def _sources(obj: object, seen: set[int]) -> Iterator[str]:
    if id(obj) in seen:
        return
    seen.add(id(obj))
    if isinstance(obj, Sourced | Span):
        yield obj.source
    elif isinstance(obj, dict):
        for v in obj.values():
            yield from _sources(v, seen)
    elif isinstance(obj, list | tuple):
        for v in obj:
            yield from _sources(v, seen)
    elif dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        for f in dataclasses.fields(obj):
            yield from _sources(getattr(obj, f.name), seen)


def source_kind(source: str) -> str:
    """'common practice', 'from memory' or 'published' (a citation) for a source text."""
    s = source.lower()
    if "from memory" in s:
        return "from memory"
    if "common practice" in s:
        return "common practice"
    return "published"


def source_counts(library: Library) -> Counter:
    """How many sourced numbers of the library rest on each kind of source."""
    return Counter(source_kind(s) for s in _sources(library, set()))


def about_lines(library: Library) -> list[str]:
    """The About box, one paragraph per line (plain text)."""
    counts = source_counts(library)
    total = sum(counts.values())
    return [
        f"ventset {__version__} · {LICENCE}",
        PURPOSE,
        STANDING_NOTICE,
        f"Data: species library version {library.species_version or 'unversioned'}, {len(library.species)} species "
        f"in {len(library.groups)} metabolic groups, {len(library.parts)} catalogue parts, "
        f"{len(library.circuits)} breathing systems. {total} sourced numbers: {counts['published']} from published "
        f"work (authors and year beside each), {counts['common practice']} common practice, "
        f"{counts['from memory']} from memory. Every source is shown in the Assumptions tab and on the printed plan.",
    ]
