"""The clinic's own parts library: measured apparatus parts and named circuit presets.

Stored as plain JSON in the user data folder (``clinic-parts.json``, docs/case-format.md),
exported and imported as the same file to share between the clinic's machines. Importing
merges: new entries are added, identical ones skipped, and an entry whose name exists with
different values is a conflict that is reported and never overwritten unless asked for.
The shipped catalogue (resources/apparatus.toml, ``load_library().parts``) stays separate;
:func:`all_parts` lists both. No Qt here.
"""

from __future__ import annotations

import math
import os
from collections.abc import Callable
from dataclasses import dataclass, replace
from datetime import date, timedelta
from pathlib import Path

from ventset import storage
from ventset.cases import now_iso
from ventset.errors import InputError, register_labels, visible
from ventset.model import ApparatusPart, Circuit
from ventset.textpolicy import MAX_CLINIC_ENTRIES, MAX_PRESET_PARTS, TEXT_FIELDS, check_count, check_text

FORMAT = "ventset-clinic-parts"
SCHEMA_VERSION = 1
FILE_NAME = "clinic-parts.json"
PREVIOUS_NAME = "clinic-parts.previous.json"
MAX_BYTES = 2_000_000
MAX_VOLUME_ML = 5000.0  # same bound as the shipped catalogue (ventset.library.parse_apparatus)
MAX_NAME = TEXT_FIELDS["clinic-part-name"].max_chars
MAX_NOTE = TEXT_FIELDS["part-note"].max_chars
CONFLICT_CHOICES = ("keep", "rename", "replace")
register_labels({"part-volume": "Part volume", "measured-on": "Measured on", "preset-parts": "Preset parts"})


class ClinicLibraryError(storage.StorageError):
    """The clinic parts file cannot be read or written; names the file and why."""

    verb = "open"


class ClinicLibrarySaveError(ClinicLibraryError):
    verb = "save"


def name_key(name: str) -> str:
    """How names are compared: case and spacing do not matter."""
    return " ".join(name.split()).casefold()


def _clean_name(name: object, field: str, label: str | None = None) -> str:
    """A name with its spacing normalised (a tab or a run of spaces becomes one space), then the text policy."""
    if not isinstance(name, str):
        raise InputError(field, type(name).__name__, "must be text", label=label)
    text = " ".join(x for x in name.replace("\t", " ").split(" ") if x)
    check_text(field, text, label=label)
    if not text:
        raise InputError(field, name, "is empty; give it a name", label=label)
    return text


def _clean_text(text: object, field: str, label: str | None = None) -> str:
    if not isinstance(text, str):
        raise InputError(field, type(text).__name__, "must be text", label=label)
    return check_text(field, text.strip(), label=label)


def _clean_volume(value: object, field: str, label: str | None = None) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float):
        from ventset.units import parse_quantity

        try:
            value = parse_quantity(value, "mL", field)
        except InputError as err:
            raise err.named(label) if label else err from None
    try:
        number = float(value)
    except OverflowError:
        number = math.inf
    if not math.isfinite(number) or not 0.0 <= number <= MAX_VOLUME_ML:
        raise InputError(field, value, f"must be between 0 and {MAX_VOLUME_ML:g} mL", label=label)
    return number


def _clean_date(text: object, field: str) -> str:
    if not isinstance(text, str):
        raise InputError(field, type(text).__name__, "must be text")
    text = text.strip()
    if not text:
        return ""
    if len(text) > 10:
        raise InputError(field, text, "must be a date written YYYY-MM-DD")
    try:
        day = date.fromisoformat(text)
    except ValueError:
        raise InputError(field, text, "must be a date written YYYY-MM-DD") from None
    if day > date.today() + timedelta(days=1):
        raise InputError(field, text, "is in the future")
    return day.isoformat()


@dataclass(frozen=True)
class ClinicPart:
    """A part the clinic measured: internal volume in mL, who measured it and when (YYYY-MM-DD)."""

    name: str
    volume_ml: float
    note: str = ""
    measured_by: str = ""
    measured_on: str = ""

    @staticmethod
    def checked(name: object, volume_ml: object, note: object = "", measured_by: object = "",
                measured_on: object = "") -> ClinicPart:
        """Build a part from user input; raises InputError naming the field."""
        return ClinicPart(_clean_name(name, "clinic-part-name"), _clean_volume(volume_ml, "part-volume"),
                          _clean_text(note, "part-note"), _clean_text(measured_by, "measured-by"),
                          _clean_date(measured_on, "measured-on"))

    @property
    def source(self) -> str:
        """The source line a plan shows for this part."""
        who = f" by {self.measured_by}" if self.measured_by else ""
        when = f" on {self.measured_on}" if self.measured_on else ""
        return f"clinic parts library: measured{who}{when}" if who or when else "clinic parts library"

    def as_apparatus(self) -> ApparatusPart:
        """The part as a plan input."""
        return ApparatusPart(self.name, self.volume_ml, self.source)

    def summary(self) -> str:
        extra = ", ".join(x for x in (self.measured_by, self.measured_on, self.note) if x)
        return f"{self.volume_ml:g} mL" + (f" ({extra})" if extra else "")


@dataclass(frozen=True)
class CircuitPreset:
    """A named breathing-circuit set-up: its parts, compressible volume (mL/cmH2O) and circuit type."""

    name: str
    parts: tuple[ApparatusPart, ...] = ()
    compressible_ml_cmh2o: float | None = None
    circuit_type: str | None = None
    note: str = ""

    @staticmethod
    def checked(name: object, parts: object, compressible_ml_cmh2o: object = None, circuit_type: object = None,
                note: object = "") -> CircuitPreset:
        """Build a preset from user input; raises InputError naming the field."""
        if not isinstance(parts, list | tuple):
            raise InputError("preset-parts", type(parts).__name__, "must be a list of parts")
        check_count("preset-parts", len(parts), MAX_PRESET_PARTS)
        clean = []
        for i, p in enumerate(parts):
            if isinstance(p, ApparatusPart):
                p = {"name": p.name, "volume_ml": p.volume_ml, "source": p.source}
            if not isinstance(p, dict) or set(p) - {"name", "volume_ml", "source"}:
                raise InputError("preset-parts", type(p).__name__, "needs name, volume_ml and source",
                                 label=f"Preset part {i + 1}")
            clean.append(ApparatusPart(
                _clean_name(p.get("name"), "clinic-part-name", f"Preset part {i + 1} name"),
                _clean_volume(p.get("volume_ml"), "part-volume", f"Preset part {i + 1} volume"),
                _clean_text(p.get("source", "entered by the user"), "part-source", f"Preset part {i + 1} source")
                or "entered by the user"))
        comp = None
        if compressible_ml_cmh2o is not None:
            from ventset.fields import parse_field

            comp = parse_field("compressible-volume", compressible_ml_cmh2o)
        ctype = None
        if circuit_type not in (None, ""):
            from ventset.library import load_library

            known = load_library().circuits
            if circuit_type not in known:
                raise InputError("circuit", circuit_type, f"must be one of {', '.join(known)}", label="Circuit type")
            ctype = str(circuit_type)
        return CircuitPreset(_clean_name(name, "preset-name"), tuple(clean), comp, ctype,
                             _clean_text(note, "part-note"))

    def apply(self, circuit: Circuit) -> Circuit:
        """``circuit`` with this preset's parts, compressible volume and type (tube, mode and sampling kept)."""
        return replace(circuit, parts=self.parts, compressible_ml_cmh2o=self.compressible_ml_cmh2o,
                       circuit_type=self.circuit_type)

    def summary(self) -> str:
        total = sum(p.volume_ml for p in self.parts)
        bits = [f"{len(self.parts)} parts, {total:g} mL"]
        if self.compressible_ml_cmh2o is not None:
            bits.append(f"{self.compressible_ml_cmh2o:g} mL/cmH2O")
        if self.circuit_type:
            bits.append(self.circuit_type)
        return "; ".join(bits)


@dataclass(frozen=True)
class ClinicLibrary:
    """The clinic's parts and presets (names unique regardless of case and spacing)."""

    parts: tuple[ClinicPart, ...] = ()
    presets: tuple[CircuitPreset, ...] = ()
    clinic: str = ""

    def part(self, name: str) -> ClinicPart | None:
        return next((p for p in self.parts if name_key(p.name) == name_key(name)), None)

    def preset(self, name: str) -> CircuitPreset | None:
        return next((p for p in self.presets if name_key(p.name) == name_key(name)), None)

    def with_part(self, part: ClinicPart, replace_existing: bool = False) -> ClinicLibrary:
        """Add ``part``; a part of the same name is an InputError unless ``replace_existing``."""
        if self.part(part.name) is not None and not replace_existing:
            raise InputError("clinic-part-name", part.name, "is already in the clinic library; edit or remove it")
        kept = tuple(p for p in self.parts if name_key(p.name) != name_key(part.name))
        check_count("clinic-part-name", len(kept) + 1, MAX_CLINIC_ENTRIES, "parts", label="Clinic parts")
        return replace(self, parts=tuple(sorted((*kept, part), key=lambda p: name_key(p.name))))

    def without_part(self, name: str) -> ClinicLibrary:
        if self.part(name) is None:
            raise InputError("clinic-part-name", name, "is not in the clinic library")
        return replace(self, parts=tuple(p for p in self.parts if name_key(p.name) != name_key(name)))

    def with_preset(self, preset: CircuitPreset, replace_existing: bool = False) -> ClinicLibrary:
        if self.preset(preset.name) is not None and not replace_existing:
            raise InputError("preset-name", preset.name, "is already in the clinic library; edit or remove it")
        kept = tuple(p for p in self.presets if name_key(p.name) != name_key(preset.name))
        check_count("preset-name", len(kept) + 1, MAX_CLINIC_ENTRIES, "presets", label="Circuit presets")
        return replace(self, presets=tuple(sorted((*kept, preset), key=lambda p: name_key(p.name))))

    def without_preset(self, name: str) -> ClinicLibrary:
        if self.preset(name) is None:
            raise InputError("preset-name", name, "is not in the clinic library")
        return replace(self, presets=tuple(p for p in self.presets if name_key(p.name) != name_key(name)))


# --------------------------------------------------------------------------------------------
# file format
# --------------------------------------------------------------------------------------------

def library_to_dict(lib: ClinicLibrary) -> dict:
    """The JSON layout of schema 1 (docs/case-format.md)."""
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
    }


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
    if version != SCHEMA_VERSION:
        raise ValueError(f"clinic parts schema {version} is not one any ventset has written")
    unknown = sorted(set(data) - {"format", "schema_version", "clinic", "saved_at", "parts", "presets"})
    if unknown:
        raise ValueError(f"field '{unknown[0]}' is not part of clinic parts schema {SCHEMA_VERSION}")
    for key in ("parts", "presets"):
        if not isinstance(data.get(key, []), list):
            raise ValueError(f"field '{key}' must be a list")
    lib = ClinicLibrary(clinic=_entry(lambda: _clean_text(data.get("clinic", ""), "clinic"), "clinic"))
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
# merge on import
# --------------------------------------------------------------------------------------------

@dataclass(frozen=True)
class Conflict:
    """An imported entry whose name exists here with different values, and what was done."""

    kind: str
    name: str
    local: str
    incoming: str
    resolution: str

    def __str__(self) -> str:
        return f"{self.kind} '{self.name}': here {self.local}; in the file {self.incoming} — {self.resolution}"


@dataclass(frozen=True)
class MergeReport:
    added: tuple[str, ...]
    unchanged: tuple[str, ...]
    conflicts: tuple[Conflict, ...]

    def lines(self) -> list[str]:
        """Plain lines for the user: what was added, skipped and in conflict."""
        out = [f"Added {len(self.added)}: {', '.join(self.added)}" if self.added else "Added nothing new."]
        if self.unchanged:
            out.append(f"Already here, identical ({len(self.unchanged)}): {', '.join(self.unchanged)}")
        if self.conflicts:
            out.append(f"Conflicts ({len(self.conflicts)}):")
            out += [f"  {c}" for c in self.conflicts]
        return out


def _free_name(exists, name: str) -> str:
    n = 1
    while True:
        candidate = f"{name} (imported)" if n == 1 else f"{name} (imported {n})"
        if not exists(candidate):
            return candidate[:MAX_NAME]
        n += 1


def _merge_entries(lib: ClinicLibrary, entries, kind: str, on_conflict: str, added: list, same: list,
                   conflicts: list) -> ClinicLibrary:
    """Merge one kind of entry ('part' or 'preset') into ``lib``; appends to the report lists."""
    for entry in entries:
        find, add = (lib.part, lib.with_part) if kind == "part" else (lib.preset, lib.with_preset)
        mine = find(entry.name)
        if mine is None:
            lib = add(entry)
            added.append(f"{kind} '{entry.name}'")
        elif replace(mine, name=name_key(mine.name)) == replace(entry, name=name_key(entry.name)):
            same.append(f"{kind} '{entry.name}'")
        else:
            if on_conflict == "rename":
                new = _free_name(lambda n, find=find: find(n) is not None, entry.name)
                lib = add(replace(entry, name=new))
                what = f"imported as '{new}'"
            elif on_conflict == "replace":
                lib = add(entry, replace_existing=True)
                what = "replaced by the file's entry (as chosen)"
            else:
                what = "kept this machine's entry"
            conflicts.append(Conflict(kind, entry.name, mine.summary(), entry.summary(), what))
    return lib


def merge(local: ClinicLibrary, incoming: ClinicLibrary, on_conflict: str = "keep") -> tuple[ClinicLibrary,
                                                                                           MergeReport]:
    """Merge ``incoming`` into ``local``. Conflicts: 'keep' the local entry (default), 'rename' the
    incoming one to "<name> (imported)", or 'replace' the local one (only when the user chose it)."""
    if on_conflict not in CONFLICT_CHOICES:
        raise InputError("on-conflict", on_conflict, f"must be one of {', '.join(CONFLICT_CHOICES)}")
    added: list[str] = []
    same: list[str] = []
    conflicts: list[Conflict] = []
    lib = _merge_entries(local, incoming.parts, "part", on_conflict, added, same, conflicts)
    lib = _merge_entries(lib, incoming.presets, "preset", on_conflict, added, same, conflicts)
    if not lib.clinic and incoming.clinic:
        lib = replace(lib, clinic=incoming.clinic)
    return lib, MergeReport(tuple(added), tuple(same), tuple(conflicts))


def import_file(path: os.PathLike | str, on_conflict: str = "keep", target: os.PathLike | str | None = None) \
        -> MergeReport:
    """Merge a shared file into this machine's library and save it; returns what happened."""
    incoming = read_library_file(path)
    local = load_clinic_library(target)
    merged, report = merge(local, incoming, on_conflict)
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

def part_from_text(item: str, library, clinic: Callable[[str], ApparatusPart | None] | None = None) \
        -> ApparatusPart:
    """A part from typed text: 'NAME=VOLUME' ('hme=12 mL'), a catalogue key, or (with ``clinic``, a lookup of
    the clinic's own parts by name) a clinic part. Raises InputError with the key 'apparatus'."""
    from ventset.units import parse_quantity

    name, _, vol = item.partition("=")
    name = name.strip()
    if not name:
        raise InputError("apparatus", item, "needs NAME=VOLUME or a catalogue key")
    check_text("part-name", name, label="Apparatus")
    if vol.strip():
        label = f"Apparatus '{visible(name, 30)}'"
        try:
            volume = parse_quantity(vol, "mL", "apparatus")
        except InputError as err:
            raise err.named(label) from None
        if volume < 0:
            raise InputError("apparatus", vol, "volume must be 0 mL or more", label=label)
        return ApparatusPart(name, volume)
    if name in library.parts:
        part = library.parts[name]
        return ApparatusPart(part.label, part.volume_ml.value, part.volume_ml.source)
    found = clinic(name) if clinic is not None else None
    if found is not None:
        return found
    raise InputError("apparatus", item, "is not a catalogue or clinic part; give a volume, e.g. 'hme=12 mL' "
                                        "(see 'ventset parts', 'ventset clinic-parts list')")


def clinic_part(name: str) -> ApparatusPart | None:
    """A part from this machine's clinic library by name, or None (also when the library cannot be read)."""
    from ventset.errors import VentsetError

    try:
        part = load_clinic_library().part(name)
    except VentsetError:
        return None
    return part.as_apparatus() if part is not None else None
