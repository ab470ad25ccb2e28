"""The declared layout of resources/validation.toml (published observations the model is checked against).

``ventset.validation_data`` reads the file through ``VALIDATION`` and builds its dataclasses from the checked
values; whether each row's species is in the species library is checked there (it needs the library).
Condition ranges are the hard limits of the matching user input, since the model is run at those conditions.
"""

from __future__ import annotations

from typing import Any

from ventset.datafiles_common import limits
from ventset.schema import LOWER_SNAKE, Choice, Field, FileSchema, Number, Source, Table, TableList, Text, Where

OBSERVATION_KINDS = ("input", "outcome")
SEEN = ("abstract", "full text", "from memory")

# quantity -> (kind, unit, label)
QUANTITIES: dict[str, tuple[str, str, str]] = {
    "vo2_ml_kg_min": ("input", "mL/kg/min", "O2 consumption per kg"),
    "vo2_ml_kg_h": ("input", "mL/kg/h", "O2 consumption per kg (standard metabolic rate)"),
    "vco2_ml_kg_min": ("input", "mL/kg/min", "CO2 output per kg"),
    "vco2_ml_kg075_min": ("input", "mL/kg^0.75/min", "CO2 output per kg^0.75"),
    "rq": ("input", "", "respiratory quotient"),
    "q10": ("input", "", "temperature coefficient of metabolic rate"),
    "mass_exponent": ("input", "", "mass exponent b of metabolic rate (K·M^b)"),
    "vd_vt": ("input", "", "physiological dead space / tidal volume"),
    "alveolar_vd_of_alveolar_vt": ("input", "", "alveolar dead space / alveolar tidal volume"),
    "gradient_mmhg": ("input", "mmHg", "PaCO2 − EtCO2"),
    "compliance_ml_cmh2o_kg": ("input", "mL/cmH2O/kg", "respiratory-system compliance per kg"),
    "paco2_mmhg": ("outcome", "mmHg", "arterial PCO2"),
    "etco2_mmhg": ("outcome", "mmHg", "end-tidal PCO2"),
    "venous_pco2_mmhg": ("outcome", "mmHg", "venous PCO2 (compared with the predicted arterial value)"),
}


def _published_shape(v: dict[str, Any], at: Where) -> None:
    """a mean (with an optional sd) or a band (low, high or both), not both; low <= high"""
    band = v["low"] is not None or v["high"] is not None
    if v["mean"] is not None and band:
        raise at.fail("give a mean (± sd) or a band (low/high), not both")
    if v["mean"] is None and not band:
        raise at.fail("needs a mean or a low/high band")
    if v["sd"] is not None and v["mean"] is None:
        raise at.at("sd").fail("needs a mean")
    if band and v["low"] is not None and v["high"] is not None and v["low"] > v["high"]:
        raise at.at("low").fail(f"{v['low']:g} must not exceed high {v['high']:g}")


def _pairs(v: dict[str, Any], at: Where) -> None:
    """rate_min and rate_max together (rate_min <= rate_max); tube_id_mm and tube_length_cm together"""
    for a, b in (("rate_min", "rate_max"), ("tube_id_mm", "tube_length_cm")):
        if (v[a] is None) != (v[b] is None):
            given, other = (a, b) if v[a] is not None else (b, a)
            raise at.at(given).fail(f"is given without {other} (give both, or neither)")
    if v["rate_min"] is not None and v["rate_min"] > v["rate_max"]:
        raise at.at("rate_min").fail(f"{v['rate_min']:g} must not exceed rate_max {v['rate_max']:g}")


NUMERIC_CONDITIONS: tuple[Field, ...] = (
    Number("mass_kg", unit="kg", **limits("mass"), help="body mass (required)"),
    Number("body_temp_c", unit="°C", **limits("body-temperature"), required=False, help="body temperature"),
    Number("vt_ml_kg", unit="mL/kg", **limits("vt-per-kg"), required=False, help="tidal volume used"),
    Number("rate_per_min", unit="1/min", **limits("rate"), required=False, help="rate used"),
    Number("rate_min", unit="1/min", **limits("rate"), required=False,
           help="lowest rate, with rate_max: a band held over that range of rates"),
    Number("rate_max", unit="1/min", **limits("rate"), required=False, help="highest rate, with rate_min"),
    Number("peep_cmh2o", unit="cmH2O", **limits("peep"), required=False, help="PEEP used"),
    Number("pip_cmh2o", unit="cmH2O", **limits("pressure-limit"), required=False,
           help="inspiratory pressure of pressure-limited breaths (instead of vt_ml_kg)"),
    Number("fio2", **limits("fio2"), required=False, help="inspired O2 fraction"),
    Number("tube_id_mm", unit="mm", **limits("tube-id"), required=False,
           help="endotracheal tube internal diameter, with tube_length_cm"),
    Number("tube_length_cm", unit="cm", **limits("tube-length"), required=False,
           help="tube beyond the incisors, with tube_id_mm"),
    Number("minutes", unit="min", lo=0, hi=10080, required=False,
           help="time from the start of anaesthesia or ventilation; at most a week (a guard against a unit slip)"),
    Number("n", lo=1, integer=True, required=False, help="number of animals"),
)
TEXT_CONDITIONS: tuple[Field, ...] = (
    Text("circuit", pattern=LOWER_SNAKE, required=False, help="a circuit key of apparatus.toml"),
    Text("anaesthetic", required=False, help="anaesthetic agents and doses"),
    Text("recumbency", required=False, help="body position"),
    Text("ventilation", required=False, help="how the animals were ventilated"),
    Text("animals", required=False, help="the animals studied (health, breed, awake or not)"),
    Text("state", required=False, help="feeding or reproductive state"),
)
CONDITION_NAMES = tuple(f.name for f in (*NUMERIC_CONDITIONS, *TEXT_CONDITIONS))


def _published_number(name: str, help: str, **bounds: Any) -> Number:
    return Number(name, required=False, help=f"{help}, in the unit of the quantity", **bounds)


PUBLISHED = Table("published", checks=(_published_shape,), help=(
    "the published value: { mean, sd } or a band { low, high } (one end may be left out)"), fields=(
    _published_number("mean", "published mean"),
    _published_number("sd", "standard deviation of the mean", lo=0),
    _published_number("low", "lower end of a published band"),
    _published_number("high", "upper end of a published band"),
))


def _kind_matches_quantity(v: dict[str, Any], at: Where) -> None:
    """the quantity is of the row's kind"""
    kind = QUANTITIES[v["quantity"]][0]
    if kind != v["kind"]:
        raise at.at("quantity").fail(f"'{v['quantity']}' is an {kind}, not an {v['kind']}")


def _outcome_settings(v: dict[str, Any], at: Where) -> None:
    """an outcome gives its rate (rate_per_min, or rate_min/rate_max with a band) and vt_ml_kg or pip_cmh2o"""
    if v["kind"] != "outcome":
        return
    c = v["conditions"]
    if c["rate_per_min"] is None and c["rate_min"] is None:
        raise at.at("conditions").fail("needs the rate used for an outcome (rate_per_min, or rate_min and rate_max)")
    if c["vt_ml_kg"] is None and c["pip_cmh2o"] is None:
        raise at.at("conditions").fail("needs the tidal volume (vt_ml_kg) or the pressure (pip_cmh2o) for an outcome")
    if c["rate_min"] is not None and v["published"]["mean"] is not None:
        raise at.at("published").fail("must be a band (low/high) when the rate is a range (rate_min/rate_max)")


def _disagreement_for_inputs(v: dict[str, Any], at: Where) -> None:
    """known_disagreement is for inputs only"""
    if v["known_disagreement"] and v["kind"] != "input":
        raise at.at("known_disagreement").fail("is for inputs only (an outcome is judged as published)")


OBSERVATION_FIELDS: tuple[Field, ...] = (
    Text("id", pattern=LOWER_SNAKE, help="unique name of the row"),
    Text("species", pattern=LOWER_SNAKE, help="a species key of species.toml ('ventset species')"),
    Choice("kind", choices=OBSERVATION_KINDS,
           help="input: a quantity the model uses; outcome: PaCO2/EtCO2 measured at known settings"),
    Choice("quantity", choices=tuple(QUANTITIES), help="what was measured (units in the name)"),
    PUBLISHED,
    Table("conditions", checks=(_pairs,), fields=(*NUMERIC_CONDITIONS, *TEXT_CONDITIONS),
          help="the study's settings and patient; mass_kg required"),
    Source(help="the study: \"Authors Year. Journal vol(issue):pages\", the same text for every row of one source"),
    Choice("seen", choices=SEEN, help="how the number was seen: the abstract, the full text (methods, tables), or "
                                      "from memory"),
    Text("where", required=False, default="", help="where the copy was seen (PMID, doi)"),
    Text("quote", help="the paper's own figures, briefly, in our words"),
    Table("assumed", required=False, default=None, fields=tuple(
        Text(n, required=False, help=f"why the {n} used was not the study's own") for n in CONDITION_NAMES),
          help="conditions the study did not publish: condition = the reason for the value used"),
    Text("known_disagreement", required=False, default="",
         help="(inputs only) why this input is not expected to match the model; the row is kept"),
    Text("note", required=False, default="", help="anything else"),
)


def _unique_ids(v: dict[str, Any], at: Where) -> None:
    """observation ids are unique"""
    seen: set[str] = set()
    for row in v["observation"]:
        if row["id"] in seen:
            raise at.enter(f"observation {row['id']!r}").at("id").fail("is used twice")
        seen.add(row["id"])


VALIDATION = FileSchema("validation.toml", "published observations the model is checked against", doc=(
    "Rows for `ventset validate` (`ventset/validation.py`; tolerance rule in `docs/validation.md`). Nothing here "
    "is a default the planner uses. An *input* is a quantity the model uses (VO2, RQ, dead space, compliance...), "
    "an *outcome* the PaCO2/EtCO2 a study measured at stated settings; an outcome needs the rate (or rate range) "
    "and vt_ml_kg or pip_cmh2o. Every row names its `source`, how it was `seen`, and under `assumed` every "
    "condition the model needs that the study did not publish, with the reason. Errors name the row by its id.\n\n"
    "```toml\n"
    "[[observation]]\n"
    'id = "dog_author2000_vt10"\n'
    'species = "dog"\n'
    'kind = "outcome"\n'
    'quantity = "etco2_mmhg"\n'
    "published = { low = 35, high = 45 }\n"
    "conditions = { mass_kg = 20, vt_ml_kg = 10, rate_per_min = 12 }\n"
    'source = "Author A 2000. Journal 1(1):1-9"\n'
    'seen = "abstract"\n'
    'quote = "..."\n'
    'assumed = { mass_kg = "not in the abstract; a typical adult dog (from memory)" }\n'
    "```"), fields=(
    TableList("observation", min_items=1, label_key="id", fields=OBSERVATION_FIELDS,
              checks=(_kind_matches_quantity, _outcome_settings, _disagreement_for_inputs),
              help="One row per published observation."),
), checks=(_unique_ids,))
