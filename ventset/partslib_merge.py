"""Merging a shared clinic parts file into this machine's library: new entries added, identical ones skipped,
and a name that exists with different values a reported conflict, never overwritten unless asked for. No Qt here.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, replace
from typing import Any

from ventset.errors import InputError
from ventset.partslib_model import CONFLICT_CHOICES, MAX_NAME, ClinicLibrary, name_key


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


SHOWN_KIND = {"part": "part", "preset": "preset", "machine": "ventilator"}  # "machine" alone could be the computer


def _free_name(exists, name: str) -> str:
    n = 1
    while True:
        candidate = f"{name} (imported)" if n == 1 else f"{name} (imported {n})"
        if not exists(candidate):
            return candidate[:MAX_NAME]
        n += 1


def _lookups(lib: ClinicLibrary, kind: str) -> tuple[Callable[[str], Any], Callable[..., ClinicLibrary]]:
    """How ``lib`` finds and adds an entry of ``kind``."""
    if kind == "part":
        return lib.part, lib.with_part
    if kind == "preset":
        return lib.preset, lib.with_preset
    return lib.machine, lib.with_machine


def _merge_entries(lib: ClinicLibrary, entries, kind: str, on_conflict: str, added: list, same: list,
                   conflicts: list) -> ClinicLibrary:
    """Merge one kind of entry ('part', 'preset' or 'machine') into ``lib``; appends to the report lists."""
    for entry in entries:
        find, add = _lookups(lib, kind)
        mine = find(entry.name)
        word = SHOWN_KIND[kind]
        if mine is None:
            lib = add(entry)
            added.append(f"{word} '{entry.name}'")
        elif replace(mine, name=name_key(mine.name)) == replace(entry, name=name_key(entry.name)):
            same.append(f"{word} '{entry.name}'")
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
            conflicts.append(Conflict(word, entry.name, mine.summary(), entry.summary(), what))
    return lib


def merge(local: ClinicLibrary, incoming: ClinicLibrary, on_conflict: str = "keep",
          kinds: tuple[str, ...] = ("part", "preset", "machine")) -> tuple[ClinicLibrary, MergeReport]:
    """Merge ``incoming`` into ``local``. Conflicts: 'keep' the local entry (default), 'rename' the
    incoming one to "<name> (imported)", or 'replace' the local one (only when the user chose it). ``kinds``:
    which entries to merge (``ventset machines import`` merges only the machines)."""
    if on_conflict not in CONFLICT_CHOICES:
        raise InputError("on-conflict", on_conflict, f"must be one of {', '.join(CONFLICT_CHOICES)}")
    added: list[str] = []
    same: list[str] = []
    conflicts: list[Conflict] = []
    lib = local
    for kind, entries in (("part", incoming.parts), ("preset", incoming.presets), ("machine", incoming.machines)):
        if kind in kinds:
            lib = _merge_entries(lib, entries, kind, on_conflict, added, same, conflicts)
    if not lib.clinic and incoming.clinic:
        lib = replace(lib, clinic=incoming.clinic)
    return lib, MergeReport(tuple(added), tuple(same), tuple(conflicts))
