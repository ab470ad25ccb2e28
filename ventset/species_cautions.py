"""Caution rules about the species data a plan rests on: thin data, a species not listed (by group only), a
custom species on a base species. Listed in ventset.cautions.RULES; each reads a ventset.cautions.Context."""

from __future__ import annotations

import re
from collections.abc import Callable
from typing import Any

from ventset.caution_make import caution
from ventset.library import Species
from ventset.model import Caution

_YEAR = re.compile(r"\b(1[89]|20)\d\d\b")
# The species inputs that set the ventilation, with the words the caution names them by.
_VENTILATION_INPUTS: tuple[tuple[str, Callable[[Species], str]], ...] = (
    ("the metabolic level under anaesthesia", lambda sp: sp.anaesthesia_factor.source),
    ("the airway dead space", lambda sp: sp.airway_dead_space_ml_kg.source if sp.airway_dead_space_ml_kg
     else sp.anatomical_source),
    ("the alveolar dead space", lambda sp: sp.alveolar_dead_space_fraction.source),
    ("the compliance", lambda sp: sp.compliance_ml_cmh2o_kg.source),
)


def _from_memory_only(source: str) -> bool:
    """A source that says "from memory" and cites no dated publication."""
    return "from memory" in source.lower() and not _YEAR.search(source)


def thin_data(x: Any) -> list[Caution]:
    """Say so when several of the inputs that set the ventilation rest on no published measurement."""
    if x.plan.request.patient.custom_species.strip() or x.plan.request.patient.taxon.strip():
        return []  # CUSTOM_SPECIES or TAXON_ONLY already says the values are not the species' own
    thin = [words for words, source in _VENTILATION_INPUTS if _from_memory_only(source(x.species))]
    if len(thin) < x.threshold["thin_data_items"]:
        return []
    return [caution("caution", "THIN_DATA",
                    "Data for {species} are thin: {what} rest on no published measurement in this species. Expect "
                    "the first PaCO2 to differ from the plan: watch EtCO2 and chest movement from the first breaths "
                    "and check an arterial blood gas early.",
                    {"species": x.species.label, "what": ", ".join(thin[:-1]) + " and " + thin[-1]})]


def taxon_only(x: Any) -> list[Caution]:
    """A species not listed, planned by its metabolic group alone: say so, and what to watch."""
    p = x.plan.request.patient
    if not p.taxon.strip():
        return []
    g = x.species.group
    name = p.custom_species.strip() or "This patient"
    return [caution("caution", "TAXON_ONLY",
                    "{name} is planned by its metabolic group alone ({group}): no species entry and no base species, "
                    "only group allometry (metabolic rate {k_kcal_day}·M^{exponent}, dead space, compliance) and the "
                    "group's usual ranges. Expect the first PaCO2 to differ from the plan: watch EtCO2, chest or "
                    "body-wall movement and airway pressure from the first breaths, check an arterial blood gas "
                    "early, and enter what you measure (temperature, metabolic rate, compliance).",
                    {"name": name, "group": g.label.lower()}, k_kcal_day=g.k_kcal_day.value,
                    exponent=g.exponent.value)]


def custom_species(x: Any) -> list[Caution]:
    name = x.plan.request.patient.custom_species.strip()
    if not name or x.plan.request.patient.taxon.strip():
        return []
    return [caution("caution", "CUSTOM_SPECIES",
                    "{name} is not in the species library: every value not entered comes from {species} (usual "
                    "tidal volume and rate, pressure limit, compliance, dead space, metabolism). Enter what you know "
                    "about this species and titrate closely to capnography and chest movement.",
                    {"name": name, "species": x.species.label})]
