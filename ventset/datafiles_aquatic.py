"""The declared layout of resources/aquatic.toml (fish and aquatic amphibians), one ``FileSchema``.

``ventset.aquatic.data`` reads the file through ``AQUATIC`` and builds its dataclasses from the checked values;
``ventset.datafiles.FILES`` lists it with the other files. The ranges are plausibility guards against typos and
unit slips (the limits the aquatic loader has always used), not clinical limits.
"""

from __future__ import annotations

from typing import Any

from ventset.datafiles_common import below, note_list, unique_note_codes
from ventset.schema import (
    LOWER_SNAKE,
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
    Text,
    TextList,
    Where,
)

AQUATIC_KINDS = ("teleost", "elasmobranch", "amphibian")
# The one published model a group may name instead of its own measurement (ventset.aquatic.metabolism; a test
# checks the two names agree).
VO2_MODELS = ("clarke_johnston_1999",)
VO2_RATE_KEYS = ("model", "mg_kg_h", "ml_kg_h")

_MASS: dict[str, Any] = {"unit": "kg", "lo": 1e-6, "hi": 5000}
_MASS_HELP = " (1 mg to 5 t: a guard against a unit slip)"
_WATER_C: dict[str, Any] = {"unit": "°C", "lo": -2, "hi": 40}
_WATER_HELP = " (-2 °C, sea water's freezing point, to 40 °C)"
_EXPONENT: dict[str, Any] = {"lo": 0.5, "hi": 1.1}


def _pct(name: str, lo: float, hi: float, help: str) -> SourcedNumber:
    return SourcedNumber(name, unit="%", lo=lo, hi=hi, help=help)


DEFAULT_FIELDS: tuple[Field, ...] = (
    _pct("supply_saturation_percent", 1, 480, "O2 saturation of the supply water when none is entered (% of air "
         "saturation; up to 480 %, pure O2)"),
    SourcedNumber("planned_duration_min", unit="min", lo=1, hi=1440,
                  help="procedure length when none is entered (sizes the reservoir); at most a day"),
    SourcedNumber("demand_factor", unit="×", lo=1, hi=3,
                  help="design O2 need as a multiple of the resting rate when none is entered"),
    _pct("low_saturation_percent", 10, 100, "supply or reservoir water below this saturation: caution; also the "
         "floor the reservoir may fall to"),
    _pct("supersaturation_percent", 100, 200, "supply water above this saturation: caution (gas supersaturation)"),
    _pct("gas_bubble_percent", 100, 480, "supply water at or above this saturation: gas-bubble disease has killed "
         "fish"),
    SourcedNumber("high_flow_l_kg_min", unit="L/kg/min", lo=0.1, hi=50,
                  help="a flow above this per kg: caution (water forced past the gills)"),
    SourcedNumber("krogh_tissue_cm2_min_atm", unit="cm²/min/atm", lo=1e-7, hi=1e-3,
                  help="Krogh diffusion constant of tissue, for the diffusion check"),
    SourcedNumber("o2_diffusivity_water_cm2_s", unit="cm²/s", lo=1e-6, hi=1e-4,
                  help="diffusion coefficient of O2 in water, for the diffusion check"),
    SourcedNumber("membrane_to_water_conductance", lo=0.1, hi=10,
                  help="diffusing capacity of the gill membrane over that of the water layer (Dm/Dw)"),
    SourcedNumber("diffusion_margin_fraction", lo=0.05, hi=1,
                  help="the mean water-blood PO2 gradient needed, as a fraction of the inflow PO2, above which the "
                       "diffusion check cautions"),
)


def _one_rate(v: dict[str, Any], at: Where) -> None:
    """exactly one of model, mg_kg_h and ml_kg_h"""
    given = [k for k in VO2_RATE_KEYS if v[k] is not None]
    if len(given) != 1:
        got = f" (got {', '.join(given)})" if given else ""
        raise at.fail(f"needs exactly one of model = \"{VO2_MODELS[0]}\", mg_kg_h or ml_kg_h{got}")


def _extraction_order(v: dict[str, Any], at: Where) -> None:
    """conservative <= usual"""
    if v["conservative"] > v["usual"]:
        raise at.at("conservative").fail(f"{v['conservative']:g} must be at most usual {v['usual']:g}")


def _gill_with_barrier(v: dict[str, Any], at: Where) -> None:
    """gill_area and barrier_um are given together (the diffusion check needs both)"""
    if (v["gill_area"] is None) != (v["barrier_um"] is None):
        given, other = ("gill_area", "barrier_um") if v["gill_area"] is not None else ("barrier_um", "gill_area")
        raise at.at(given).fail(f"needs {other} too (the diffusion check uses both; give both or neither)")


RESTING_VO2 = Table("resting_vo2", checks=(_one_rate,), help=(
    "resting O2 consumption at the reference mass and temperature: a measured rate (mg_kg_h or ml_kg_h) or the "
    "published model named by model"), fields=(
    Choice("model", choices=VO2_MODELS, required=False, default=None,
           help="the reference point read from Clarke & Johnston 1999's line for a 50-g teleost"),
    Number("mg_kg_h", unit="mg O2/kg/h", lo=1e-6, hi=5000, required=False, default=None,
           help="measured resting rate per kg"),
    Number("ml_kg_h", unit="mL O2/kg/h", lo=1e-6, hi=5000, required=False, default=None,
           help="measured resting rate per kg, as a gas volume"),
    Number("reference_mass_kg", **_MASS, help="body mass the rate is for" + _MASS_HELP),
    Number("reference_temperature_c", **_WATER_C, help="water temperature the rate is for" + _WATER_HELP),
    Source()))

GROUP_FIELDS: tuple[Field, ...] = (
    Text("label", help="name shown to the user (also searched)"),
    Choice("kind", choices=AQUATIC_KINDS, help="what sort of animal"),
    TextList("aliases", help="other names for type-to-search"),
    Flag("obligate_ram", help="true: cannot pump water over its gills itself (ram ventilator)"),
    SpanField("mass_kg", start_key=None, **_MASS, help="usual body mass (no start)" + _MASS_HELP),
    SpanField("water_temperature_c", start_key="value", **_WATER_C,
              help="usual water temperature; value = the default when none is entered" + _WATER_HELP),
    SpanField("salinity", start_key="value", unit="g/kg", lo=0, hi=42,
              help="usual practical salinity (about g/kg; sea water about 35); value = the default"),
    RESTING_VO2,
    SourcedNumber("mass_exponent", **_EXPONENT, help="b in VO2 ∝ M^b within the group"),
    SourcedNumber("q10", lo=1.0, hi=5.0, help="Q10 for the water-temperature correction of VO2"),
    SourcedNumber("anaesthesia_factor", lo=0.3, hi=1.5, help="multiplies the resting VO2 under anaesthesia"),
    Table("extraction", checks=(_extraction_order,),
          help="fraction of the inflowing O2 the gills remove while tube-irrigated", fields=(
              Number("conservative", lo=0.01, hi=0.9, help="low end, used for the flow"),
              Number("usual", lo=0.01, hi=0.9, help="usual value"),
              Source())),
    SpanField("clinical_flow_l_kg_min", start_key=None, unit="L/kg/min", lo=0.01, hi=50, required=False,
              default=None, help="the per-kg flow clinicians use, shown beside the computed need"),
    Table("gill_area", required=False, default=None,
          help="gill (lamellar) area for the diffusion check; whole-gill area ∝ M^area_exponent", fields=(
              Number("mm2_per_g", unit="mm²/g", lo=1e-6, hi=5000, help="area per g at reference_mass_kg"),
              Number("reference_mass_kg", **_MASS, help="body mass mm2_per_g is for" + _MASS_HELP),
              Number("area_exponent", **_EXPONENT, help="whole-gill area ∝ M^area_exponent"),
              Source())),
    SourcedNumber("barrier_um", unit="µm", lo=0.1, hi=50, required=False, default=None,
                  help="water-blood barrier thickness of the gill, for the diffusion check"),
    note_list("standing facts about the group, shown with every plan for it"),
)

AQUATIC = FileSchema("aquatic.toml", "fish and aquatic amphibians (gill irrigation)", doc=(
    "Groups of fish and aquatic amphibians for `ventset irrigate` (`ventset/aquatic/`) and the numbers its "
    "irrigation plan and cautions share. `resting_vo2` is a measured resting rate at a reference mass and water "
    "temperature, or `model = \"clarke_johnston_1999\"` for the reference point of that published line; the "
    "plan moves it to the patient by `mass_exponent` and `q10`. Set `obligate_ram = true` for species that "
    "cannot pump water over their gills.\n\n"
    "```toml\n"
    "[groups.goldfish]\n"
    'label = "Goldfish (Carassius auratus)"\n'
    'kind = "teleost"\n'
    'aliases = ["goldfish"]\n'
    "obligate_ram = false\n"
    'mass_kg = { min = 0.002, max = 1.5, source = "from memory" }\n'
    'resting_vo2 = { model = "clarke_johnston_1999", reference_mass_kg = 0.05, reference_temperature_c = 20, '
    'source = "..." }\n'
    "# ... every required field below\n"
    "```\n\n"
    "This file carries no `schema_version` line (a `schema_version` key is refused as unknown)."),
    version=None, fields=(
    Section("defaults", fields=DEFAULT_FIELDS,
            checks=(below("low_saturation_percent", "supersaturation_percent"),
                    below("supersaturation_percent", "gas_bubble_percent", strict=False)),
            help="Numbers shared by every group: defaults for inputs left empty and caution thresholds."),
    Entries("groups", label="group", key_pattern=LOWER_SNAKE, fields=GROUP_FIELDS,
            checks=(_gill_with_barrier, unique_note_codes),
            help="One table per group of similar fish or aquatic amphibians."),
))
