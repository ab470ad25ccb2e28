"""Stage 1: resolve the inputs: species, masses, mode, strategy and body temperature."""

from __future__ import annotations

from dataclasses import dataclass

from ventset.errors import InputError
from ventset.fields import validate_request
from ventset.library import Library, Species
from ventset.model import MODES, STRATEGIES, Assumption, Request
from ventset.stages.trail import note
from ventset.units import check_range, fmt


@dataclass(frozen=True)
class Inputs:
    """The patient as the plan uses it, after defaults are filled in."""

    species: Species
    species_label: str
    mass_kg: float
    lean_mass_kg: float
    body_temp_c: float
    mode: str
    strategy: str
    assumptions: tuple[Assumption, ...]


def find_species(library: Library, key: str) -> Species:
    """The library species for ``key`` (key, label or alias); InputError naming 'species' if unknown."""
    sp = library.find_species(key) if key else None
    if sp is None:
        raise InputError("species", key, "unknown species; run 'ventset species' for the list")
    return sp


def find_entry(library: Library, species: str, taxon: str) -> Species:
    """The entry a patient is planned with: its listed species, or for a species not listed (``taxon``) the
    generic entry of its metabolic group; InputError naming the field."""
    if not taxon.strip():
        return find_species(library, species)
    if species.strip():
        raise InputError("taxon", taxon, "give a listed species or a metabolic group for one not listed, not both")
    tx = library.find_taxon(taxon)
    if tx is None:
        raise InputError("taxon", taxon, f"is not a metabolic group with values for a species not listed; one of "
                                         f"{', '.join(library.taxa)}")
    return tx


def check_mass(request: Request, sp: Species) -> None:
    """The patient's mass must be inside the species' mass range; InputError naming 'mass'."""
    try:
        check_range(request.patient.mass_kg, sp.mass_kg.min, sp.mass_kg.max, "mass", "kg")
    except InputError as err:
        raise InputError(err, err.value, f"{err.reason} for {sp.label} ({sp.mass_kg.source})", "kg") from None


def resolve_inputs(request: Request, library: Library) -> Inputs:
    """Check the request against its hard limits and fill in species, lean mass, mode and temperature."""
    validate_request(request)
    p, c, s = request.patient, request.circuit, request.strategy
    sp = find_entry(library, p.species, p.taxon)
    check_mass(request, sp)
    notes: list[Assumption] = []
    label = sp.label
    custom = p.custom_species.strip()
    if p.taxon.strip():
        label = f"{custom} (not listed: by {sp.group.label.lower()} allometry)" if custom else sp.label
        notes.append(note("taxon_only", "Planned by metabolic group only", sp.group.label, "",
                          "no species entry and no base species: the generic values of the group (species.toml "
                          f"[taxa.{sp.group.key}]), each with its source below"))
    elif custom:
        label = f"{custom} (values from {sp.label})"
        notes.append(note("species_values", "Species values", sp.label, "",
                          f"base species for '{custom}', which is not in the library: its values are used for "
                          "everything not entered"))
    lean = p.lean_mass_kg if p.lean_mass_kg is not None else p.mass_kg
    if lean > p.mass_kg:
        raise InputError("lean-mass", f"{fmt(lean)} kg", f"must not exceed the body mass of {fmt(p.mass_kg)} kg")
    if p.lean_mass_kg is None:
        notes.append(note("lean_mass", "Lean mass", lean, "kg", "taken as the body mass (no lean mass entered)"))
    if s.name not in STRATEGIES:
        raise InputError("strategy", s.name, f"must be one of {', '.join(STRATEGIES)}")
    mode = c.mode or sp.default_mode
    if mode not in MODES:
        raise InputError("mode", mode, f"must be one of {', '.join(MODES)}")
    if c.mode is None:
        notes.append(note("mode", "Ventilation mode", mode, "", f"species default for {sp.label} (common practice)"))
    temp = p.body_temp_c if p.body_temp_c is not None else sp.body_temperature_c.start
    if p.body_temp_c is None:
        notes.append(note("body_temperature", "Body temperature", temp, "°C", sp.body_temperature_c.source))
    return Inputs(sp, label, p.mass_kg, lean, temp, mode, s.name, tuple(notes))
