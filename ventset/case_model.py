"""Case files: the records a case file holds (``Case``), what opening one returns, and the file's constants.

The layout is documented in docs/case-format.md; ``ventset.cases`` builds, saves and opens cases. No Qt here.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path

from ventset import __version__, storage
from ventset.model import Request
from ventset.textpolicy import TEXT_FIELDS

FORMAT = "ventset-case"
SCHEMA_VERSION = 2
SUFFIX = ".ventcase"
MAX_CASE_BYTES = 10_000_000
MAX_TEXT = TEXT_FIELDS["case-note"].max_chars
MAX_EARLIER_PLANS = 20
# What a case holds (its "kind", from schema 2): a ventilated patient (``Case``) or a fish's gill irrigation
# (``ventset.case_irrigation.IrrigationCase``). A loader for one kind refuses the other, naming the field.
KIND_VENTILATION = "ventilation"
KIND_IRRIGATION = "irrigation"
CASE_KINDS = (KIND_VENTILATION, KIND_IRRIGATION)


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
