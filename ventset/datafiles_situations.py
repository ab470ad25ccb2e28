"""The declared layout of resources/situations.toml (the patient's situations), listed in ``datafiles.FILES``."""

from __future__ import annotations

from typing import Any

from ventset.datafiles_common import limits, same_as
from ventset.fields import FIELDS
from ventset.model import AGES
from ventset.schema import (
    LOWER_KEBAB,
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

# ---------------------------------------------------------------------------------------------------------
# situations.toml
# ---------------------------------------------------------------------------------------------------------

_MINUTES: dict[str, Any] = {"unit": "min", "lo": 0, "hi": 240, "lo_open": True}
SITUATION_CATEGORIES = ("surgery", "disease", "physiology", "drug", "equipment", "place")
SITUATION_SEVERITIES = ("info", "caution", "danger")
_FACTOR_HELP = " (a guard against a slip, not a clinical limit)"


def _peep_order(v: dict[str, Any], at: Where) -> None:
    """peep_min_cmh2o <= peep_max_cmh2o when both are given"""
    lo, hi = v["peep_min_cmh2o"], v["peep_max_cmh2o"]
    if lo is not None and hi is not None and lo.value > hi.value:
        raise at.at("peep_min_cmh2o").fail(f"{lo.value:g} must be at most peep_max_cmh2o {hi.value:g}")


def _ceiling_above_band(v: dict[str, Any], at: Where) -> None:
    """paco2_ceiling_mmhg is at least the top of paco2_band_mmhg"""
    band, ceiling = v["paco2_band_mmhg"], v["paco2_ceiling_mmhg"]
    if band is not None and ceiling is not None and ceiling.value < band.max:
        raise at.at("paco2_ceiling_mmhg").fail(f"{ceiling.value:g} must be at least the band's max {band.max:g}")


def _unique_situation_codes(v: dict[str, Any], at: Where) -> None:
    """caution codes are unique within a situation"""
    seen: set[str] = set()
    for i, n in enumerate(v["cautions"]):
        if n["code"] in seen:
            raise at.enter(f"{at.entry} cautions #{i + 1}").at("code").fail(f"repeats {n['code']!r}")
        seen.add(n["code"])


def _asks_for_inputs(v: dict[str, Any], at: Where) -> None:
    """asks_for names user inputs (keys of ventset/fields.py)"""
    for key in v["asks_for"]:
        if key not in FIELDS:
            raise at.at("asks_for").fail(f"names {key!r}, which is not an input")


def _known_exclusions(v: dict[str, Any], at: Where) -> None:
    """excludes names other situations of this file"""
    for key, sit in v["situations"].items():
        for other in sit["excludes"]:
            if other not in v["situations"] or other == key:
                raise at.enter(f"situation {key!r}").at("excludes").fail(f"names {other!r}, not another situation")


SITUATION_FIELDS: tuple[Field, ...] = (
    Text("label", help="name shown to the user (also searched)"),
    Choice("category", choices=SITUATION_CATEGORIES, help="how the list groups it"),
    TextList("species", required=False, default=(),
             help="species keys it applies to (others are refused with a message); empty: every species"),
    TextList("excludes", required=False, default=(),
             help="situations it cannot be combined with (e.g. the two kinds of insufflation)"),
    TextList("asks_for", required=False, default=(),
             help="inputs the situation needs entered (a caution asks for them when they are not)"),
    Choice("age", choices=AGES, required=False, default=None,
           help="plans the patient at this age when no age is entered; an entered different age is refused"),
    Table("co2_output", required=False, default=None, help="a factor on the CO2 output", fields=(
        Number("factor", lo=0, hi=10, lo_open=True, help="multiplies the CO2 output" + _FACTOR_HELP),
        Choice("origin", choices=("metabolic", "absorbed"),
               help="metabolic: the body makes more (O2 use rises too; not applied to an entered metabolic rate); "
                    "absorbed: CO2 taken up from outside (insufflation), always applied"),
        Number("plateau_min", unit="min", lo=0, hi=240, lo_open=True, required=False, default=None,
               help="minutes until the added CO2 output reaches its plateau, where published"),
        Source())),
    SourcedNumber("co2_per_degree_above_normal", lo=0, hi=1, required=False, default=None,
                  help="fractional rise of CO2 output per °C above the species' normal temperature; replaces the "
                       "group's Q10 above normal when a body temperature is entered"),
    Table("co2_bolus", required=False, default=None, help="a CO2 load given at once (a drug)", fields=(
        Number("ml_per_mmol", unit="mL/mmol", lo=0, hi=30, lo_open=True,
               help="CO2 released per mmol (22.4 mL is the molar volume at STPD; at most 30 allowed)"),
        Number("dose_mmol_kg", unit="mmol/kg", lo=0, hi=10, lo_open=True, help="the dose the plan assumes"),
        Number("duration_s", unit="s", lo=0, hi=3600, lo_open=True, help="how long the load shows in EtCO2"),
        Source())),
    SourcedNumber("compliance_factor", lo=0, hi=2, lo_open=True, required=False, default=None,
                  help="multiplies the estimated compliance (not a measured one)" + _FACTOR_HELP),
    SpanField("paco2_band_mmhg", unit="mmHg", start_key=None, **limits("target-paco2"), required=False,
              default=None, help="the PaCO2 to aim within; the plan aims at its middle." +
                                 same_as("target-paco2")),
    SourcedNumber("paco2_ceiling_mmhg", unit="mmHg", **limits("target-paco2"), required=False, default=None,
                  help="the highest PaCO2 accepted (permissive hypercapnia)." + same_as("target-paco2")),
    SourcedNumber("paco2_shift_mmhg", unit="mmHg", lo=-20, hi=20, required=False, default=None,
                  help="added to the species' target PaCO2 (a local normal)" + _FACTOR_HELP),
    SpanField("tidal_volume_ml_kg", unit="mL/kg", **limits("vt-per-kg"), required=False, default=None,
              help="usual tidal volume per kg lean mass in this situation; replaces the species' range." +
                   same_as("vt-per-kg")),
    SourcedNumber("rate_max_factor", lo=1, hi=5, required=False, default=None,
                  help="multiplies the species' highest usual rate" + _FACTOR_HELP),
    SourcedNumber("peep_min_cmh2o", unit="cmH2O", **limits("peep"), required=False, default=None,
                  help="PEEP at least this (raises the species' default)." + same_as("peep")),
    SourcedNumber("peep_max_cmh2o", unit="cmH2O", **limits("peep"), required=False, default=None,
                  help="PEEP at most this (lowers the species' default)." + same_as("peep")),
    SourcedNumber("pressure_limit_cmh2o", unit="cmH2O", **limits("pressure-limit"), required=False, default=None,
                  help="pressure limit at most this." + same_as("pressure-limit")),
    SourcedNumber("plateau_limit_cmh2o", unit="cmH2O", **limits("pressure-limit"), required=False, default=None,
                  help="plateau pressure at most this." + same_as("pressure-limit")),
    SourcedNumber("driving_limit_cmh2o", unit="cmH2O", **limits("pressure-limit"), required=False, default=None,
                  help="driving pressure (plateau − PEEP) at most this." + same_as("pressure-limit")),
    SourcedNumber("gradient_mmhg", unit="mmHg", **limits("gradient"), required=False, default=None,
                  help="PaCO2 − EtCO2 gradient at least this." + same_as("gradient")),
    SpanField("shunt_fraction", start_key=None, lo=0, hi=1, required=False, default=None,
              help="expected venous admixture (shown in a caution; the model has no shunt)"),
    Flag("low_flow", required=False, default=False,
         help="true: a caution compares the oxygen flow with the patient's oxygen use"),
    TableList("cautions", required=False, default=(), help="cautions shown whenever the situation is chosen",
              fields=(Choice("severity", choices=SITUATION_SEVERITIES, help="danger only for a crisis"),
                      Text("code", pattern=UPPER_SNAKE, help="stable code; never rename one"),
                      Text("text", help="plain sentences saying what to do, shown as they are (never as markup)"),
                      Source())),
)

SITUATIONS = FileSchema("situations.toml", "the patient's situation: surgery, disease and physiology", doc=(
    "Situations change the starting plan (ventset/stages/situation.py). Several combine this way: CO2-output "
    "and compliance factors multiply; PaCO2 bands and tidal-volume ranges intersect (the target is the middle "
    "of the band, the starting tidal volume the smallest start moved into the range; ranges that do not overlap "
    "are refused); ceilings and limits "
    "(PaCO2 ceiling, pressure, plateau and driving-pressure limits, PEEP at most) take the lowest; PEEP at least "
    "and the gradient take the highest, and PEEP is then held at the lowest ceiling; rate factors take the "
    "largest; shifts of the target add. A value the user entered is never changed; a caution says when it "
    "goes against a situation. Keys are lower-kebab (`raised-icp`), as typed on the command line."), fields=(
    Section("co2_stores", help="Body CO2 stores: how fast PaCO2 follows a change.", fields=(
        SourcedNumber("fall_half_time_min", **_MINUTES, help="half-time of a fall in PaCO2"),
        SourcedNumber("rise_half_time_min", **_MINUTES, help="half-time of a rise in PaCO2"),
        SourcedNumber("recheck_etco2_min", **_MINUTES, help="re-check EtCO2 this long after a change"),
        SourcedNumber("recheck_blood_gas_min", **_MINUTES, help="take a blood gas this long after a change"),
        SourcedNumber("judge_rise_after_min", **_MINUTES, help="judge the plateau after a rise this late"),
    )),
    Entries("situations", label="situation", key_pattern=LOWER_KEBAB, fields=SITUATION_FIELDS,
            checks=(_peep_order, _ceiling_above_band, _unique_situation_codes, _asks_for_inputs),
            help="One table per situation; every effect is optional and sourced."),
), checks=(_known_exclusions,))
