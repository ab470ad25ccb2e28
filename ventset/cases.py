"""Case files: one patient's request, the plan it produced, and what was measured (docs/case-format.md).

A case file is plain UTF-8 JSON with ``"format": "ventset-case"`` and a ``schema_version``.
Files from older layouts are migrated in memory step by step (:data:`MIGRATIONS`); a newer or
unknown layout is refused with a clear message and the file is left as it is. On open the
stored request is planned again with the current library and any difference from the stored
plan is reported, never silently replaced. No Qt here.

This module builds, writes, saves and opens cases. The pieces live in their own modules and are
re-exported here, so ``ventset.cases`` stays the one import path: the records and constants
(``ventset.case_model``), reading a stored dict field by field (``ventset.case_reading``), the
migrations (``ventset.case_migration``), comparing a stored plan with a fresh one
(``ventset.case_compare``) and the recent-files list (``ventset.case_recent``). A case file names its ``kind``:
this module's ``Case`` is a ventilation case; a fish's gill irrigation case is ``ventset.case_irrigation``, written
through the same :func:`write_case_data`.
"""

from __future__ import annotations

import os
from dataclasses import replace
from pathlib import Path
from typing import cast

from ventset import __version__, storage
from ventset.case_compare import MAX_DIFFERENCES, compare_plan_dicts
from ventset.case_migration import MIGRATIONS, migrate, schema_version_of
from ventset.case_model import (
    CASE_KINDS,
    FORMAT,
    KIND_IRRIGATION,
    KIND_VENTILATION,
    MAX_CASE_BYTES,
    MAX_EARLIER_PLANS,
    MAX_TEXT,
    SCHEMA_VERSION,
    SUFFIX,
    Case,
    CaseError,
    CaseSaveError,
    LoadedCase,
    OpenedCase,
    now_iso,
)
from ventset.case_reading import BadField, case_from_current, request_from_case_dict
from ventset.case_reading import field_checker as _field_checker
from ventset.case_recent import (
    RECENT_FILE,
    RECENT_MAX,
    add_recent,
    clear_recent,
    recent_files,
    recent_labels,
    remove_recent,
)
from ventset.errors import InputError, VentsetError, visible
from ventset.model import Request, request_to_dict

__all__ = ["FORMAT", "SCHEMA_VERSION", "CASE_KINDS", "KIND_VENTILATION", "KIND_IRRIGATION", "SUFFIX",
           "MAX_CASE_BYTES", "MAX_TEXT", "MAX_EARLIER_PLANS", "MAX_DIFFERENCES", "RECENT_FILE", "RECENT_MAX",
           "MIGRATIONS", "CaseError", "CaseSaveError", "Case", "LoadedCase", "OpenedCase", "now_iso", "make_case",
           "case_for_request", "timeline_data", "case_timeline", "case_to_dict", "request_from_case_dict",
           "schema_version_of", "migrate", "case_from_dict", "load_case", "check_reopens", "save_case",
           "write_case_data", "opening_notes", "replan", "open_case", "compare_plan_dicts", "recent_files",
           "add_recent", "remove_recent", "clear_recent", "recent_labels", "_field_checker"]


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
    """The JSON layout of the current schema (docs/case-format.md)."""
    out: dict = {
        "format": FORMAT,
        "schema_version": SCHEMA_VERSION,
        "kind": KIND_VENTILATION,
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


def case_from_dict(data: object) -> tuple[Case, int | None]:
    """Migrate and check a parsed case file; returns (case, migrated_from). Raises ValueError with the reason."""
    try:
        current, old = migrate(data)
        return case_from_current(current), old
    except BadField as bad:
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


def _existing(target: Path) -> tuple[int, str] | None:
    """(schema version, kind) of the case file at ``target``; None if there is none; raises CaseSaveError if foreign."""
    if not _exists(target):
        return None
    try:
        data = storage.read_json(target, MAX_CASE_BYTES, error=CaseError)
        version = schema_version_of(data)
    except (CaseError, BadField) as exc:
        reason = exc.reason if isinstance(exc, CaseError) else str(exc)
        raise CaseSaveError(target, f"a file is there that is not a readable ventset case ({reason}); "
                                    "choose another name, or replace it on purpose") from None
    kind = cast(dict, data).get("kind") if version >= 2 else KIND_VENTILATION  # schema_version_of checked a dict
    return version, kind if isinstance(kind, str) else ""


def check_reopens(case: Case) -> dict:
    """The JSON layout of ``case`` if the loader would open it again; else CaseSaveError-ready ValueError."""
    data = case_to_dict(case)
    case_from_dict(data)
    return data


def save_case(path: os.PathLike | str, case: Case, *, replace_any: bool = False) -> Case:
    """Write ``case`` atomically; returns it with ``saved_at`` set.

    What the loader would refuse (a name over its limit, ...) is refused here, before anything is written;
    the rest is :func:`write_case_data`.
    """
    target = Path(path)
    saved = replace(case, saved_at=now_iso(), created_at=case.created_at or now_iso())
    try:
        data = check_reopens(saved)
    except ValueError as exc:
        raise CaseSaveError(target, f"the case would not open again ({exc}); nothing was written") from None
    write_case_data(target, data, replace_any=replace_any)
    return saved


def write_case_data(target: Path, data: dict, *, replace_any: bool = False) -> None:
    """Write a checked case dict (any kind) to ``target`` atomically; raises CaseSaveError with the reason.

    An existing file at ``target`` is replaced only if it is a ventset case of the same kind (or ``replace_any``);
    a case of an older schema is first copied to ``<name>.schema<N>.bak``; a newer one is refused.
    A symbolic link is saved through: its target gets the case, the link stays.
    """
    try:
        if target.is_dir():
            raise CaseSaveError(target, "it is a folder, not a file")
    except OSError as exc:
        raise CaseSaveError(target, storage.os_reason(exc)) from None
    existing = None
    try:
        existing = _existing(target)
    except CaseSaveError:
        if not replace_any:
            raise
    old = existing[0] if existing is not None else None
    if old is not None and old > SCHEMA_VERSION and not replace_any:
        raise CaseSaveError(target, f"it holds a case of schema {old} from a newer ventset; saving would lose what "
                                    "that version stored. Save under another name.")
    if existing is not None and existing[1] != data["kind"] and not replace_any:
        held = "a fish gill-irrigation case" if existing[1] == KIND_IRRIGATION else "a ventilation case"
        raise CaseSaveError(target, f"it holds {held}; save under another name, or replace it on purpose")
    if old is not None and old < SCHEMA_VERSION:
        _keep_backup(target, old)
    try:
        storage.atomic_write_json(target, data)
    except storage.StorageError as exc:
        raise CaseSaveError(target, exc.reason) from None


def _keep_backup(target: Path, old: int) -> None:
    backup = target.with_name(f"{target.name}.schema{old}.bak")
    try:
        if not backup.exists():
            storage.atomic_write_bytes(backup, target.read_bytes())
    except OSError as exc:
        raise CaseSaveError(target, f"could not keep a copy of the older file first "
                                    f"({storage.os_reason(exc)})") from None
    except storage.StorageError as exc:
        raise CaseSaveError(target, f"could not keep a copy of the older file first ({exc.reason})") from None


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


def opening_notes(migrated_from: int | None, saved_by: str, diffs: tuple[str, ...], error: str) -> list[str]:
    """What the user is told on opening any kind of case: an older layout, another ventset, a stored plan that
    differs from the one computed now (or inputs that no longer plan)."""
    notes = []
    if migrated_from is not None:
        notes.append(f"This case was saved in an older layout (schema {migrated_from}) and was updated "
                     f"to schema {SCHEMA_VERSION} on opening; the file itself is unchanged until you save "
                     f"(a copy of the old file is kept then).")
    if saved_by and saved_by != __version__:
        notes.append(f"The case was saved by ventset {saved_by}; this is ventset {__version__}.")
    if diffs:
        notes.append("The plan computed now from the stored inputs differs from the stored plan:")
        notes.extend(f"  • {d}" for d in diffs)
        notes.append("The stored plan stays in the file until you save; saving keeps it under 'earlier plans'.")
    elif error:
        notes.append(f"The stored inputs cannot be planned: {error}")
    return notes


def open_case(path: os.PathLike | str, library=None) -> OpenedCase:
    """Load a case, plan its request again and say what the user should know (see OpenedCase)."""
    from ventset.library import load_library

    lib = library or load_library()
    loaded = load_case(path)
    case = loaded.case
    result, error, diffs = replan(case, lib)
    messages = opening_notes(loaded.migrated_from, case.ventset_version, diffs, error)
    if case.species_version and case.species_version != lib.species_version:
        messages.insert(1 if loaded.migrated_from is not None else 0,
                        f"The species data changed since this case was saved (version {case.species_version} "
                        f"then, {lib.species_version} now).")
    if case.timeline is not None:
        try:
            case_timeline(case)
        except ImportError:  # pragma: no cover - the titration module ships with ventset
            pass
        except (VentsetError, ValueError, *_SHAPE_ERRORS) as exc:
            messages.append(f"The anaesthetic record in this case cannot be read by this version "
                            f"({visible(exc, 200)}); it is kept unchanged in the file.")
    return OpenedCase(case, loaded.path, result, error, diffs, tuple(messages), loaded.migrated_from)
