"""A part from typed text: ``NAME=VOLUME``, a key of the shipped catalogue, or a clinic part by name.

Kept apart from the clinic's parts library (ventset.partslib, which re-exports it) so that the demo patient and
the command line read catalogue parts without loading the library's files, models and merge. No Qt here.
"""

from __future__ import annotations

from collections.abc import Callable

from ventset.errors import InputError, visible
from ventset.model import ApparatusPart
from ventset.textpolicy import check_text


def part_from_text(item: str, library, clinic: Callable[[str], ApparatusPart | None] | None = None) \
        -> ApparatusPart:
    """A part from typed text: 'NAME=VOLUME' ('hme=12 mL'), a catalogue key, or (with ``clinic``, a lookup of
    the clinic's own parts by name) a clinic part. Raises InputError with the key 'apparatus'."""
    name, _, vol = item.partition("=")
    name = name.strip()
    if not name:
        raise InputError("apparatus", item, "needs NAME=VOLUME or a catalogue key")
    check_text("part-name", name, label="Apparatus")
    if vol.strip():
        return ApparatusPart(name, part_volume_ml(vol, f"Apparatus '{visible(name, 30)}'"))
    if name in library.parts:
        part = library.parts[name]
        return ApparatusPart(part.label, part.volume_ml.value, part.volume_ml.source)
    found = clinic(name) if clinic is not None else None
    if found is not None:
        return found
    raise InputError("apparatus", item, "is not a catalogue or clinic part; give a volume, e.g. 'hme=12 mL' "
                                        "(see 'ventset parts', 'ventset clinic-parts list')")


def part_volume_ml(text: str, label: str) -> float:
    """The volume (mL, 0 or more) typed for a part ('12', '12 mL', '0.5 L'); raises InputError with the key
    'apparatus', named ``label``."""
    from ventset.units import parse_quantity

    try:
        volume = parse_quantity(text, "mL", "apparatus")
    except InputError as err:
        raise err.named(label) from None
    if volume < 0:
        raise InputError("apparatus", text, "volume must be 0 mL or more", label=label)
    return volume
