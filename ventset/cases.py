"""Case files: one patient's request, the plan it produced, and what was measured (docs/case-format.md).

A case file is plain UTF-8 JSON with ``"format": "ventset-case"`` and a ``schema_version``.
Files from older layouts are migrated in memory step by step (:data:`MIGRATIONS`); a newer or
unknown layout is refused with a clear message and the file is left as it is. On open the
stored request is planned again with the current library and any difference from the stored
plan is reported, never silently replaced. No Qt here.
"""

from __future__ import annotations

import math
import os
from collections.abc import Callable
from dataclasses import MISSING, dataclass, field, fields, replace
from datetime import UTC, datetime
from pathlib import Path
from typing import cast

from ventset import __version__, storage
from ventset.errors import InputError, VentsetError, visible
from ventset.fields import FIELDS, TEXT_INPUTS, request_from_inputs
from ventset.model import ApparatusPart, Circuit, Patient, Request, Strategy, Targets, request_to_dict
from ventset.textpolicy import MAX_PARTS, TEXT_FIELDS, bad_character, check_text

FORMAT = "ventset-case"
SCHEMA_VERSION = 1
SUFFIX = ".ventcase"
MAX_CASE_BYTES = 10_000_000
MAX_TEXT = TEXT_FIELDS["case-note"].max_chars
MAX_EARLIER_PLANS = 20
RECENT_FILE = "recent.json"
RECENT_MAX = 10


class CaseError(storage.StorageError):
    """A case file cannot be opened or saved; the message names the file and the reason."""

    verb = "open"


class CaseSaveError(CaseError):
    verb = "save"


@dataclass(frozen=True)
class Case:
    """Everything a case file holds. ``plan`` is ``plan_to_dict`` output (None if the request could not be planned).

    ``timeline`` is the titration record (ventset.titrate's ``to_dict`` output) or None.
    ``earlier_plans`` keeps stored plans that a newer ventset or species data replaced.
    """

    request: Request
    plan: dict | None = None
    plan_error: str = ""
    created_at: str = ""
    saved_at: str = ""
    ventset_version: str = __version__
    species_version: str = ""
    note: str = ""
    timeline: list | dict | None = None
    earlier_plans: tuple[dict, ...] = field(default=())


@dataclass(frozen=True)
class LoadedCase:
    """A case read from disk; ``migrated_from`` is the old schema version if it was migrated."""

    case: Case
    path: Path
    migrated_from: int | None = None


@dataclass(frozen=True)
class OpenedCase:
    """A loaded case planned again with the current library.

    ``plan`` is the current Plan (None if the stored request no longer plans, then ``plan_error``
    says why); ``differences`` lists what differs from the stored plan; ``messages`` is what the
    user should be told on opening (migration, changed data, differences).
    """

    case: Case
    path: Path
    plan: object | None
    plan_error: str
    differences: tuple[str, ...]
    messages: tuple[str, ...]
    migrated_from: int | None = None


def now_iso() -> str:
    """The current time as ISO 8601 UTC, to the second ('2024-05-01T09:30:00Z')."""
    return datetime.now(UTC).replace(microsecond=0).isoformat().replace("+00:00", "Z")


# --------------------------------------------------------------------------------------------
# building a case
# --------------------------------------------------------------------------------------------

def make_case(request: Request, plan=None, *, library=None, plan_error: str = "", previous: Case | None = None,
              timeline: object = None, note: str | None = None) -> Case:
    """A case for ``request`` and its ``plan`` (a Plan, or None with ``plan_error``).

    ``previous`` is the case as last opened or saved: its creation time, note and timeline carry
    over, and its plan is kept in ``earlier_plans`` when it differs from the new plan for a reason
    other than the user's edits (another ventset or species data version, or the same request).
    """
    from ventset.report import plan_to_dict

    species_version = library.species_version if library is not None else _species_version()
    plan_dict = plan_to_dict(plan) if plan is not None else None
    timeline = timeline_data(timeline)
    earlier: tuple[dict, ...] = ()
    created = now_iso()
    if previous is not None:
        created = previous.created_at or created
        note = previous.note if note is None else note
        timeline = previous.timeline if timeline is None else timeline
        earlier = previous.earlier_plans
        versions_changed = (previous.ventset_version, previous.species_version) != (__version__, species_version)
        not_by_edit = versions_changed or previous.request == request
        if previous.plan is not None and not_by_edit and compare_plan_dicts(previous.plan, plan_dict):
            kept = {"plan": previous.plan, "request": _jsonable(request_to_dict(previous.request)),
                    "ventset_version": previous.ventset_version, "species_version": previous.species_version,
                    "replaced_at": now_iso()}
            earlier = (*earlier, kept)[-MAX_EARLIER_PLANS:]
    return Case(request=request, plan=plan_dict, plan_error=plan_error if plan is None else "", created_at=created,
                saved_at="", ventset_version=__version__, species_version=species_version, note=note or "",
                timeline=timeline, earlier_plans=earlier)


def case_for_request(request: Request, library=None, previous: Case | None = None, timeline: object = None) -> Case:
    """Plan ``request`` and wrap it in a case; a request that cannot be planned is kept with the reason."""
    from ventset.library import load_library
    from ventset.planner import plan

    lib = library or load_library()
    try:
        result = plan(request, lib)
    except InputError as err:
        return make_case(request, None, library=lib, plan_error=str(err), previous=previous, timeline=timeline)
    except ArithmeticError as exc:  # a planner defect on extreme input must not lose the case
        return make_case(request, None, library=lib, plan_error=_internal(exc), previous=previous,
                         timeline=timeline)
    return make_case(request, result, library=lib, previous=previous, timeline=timeline)


def _internal(exc: BaseException) -> str:
    return (f"the plan could not be computed (internal error: {type(exc).__name__}: {exc}); "
            "please report this with the case file")


def timeline_data(timeline: object) -> list | dict | None:
    """The titration record as stored: a tuple of ventset.titrate.TimelineEntry becomes
    ``titrate.timeline_to_dict`` output; a dict or list (already stored form) is kept as it is."""
    if timeline is None or isinstance(timeline, dict | list):
        return timeline
    if hasattr(timeline, "to_dict"):
        return timeline.to_dict()
    if isinstance(timeline, tuple):
        from ventset.titrate import timeline_to_dict

        return timeline_to_dict(timeline)
    raise TypeError(f"cannot store a timeline of type {type(timeline).__name__}")


def case_timeline(case: Case) -> tuple:
    """The titration record of ``case`` as ventset.titrate.TimelineEntry objects (empty if none).

    Raises ventset.errors.DataError if the stored record cannot be read; the raw record stays in the
    case (and in the file on the next save) either way, so nothing is lost.
    """
    if case.timeline is None or case.timeline == []:
        return ()
    from ventset.titrate import timeline_from_dict

    return timeline_from_dict(cast(dict, case.timeline))  # a list is refused there, with the reason


def _species_version() -> str:
    from ventset.library import load_library

    return load_library().species_version


# --------------------------------------------------------------------------------------------
# dict <-> Case, with strict checking of every field
# --------------------------------------------------------------------------------------------

def case_to_dict(case: Case) -> dict:
    """The JSON layout of schema version 1 (docs/case-format.md)."""
    out: dict = {
        "format": FORMAT,
        "schema_version": SCHEMA_VERSION,
        "ventset_version": case.ventset_version,
        "species_version": case.species_version,
        "created_at": case.created_at,
        "saved_at": case.saved_at,
        "note": case.note,
        "request": _jsonable(request_to_dict(case.request)),
        "plan": case.plan,
    }
    if case.plan is None and case.plan_error:
        out["plan_error"] = case.plan_error
    if case.timeline is not None:
        out["timeline"] = case.timeline
    if case.earlier_plans:
        out["earlier_plans"] = list(case.earlier_plans)
    return out


def _jsonable(obj: object) -> object:
    if isinstance(obj, dict):
        return {k: _jsonable(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [_jsonable(v) for v in obj]
    return obj


class _Bad(Exception):
    def __init__(self, where: str, reason: str) -> None:
        super().__init__(f"field '{where}' {reason}")


def _type_name(value: object) -> str:
    if value is None:
        return "null"
    return {bool: "true/false", int: "a number", float: "a number", str: "text", list: "a list",
            dict: "an object"}.get(type(value), type(value).__name__)


def _text(value: object, where: str, limit: int = MAX_TEXT) -> str:
    if not isinstance(value, str):
        raise _Bad(where, f"must be text (got {_type_name(value)})")
    if len(value) > limit:
        raise _Bad(where, f"is {len(value)} characters long; at most {limit}")
    bad = bad_character(value)
    if bad is not None:
        raise _Bad(where, f"holds a control character or line break (U+{ord(bad):04X})")
    return value


def _number(value: object, where: str) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise _Bad(where, f"must be a number (got {_type_name(value)})")
    try:
        number = float(value)
    except OverflowError:
        raise _Bad(where, "is too large a number") from None
    if not math.isfinite(number):
        raise _Bad(where, "must be a finite number")
    return number


# The text rule (ventset.textpolicy) of each text field of a stored request, by (record, field).
_TEXT_RULE = {("Patient", "name"): "name", ("Patient", "custom_species"): "custom-species",
              ("Patient", "species"): "species-text", ("ApparatusPart", "name"): "part-name",
              ("ApparatusPart", "source"): "part-source"}


def _policy_text(rule: str) -> Callable[[object, str], str]:
    def check(value: object, where: str) -> str:
        if not isinstance(value, str):
            raise _Bad(where, f"must be text (got {_type_name(value)})")
        try:
            return check_text(rule, value)
        except InputError as err:
            raise _Bad(where, err.reason) from None
    return check


def _field_checker(annotation: str, rule: str = "choice") -> Callable[[object, str], object]:
    """A checker for a model field from its annotation text (model.py uses postponed annotations)."""
    ann = annotation.replace(" ", "")
    nullable = ann.endswith("|None")
    base = ann[: -len("|None")] if nullable else ann
    if base == "float":
        check: Callable[[object, str], object] = _number
    elif base == "str":
        check = _policy_text(rule)
    elif base == "tuple[ApparatusPart,...]":
        check = _parts
    else:
        raise TypeError(f"case files do not know how to check a field of type {annotation!r}")
    if nullable:
        return lambda v, w: None if v is None else check(v, w)
    return check


def _record(cls: type, data: object, where: str) -> dict:
    if not isinstance(data, dict):
        raise _Bad(where, f"must be an object (got {_type_name(data)})")
    known = {f.name: f for f in fields(cls)}
    unknown = sorted(set(data) - set(known))
    if unknown:
        raise _Bad(f"{where}.{unknown[0]}", "is not a field this version knows")
    out = {}
    for name, f in known.items():
        if name not in data:
            if f.default is MISSING and f.default_factory is MISSING:
                raise _Bad(f"{where}.{name}", "is missing")
            continue
        rule = _TEXT_RULE.get((cls.__name__, name), "choice")
        out[name] = _field_checker(str(f.type), rule)(data[name], f"{where}.{name}")
    return out


def _parts(value: object, where: str) -> list[dict]:
    if not isinstance(value, list):
        raise _Bad(where, f"must be a list (got {_type_name(value)})")
    if len(value) > MAX_PARTS:
        raise _Bad(where, f"holds more than {MAX_PARTS} parts")
    return [_record(ApparatusPart, p, f"{where}[{i}]") for i, p in enumerate(value)]


def request_from_case_dict(data: object, where: str = "request") -> Request:
    """Check a stored request field by field and rebuild it through the one request builder (raises _Bad)."""
    if not isinstance(data, dict):
        raise _Bad(where, f"must be an object (got {_type_name(data)})")
    sections = {"patient": Patient, "circuit": Circuit, "targets": Targets, "strategy": Strategy}
    unknown = sorted(set(data) - set(sections))
    if unknown:
        raise _Bad(f"{where}.{unknown[0]}", "is not a field this version knows")
    if "patient" not in data:
        raise _Bad(f"{where}.patient", "is missing")
    clean = {key: _record(cls, data[key], f"{where}.{key}") for key, cls in sections.items() if key in data}
    values: dict[str, object] = {}
    for key, path in [*((k, f.path) for k, f in FIELDS.items()), *TEXT_INPUTS.items()]:
        section, attr = path.split(".", 1)
        values[key] = clean.get(section, {}).get(attr)
    parts = tuple(ApparatusPart(**p) for p in clean.get("circuit", {}).get("parts", ()))
    request, errors = request_from_inputs(values, parts, check_ranges=False)
    if request is None:
        raise _Bad(where, errors[0].message())
    return request


def _timestamp(value: object, where: str) -> str:
    text = _text(value, where, 64)
    if text:
        try:
            datetime.fromisoformat(text)
        except ValueError:
            raise _Bad(where, f"must be an ISO 8601 date and time (got {text[:30]!r})") from None
    return text


def _checked_timeline(timeline: list | dict | None) -> list | dict | None:
    """The stored record as it is, after checking each entry's note by the text policy (the rest is read by
    ventset.titrate when the case is opened, and kept unchanged if it cannot be)."""
    entries = timeline.get("entries") if isinstance(timeline, dict) else timeline
    if isinstance(entries, list):
        for i, entry in enumerate(entries):
            m = entry.get("measurement") if isinstance(entry, dict) else None
            if isinstance(m, dict) and "note" in m and m["note"] is not None:
                _policy_text("record-note")(m["note"], f"timeline.entries[{i}].measurement.note")
    return timeline


_V1_KEYS = {"format", "schema_version", "ventset_version", "species_version", "created_at", "saved_at", "note",
            "request", "plan", "plan_error", "timeline", "earlier_plans"}


def _case_from_v1(data: dict) -> Case:
    unknown = sorted(set(data) - _V1_KEYS)
    if unknown:
        raise _Bad(unknown[0], f"is not part of case schema {SCHEMA_VERSION}")
    if "request" not in data:
        raise _Bad("request", "is missing")
    plan = data.get("plan")
    if plan is not None and not isinstance(plan, dict):
        raise _Bad("plan", f"must be an object or null (got {_type_name(plan)})")
    timeline = data.get("timeline")
    if timeline is not None and not isinstance(timeline, list | dict):
        raise _Bad("timeline", f"must be a list, an object or null (got {_type_name(timeline)})")
    earlier = data.get("earlier_plans", [])
    if not isinstance(earlier, list) or not all(isinstance(e, dict) for e in earlier):
        raise _Bad("earlier_plans", "must be a list of objects")
    return Case(
        request=request_from_case_dict(data["request"]),
        plan=plan,
        plan_error=_text(data.get("plan_error", ""), "plan_error", 2000),
        created_at=_timestamp(data.get("created_at", ""), "created_at"),
        saved_at=_timestamp(data.get("saved_at", ""), "saved_at"),
        ventset_version=_text(data.get("ventset_version", ""), "ventset_version", 40),
        species_version=_text(data.get("species_version", ""), "species_version", 40),
        note=_policy_text("case-note")(data.get("note", ""), "note"),
        timeline=_checked_timeline(timeline),
        earlier_plans=tuple(earlier[-MAX_EARLIER_PLANS:]),
    )


# --------------------------------------------------------------------------------------------
# migrations: MIGRATIONS[n] turns a schema-n dict into a schema-(n+1) dict
# --------------------------------------------------------------------------------------------

def _v0_to_v1(data: dict) -> dict:
    """Schema 0 (first development builds): request fields at the top level, apparatus as a
    {name: volume_ml} mapping, the save time as Unix seconds, no species data version.
    Schema 1 nests them under "request", lists parts with their source, and uses ISO 8601 times."""
    allowed = {"ventset", "saved", "patient", "circuit", "targets", "strategy", "plan"}
    unknown = sorted(set(data) - allowed)
    if unknown:
        raise _Bad(unknown[0], "is not part of case schema 0")
    circuit = data.get("circuit", {})
    if not isinstance(circuit, dict):
        raise _Bad("circuit", f"must be an object (got {_type_name(circuit)})")
    circuit = dict(circuit)
    apparatus = circuit.pop("apparatus", {})
    if not isinstance(apparatus, dict):
        raise _Bad("circuit.apparatus", "must map part names to volumes in mL")
    circuit["parts"] = [{"name": name, "volume_ml": vol, "source": "entered by the user"}
                        for name, vol in apparatus.items()]
    saved = data.get("saved")
    if saved is None:
        stamp = ""
    else:
        seconds = _number(saved, "saved")
        try:
            stamp = datetime.fromtimestamp(seconds, UTC).isoformat().replace("+00:00", "Z")
        except (OverflowError, OSError, ValueError):
            raise _Bad("saved", "is not a plausible time in seconds since 1970") from None
    request = {"patient": data.get("patient"), "circuit": circuit}
    for key in ("targets", "strategy"):
        if key in data:
            request[key] = data[key]
    return {"format": FORMAT, "schema_version": 1, "ventset_version": _text(data.get("ventset", ""), "ventset", 40),
            "species_version": "", "created_at": stamp, "saved_at": stamp, "note": "", "request": request,
            "plan": data.get("plan")}


MIGRATIONS: dict[int, Callable[[dict], dict]] = {0: _v0_to_v1}


def schema_version_of(data: object) -> int:
    """The schema version of a parsed case file (0 for the unversioned first layout); raises _Bad."""
    if not isinstance(data, dict):
        raise _Bad(".", f"must be a JSON object; this is {_type_name(data)}, not a ventset case file")
    if "schema_version" not in data:
        if "patient" in data and "ventset" in data:
            return 0
        raise _Bad("schema_version", "is missing: this is not a ventset case file")
    version = data["schema_version"]
    if isinstance(version, bool) or not isinstance(version, int):
        raise _Bad("schema_version", f"must be a whole number (got {_type_name(version)})")
    if data.get("format") != FORMAT:
        raise _Bad("format", f"must be \"{FORMAT}\": this is not a ventset case file")
    return version


def migrate(data: object) -> tuple[dict, int | None]:
    """Bring a parsed case dict to the current schema; returns (dict, old version or None)."""
    version = schema_version_of(data)
    if version > SCHEMA_VERSION:
        raise _Bad("schema_version", f"is {version}: the file was written by a newer ventset (this one, "
                                     f"{__version__}, reads case schema up to {SCHEMA_VERSION}); update ventset "
                                     "to open it")
    if version < 0 or version not in MIGRATIONS and version != SCHEMA_VERSION:
        raise _Bad("schema_version", f"is {version}, which no ventset has written")
    start = version
    while version < SCHEMA_VERSION:
        data = MIGRATIONS[version](cast(dict, data))
        version += 1
    return cast(dict, data), (start if start != SCHEMA_VERSION else None)


def case_from_dict(data: object) -> tuple[Case, int | None]:
    """Migrate and check a parsed case file; returns (case, migrated_from). Raises ValueError with the reason."""
    try:
        current, old = migrate(data)
        return _case_from_v1(current), old
    except _Bad as bad:
        raise ValueError(str(bad)) from None


# --------------------------------------------------------------------------------------------
# disk
# --------------------------------------------------------------------------------------------

_SHAPE_ERRORS = (TypeError, AttributeError, KeyError, OverflowError, RecursionError)


def load_case(path: os.PathLike | str) -> LoadedCase:
    """Read a case file; raises CaseError with one clear line. The file is never changed."""
    target = Path(path)
    data = storage.read_json(target, MAX_CASE_BYTES, error=CaseError)
    try:
        case, old = case_from_dict(data)
    except ValueError as exc:
        raise CaseError(target, str(exc)) from None
    except _SHAPE_ERRORS as exc:  # a last guard: any value of the wrong kind is a refusal, never a traceback
        raise CaseError(target, f"it holds a value of the wrong kind ({type(exc).__name__})") from None
    return LoadedCase(case, target, old)


def _exists(target: Path, error: type[storage.StorageError] = CaseSaveError) -> bool:
    try:
        return target.exists()
    except OSError as exc:
        raise error(target, storage.os_reason(exc)) from None


def _existing_version(target: Path) -> int | None:
    """Schema version of the case file at ``target``; None if there is none; raises CaseSaveError if foreign."""
    if not _exists(target):
        return None
    try:
        data = storage.read_json(target, MAX_CASE_BYTES, error=CaseError)
        return schema_version_of(data)
    except (CaseError, _Bad) as exc:
        reason = exc.reason if isinstance(exc, CaseError) else str(exc)
        raise CaseSaveError(target, f"a file is there that is not a readable ventset case ({reason}); "
                                    "choose another name, or replace it on purpose") from None


def check_reopens(case: Case) -> dict:
    """The JSON layout of ``case`` if the loader would open it again; else CaseSaveError-ready ValueError."""
    data = case_to_dict(case)
    case_from_dict(data)
    return data


def save_case(path: os.PathLike | str, case: Case, *, replace_any: bool = False) -> Case:
    """Write ``case`` atomically; returns it with ``saved_at`` set.

    An existing file at ``path`` is replaced only if it is a ventset case (or ``replace_any``);
    a case of an older schema is first copied to ``<name>.schema<N>.bak``; a newer one is refused.
    What the loader would refuse (a name over its limit, ...) is refused here, before anything is written.
    A symbolic link is saved through: its target gets the case, the link stays.
    """
    target = Path(path)
    saved = replace(case, saved_at=now_iso(), created_at=case.created_at or now_iso())
    try:
        data = check_reopens(saved)
    except ValueError as exc:
        raise CaseSaveError(target, f"the case would not open again ({exc}); nothing was written") from None
    try:
        if target.is_dir():
            raise CaseSaveError(target, "it is a folder, not a file")
    except OSError as exc:
        raise CaseSaveError(target, storage.os_reason(exc)) from None
    old = None
    try:
        old = _existing_version(target)
    except CaseSaveError:
        if not replace_any:
            raise
    if old is not None and old > SCHEMA_VERSION and not replace_any:
        raise CaseSaveError(target, f"it holds a case of schema {old} from a newer ventset; saving would lose what "
                                    "that version stored. Save under another name.")
    if old is not None and old < SCHEMA_VERSION:
        backup = target.with_name(f"{target.name}.schema{old}.bak")
        try:
            if not backup.exists():
                storage.atomic_write_bytes(backup, target.read_bytes())
        except OSError as exc:
            raise CaseSaveError(target, f"could not keep a copy of the older file first "
                                        f"({storage.os_reason(exc)})") from None
        except storage.StorageError as exc:
            raise CaseSaveError(target, f"could not keep a copy of the older file first ({exc.reason})") from None
    try:
        storage.atomic_write_json(target, data)
    except storage.StorageError as exc:
        raise CaseSaveError(target, exc.reason) from None
    return saved


def replan(case: Case, library=None) -> tuple[object | None, str, tuple[str, ...]]:
    """Plan the stored request with the current library; returns (plan or None, error, differences)."""
    from ventset.library import load_library
    from ventset.planner import plan as make_plan
    from ventset.report import plan_to_dict

    lib = library or load_library()
    try:
        result = make_plan(case.request, lib)
    except (InputError, ArithmeticError, ValueError) as err:
        reason = str(err) if isinstance(err, InputError) else _internal(err)
        lost: tuple[str, ...] = ("The stored inputs no longer give a plan: " + reason,) if case.plan else ()
        return None, reason, lost
    if case.plan is None:
        return result, "", ()
    try:
        diffs = tuple(compare_plan_dicts(case.plan, plan_to_dict(result)))
    except (*_SHAPE_ERRORS, ValueError):
        diffs = ("The stored plan is not in a form this version can compare.",)
    return result, "", diffs


def open_case(path: os.PathLike | str, library=None) -> OpenedCase:
    """Load a case, plan its request again and say what the user should know (see OpenedCase)."""
    from ventset.library import load_library

    lib = library or load_library()
    loaded = load_case(path)
    case = loaded.case
    result, error, diffs = replan(case, lib)
    messages = []
    if loaded.migrated_from is not None:
        messages.append(f"This case was saved in an older layout (schema {loaded.migrated_from}) and was updated "
                        f"to schema {SCHEMA_VERSION} on opening; the file itself is unchanged until you save "
                        f"(a copy of the old file is kept then).")
    if case.species_version and case.species_version != lib.species_version:
        messages.append(f"The species data changed since this case was saved (version {case.species_version} "
                        f"then, {lib.species_version} now).")
    if case.ventset_version and case.ventset_version != __version__:
        messages.append(f"The case was saved by ventset {case.ventset_version}; this is ventset {__version__}.")
    if diffs:
        messages.append("The plan computed now from the stored inputs differs from the stored plan:")
        messages.extend(f"  • {d}" for d in diffs)
        messages.append("The stored plan stays in the file until you save; saving keeps it under 'earlier plans'.")
    elif error:
        messages.append(f"The stored inputs cannot be planned: {error}")
    if case.timeline is not None:
        try:
            case_timeline(case)
        except ImportError:  # pragma: no cover - the titration module ships with ventset
            pass
        except (VentsetError, ValueError, *_SHAPE_ERRORS) as exc:
            messages.append(f"The anaesthetic record in this case cannot be read by this version "
                            f"({visible(exc, 200)}); it is kept unchanged in the file.")
    return OpenedCase(case, loaded.path, result, error, diffs, tuple(messages), loaded.migrated_from)


# --------------------------------------------------------------------------------------------
# comparing a stored plan with a fresh one
# --------------------------------------------------------------------------------------------

_LABELLED = (
    ("mode", "Mode", ""),
    ("ventilation.set_tidal_volume_ml", "Set tidal volume", "mL"),
    ("ventilation.rate_per_min", "Rate", "/min"),
    ("ventilation.ti_s", "Inspiratory time", "s"),
    ("ventilation.inspiratory_flow_l_min", "Inspiratory flow", "L/min"),
    ("pressures.peep_cmh2o", "PEEP", "cmH2O"),
    ("pressures.pressure_limit_cmh2o", "Pressure limit", "cmH2O"),
    ("pressures.inspiratory_pressure_cmh2o", "Inspiratory pressure", "cmH2O"),
    ("oxygen.fio2", "FiO2", ""),
    ("oxygen.fresh_gas_ml_min", "Fresh gas", "mL/min"),
    ("ventilation.expected_paco2_mmhg", "Expected PaCO2", "mmHg"),
    ("ventilation.expected_etco2_mmhg", "Expected EtCO2", "mmHg"),
    ("ventilation.target_paco2_mmhg", "Target PaCO2", "mmHg"),
)
_SKIP = {"ventset_version", "cautions", "assumptions", "standing_notice"}
MAX_DIFFERENCES = 14


def _flatten(obj: object, prefix: str = "") -> dict[str, object]:
    out: dict[str, object] = {}
    stack = [(prefix, obj)]
    while stack:
        where, value = stack.pop()
        if isinstance(value, dict):
            for k, v in value.items():
                if not where and k in _SKIP:
                    continue
                stack.append((f"{where}.{k}" if where else str(k), v))
        else:
            out[where] = value
    return out


def _same(a: object, b: object) -> bool:
    if isinstance(a, int | float) and isinstance(b, int | float) and not isinstance(a, bool) \
            and not isinstance(b, bool):
        return math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-9)
    return a == b


def _show(value: object, unit: str = "") -> str:
    from ventset.units import fmt

    if value is None:
        return "—"
    if isinstance(value, int | float) and not isinstance(value, bool):
        return f"{fmt(float(value))}{' ' + unit if unit else ''}"
    return visible(value, 60)


def compare_plan_dicts(stored: object, current: object) -> list[str]:
    """Plain sentences for what differs between two ``plan_to_dict`` outputs (settings first)."""
    if stored is None or current is None:
        return [] if stored is current else ["One of the plans is missing."]
    if not isinstance(stored, dict) or not isinstance(current, dict):
        return ["The stored plan is not in a form this version can compare."]
    a, b = _flatten(stored), _flatten(current)
    lines: list[str] = []
    labelled = set()
    for key, label, unit in _LABELLED:
        labelled.add(key)
        if key in a or key in b:
            if not _same(a.get(key), b.get(key)):
                lines.append(f"{label}: stored {_show(a.get(key), unit)}, now {_show(b.get(key), unit)}")
    lines += _compare_cautions(stored.get("cautions"), current.get("cautions"))
    lines += _compare_assumptions(stored.get("assumptions"), current.get("assumptions"))
    others = [k for k in sorted(set(a) | set(b)) if k not in labelled and not _same(a.get(k), b.get(k))]
    if others:
        shown = ", ".join(f"{visible(k, 60)} {_show(a.get(k))} → {_show(b.get(k))}" for k in others[:4])
        more = f" and {len(others) - 4} more" if len(others) > 4 else ""
        lines.append(f"Derived values: {shown}{more}")
    if len(lines) > MAX_DIFFERENCES:
        lines = lines[: MAX_DIFFERENCES - 1] + [f"... and {len(lines) - MAX_DIFFERENCES + 1} more differences"]
    return lines


def _by(items: object, key: str) -> dict[str, dict]:
    """Entries of a stored list by ``key`` (codes and names made safe to show: they come from a file)."""
    if not isinstance(items, list):
        return {}
    return {visible(i.get(key), 80): i for i in items if isinstance(i, dict)}


def _compare_cautions(stored: object, current: object) -> list[str]:
    a, b = _by(stored, "code"), _by(current, "code")
    lines = [f"New caution: [{_show(b[c].get('severity', '')).upper()}] {c}" for c in b if c not in a]
    lines += [f"Caution no longer raised: {c}" for c in a if c not in b]
    lines += [f"Caution {c} changed: [{_show(a[c].get('severity', '')).upper()}] → "
              f"[{_show(b[c].get('severity', '')).upper()}]" for c in a if c in b
              and a[c].get("severity") != b[c].get("severity")]
    lines += [f"Caution {c}: wording changed" for c in a if c in b and a[c].get("severity") == b[c].get("severity")
              and a[c].get("message") != b[c].get("message")]
    return lines


def _compare_assumptions(stored: object, current: object) -> list[str]:
    a, b = _by(stored, "name"), _by(current, "name")
    lines = []
    for name in b:
        if name not in a:
            lines.append(f"New assumption: {name} {_show(b[name].get('value'), _show(b[name].get('unit', '')))}")
        elif not _same(a[name].get("value"), b[name].get("value")) or a[name].get("unit") != b[name].get("unit"):
            lines.append(f"Assumption {name}: stored {_show(a[name].get('value'), _show(a[name].get('unit', '')))}, "
                         f"now {_show(b[name].get('value'), _show(b[name].get('unit', '')))}")
        elif a[name].get("source") != b[name].get("source"):
            lines.append(f"Assumption {name}: source changed to {_show(b[name].get('source'))}")
    lines += [f"Assumption no longer used: {name}" for name in a if name not in b]
    return lines


# --------------------------------------------------------------------------------------------
# recent files
# --------------------------------------------------------------------------------------------

def _recent_path() -> Path:
    return storage.data_dir() / RECENT_FILE


def recent_files() -> list[Path]:
    """Recently saved or opened case files, newest first (a damaged list reads as empty)."""
    try:
        data = storage.read_json(_recent_path(), 1_000_000)
    except storage.StorageError:
        return []
    paths = data.get("paths") if isinstance(data, dict) else None
    if not isinstance(paths, list):
        return []
    return [Path(p) for p in paths if isinstance(p, str) and p][:RECENT_MAX]


def _write_recent(paths: list[Path]) -> str:
    try:
        storage.atomic_write_json(_recent_path(), {"format": "ventset-recent", "schema_version": 1,
                                                   "paths": [str(p) for p in paths[:RECENT_MAX]]}, private=True)
    except storage.StorageError as exc:
        return f"the list of recent cases was not updated ({exc})"
    return ""


def add_recent(path: os.PathLike | str) -> str:
    """Put ``path`` at the top of the recent-files list; returns a warning ('' if none). Never raises: the list
    is a convenience, and a case that was saved stays saved whatever happens to it."""
    try:
        try:
            target = Path(path).resolve()
        except (OSError, RuntimeError):
            target = Path(path).absolute()
        return _write_recent([target, *(p for p in recent_files() if p != target)])
    except (OSError, RuntimeError, ValueError) as exc:
        return f"the list of recent cases was not updated ({type(exc).__name__})"


def remove_recent(path: os.PathLike | str) -> str:
    """Drop ``path`` from the recent-files list (e.g. after it failed to open); returns a warning ('' if none)."""
    try:
        target = Path(path)
        return _write_recent([p for p in recent_files() if p != target and p != target.absolute()])
    except (OSError, ValueError) as exc:
        return f"the list of recent cases was not updated ({type(exc).__name__})"


def clear_recent() -> str:
    """Empty the recent-files list (the case files themselves are untouched); returns a warning ('' if none)."""
    return _write_recent([])


def recent_labels(paths: list[Path]) -> list[str]:
    """What the recent-files menu shows for each path: the file name, with its folder's name added where two
    entries would otherwise read the same (the full path is the menu entry's tooltip)."""
    from ventset.errors import visible

    names = [p.name for p in paths]
    out = []
    for p, name in zip(paths, names, strict=True):
        label = f"{name} — {p.parent.name or p.parent}" if names.count(name) > 1 else name
        out.append(visible(label, 120))
    return out
