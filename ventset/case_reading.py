"""Reading a case file's current layout (schema 2) field by field: a stored dict becomes a ``Case`` or a refusal.

Every field is checked for its kind, its length and the text policy before the request is rebuilt through the
one request builder (``ventset.fields.request_from_inputs``); a refusal is ``BadField`` naming the field.
Older layouts are brought to this one first (``ventset.case_migration``). No Qt here.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import MISSING, fields
from datetime import datetime

from ventset.case_model import (
    CASE_KINDS,
    KIND_IRRIGATION,
    KIND_VENTILATION,
    MAX_EARLIER_PLANS,
    MAX_TEXT,
    SCHEMA_VERSION,
    Case,
)
from ventset.errors import InputError
from ventset.fields import FIELDS, SITUATIONS_KEY, TEXT_INPUTS, request_from_inputs
from ventset.model import ApparatusPart, Circuit, Patient, Request, Strategy, Targets
from ventset.situations import MAX_SITUATIONS
from ventset.textpolicy import MAX_PARTS, bad_character, check_text


class BadField(Exception):
    """A stored field that cannot be read; the message is \"field '<where>' <reason>\"."""

    def __init__(self, where: str, reason: str) -> None:
        super().__init__(f"field '{where}' {reason}")


def type_name(value: object) -> str:
    if value is None:
        return "null"
    return {bool: "true/false", int: "a number", float: "a number", str: "text", list: "a list",
            dict: "an object"}.get(type(value), type(value).__name__)


def checked_text(value: object, where: str, limit: int = MAX_TEXT) -> str:
    if not isinstance(value, str):
        raise BadField(where, f"must be text (got {type_name(value)})")
    if len(value) > limit:
        raise BadField(where, f"is {len(value)} characters long; at most {limit}")
    bad = bad_character(value)
    if bad is not None:
        raise BadField(where, f"holds a control character or line break (U+{ord(bad):04X})")
    return value


def checked_number(value: object, where: str) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise BadField(where, f"must be a number (got {type_name(value)})")
    try:
        number = float(value)
    except OverflowError:
        raise BadField(where, "is too large a number") from None
    if not math.isfinite(number):
        raise BadField(where, "must be a finite number")
    return number


# The text rule (ventset.textpolicy) of each text field of a stored request, by (record, field).
_TEXT_RULE = {("Patient", "name"): "name", ("Patient", "custom_species"): "custom-species",
              ("Patient", "species"): "species-text", ("ApparatusPart", "name"): "part-name",
              ("ApparatusPart", "source"): "part-source", ("IrrigationRequest", "name"): "name",
              ("IrrigationRequest", "species"): "species-text"}


def policy_text(rule: str) -> Callable[[object, str], str]:
    def check(value: object, where: str) -> str:
        if not isinstance(value, str):
            raise BadField(where, f"must be text (got {type_name(value)})")
        try:
            return check_text(rule, value)
        except InputError as err:
            raise BadField(where, err.reason) from None
    return check


def field_checker(annotation: str, rule: str = "choice") -> Callable[[object, str], object]:
    """A checker for a model field from its annotation text (model.py uses postponed annotations)."""
    ann = annotation.replace(" ", "")
    nullable = ann.endswith("|None")
    base = ann[: -len("|None")] if nullable else ann
    if base == "float":
        check: Callable[[object, str], object] = checked_number
    elif base == "str":
        check = policy_text(rule)
    elif base == "tuple[ApparatusPart,...]":
        check = _parts
    elif base == "tuple[str,...]":
        check = _text_list(rule)
    else:
        raise TypeError(f"case files do not know how to check a field of type {annotation!r}")
    if nullable:
        return lambda v, w: None if v is None else check(v, w)
    return check


def checked_record(cls: type, data: object, where: str) -> dict:
    """The fields of a stored record of dataclass ``cls``, each checked by its annotation (unknown keys refused, a
    missing field without a default refused, text by the policy rule in ``_TEXT_RULE``); raises BadField."""
    if not isinstance(data, dict):
        raise BadField(where, f"must be an object (got {type_name(data)})")
    known = {f.name: f for f in fields(cls)}
    unknown = sorted(set(data) - set(known))
    if unknown:
        raise BadField(f"{where}.{unknown[0]}", "is not a field this version knows")
    out = {}
    for name, f in known.items():
        if name not in data:
            if f.default is MISSING and f.default_factory is MISSING:
                raise BadField(f"{where}.{name}", "is missing")
            continue
        rule = _TEXT_RULE.get((cls.__name__, name), "choice")
        out[name] = field_checker(str(f.type), rule)(data[name], f"{where}.{name}")
    return out


def _text_list(rule: str) -> Callable[[object, str], list[str]]:
    """A stored list of short texts (the situations), each by the text policy, at most MAX_SITUATIONS."""
    one = policy_text(rule)

    def check(value: object, where: str) -> list[str]:
        if not isinstance(value, list):
            raise BadField(where, f"must be a list (got {type_name(value)})")
        if len(value) > MAX_SITUATIONS:
            raise BadField(where, f"holds more than {MAX_SITUATIONS} entries")
        return [one(v, f"{where}[{i}]") for i, v in enumerate(value)]
    return check


def _parts(value: object, where: str) -> list[dict]:
    if not isinstance(value, list):
        raise BadField(where, f"must be a list (got {type_name(value)})")
    if len(value) > MAX_PARTS:
        raise BadField(where, f"holds more than {MAX_PARTS} parts")
    return [checked_record(ApparatusPart, p, f"{where}[{i}]") for i, p in enumerate(value)]


def request_from_case_dict(data: object, where: str = "request") -> Request:
    """Check a stored request field by field and rebuild it through the one request builder (raises BadField)."""
    if not isinstance(data, dict):
        raise BadField(where, f"must be an object (got {type_name(data)})")
    sections = {"patient": Patient, "circuit": Circuit, "targets": Targets, "strategy": Strategy}
    unknown = sorted(set(data) - set(sections))
    if unknown:
        raise BadField(f"{where}.{unknown[0]}", "is not a field this version knows")
    if "patient" not in data:
        raise BadField(f"{where}.patient", "is missing")
    clean = {key: checked_record(cls, data[key], f"{where}.{key}") for key, cls in sections.items() if key in data}
    values: dict[str, object] = {}
    for key, path in [*((k, f.path) for k, f in FIELDS.items()), *TEXT_INPUTS.items()]:
        section, attr = path.split(".", 1)
        values[key] = clean.get(section, {}).get(attr)
    parts = tuple(ApparatusPart(**p) for p in clean.get("circuit", {}).get("parts", ()))
    values[SITUATIONS_KEY] = clean.get("patient", {}).get("situations")
    request, errors = request_from_inputs(values, parts, check_ranges=False)
    if request is None:
        raise BadField(where, errors[0].message())
    return request


def checked_timestamp(value: object, where: str) -> str:
    text = checked_text(value, where, 64)
    if text:
        try:
            datetime.fromisoformat(text)
        except ValueError:
            raise BadField(where, f"must be an ISO 8601 date and time (got {text[:30]!r})") from None
    return text


def _checked_timeline(timeline: list | dict | None) -> list | dict | None:
    """The stored record as it is, after checking each entry's note by the text policy (the rest is read by
    ventset.titrate when the case is opened, and kept unchanged if it cannot be)."""
    entries = timeline.get("entries") if isinstance(timeline, dict) else timeline
    if isinstance(entries, list):
        for i, entry in enumerate(entries):
            m = entry.get("measurement") if isinstance(entry, dict) else None
            if isinstance(m, dict) and "note" in m and m["note"] is not None:
                policy_text("record-note")(m["note"], f"timeline.entries[{i}].measurement.note")
    return timeline


_KEYS = {"format", "schema_version", "kind", "ventset_version", "species_version", "created_at", "saved_at", "note",
         "request", "plan", "plan_error", "timeline", "earlier_plans"}


def checked_kind(data: dict, expected: str) -> str:
    """The case's ``kind``, refused unless it is ``expected`` (the message says where the other kind opens)."""
    if "kind" not in data:
        raise BadField("kind", "is missing")
    kind = data["kind"]
    if not isinstance(kind, str) or kind not in CASE_KINDS:
        got = repr(kind[:30]) if isinstance(kind, str) else type_name(kind)
        raise BadField("kind", f"must be one of {', '.join(CASE_KINDS)} (got {got})")
    if kind != expected:
        if kind == KIND_IRRIGATION:
            raise BadField("kind", "is 'irrigation': this case holds a fish gill-irrigation plan; open it from "
                                   "the window's Fish irrigation tab or with 'ventset show'")
        raise BadField("kind", "is 'ventilation': this case holds a ventilation plan; open it from the window's "
                               "Case menu or with 'ventset show'")
    return kind


def checked_envelope(data: dict, kind: str, keys: frozenset[str] | set[str], unknown_why: str) -> tuple:
    """The parts every case kind shares, checked: the kind first (a case of the other kind is named as such), no
    unknown key, a request, the stored plan (object or null) and the earlier plans; returns (plan, earlier)."""
    checked_kind(data, kind)
    unknown = sorted(set(data) - set(keys))
    if unknown:
        raise BadField(unknown[0], unknown_why)
    if "request" not in data:
        raise BadField("request", "is missing")
    plan = data.get("plan")
    if plan is not None and not isinstance(plan, dict):
        raise BadField("plan", f"must be an object or null (got {type_name(plan)})")
    earlier = data.get("earlier_plans", [])
    if not isinstance(earlier, list) or not all(isinstance(e, dict) for e in earlier):
        raise BadField("earlier_plans", "must be a list of objects")
    return plan, earlier


def case_from_current(data: dict) -> Case:
    """A ventilation case from a dict of the current schema (raises BadField naming the field)."""
    plan, earlier = checked_envelope(data, KIND_VENTILATION, _KEYS, f"is not part of case schema {SCHEMA_VERSION}")
    timeline = data.get("timeline")
    if timeline is not None and not isinstance(timeline, list | dict):
        raise BadField("timeline", f"must be a list, an object or null (got {type_name(timeline)})")
    return Case(
        request=request_from_case_dict(data["request"]),
        plan=plan,
        plan_error=checked_text(data.get("plan_error", ""), "plan_error", 2000),
        created_at=checked_timestamp(data.get("created_at", ""), "created_at"),
        saved_at=checked_timestamp(data.get("saved_at", ""), "saved_at"),
        ventset_version=checked_text(data.get("ventset_version", ""), "ventset_version", 40),
        species_version=checked_text(data.get("species_version", ""), "species_version", 40),
        note=policy_text("case-note")(data.get("note", ""), "note"),
        timeline=_checked_timeline(timeline),
        earlier_plans=tuple(earlier[-MAX_EARLIER_PLANS:]),
    )
