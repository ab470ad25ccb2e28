"""Project error hierarchy: every user-facing failure names what went wrong, in one line.

Messages are made safe here, in one place: line breaks, terminal escape sequences, direction controls and
bytes that are not text are shown as visible escapes (``\\n``, ``\\x1b``, ``\\u202e``), never echoed raw, and
echoed values are cut with an ellipsis. Every VentsetError's ``str()`` goes through :func:`one_line`.
"""

from __future__ import annotations

# Direction controls that reorder what follows them (U+202A–U+202E, U+2066–U+2069, U+200E/F, U+061C):
# shown as escapes in messages and refused in names (ventset.textpolicy).
BIDI_CONTROLS = frozenset("\u202a\u202b\u202c\u202d\u202e\u2066\u2067\u2068\u2069\u200e\u200f\u061c")
LINE_SEPARATORS = frozenset("\u2028\u2029")
VALUE_LIMIT = 60
MESSAGE_LIMIT = 500
_NAMED = {"\n": "\\n", "\r": "\\r", "\t": "\\t"}

# Display labels of input keys (ventset.fields and ventset.textpolicy register theirs when imported).
FIELD_LABELS: dict[str, str] = {}


def register_labels(labels: dict[str, str]) -> None:
    """Add key → display label pairs used when an InputError is raised with a bare key."""
    FIELD_LABELS.update(labels)


def escaped(ch: str) -> str:
    """``ch`` itself if it is harmless on one line, else a visible escape (``\\n``, ``\\x1b``, ``\\u202e``)."""
    code = ord(ch)
    if ch in _NAMED:
        return _NAMED[ch]
    if code < 0x20 or 0x7F <= code < 0xA0:
        return f"\\x{code:02x}"
    if ch in BIDI_CONTROLS or ch in LINE_SEPARATORS or 0xD800 <= code <= 0xDFFF:
        return f"\\u{code:04x}"
    return ch


def visible(value: object, limit: int = VALUE_LIMIT) -> str:
    """``value`` as one safe line of at most ``limit`` characters (escapes as :func:`escaped`, cut with …)."""
    text = value if isinstance(value, str) else str(value)
    out: list[str] = []
    size = 0
    for ch in text:
        piece = escaped(ch)
        out.append(piece)
        size += len(piece)
        if size > limit:
            break
    joined = "".join(out)
    return joined if len(joined) <= limit else joined[: max(1, limit - 1)] + "…"


def visible_path(path: object, limit: int = 120) -> str:
    """A file path for a message: safe as :func:`visible`, a long one cut in the middle so its name shows."""
    text = visible(path, 100_000)
    if len(text) <= limit:
        return text
    head = limit // 3
    return text[:head] + "…" + text[-(limit - head - 1):]


def one_line(message: str, limit: int = MESSAGE_LIMIT) -> str:
    """A whole message made safe as :func:`visible`, at most ``limit`` characters."""
    return visible(message, limit)


class VentsetError(Exception):
    """Base class for errors ventset reports to the user in one line (``str()`` is always safe to print)."""

    def message(self) -> str:
        """The message before it is made safe; subclasses build theirs here."""
        return Exception.__str__(self)

    def __str__(self) -> str:
        return one_line(self.message())


class InputError(ValueError, VentsetError):
    """A user input is invalid.

    ``key`` is the input's key (a ventset.fields FieldSpec key such as "mass" or "tube-id", a text field key
    such as "name", or a plain name such as "species" or "case"); ``label`` is what the user reads ("Body
    mass"), looked up from the key unless given. ``field`` is the label too (older code reads it). ``field``
    may be passed as a FieldSpec (anything with ``key`` and ``label``).
    """

    def __init__(self, field: object, value: object, reason: str, unit: str = "", *,
                 label: str | None = None) -> None:
        key = str(getattr(field, "key", field))
        self.key = key
        self.label = label or getattr(field, "label", None) or FIELD_LABELS.get(key) or key
        self.field = self.label
        self.value = value
        self.reason = reason
        self.unit = unit
        super().__init__(self.message())

    def shown_value(self) -> str:
        """The echoed value, safe and short ('' when there is none)."""
        if self.value is None or self.value == "":
            return ""
        return visible(self.value)

    def detail(self) -> str:
        """The message without the field's name: 'value — reason'."""
        shown = self.shown_value()
        return f"{shown} — {self.reason}" if shown else self.reason

    def message(self) -> str:
        shown = self.shown_value()
        return f"{self.label}:{' ' + shown if shown else ''} — {self.reason}"

    def named(self, name: str) -> InputError:
        """The same error shown under ``name`` (e.g. the command-line option '--mass (Body mass)')."""
        return InputError(self.key, self.value, self.reason, self.unit, label=name)


class DataError(VentsetError):
    """A data file in resources/ (or a user data file) is malformed."""
