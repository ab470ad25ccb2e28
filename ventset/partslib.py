"""The clinic's own parts library: measured apparatus parts, named circuit presets and the clinic's machines.

Stored as plain JSON in the user data folder (``clinic-parts.json``, docs/case-format.md),
exported and imported as the same file to share between the clinic's machines. Importing
merges: new entries are added, identical ones skipped, and an entry whose name exists with
different values is a conflict that is reported and never overwritten unless asked for.
The shipped catalogue (resources/apparatus.toml, ``load_library().parts``) stays separate;
:func:`all_parts` lists both. No Qt here.

The entries and their checks are in ``ventset.partslib_model`` and the merge in ``ventset.partslib_merge``;
both are re-exported here, so ``ventset.partslib`` stays the one import path.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path

from ventset import storage
from ventset.case_model import now_iso
from ventset.errors import InputError
from ventset.model import ApparatusPart
from ventset.part_text import part_from_text
from ventset.partslib_machines import ClinicMachine, ControlRange, machine_from_dict, machine_to_dict
from ventset.partslib_merge import Conflict, MergeReport, merge
from ventset.partslib_model import (
    CONFLICT_CHOICES,
    FILE_NAME,
    FORMAT,
    MAX_BYTES,
    MAX_NAME,
    MAX_NOTE,
    MAX_VOLUME_ML,
    PREVIOUS_NAME,
    SCHEMA_VERSION,
    CircuitPreset,
    ClinicLibrary,
    ClinicLibraryError,
    ClinicLibrarySaveError,
    ClinicPart,
    clean_text,
    name_key,
)

__all__ = ["FORMAT", "SCHEMA_VERSION", "FILE_NAME", "PREVIOUS_NAME", "MAX_BYTES", "MAX_VOLUME_ML", "MAX_NAME",
           "MAX_NOTE", "CONFLICT_CHOICES", "ClinicLibraryError", "ClinicLibrarySaveError", "name_key", "ClinicPart",
           "CircuitPreset", "ClinicLibrary", "library_to_dict", "library_from_dict", "library_path",
           "read_library_file", "load_clinic_library", "write_library_file", "save_clinic_library", "Conflict",
           "MergeReport", "merge", "import_file", "PartRow", "all_parts", "part_from_text", "clinic_part",
           "clinic_machines", "ClinicMachine", "ControlRange", "MIGRATIONS"]


# --------------------------------------------------------------------------------------------
# file format
# --------------------------------------------------------------------------------------------

def library_to_dict(lib: ClinicLibrary) -> dict:
    """The JSON layout of the current schema (docs/case-format.md)."""
    return {
        "format": FORMAT,
        "schema_version": SCHEMA_VERSION,
        "clinic": lib.clinic,
        "saved_at": now_iso(),
        "parts": [{"name": p.name, "volume_ml": p.volume_ml, "note": p.note, "measured_by": p.measured_by,
                   "measured_on": p.measured_on} for p in lib.parts],
        "presets": [{"name": s.name, "parts": [{"name": p.name, "volume_ml": p.volume_ml, "source": p.source}
                                               for p in s.parts],
                     "compressible_ml_cmh2o": s.compressible_ml_cmh2o, "circuit_type": s.circuit_type,
                     "note": s.note} for s in lib.presets],
        "machines": [machine_to_dict(m) for m in lib.machines],
    }


def _v1_to_v2(data: dict) -> dict:
    """Schema 1 had no machines: the same file with an empty list."""
    if "machines" in data:
        raise ValueError("field 'machines' is not part of clinic parts schema 1")
    return {**data, "schema_version": 2, "machines": []}


# MIGRATIONS[n] turns a schema-n clinic library dict into schema n+1 (in memory; the file is written in the
# current schema at the next save, the version it replaces kept as clinic-parts.previous.json).
MIGRATIONS = {1: _v1_to_v2}


def library_from_dict(data: object) -> ClinicLibrary:
    """Check a parsed clinic parts file; raises ValueError naming the entry and field."""
    if not isinstance(data, dict) or data.get("format") != FORMAT:
        raise ValueError(f"it is not a ventset clinic parts file (needs \"format\": \"{FORMAT}\")")
    version = data.get("schema_version")
    if isinstance(version, bool) or not isinstance(version, int):
        raise ValueError("field 'schema_version' must be a whole number")
    if version > SCHEMA_VERSION:
        raise ValueError(f"it was written by a newer ventset (clinic parts schema {version}; this version reads "
                         f"up to {SCHEMA_VERSION}); update ventset to use it")
    if version != SCHEMA_VERSION and version not in MIGRATIONS:
        raise ValueError(f"clinic parts schema {version} is not one any ventset has written")
    while version < SCHEMA_VERSION:
        data = MIGRATIONS[version](data)
        version += 1
    unknown = sorted(set(data) - {"format", "schema_version", "clinic", "saved_at", "parts", "presets", "machines"})
    if unknown:
        raise ValueError(f"field '{unknown[0]}' is not part of clinic parts schema {SCHEMA_VERSION}")
    for key in ("parts", "presets", "machines"):
        if not isinstance(data.get(key, []), list):
            raise ValueError(f"field '{key}' must be a list")
    lib = ClinicLibrary(clinic=_entry(lambda: clean_text(data.get("clinic", ""), "clinic"), "clinic"))
    for i, p in enumerate(data.get("parts", [])):
        where = f"parts[{i}]"
        if not isinstance(p, dict):
            raise ValueError(f"{where} must be an object")
        if set(p) - {"name", "volume_ml", "note", "measured_by", "measured_on"}:
            raise ValueError(f"{where} has unknown fields: {', '.join(sorted(set(p) - {'name', 'volume_ml'}))}")
        if not isinstance(p.get("volume_ml"), int | float) or isinstance(p.get("volume_ml"), bool):
            raise ValueError(f"{where} ({p.get('name')!r}): volume_ml must be a number")
        part = _entry(lambda p=p: ClinicPart.checked(p.get("name"), p.get("volume_ml"), p.get("note", ""),
                                                     p.get("measured_by", ""), p.get("measured_on", "")), where)
        if lib.part(part.name) is not None:
            raise ValueError(f"{where}: the part name '{part.name}' appears twice")
        lib = lib.with_part(part)
    for i, s in enumerate(data.get("presets", [])):
        where = f"presets[{i}]"
        if not isinstance(s, dict):
            raise ValueError(f"{where} must be an object")
        if set(s) - {"name", "parts", "compressible_ml_cmh2o", "circuit_type", "note"}:
            raise ValueError(f"{where} has unknown fields")
        comp = s.get("compressible_ml_cmh2o")
        if comp is not None and (not isinstance(comp, int | float) or isinstance(comp, bool)):
            raise ValueError(f"{where}: compressible_ml_cmh2o must be a number or null")
        parts = s.get("parts", [])
        if isinstance(parts, list) and any(not isinstance(x, dict) or isinstance(x.get("volume_ml"), str)
                                           for x in parts):
            raise ValueError(f"{where}: each part needs a numeric volume_ml")
        preset = _entry(lambda s=s, comp=comp: CircuitPreset.checked(s.get("name"), s.get("parts", []), comp,
                                                          s.get("circuit_type"), s.get("note", "")), where)
        if lib.preset(preset.name) is not None:
            raise ValueError(f"{where}: the preset name '{preset.name}' appears twice")
        lib = lib.with_preset(preset)
    for i, m in enumerate(data.get("machines", [])):
        machine = machine_from_dict(m, f"machines[{i}]")
        if lib.machine(machine.name) is not None:
            raise ValueError(f"machines[{i}]: the machine name '{machine.name}' appears twice")
        lib = _entry(lambda machine=machine, lib=lib: lib.with_machine(machine), f"machines[{i}]")
    return lib


def _entry(make, where: str):
    try:
        return make()
    except InputError as err:
        raise ValueError(f"{where}: {err}") from None


def library_path() -> Path:
    """Where this machine keeps the clinic parts library."""
    return storage.data_dir() / FILE_NAME


def read_library_file(path: os.PathLike | str) -> ClinicLibrary:
    """Read a clinic parts file (the library or an export); raises ClinicLibraryError."""
    data = storage.read_json(path, MAX_BYTES, error=ClinicLibraryError)
    try:
        return library_from_dict(data)
    except ValueError as exc:
        raise ClinicLibraryError(path, str(exc)) from None
    except (TypeError, AttributeError, KeyError, OverflowError, RecursionError) as exc:  # a last guard: refuse
        raise ClinicLibraryError(path, f"it holds a value of the wrong kind ({type(exc).__name__})") from None


def load_clinic_library(path: os.PathLike | str | None = None) -> ClinicLibrary:
    """This machine's library (empty if none saved yet); a damaged file raises, it is never treated as empty."""
    target = Path(path) if path is not None else library_path()
    if not _exists(target, ClinicLibraryError):
        return ClinicLibrary()
    return read_library_file(target)


def _exists(target: Path, error: type[storage.StorageError]) -> bool:
    try:
        return target.exists()
    except OSError as exc:
        raise error(target, storage.os_reason(exc)) from None


def write_library_file(lib: ClinicLibrary, path: os.PathLike | str, *, private: bool = False) -> None:
    """Write ``lib`` atomically to ``path`` (also used for export); refuses what the loader would refuse.

    An export gets the user's normal file permissions (umask); ``private`` (this machine's own library in the
    data folder) makes a new file readable by the user only.
    """
    data = library_to_dict(lib)
    try:
        library_from_dict(data)
    except ValueError as exc:
        raise ClinicLibrarySaveError(path, f"it would not open again ({exc}); nothing was written") from None
    try:
        storage.atomic_write_json(path, data, private=private)
    except storage.StorageError as exc:
        raise ClinicLibrarySaveError(path, exc.reason) from None


def save_clinic_library(lib: ClinicLibrary, path: os.PathLike | str | None = None) -> None:
    """Save this machine's library; the version it replaces is kept as clinic-parts.previous.json.

    In the data folder (no ``path``) new files are private to the user (0600).
    """
    target = Path(path) if path is not None else library_path()
    private = path is None
    if _exists(target, ClinicLibrarySaveError):
        try:
            storage.atomic_write_bytes(target.with_name(PREVIOUS_NAME), target.read_bytes(), private=private)
        except OSError as exc:
            raise ClinicLibrarySaveError(target, f"could not keep the previous version first "
                                                 f"({storage.os_reason(exc)})") from None
        except storage.StorageError as exc:
            raise ClinicLibrarySaveError(target, f"could not keep the previous version first ({exc.reason})") \
                from None
    write_library_file(lib, target, private=private)


# --------------------------------------------------------------------------------------------
# import
# --------------------------------------------------------------------------------------------

def import_file(path: os.PathLike | str, on_conflict: str = "keep", target: os.PathLike | str | None = None,
                kinds: tuple[str, ...] = ("part", "preset", "machine")) -> MergeReport:
    """Merge a shared file (its ``kinds`` of entry) into this computer's library and save it; returns what
    happened."""
    incoming = read_library_file(path)
    local = load_clinic_library(target)
    merged, report = merge(local, incoming, on_conflict, kinds)
    if merged != local:
        save_clinic_library(merged, target)
    return report


# --------------------------------------------------------------------------------------------
# both libraries together
# --------------------------------------------------------------------------------------------

@dataclass(frozen=True)
class PartRow:
    """One row of the combined list: origin 'clinic' or 'catalogue', key (catalogue key or clinic name)."""

    origin: str
    key: str
    name: str
    volume_ml: float
    source: str

    def as_apparatus(self) -> ApparatusPart:
        return ApparatusPart(self.name, self.volume_ml, self.source)


def all_parts(clinic: ClinicLibrary, library=None) -> list[PartRow]:
    """The clinic's parts first, then the shipped catalogue, each with where its volume comes from."""
    from ventset.library import load_library

    lib = library or load_library()
    rows = [PartRow("clinic", p.name, p.name, p.volume_ml, p.source + (f"; {p.note}" if p.note else ""))
            for p in clinic.parts]
    rows += [PartRow("catalogue", p.key, p.label, p.volume_ml.value, p.volume_ml.source) for p in lib.parts.values()]
    return rows


# --------------------------------------------------------------------------------------------
# a part from what a person typed
# --------------------------------------------------------------------------------------------

_MACHINES_READ: dict[str, object] = {}  # the last clinic machines read, by the file's identity (see below)


def clinic_machines(path: os.PathLike | str | None = None) -> tuple[ClinicMachine, ...]:
    """This computer's clinic machines; the file is read again only when it changed (its inode, size or time), so
    planning with a clinic machine on every edit does not re-read it. Raises ClinicLibraryError when damaged."""
    target = Path(path) if path is not None else library_path()
    try:
        st = target.stat()
    except FileNotFoundError:
        return ()
    except OSError as exc:
        raise ClinicLibraryError(target, storage.os_reason(exc)) from None
    identity = (str(target), st.st_ino, st.st_size, st.st_mtime_ns)
    if _MACHINES_READ.get("identity") != identity:
        machines = read_library_file(target).machines
        _MACHINES_READ.update(identity=identity, machines=machines)
    return _MACHINES_READ["machines"]  # type: ignore[return-value]


def clinic_part(name: str) -> ApparatusPart | None:
    """A part from this machine's clinic library by name, or None (also when the library cannot be read)."""
    from ventset.errors import VentsetError

    try:
        part = load_clinic_library().part(name)
    except VentsetError:
        return None
    return part.as_apparatus() if part is not None else None
