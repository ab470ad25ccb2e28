"""One text policy for every name and free-text field: the same limits at entry, in every writer and in the loader.

Each text field is declared once (:data:`TEXT_FIELDS`) with its label and its length limit; counts of repeated
entries (parts of a circuit, parts of a preset) are declared here too. :func:`check_text` is called wherever such
text comes in — the command line, the window, the clinic-parts import, and the loaders of case, autosave and
clinic-parts files — and the writers refuse what the loader would refuse, so whatever is saved reopens.

The rule for characters (one rule, everywhere): text is **refused**, never silently changed, when it holds a line
break (except in the multi-line case note), any other control character (C0/C1, DEL, terminal escapes), a
direction control that reorders what follows (U+202A–U+202E, U+2066–U+2069, U+200E/F, U+061C: "4.2 kg" could read
"gk 2.4"), a line or paragraph separator (U+2028/9), or bytes that are not valid text. The message names the field
and shows the offending character as an escape. Markup characters such as ``<`` are allowed: every place that shows
user text shows it as plain text.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from ventset.errors import BIDI_CONTROLS, LINE_SEPARATORS, InputError, register_labels

MAX_PARTS = 100  # apparatus parts in one circuit (case files have always held at most 100)
MAX_PRESET_PARTS = 50  # parts in one clinic circuit preset
MAX_CLINIC_ENTRIES = 1000  # parts, and presets, in the clinic library (its file is at most 2 MB)


@dataclass(frozen=True)
class TextSpec:
    """A text field: key, label, the most characters it may hold, and whether line breaks are allowed."""

    key: str
    label: str
    max_chars: int
    multiline: bool = False


TEXT_FIELDS: dict[str, TextSpec] = {t.key: t for t in (
    TextSpec("name", "Patient name", 500),
    TextSpec("custom-species", "Custom species", 500),
    TextSpec("species-text", "Species", 500),
    TextSpec("part-name", "Apparatus part name", 500),
    TextSpec("part-source", "Apparatus part source", 500),
    TextSpec("choice", "Choice", 500),  # mode, circuit type, strategy: checked against their lists later
    TextSpec("clinic", "Clinic", 80),
    TextSpec("clinic-part-name", "Part name", 80),
    TextSpec("preset-name", "Preset name", 80),
    TextSpec("machine-name", "Machine name", 80),
    TextSpec("part-note", "Note", 500),
    TextSpec("measured-by", "Measured by", 80),
    TextSpec("case-note", "Case note", 20_000, multiline=True),
    TextSpec("record-note", "Record note", 500),
)}
register_labels({k: t.label for k, t in TEXT_FIELDS.items() if k not in ("species-text", "choice")})


def _refused(keep: str) -> re.Pattern[str]:
    """One character class of what the policy refuses: C0 and C1 controls (U+0000-001F, U+007F-009F), surrogates
    (text that was not valid UTF-8), direction controls and line separators; ``keep`` is let through."""
    chars = sorted({*map(chr, [*range(0x20), *range(0x7F, 0xA0)]), *BIDI_CONTROLS, *LINE_SEPARATORS} - set(keep))
    return re.compile("[" + "".join(re.escape(c) for c in chars) + "\ud800-\udfff]")


_REFUSED = {False: _refused(""), True: _refused("\n\t")}


def bad_character(text: str, multiline: bool = False) -> str | None:
    """The first character of ``text`` the policy refuses, or None (``multiline``: line breaks and tabs allowed)."""
    m = _REFUSED[multiline].search(text)
    return m.group() if m else None


def _why(ch: str) -> str:
    code = ord(ch)
    if ch in "\n\r\x0b\x0c\x85" or ch in LINE_SEPARATORS:
        return f"holds a line break (U+{code:04X}); keep it on one line"
    if ch in BIDI_CONTROLS:
        return f"holds an invisible direction control (U+{code:04X}) that can reverse how the text and numbers " \
               "after it read; remove it"
    if 0xD800 <= code <= 0xDFFF:
        return "holds bytes that are not valid text (not UTF-8); retype it"
    return f"holds a control character (U+{code:04X}); remove it"


def check_text(key: str, value: object, *, label: str | None = None) -> str:
    """``value`` if it is text that field ``key`` may hold; else InputError naming the field (see module doc)."""
    spec = TEXT_FIELDS[key]
    label = label or spec.label
    if not isinstance(value, str):
        raise InputError(key, type(value).__name__, "must be text", label=label)
    if len(value) > spec.max_chars:
        raise InputError(key, value, f"is longer than {spec.max_chars:,} characters ({len(value):,})", label=label)
    ch = bad_character(value, spec.multiline)
    if ch is not None:
        raise InputError(key, value, _why(ch), label=label)
    return value


def check_count(key: str, count: int, limit: int, what: str = "parts", *, label: str | None = None) -> None:
    """Refuse more than ``limit`` repeated entries (e.g. 101 apparatus parts) with an InputError."""
    if count > limit:
        raise InputError(key, f"{count} {what}", f"at most {limit} {what}", label=label)
