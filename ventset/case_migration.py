"""Case file migrations: ``MIGRATIONS[n]`` turns a schema-n dict into a schema-(n+1) dict (docs/case-format.md).

``migrate`` brings a parsed case file to the current schema step by step; a newer or unknown layout is refused
with the reason (``BadField``) and the file is left as it is. No Qt here.
"""

from __future__ import annotations

from collections.abc import Callable
from datetime import UTC, datetime
from typing import cast

from ventset import __version__
from ventset.case_model import FORMAT, KIND_VENTILATION, SCHEMA_VERSION
from ventset.case_reading import BadField, checked_number, checked_text, type_name


def _v0_to_v1(data: dict) -> dict:
    """Schema 0 (first development builds): request fields at the top level, apparatus as a
    {name: volume_ml} mapping, the save time as Unix seconds, no species data version.
    Schema 1 nests them under "request", lists parts with their source, and uses ISO 8601 times."""
    allowed = {"ventset", "saved", "patient", "circuit", "targets", "strategy", "plan"}
    unknown = sorted(set(data) - allowed)
    if unknown:
        raise BadField(unknown[0], "is not part of case schema 0")
    circuit = data.get("circuit", {})
    if not isinstance(circuit, dict):
        raise BadField("circuit", f"must be an object (got {type_name(circuit)})")
    circuit = dict(circuit)
    apparatus = circuit.pop("apparatus", {})
    if not isinstance(apparatus, dict):
        raise BadField("circuit.apparatus", "must map part names to volumes in mL")
    circuit["parts"] = [{"name": name, "volume_ml": vol, "source": "entered by the user"}
                        for name, vol in apparatus.items()]
    saved = data.get("saved")
    if saved is None:
        stamp = ""
    else:
        seconds = checked_number(saved, "saved")
        try:
            stamp = datetime.fromtimestamp(seconds, UTC).isoformat().replace("+00:00", "Z")
        except (OverflowError, OSError, ValueError):
            raise BadField("saved", "is not a plausible time in seconds since 1970") from None
    request = {"patient": data.get("patient"), "circuit": circuit}
    for key in ("targets", "strategy"):
        if key in data:
            request[key] = data[key]
    return {"format": FORMAT, "schema_version": 1,
            "ventset_version": checked_text(data.get("ventset", ""), "ventset", 40), "species_version": "",
            "created_at": stamp, "saved_at": stamp, "note": "", "request": request, "plan": data.get("plan")}


def _v1_to_v2(data: dict) -> dict:
    """Schema 1 held only ventilation cases; schema 2 names what a case holds in ``kind`` ("ventilation" or
    "irrigation", a fish's gill irrigation plan). Nothing else changes."""
    if "kind" in data:
        raise BadField("kind", "is not part of case schema 1")
    return {**data, "schema_version": 2, "kind": KIND_VENTILATION}


MIGRATIONS: dict[int, Callable[[dict], dict]] = {0: _v0_to_v1, 1: _v1_to_v2}


def schema_version_of(data: object) -> int:
    """The schema version of a parsed case file (0 for the unversioned first layout); raises BadField."""
    if not isinstance(data, dict):
        raise BadField(".", f"must be a JSON object; this is {type_name(data)}, not a ventset case file")
    if "schema_version" not in data:
        if "patient" in data and "ventset" in data:
            return 0
        raise BadField("schema_version", "is missing: this is not a ventset case file")
    version = data["schema_version"]
    if isinstance(version, bool) or not isinstance(version, int):
        raise BadField("schema_version", f"must be a whole number (got {type_name(version)})")
    if data.get("format") != FORMAT:
        raise BadField("format", f"must be \"{FORMAT}\": this is not a ventset case file")
    return version


def migrate(data: object) -> tuple[dict, int | None]:
    """Bring a parsed case dict to the current schema; returns (dict, old version or None)."""
    version = schema_version_of(data)
    if version > SCHEMA_VERSION:
        raise BadField("schema_version", f"is {version}: the file was written by a newer ventset (this one, "
                                     f"{__version__}, reads case schema up to {SCHEMA_VERSION}); update ventset "
                                     "to open it")
    if version < 0 or version not in MIGRATIONS and version != SCHEMA_VERSION:
        raise BadField("schema_version", f"is {version}, which no ventset has written")
    start = version
    while version < SCHEMA_VERSION:
        data = MIGRATIONS[version](cast(dict, data))
        version += 1
    return cast(dict, data), (start if start != SCHEMA_VERSION else None)
