"""The clinic's own parts library: its entries (measured parts, circuit presets), checked from user input.

``ClinicPart.checked`` and ``CircuitPreset.checked`` build an entry from what a person entered (InputError
naming the field); ``ClinicLibrary`` holds them with names unique regardless of case and spacing. The file
format, import and lookups are in ``ventset.partslib``. No Qt here.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from datetime import date, timedelta
from typing import TYPE_CHECKING

from ventset import storage
from ventset.errors import InputError, register_labels
from ventset.model import ApparatusPart, Circuit
from ventset.textpolicy import MAX_CLINIC_ENTRIES, MAX_PRESET_PARTS, TEXT_FIELDS, check_count, check_text

if TYPE_CHECKING:
    from ventset.partslib_machines import ClinicMachine

FORMAT = "ventset-clinic-parts"
SCHEMA_VERSION = 2  # 2 added the clinic's machines; schema 1 files are read (ventset.partslib.MIGRATIONS)
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


def clean_text(text: object, field: str, label: str | None = None) -> str:
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
                          clean_text(note, "part-note"), clean_text(measured_by, "measured-by"),
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
                clean_text(p.get("source", "entered by the user"), "part-source", f"Preset part {i + 1} source")
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
                             clean_text(note, "part-note"))

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
    """The clinic's parts, presets and machines (names unique regardless of case and spacing)."""

    parts: tuple[ClinicPart, ...] = ()
    presets: tuple[CircuitPreset, ...] = ()
    clinic: str = ""
    machines: tuple[ClinicMachine, ...] = ()

    def machine(self, name: str) -> ClinicMachine | None:
        return next((m for m in self.machines if name_key(m.name) == name_key(name)), None)

    def with_machine(self, machine: ClinicMachine, replace_existing: bool = False) -> ClinicLibrary:
        """Add ``machine``; one of the same name is an InputError unless ``replace_existing``."""
        if self.machine(machine.name) is not None and not replace_existing:
            raise InputError("machine-name", machine.name, "is already in the clinic library; edit or remove it")
        kept = tuple(m for m in self.machines if name_key(m.name) != name_key(machine.name))
        check_count("machine-name", len(kept) + 1, MAX_CLINIC_ENTRIES, "machines", label="Clinic machines")
        return replace(self, machines=tuple(sorted((*kept, machine), key=lambda m: name_key(m.name))))

    def without_machine(self, name: str) -> ClinicLibrary:
        if self.machine(name) is None:
            raise InputError("machine-name", name, "is not one of the clinic's machines")
        return replace(self, machines=tuple(m for m in self.machines if name_key(m.name) != name_key(name)))

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
