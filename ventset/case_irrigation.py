"""Case files that hold a fish's gill irrigation plan (``"kind": "irrigation"``, docs/case-format.md).

The same file format, atomic storage, strict loader and text policy as a ventilation case (``ventset.cases``): the
stored ``request`` is an ``IrrigationRequest`` checked field by field, the stored ``plan`` is
``ventset.aquatic.report.irrigation_to_dict`` output kept as a record, and on opening the request is planned again
and any difference from the stored plan is reported, never silently replaced. :func:`open_any_case` opens a case of
either kind (``ventset show``). No Qt here.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field, replace
from pathlib import Path

from ventset import __version__, cases, storage
from ventset.aquatic.irrigation import IrrigationPlan, IrrigationRequest, plan_irrigation
from ventset.aquatic.report import irrigation_to_dict, request_to_dict
from ventset.case_model import FORMAT, KIND_IRRIGATION, MAX_CASE_BYTES, MAX_EARLIER_PLANS, SCHEMA_VERSION
from ventset.case_reading import (
    BadField,
    checked_envelope,
    checked_record,
    checked_text,
    checked_timestamp,
    policy_text,
)
from ventset.errors import InputError

_KEYS = {"format", "schema_version", "kind", "ventset_version", "created_at", "saved_at", "note", "request", "plan",
         "plan_error", "earlier_plans"}
_SHAPE_ERRORS = (TypeError, AttributeError, KeyError, OverflowError, RecursionError)


@dataclass(frozen=True)
class IrrigationCase:
    """Everything an irrigation case file holds. ``plan`` is ``irrigation_to_dict`` output (None if the request
    could not be planned; ``plan_error`` says why); ``earlier_plans`` keeps stored plans a newer ventset replaced."""

    request: IrrigationRequest
    plan: dict | None = None
    plan_error: str = ""
    created_at: str = ""
    saved_at: str = ""
    ventset_version: str = __version__
    note: str = ""
    earlier_plans: tuple[dict, ...] = field(default=())


@dataclass(frozen=True)
class LoadedIrrigationCase:
    case: IrrigationCase
    path: Path
    migrated_from: int | None = None


@dataclass(frozen=True)
class OpenedIrrigationCase:
    """A loaded irrigation case planned again: ``plan`` is the IrrigationPlan now (None, with ``plan_error``, if the
    stored inputs no longer plan); ``differences`` from the stored plan; ``messages`` for the user."""

    case: IrrigationCase
    path: Path
    plan: IrrigationPlan | None
    plan_error: str
    differences: tuple[str, ...]
    messages: tuple[str, ...]
    migrated_from: int | None = None


# --------------------------------------------------------------------------------------------
# building
# --------------------------------------------------------------------------------------------

def make_irrigation_case(request: IrrigationRequest, plan: IrrigationPlan | None = None, *, plan_error: str = "",
                         previous: IrrigationCase | None = None, note: str | None = None) -> IrrigationCase:
    """A case for ``request`` and its ``plan``. ``previous`` (the case as last opened or saved) gives its creation
    time, note and earlier plans; its plan is kept in ``earlier_plans`` when the same request now plans differently
    (another ventset or aquatic data), never for the user's own edits."""
    plan_dict = irrigation_to_dict(plan) if plan is not None else None
    created = cases.now_iso()
    earlier: tuple[dict, ...] = ()
    if previous is not None:
        created = previous.created_at or created
        note = previous.note if note is None else note
        earlier = previous.earlier_plans
        if previous.plan is not None and previous.request == request \
                and cases.compare_plan_dicts(previous.plan, plan_dict):
            kept = {"plan": previous.plan, "request": request_to_dict(previous.request),
                    "ventset_version": previous.ventset_version, "replaced_at": cases.now_iso()}
            earlier = (*earlier, kept)[-MAX_EARLIER_PLANS:]
    return IrrigationCase(request, plan_dict, plan_error if plan is None else "", created, "", __version__,
                          note or "", earlier)


def irrigation_case_for_request(request: IrrigationRequest, previous: IrrigationCase | None = None) -> IrrigationCase:
    """Plan ``request`` and wrap it in a case; a request that cannot be planned is kept with the reason."""
    plan, error = _plan(request)
    return make_irrigation_case(request, plan, plan_error=error, previous=previous)


def _plan(request: IrrigationRequest) -> tuple[IrrigationPlan | None, str]:
    try:
        return plan_irrigation(request), ""
    except InputError as err:
        return None, str(err)
    except (ArithmeticError, ValueError) as exc:  # a planner defect on extreme input must not lose the case
        return None, (f"the plan could not be computed (internal error: {type(exc).__name__}: {exc}); please "
                      "report this with the case file")


# --------------------------------------------------------------------------------------------
# dict <-> IrrigationCase
# --------------------------------------------------------------------------------------------

def irrigation_case_to_dict(case: IrrigationCase) -> dict:
    """The JSON layout of an irrigation case (schema 2, ``kind`` "irrigation")."""
    out: dict = {"format": FORMAT, "schema_version": SCHEMA_VERSION, "kind": KIND_IRRIGATION,
                 "ventset_version": case.ventset_version, "created_at": case.created_at, "saved_at": case.saved_at,
                 "note": case.note, "request": request_to_dict(case.request), "plan": case.plan}
    if case.plan is None and case.plan_error:
        out["plan_error"] = case.plan_error
    if case.earlier_plans:
        out["earlier_plans"] = list(case.earlier_plans)
    return out


def irrigation_request_from_case_dict(data: object, where: str = "request") -> IrrigationRequest:
    """Check a stored irrigation request field by field (kinds, lengths, the text policy for name and species);
    raises BadField naming the field. Hard limits are applied when it is planned (out of range opens, as a plan
    error), as for a ventilation case."""
    return IrrigationRequest(**checked_record(IrrigationRequest, data, where))


def irrigation_case_from_current(data: dict) -> IrrigationCase:
    """An irrigation case from a dict of the current schema (raises BadField naming the field)."""
    plan, earlier = checked_envelope(data, KIND_IRRIGATION, _KEYS,
                                     f"is not part of an irrigation case (schema {SCHEMA_VERSION})")
    return IrrigationCase(
        request=irrigation_request_from_case_dict(data["request"]),
        plan=plan,
        plan_error=checked_text(data.get("plan_error", ""), "plan_error", 2000),
        created_at=checked_timestamp(data.get("created_at", ""), "created_at"),
        saved_at=checked_timestamp(data.get("saved_at", ""), "saved_at"),
        ventset_version=checked_text(data.get("ventset_version", ""), "ventset_version", 40),
        note=policy_text("case-note")(data.get("note", ""), "note"),
        earlier_plans=tuple(earlier[-MAX_EARLIER_PLANS:]),
    )


# --------------------------------------------------------------------------------------------
# disk
# --------------------------------------------------------------------------------------------

def _read(path: os.PathLike | str) -> tuple[Path, dict, int | None]:
    """The file's dict brought to the current schema; raises CaseError with one line."""
    target = Path(path)
    raw = storage.read_json(target, MAX_CASE_BYTES, error=cases.CaseError)
    try:
        data, old = cases.migrate(raw)
    except BadField as bad:
        raise cases.CaseError(target, str(bad)) from None
    return target, data, old


def _refusal(target: Path, exc: Exception) -> cases.CaseError:
    if isinstance(exc, BadField):
        return cases.CaseError(target, str(exc))
    return cases.CaseError(target, f"it holds a value of the wrong kind ({type(exc).__name__})")


def load_irrigation_case(path: os.PathLike | str) -> LoadedIrrigationCase:
    """Read an irrigation case file; raises CaseError with one clear line. The file is never changed."""
    target, data, old = _read(path)
    try:
        return LoadedIrrigationCase(irrigation_case_from_current(data), target, old)
    except (BadField, *_SHAPE_ERRORS) as exc:  # any value of the wrong kind is a refusal, never a traceback
        raise _refusal(target, exc) from None


def save_irrigation_case(path: os.PathLike | str, case: IrrigationCase, *, replace_any: bool = False) -> IrrigationCase:
    """Write ``case`` atomically through the one case writer (``cases.write_case_data``); returns it with
    ``saved_at`` set. What the loader would refuse is refused here, before anything is written."""
    target = Path(path)
    saved = replace(case, saved_at=cases.now_iso(), created_at=case.created_at or cases.now_iso())
    data = irrigation_case_to_dict(saved)
    try:
        irrigation_case_from_current(data)
    except BadField as exc:
        raise cases.CaseSaveError(target, f"the case would not open again ({exc}); nothing was written") from None
    cases.write_case_data(target, data, replace_any=replace_any)
    return saved


def replan_irrigation(case: IrrigationCase) -> tuple[IrrigationPlan | None, str, tuple[str, ...]]:
    """Plan the stored request now; returns (plan or None, error, differences from the stored plan)."""
    plan, error = _plan(case.request)
    if plan is None:
        return None, error, (("The stored inputs no longer give a plan: " + error,) if case.plan else ())
    if case.plan is None:
        return plan, "", ()
    try:
        diffs = tuple(cases.compare_plan_dicts(case.plan, irrigation_to_dict(plan)))
    except (*_SHAPE_ERRORS, ValueError):
        diffs = ("The stored plan is not in a form this version can compare.",)
    return plan, "", diffs


def _opened(loaded: LoadedIrrigationCase) -> OpenedIrrigationCase:
    case = loaded.case
    plan, error, diffs = replan_irrigation(case)
    notes = cases.opening_notes(loaded.migrated_from, case.ventset_version, diffs, error)
    return OpenedIrrigationCase(case, loaded.path, plan, error, diffs, tuple(notes), loaded.migrated_from)


def open_irrigation_case(path: os.PathLike | str) -> OpenedIrrigationCase:
    """Load an irrigation case, plan it again and say what the user should know."""
    return _opened(load_irrigation_case(path))


def open_any_case(path: os.PathLike | str, library=None) -> cases.OpenedCase | OpenedIrrigationCase:
    """Open a case of either kind: ``OpenedIrrigationCase``, or ``cases.OpenedCase`` (through ``cases.open_case``)."""
    target, data, old = _read(path)
    if data.get("kind") == KIND_IRRIGATION:
        try:
            loaded = LoadedIrrigationCase(irrigation_case_from_current(data), target, old)
        except (BadField, *_SHAPE_ERRORS) as exc:
            raise _refusal(target, exc) from None
        return _opened(loaded)
    return cases.open_case(target, library)
