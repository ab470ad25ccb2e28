"""The declared layout of every data file in resources/: one ``FileSchema`` each, collected in ``FILES``.

The loader (``ventset.library.load_resource``) checks each file against its declaration and
resources/SCHEMA.md is generated from it (``python -m ventset.datafiles --write``). A new optional field is
one declaration with ``required=False`` and a ``default``; a new file is one ``FileSchema`` added to FILES.
Bounds that match a user input reuse that input's hard limits (``ventset.fields.FIELDS``), so a shipped
default can never be a value the user could not enter.
"""

from __future__ import annotations

import sys
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from ventset.datafiles_aquatic import AQUATIC
from ventset.datafiles_common import below, limits, note_list, same_as, unique_note_codes
from ventset.datafiles_situations import SITUATIONS
from ventset.datafiles_validation import VALIDATION
from ventset.fields import FIELDS
from ventset.schema import (
    LOWER_SNAKE,
    SOURCE_HELP,
    UPPER_SNAKE,
    Choice,
    Entries,
    Field,
    FileSchema,
    Flag,
    Number,
    Section,
    Source,
    SourcedNumber,
    SpanField,
    Table,
    TableList,
    Text,
    TextList,
    Where,
)
from ventset.schema_doc import render_markdown

PART_KINDS = ("hme", "filter", "connector", "y_piece", "capnograph", "extension")
# The planner picks these circuits by body mass (ventset/planner.py), so the file must hold them.
REQUIRED_CIRCUITS = ("direct_small_patient", "non_rebreathing", "rebreathing_small_animal",
                     "rebreathing_large_animal")


# ---------------------------------------------------------------------------------------------------------
# species.toml
# ---------------------------------------------------------------------------------------------------------

GROUP_FIELDS: tuple[Field, ...] = (
    Text("label", help="name shown to the user"),
    SourcedNumber("metabolic_k_kcal_day", unit="kcal/day", lo=0.01, hi=1000,
                  help="K in the allometric rate K·M^b kcal/day (M in kg) at reference_temperature_c"),
    SourcedNumber("metabolic_exponent", lo=0.5, hi=1.0,
                  help="b in K·M^b. Published interspecific exponents lie between 0.62 and 0.88 (Kleiber 1947 "
                       "0.75; White & Seymour 2003 0.67; Painter 2005 0.62 below and 0.88 above 0.2 kg; "
                       "Andrews & Pough 1985 about 0.80 in squamates); the allowed range leaves a margin"),
    SourcedNumber("reference_temperature_c", unit="°C", lo=0, hi=45, help="body temperature the K refers to"),
    SourcedNumber("q10", lo=1.0, hi=5.0, help="Q10 for the temperature correction of the metabolic rate"),
    Flag("ectotherm", required=False, default=False,
         help="true: body temperature follows the surroundings; the rate is referred to reference_temperature_c "
              "and corrected by Q10 to the patient's temperature (reptiles)"),
)


def _dead_space_below_tidal_volume(v: dict[str, Any], at: Where) -> None:
    """the anatomical dead space left after intubation, at both ends of mass_kg, is below the smallest usual
    tidal volume"""
    ana, vt, mass = v["anatomical_dead_space"], v["tidal_volume_ml_kg"], v["mass_kg"]
    per_kg = v.get("airway_dead_space_ml_kg")
    for m in (mass.min, mass.max):
        full = per_kg.value * m if per_kg is not None else ana["coefficient_ml"] * m ** ana["exponent"]
        vd = full * ana["intubated_fraction"]
        if vd >= vt.min * m:
            raise at.at("anatomical_dead_space").fail(
                f"leaves {vd:.3g} mL after intubation at {m:g} kg, not below the smallest usual tidal volume "
                f"{vt.min * m:.3g} mL ({vt.min:g} mL/kg): no breath in the range would ventilate the alveoli")


NOTE = note_list("standing facts about the species, shown with every plan for it")

SPECIES_FIELDS: tuple[Field, ...] = (
    Text("label", help="name shown to the user (also searched)"),
    TextList("aliases", required=False, default=(), help="other names for type-to-search"),
    TextList("young_aliases", required=False, default=(), help=(
        "names that choose the species and a young age together (e.g. puppy): neonate below neonate_below_kg, "
        "else juvenile; an age entered still wins")),
    Text("group", pattern=LOWER_SNAKE, help="key of a [groups.<key>] table in this file"),
    SpanField("mass_kg", unit="kg", start_key=None, **limits("mass"),
              help="plausible body mass for the mass field (no start)." + same_as("mass")),
    SpanField("body_temperature_c", unit="°C", start_key="value", **limits("body-temperature"),
              help="normal (reptiles: preferred zone); value = the default, min/max = the normal range."
                   + same_as("body-temperature")),
    SpanField("tidal_volume_ml_kg", unit="mL/kg", **limits("vt-per-kg"),
              help="usual tidal volume per kg lean mass under IPPV." + same_as("vt-per-kg")),
    SpanField("rate_per_min", unit="1/min", **limits("rate"),
              help="usual rate (for rate_mass_scaling.reference_mass_kg when that is given)." + same_as("rate")),
    SourcedNumber("pip_limit_cmh2o", unit="cmH2O", **limits("pressure-limit"),
                  help="default pressure limit." + same_as("pressure-limit")),
    SourcedNumber("peep_cmh2o", unit="cmH2O", **limits("peep"), help="default PEEP." + same_as("peep")),
    SourcedNumber("ie_expiratory_part", **limits("ie"), help="E in I:E = 1:E." + same_as("ie")),
    SpanField("paco2_target_mmhg", unit="mmHg", **limits("target-paco2"),
              help="PaCO2 to aim for." + same_as("target-paco2")),
    SourcedNumber("paco2_etco2_gradient_mmhg", unit="mmHg", **limits("gradient"),
                  extra=(Flag("reliable", required=False, default=True,
                              help="false: EtCO2 is a trend only (a caution says so)"),),
                  help="PaCO2 − EtCO2; negative means EtCO2 reads above PaCO2." + same_as("gradient")),
    SourcedNumber("compliance_ml_cmh2o_kg", unit="mL/cmH2O/kg", lo=0.01, hi=100,
                  help="respiratory-system compliance per kg lean mass"),
    Table("resistance_cmh2o_l_s", help="R = coefficient·M^exponent cmH2O/(L/s), including a suitably sized tube",
          fields=(
              Number("coefficient", unit="cmH2O/(L/s)", **limits("resistance"),
                     help="R at 1 kg." + same_as("resistance")),
              Number("exponent", lo=-1.2, hi=0,
                     help="resistance falls with size: Stahl 1967 gives M^-0.70; geometrically similar airways "
                          "(Poiseuille, length and radius ∝ M^1/3) give M^-1; a margin beyond that is allowed"),
              Source())),
    SourcedNumber("alveolar_dead_space_fraction", **limits("alveolar-dead-space"),
                  help="fraction of VT under anaesthesia." + same_as("alveolar-dead-space")),
    Table("anatomical_dead_space", help="VD = coefficient_ml·M^exponent mL; intubated, intubated_fraction of it "
                                        "stays", fields=(
        Number("coefficient_ml", unit="mL", lo=0, hi=30, lo_open=True,
               help="VD at 1 kg (Stahl 1967 mammals: 2.76 mL); at most 30 mL, the largest usual tidal volume "
                    "per kg in species.toml, since a larger dead space leaves nothing of the breath"),
        Number("exponent", lo=0.7, hi=1.2,
               help="a volume scales nearly with mass: Stahl 1967 gives VD ∝ M^0.96 and lung volumes "
                    "∝ M^1.03-1.13; a margin of about 0.25 either side is allowed"),
        Number("intubated_fraction", lo=0, hi=1, help="share left in the path once intubated"),
        Source())),
    SourcedNumber("rq", **limits("rq"), help="respiratory quotient VCO2/VO2." + same_as("rq")),
    SourcedNumber("anaesthesia_factor", lo=0.3, hi=1.5, help="multiplies the allometric (basal) rate"),
    Choice("default_mode", choices=("volume", "pressure"), help="ventilation mode to plan in"),
    Flag("mechanics_reliable", help="false: pressure predictions are rough (birds, reptiles)"),
    NOTE,
    SourcedNumber("airway_dead_space_ml_kg", unit="mL/kg", lo=0, hi=30, lo_open=True, required=False, default=None,
                  help="airway dead space (unintubated) per kg lean mass where it was measured for the species; "
                       "replaces coefficient_ml·M^exponent of anatomical_dead_space "
                       "(intubated_fraction still applies)"),
    SourcedNumber("neonate_metabolic_factor", lo=0.5, hi=4, required=False, default=None,
                  help="metabolic rate of a neonate of this species as a multiple of the adult allometric rate "
                       "(--age neonate); without it the age input is refused for the species"),
    SourcedNumber("juvenile_metabolic_factor", lo=0.5, hi=4, required=False, default=None,
                  help="metabolic rate of a growing (juvenile) animal as a multiple of the adult allometric rate "
                       "(--age juvenile)"),
    SourcedNumber("neonate_below_kg", unit="kg", **limits("mass"), required=False, default=None,
                  help="with no age entered, a patient lighter than this is planned as a neonate"),
    SourcedNumber("juvenile_below_kg", unit="kg", **limits("mass"), required=False, default=None,
                  help="with no age entered, a patient lighter than this (and not a neonate) is planned as juvenile"),
    SourcedNumber("inspiratory_time_s", unit="s", **limits("ti"), required=False, default=None,
                  help="default Ti (otherwise the rule in planning.toml)." + same_as("ti")),
    SourcedNumber("inspiratory_pause_s", unit="s", **limits("inspiratory-pause"), required=False, default=None,
                  help="default inspiratory pause (no-flow hold inside Ti) for breath-hold species; only with a "
                       "published source (otherwise leave it out: no pause)." + same_as("inspiratory-pause")),
    Table("rate_mass_scaling", required=False, default=None,
          help="the usual rate range is for reference_mass_kg; at mass M it is multiplied by (M/ref)^exponent",
          fields=(
              Number("reference_mass_kg", unit="kg", **limits("mass"), help="mass the rate_per_min range is for"),
              Number("exponent", lo=-0.6, hi=0,
                     help="breath rate falls with size: Stahl 1967 M^-0.26, Lasiewski & Calder 1971 (birds) "
                          "M^-0.31, terrestrial mammals M^-0.303 and aquatic M^-0.09 to -0.12 (Exp Physiol "
                          "2025, doi 10.1113/EP091868); about twice the steepest is allowed"),
              Source())),
)


def _known_groups(v: dict[str, Any], at: Where) -> None:
    """every species names a group declared in [groups]"""
    for key, sp in v["species"].items():
        if sp["group"] not in v["groups"]:
            raise at.enter(f"species {key!r}").at("group").fail(
                f"names unknown group {sp['group']!r} (known: {', '.join(v['groups'])})")


def _unique_names(v: dict[str, Any], at: Where) -> None:
    """a label or alias names one species only (search finds it by either)"""
    seen: dict[str, str] = {}
    for key, sp in v["species"].items():
        for field, names in (("label", (sp["label"],)), ("aliases", sp["aliases"]),
                             ("young_aliases", sp.get("young_aliases", ()))):
            for name in names:
                folded = name.strip().lower()
                if seen.setdefault(folded, key) != key:
                    raise at.enter(f"species {key!r}").at(field).fail(
                        f"{name!r} already names species {seen[folded]!r}")


def _taxa_keyed_by_group(v: dict[str, Any], at: Where) -> None:
    """each [taxa.<key>] is keyed by a group declared in [groups] and names that group"""
    for key, tx in (v.get("taxa") or {}).items():
        if key not in v["groups"] or tx["group"] != key:
            raise at.enter(f"taxon {key!r}").at("group").fail(
                f"must be the taxon's own key, a group declared in [groups] (known: {', '.join(v['groups'])})")


SPECIES = FileSchema("species.toml", "species and metabolic groups", doc=(
    "Starting defaults for each species (to be edited, never a prescription) and the allometric metabolic "
    "groups they draw on. Sign convention: `paco2_etco2_gradient_mmhg` is PaCO2 − EtCO2, so a negative value "
    "means EtCO2 reads above PaCO2. Species notes are at most `caution`, so that `danger` always means the "
    "plan's own numbers are dangerous. Codes are UPPER_SNAKE and stable.\n\n"
    "```toml\n"
    "[species.dog]\n"
    'label = "Dog"\n'
    'group = "placental"\n'
    'tidal_volume_ml_kg = { min = 8, max = 15, start = 10, source = "Authors 2017; start common practice" }\n'
    'peep_cmh2o = { value = 5, source = "common practice" }\n'
    'paco2_etco2_gradient_mmhg = { value = 3, reliable = true, source = "from memory" }\n'
    'notes = [ { severity = "info", code = "LEAN_MASS", text = "...", source = "..." } ]\n'
    "# ... every required field below\n"
    "```"), fields=(
    Text("data_version", required=False, default="1", help="version of the data (shown with plans)"),
    Entries("groups", label="group", fields=GROUP_FIELDS,
            help="Metabolic groups: K·M^b kcal/day (M in kg) at a reference body temperature."),
    Entries("species", label="species", fields=SPECIES_FIELDS,
            checks=(unique_note_codes, _dead_space_below_tidal_volume),
            help="One table per species or group of similar species."),
    Entries("taxa", label="taxon", fields=SPECIES_FIELDS, required=False, default={},
            checks=(unique_note_codes, _dead_space_below_tidal_volume),
            help="Generic planner values for a patient of a metabolic group whose species is not listed (planned "
                 "by group allometry alone, `--taxon <group>`): the same fields as a species, keyed by the group, "
                 "each sourced (published allometry where it exists, else common practice or from memory)."),
), checks=(_known_groups, _unique_names, _taxa_keyed_by_group))


# ---------------------------------------------------------------------------------------------------------
# apparatus.toml
# ---------------------------------------------------------------------------------------------------------

def _required_circuits(v: dict[str, Any], at: Where) -> None:
    """the circuits the planner chooses by body mass are present"""
    for key in REQUIRED_CIRCUITS:
        if key not in v["circuits"]:
            raise at.enter(f"circuit {key!r}").fail(
                f"is missing (the planner chooses it by body mass; needed: {', '.join(REQUIRED_CIRCUITS)})")


def _fg(name: str, unit: str, help: str, **bounds: Any) -> SourcedNumber:
    return SourcedNumber(name, unit=unit, help=help, **{"lo": 0, **bounds})


_MASS = limits("mass")
FRESH_GAS = Section("fresh_gas", help="Numbers for the fresh gas flow suggestion.", fields=(
    _fg("non_rebreathing_minute_volume_multiple", "× VE", "non-rebreathing fresh gas as a multiple of minute "
        "volume; at least 1, since less than the minute volume is rebreathed", lo=1, hi=10),
    _fg("non_rebreathing_floor_ml_min", "mL/min", "lowest non-rebreathing flow", hi=20000),
    _fg("non_rebreathing_below_kg", "kg", "below this mass a non-rebreathing system is chosen", **_MASS),
    _fg("rebreathing_maintenance_ml_kg_min", "mL/kg/min", "circle flow in maintenance", hi=500),
    _fg("rebreathing_induction_ml_kg_min", "mL/kg/min", "circle flow at induction and changes", hi=500),
    _fg("rebreathing_floor_ml_min", "mL/min", "lowest circle flow", hi=20000),
    _fg("direct_small_patient_below_kg", "kg", "below this mass a small-patient ventilator attached to the tube "
        "is chosen", **_MASS),
    _fg("large_animal_circle_above_kg", "kg", "above this mass a large-animal circle is chosen", **_MASS),
    _fg("large_animal_maintenance_ml_kg_min", "mL/kg/min", "large-animal circle flow in maintenance", hi=500),
    _fg("large_animal_induction_ml_kg_min", "mL/kg/min", "large-animal circle flow at induction", hi=500),
    _fg("sidestream_sampling_ml_min", "mL/min", "typical sidestream analyser flow." + same_as("sampling-flow"),
        **limits("sampling-flow")),
), checks=(below("direct_small_patient_below_kg", "non_rebreathing_below_kg"),
           below("non_rebreathing_below_kg", "large_animal_circle_above_kg"),
           below("rebreathing_maintenance_ml_kg_min", "rebreathing_induction_ml_kg_min", strict=False),
           below("large_animal_maintenance_ml_kg_min", "large_animal_induction_ml_kg_min", strict=False)))

APPARATUS = FileSchema("apparatus.toml", "breathing-circuit parts, circuits and fresh gas", doc=(
    "Typical internal volumes of the parts between the Y-piece (or the patient port of a non-rebreathing "
    "system) and the incisors, the compressible volume of each kind of circuit, and the fresh gas rules. The "
    "stated or measured volume of the real device always overrides these."), fields=(
    Entries("parts", label="part", help="Apparatus dead space between the Y-piece and the incisors.", fields=(
        Text("label", help="name shown to the user"),
        Choice("kind", choices=PART_KINDS, help="what sort of part"),
        SourcedNumber("volume_ml", unit="mL", lo=0, hi=5000, help="internal volume (dead space)"))),
    Entries("circuits", label="circuit", help="Kinds of breathing system.", fields=(
        Text("label", help="name shown to the user"),
        Flag("rebreathing", help="true for a circle (rebreathing) system"),
        SourcedNumber("compressible_volume_ml_cmh2o", unit="mL/cmH2O", **limits("compressible-volume"),
                      help="volume lost per breath per cmH2O of (plateau or peak − PEEP)."
                           + same_as("compressible-volume")))),
    FRESH_GAS,
), checks=(_required_circuits,))


# ---------------------------------------------------------------------------------------------------------
# cautions.toml, planning.toml
# ---------------------------------------------------------------------------------------------------------

def _share(name: str, help: str) -> SourcedNumber:
    return SourcedNumber(name, lo=0, hi=1, lo_open=True, hi_open=True, help=help)


def _taus(name: str, help: str) -> SourcedNumber:
    return SourcedNumber(name, unit="τ", lo=0, hi=10, lo_open=True, help=help)


_PAO2: dict[str, Any] = {"unit": "mmHg", "lo": 0, "hi": FIELDS["barometric-pressure"].hi, "lo_open": True}
_PAO2_HELP = " At most the highest barometric pressure the barometric-pressure input accepts."
_PACO2: dict[str, Any] = {"unit": "mmHg", **limits("target-paco2")}

CAUTIONS = FileSchema("cautions.toml", "thresholds of the caution rules", doc=(
    "The numbers the caution rules in `ventset/cautions.py` compare against. Every threshold a rule reads is "
    "required here, so a missing one stops loading instead of failing while a plan is made."), fields=(
    Section("thresholds", help="Caution thresholds.", fields=(
        _share("apparatus_share_caution", "apparatus + tube dead space as a share of VT: caution from here"),
        _share("apparatus_share_danger", "apparatus + tube dead space as a share of VT: danger from here"),
        _taus("expiration_tau_caution", "expiration shorter than this many time constants: caution"),
        _taus("expiration_tau_danger", "expiration shorter than this many time constants: danger"),
        _taus("inspiration_tau_pressure_mode", "in a pressure mode, inspiration shorter than this many time "
              "constants does not fill the lung"),
        SourcedNumber("driving_pressure_caution_cmh2o", unit="cmH2O", **limits("pressure-limit"),
                      help="driving pressure (plateau − PEEP) above this: caution." + same_as("pressure-limit")),
        _share("compressible_share_caution", "circuit compression as a share of VT: caution from here"),
        SourcedNumber("metabolic_ratio_caution", lo=1, hi=10, lo_open=True,
                      help="an entered metabolic rate more than this factor above or below the allometric one"),
        SourcedNumber("pao2_caution_mmhg", **_PAO2, help="expected alveolar PO2 below this: caution." + _PAO2_HELP),
        SourcedNumber("pao2_danger_mmhg", **_PAO2, help="expected alveolar PO2 below this: danger." + _PAO2_HELP),
        SourcedNumber("small_patient_sidestream_kg", unit="kg", **limits("mass"),
                      help="below this mass sidestream capnography under-reads"),
        SourcedNumber("peep_high_cmh2o", unit="cmH2O", **limits("peep"),
                      help="PEEP above this: caution (cardiac output)." + same_as("peep")),
        SourcedNumber("paco2_danger_high_mmhg", **_PACO2,
                      help="an expected or measured PaCO2 above this is a danger (planner and titration)"),
        SourcedNumber("paco2_danger_low_mmhg", **_PACO2,
                      help="an expected PaCO2 below this is a danger (severe hypocapnia)"),
        _share("pause_share_of_ti_caution", "an inspiratory pause taking this share of Ti or more leaves little "
               "time for flow: caution"),
        SourcedNumber("thin_data_items", lo=1, hi=4,
                      help="of the four species inputs the expected PaCO2 and pressures rest on (metabolic level, "
                           "airway and alveolar dead space, compliance), this many or more known only from memory "
                           "give the THIN_DATA caution"),
        SourcedNumber("tube_id_ratio_large_caution", lo=1, hi=5, lo_open=True,
                      help="an entered tube internal diameter more than this multiple of the usual one for the "
                      "mass (ventset/stages/airway.py usual_tube): caution, it may not fit"),
        SourcedNumber("tube_id_ratio_small_caution", lo=0, hi=1, lo_open=True, hi_open=True,
                      help="an entered tube internal diameter below this share of the usual one: caution"),
        SourcedNumber("tube_id_ratio_small_danger", lo=0, hi=1, lo_open=True, hi_open=True,
                      help="an entered tube internal diameter below this share of the usual one: danger"),
    ), checks=(below("apparatus_share_caution", "apparatus_share_danger"),
               below("tube_id_ratio_small_danger", "tube_id_ratio_small_caution"),
               below("expiration_tau_danger", "expiration_tau_caution"),
               below("pao2_danger_mmhg", "pao2_caution_mmhg"),
               below("paco2_danger_low_mmhg", "paco2_danger_high_mmhg"))),
))

PLANNING = FileSchema("planning.toml", "planner defaults that are not species data", doc=(
    "Default inspiratory time when neither Ti nor I:E is entered: Ti = ti_reference_s · (M / "
    "ti_reference_mass_kg)^ti_mass_exponent, never longer than the species' I:E allows."), fields=(
    Section("defaults", help="Planner defaults.", fields=(
        SourcedNumber("fio2", **limits("fio2"), help="default FiO2." + same_as("fio2")),
        SourcedNumber("ti_reference_s", unit="s", **limits("ti"), help="Ti at the reference mass." + same_as("ti")),
        SourcedNumber("ti_reference_mass_kg", unit="kg", **limits("mass"), help="reference mass of the Ti rule"),
        SourcedNumber("ti_mass_exponent", lo=0, hi=0.5,
                      help="Ti scales with the breath period, M^0.26 (Stahl 1967); about twice that is allowed"),
        SourcedNumber("reservoir_bag_vt_multiple", unit="× VT", lo=1, hi=20,
                      help="reservoir bag as a multiple of the set VT; at least 1, a smaller bag cannot hold a "
                           "breath"),
        SourcedNumber("fed_metabolic_factor", unit="×", lo=1, hi=50,
                      help="an ectotherm that has eaten (--state fed): multiple of its fasted metabolic rate"),
        SourcedNumber("fed_metabolic_factor_highest", unit="×", lo=1, hi=50,
                      help="the highest published digestive rise (said in the caution)"),
        SourcedNumber("gravid_metabolic_factor", unit="×", lo=1, hi=50,
                      help="a gravid ectotherm (--state gravid): multiple of its non-reproductive rate"),
        SourcedNumber("gravid_metabolic_factor_highest", unit="×", lo=1, hi=50,
                      help="the highest published rise late in gestation (said in the caution)"),
        SourcedNumber("placental_neonate_metabolic_factor", unit="×", lo=0.5, hi=4,
                      help="a neonatal placental mammal without a species value: multiple of the adult rate"),
        SourcedNumber("placental_juvenile_metabolic_factor", unit="×", lo=0.5, hi=4,
                      help="a juvenile placental mammal without a species value: multiple of the adult rate"),
        SourcedNumber("usual_tube_id_mm_at_1kg", unit="mm", lo=0.5, hi=10,
                      help="usual endotracheal tube internal diameter at 1 kg (ID = a·M^b), used when none is entered"),
        SourcedNumber("usual_tube_id_exponent", lo=0.2, hi=0.6, help="b in ID = a·M^b"),
        SourcedNumber("usual_tube_beyond_incisors_cm_at_1kg", unit="cm", lo=0, hi=20,
                      help="usual length of tube and connector beyond the incisors at 1 kg (L = c·M^d)"),
        SourcedNumber("usual_tube_beyond_incisors_exponent", lo=0, hi=0.6, help="d in L = c·M^d"),
    )),
))


# ---------------------------------------------------------------------------------------------------------
# titration.toml, oxygenation.toml
# ---------------------------------------------------------------------------------------------------------

_MINUTES: dict[str, Any] = {"unit": "min", "lo": 0, "hi": 240, "lo_open": True}

TITRATION = FileSchema("titration.toml", "numbers for adjusting ventilation from measurements", doc=(
    "Step size and re-measure times for `ventset/titrate.py`, and the measured-PaCO2 bounds that are said out "
    "loud. Re-measure times are at most 240 min (a guard against a unit slip, not a clinical limit)."), fields=(
    Section("defaults", help="Titration defaults.", fields=(
        SourcedNumber("max_step_fraction", lo=0, hi=1, lo_open=True, hi_open=True,
                      help="largest change of alveolar ventilation in one step when not urgent"),
        SourcedNumber("remeasure_etco2_min", **_MINUTES, help="re-measure EtCO2 after at least this"),
        SourcedNumber("remeasure_etco2_max_min", **_MINUTES, help="... and at most this"),
        SourcedNumber("remeasure_blood_gas_min", **_MINUTES, help="re-measure a blood gas after this"),
        SourcedNumber("gradient_widening_mmhg", unit="mmHg", lo=0, hi=FIELDS["gradient"].hi, lo_open=True,
                      help="a PaCO2 − EtCO2 gradient this much wider than usual points to alveolar dead space"),
        SourcedNumber("paco2_high_caution_mmhg", **_PACO2, help="measured PaCO2 above this: caution"),
        SourcedNumber("paco2_low_caution_mmhg", **_PACO2, help="measured PaCO2 below this: caution"),
    ), checks=(below("remeasure_etco2_min", "remeasure_etco2_max_min", strict=False),
               below("paco2_low_caution_mmhg", "paco2_high_caution_mmhg"))),
))


def _unique_band_codes(v: dict[str, Any], at: Where) -> None:
    """pf_bands codes are unique"""
    seen: set[str] = set()
    for i, band in enumerate(v["pf_bands"]):
        if band["code"] in seen:
            raise at.enter(f"pf_bands #{i + 1}").at("code").fail(f"repeats {band['code']!r}")
        seen.add(band["code"])


_PERCENT: dict[str, Any] = {"unit": "%", "lo": 0, "hi": 100, "lo_open": True}

OXYGENATION = FileSchema("oxygenation.toml", "PaO2/FiO2 bands and oxygenation thresholds", doc=(
    "A band applies when the PaO2/FiO2 ratio is below `limit_mmhg` (`inclusive = false`) or at or below it "
    "(`inclusive = true`); the most severe band that applies in each scheme is reported (veterinary: Wilkins "
    "et al. 2007; human Berlin: ARDS Definition Task Force 2012). A ratio in a band is not a diagnosis."),
    fields=(
    TableList("pf_bands", min_items=1, help="PaO2/FiO2 interpretation bands.", fields=(
        Text("scheme", pattern=LOWER_SNAKE, help="which definition the band belongs to"),
        Text("code", pattern=UPPER_SNAKE, help="stable code"),
        Text("label", help="shown to the user"),
        Number("limit_mmhg", unit="mmHg", lo=0, hi=1000, lo_open=True,
               help="upper edge of the band (a guard: PaO2/FiO2 cannot reach 1000 mmHg)"),
        Flag("inclusive", help="true: applies at the limit too"),
        Source())),
    Section("thresholds", help="Oxygenation thresholds.", fields=(
        SourcedNumber("expected_pao2_per_fio2_percent", unit="mmHg/%", lo=0, hi=10, lo_open=True,
                      help="healthy-lung PaO2 per % of FiO2"),
        SourcedNumber("pao2_hypoxaemia_mmhg", **_PAO2, help="PaO2 below this is hypoxaemia." + _PAO2_HELP),
        SourcedNumber("pao2_severe_hypoxaemia_mmhg", **_PAO2, help="PaO2 below this is severe." + _PAO2_HELP),
        SourcedNumber("spo2_caution_percent", **_PERCENT, help="SpO2 below this: caution"),
        SourcedNumber("spo2_danger_percent", **_PERCENT, help="SpO2 below this: danger"),
    ), checks=(below("pao2_severe_hypoxaemia_mmhg", "pao2_hypoxaemia_mmhg"),
               below("spo2_danger_percent", "spo2_caution_percent"))),
), checks=(_unique_band_codes,))


# aquatic.toml, validation.toml, situations.toml and machines.toml are declared in their own modules
# (datafiles_aquatic.py, datafiles_validation.py, datafiles_situations.py, machines/filedecl.py).
from ventset.machines.filedecl import MACHINES  # noqa: E402

FILES: dict[str, FileSchema] = {f.name: f for f in (SPECIES, APPARATUS, CAUTIONS, PLANNING, TITRATION, OXYGENATION,
                                                    AQUATIC, VALIDATION, SITUATIONS, MACHINES)}

PREAMBLE = f"""# Data file reference (resources/*.toml)

Generated from `ventset/datafiles.py` by `python -m ventset.datafiles --write`; do not edit by hand
(`tests/test_schema.py` fails when this file and the declarations differ).

- Every number a plan may use carries a `source`: {SOURCE_HELP}.
  A number is written `{{ value = ..., source = "..." }}`, a usual range
  `{{ min = ..., max = ..., start = ..., source = "..." }}`.
- Units are in the key names (`_kg`, `_ml`, `_cmh2o`, `_mmhg`, `_min`, `_s`, `_c` for °C).
- Loading is strict: a key that is not declared here is refused (with the nearest known key), numbers are
  finite TOML numbers (text such as `"12"` is refused), booleans are unquoted `true`/`false` (not `"no"`, `0`
  or `1`), text is non-empty, and every file but aquatic.toml starts with `schema_version = 1`. A bad file stops
  loading with one line, `<file>: <entry>: field '<name>' <what is wrong>`.
- Ranges under "allowed" are plausibility guards against typos and unit slips, not clinical limits; where a
  key matches a user input they are that input's hard limits.
"""


def schema_markdown() -> str:
    """The generated text of resources/SCHEMA.md."""
    return render_markdown(list(FILES.values()), PREAMBLE)


def main(argv: Sequence[str] | None = None) -> int:
    """``python -m ventset.datafiles [--write]``: print (or write to resources/SCHEMA.md) the generated reference."""
    args = list(sys.argv[1:] if argv is None else argv)
    text = schema_markdown()
    if args == ["--write"]:
        target = Path(__file__).resolve().parent.parent / "resources" / "SCHEMA.md"
        if not target.parent.is_dir():
            print(f"no checkout here: {target.parent} does not exist", file=sys.stderr)
            return 2
        target.write_text(text, encoding="utf-8")
        print(f"wrote {target}")
    elif not args:
        sys.stdout.write(text)
    else:
        print("usage: python -m ventset.datafiles [--write]", file=sys.stderr)
        return 2
    return 0


if __name__ == "__main__":  # python -m ventset.datafiles [--write]
    raise SystemExit(main())
