"""Pieces shared by the data-file declarations (``ventset/datafiles.py`` and its per-file modules).

``limits(key)`` reuses a user input's hard limits as a range, ``same_as(key)`` says so in the help,
``below(low, high)`` is the ordering check between two keys of one table, and ``note_list()`` declares the
standing notes a species or an aquatic group may carry (``unique_note_codes`` keeps their codes apart).
"""

from __future__ import annotations

from typing import Any

from ventset.fields import FIELDS
from ventset.schema import UPPER_SNAKE, Check, Choice, Source, TableList, Text, Where

NOTE_SEVERITIES = ("info", "caution")  # "danger" is kept for the plan's own numbers


def limits(key: str) -> dict[str, Any]:
    """The hard limits of the user input ``key`` in ventset/fields.py, as Number/SourcedNumber arguments."""
    spec = FIELDS[key]
    return {"lo": spec.lo, "hi": spec.hi, "lo_open": spec.lo_open}


def same_as(key: str) -> str:
    """Help text saying a range is the hard limits of the user input ``key``."""
    return f" Within the hard limits of the '{FIELDS[key].label}' input."


def below(low: str, high: str, strict: bool = True) -> Check:
    """A check that ``low`` < ``high`` (or <=) in the same table; errors name ``low``."""
    def check(v: dict[str, Any], at: Where) -> None:
        a, b = v[low], v[high]
        a, b = getattr(a, "value", a), getattr(b, "value", b)
        if (a >= b) if strict else (a > b):
            raise at.at(low).fail(f"{a:g} must be {'below' if strict else 'at most'} {high} {b:g}")
    check.__doc__ = f"{low} {'<' if strict else '<='} {high}"
    return check


def note_list(help: str) -> TableList:
    """``notes = [ { severity, code, text, source }, ... ]``: optional standing facts, shown with every plan."""
    return TableList("notes", required=False, default=(), help=help, fields=(
        Choice("severity", choices=NOTE_SEVERITIES, help="never danger: that is kept for the plan's own numbers"),
        Text("code", pattern=UPPER_SNAKE, help="stable code; never rename one"),
        Text("text", help="plain sentences, shown as they are (never as markup)"),
        Source(),
    ))


def unique_note_codes(v: dict[str, Any], at: Where) -> None:
    """note codes are unique within an entry"""
    seen: set[str] = set()
    for i, n in enumerate(v["notes"]):
        if n["code"] in seen:
            raise at.enter(f"{at.entry} notes #{i + 1}").at("code").fail(f"repeats {n['code']!r}")
        seen.add(n["code"])
