"""The declared schema of resources/: shipped files load, malformed copies fail with one line, SCHEMA.md is current.

Each malformed case writes a mutated copy of the shipped data to a temporary folder and loads it with the
real loader (``load_library(folder)`` / ``load_resource(name, folder)``); the error must be one line that
names the file, the entry and the field.
"""

import ast
import json
import math
import os
import re
import shutil
import subprocess
import sys
import tomllib
from dataclasses import fields
from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st

from ventset.datafiles import FILES, SPECIES, schema_markdown
from ventset.errors import DataError
from ventset.library import SPECIES_COMPOUND, Species, load_library, load_resource
from ventset.resources import RESOURCES_DIR_ENV
from ventset.schema import Entries, FileSchema, Flag, Section, SourcedNumber, SpanField, Table, Text

ROOT = Path(__file__).resolve().parent.parent
RES = ROOT / "resources"
LIBRARY_FILES = ("species.toml", "apparatus.toml", "cautions.toml", "planning.toml")
SPECIES_ENTRY = next(f for f in SPECIES.fields if f.name == "species")


# ---------------------------------------------------------------------------------------------------------
# A minimal TOML writer for the mutated copies (the standard library reads TOML but does not write it)
# ---------------------------------------------------------------------------------------------------------

def _key(k):
    return k if re.fullmatch(r"[A-Za-z0-9_-]+", k) else json.dumps(k)


def _val(v):
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float) and not math.isfinite(v):
        return "nan" if math.isnan(v) else ("inf" if v > 0 else "-inf")
    if isinstance(v, int | float):
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{_key(k)} = {_val(x)}" for k, x in v.items()) + " }"
    if isinstance(v, list):
        return "[" + ", ".join(_val(x) for x in v) + "]"
    raise TypeError(type(v))


def dump_toml(doc):
    out = [f"{_key(k)} = {_val(v)}" for k, v in doc.items()
           if not isinstance(v, dict) and not (isinstance(v, list) and v and all(isinstance(x, dict) for x in v))]
    for k, v in doc.items():
        if isinstance(v, dict) and v and all(isinstance(x, dict) for x in v.values()):
            for sub, body in v.items():
                out += ["", f"[{_key(k)}.{_key(sub)}]"] + [f"{_key(a)} = {_val(b)}" for a, b in body.items()]
        elif isinstance(v, dict):
            out += ["", f"[{_key(k)}]"] + [f"{_key(a)} = {_val(b)}" for a, b in v.items()]
        elif isinstance(v, list) and v and all(isinstance(x, dict) for x in v):
            for body in v:
                out += ["", f"[[{_key(k)}]]"] + [f"{_key(a)} = {_val(b)}" for a, b in body.items()]
    return "\n".join(out) + "\n"


def shipped(name):
    return tomllib.loads((RES / name).read_text(encoding="utf-8"))


def copy_of_resources(folder):
    for f in RES.glob("*.toml"):
        shutil.copy(f, folder / f.name)
    return folder


def load(name, folder):
    return load_library(folder) if name in LIBRARY_FILES else load_resource(name, folder)


def error_of(name, folder):
    with pytest.raises(DataError) as err:
        load(name, folder)
    msg = str(err.value)
    assert "\n" not in msg and "Traceback" not in msg
    assert msg.startswith(f"{name}: "), msg
    return msg


@pytest.mark.parametrize("name", sorted(FILES))
def test_writer_round_trips_every_shipped_file(name):
    # tomllib (Python standard library, the reference TOML reader) reads back what the writer wrote.
    assert tomllib.loads(dump_toml(shipped(name))) == shipped(name)


# ---------------------------------------------------------------------------------------------------------
# The shipped data
# ---------------------------------------------------------------------------------------------------------

def test_every_resource_file_has_a_schema_and_loads():
    assert {f.name for f in RES.glob("*.toml")} == set(FILES)
    for name in FILES:
        assert load_resource(name)
    lib = load_library()
    assert len(lib.species) >= 25 and lib.cautions and lib.planning and lib.fresh_gas


def test_shipped_files_load_through_a_folder_argument(tmp_path):
    lib = load_library(copy_of_resources(tmp_path))
    assert set(lib.species) == set(load_library().species)


def test_titration_loader_reads_the_declared_files():
    from ventset.titrate import Band, load_titration_data

    data = load_titration_data()
    raw = shipped("oxygenation.toml")
    assert [b.code for b in data.bands] == [b["code"] for b in raw["pf_bands"]]
    assert all(isinstance(b, Band) for b in data.bands)
    assert set(data.defaults) == set(shipped("titration.toml")["defaults"])
    assert set(data.oxygen) == set(raw["thresholds"])


def test_schema_md_is_generated_from_the_declarations():
    committed = (RES / "SCHEMA.md").read_text(encoding="utf-8")
    assert committed == schema_markdown(), "run: .venv/bin/python -m ventset.datafiles --write"


def test_schema_md_keeps_the_human_explanations():
    text = schema_markdown()
    for needle in ("PaCO2 − EtCO2", "negative value means EtCO2 reads above PaCO2", "common practice",
                   "from memory", "never danger", "UPPER_SNAKE", "not a diagnosis"):
        assert needle in text, needle


def test_every_declared_species_field_reaches_the_species_record():
    names = {f.name for f in SPECIES_ENTRY.fields}
    attrs = {f.name for f in fields(Species)}
    assert names - attrs <= set(SPECIES_COMPOUND), names - attrs - set(SPECIES_COMPOUND)


def _required_section_keys():
    keys = set()
    for fs in FILES.values():
        for f in fs.fields:
            if isinstance(f, Section):
                keys |= {x.name for x in f.fields if x.required}
    return keys


def _literal_keys(node):
    if isinstance(node, ast.Constant) and isinstance(node.value, str):
        return [node.value]
    if isinstance(node, ast.IfExp):
        return _literal_keys(node.body) + _literal_keys(node.orelse)
    return []  # an f-string key (planner's f"{size}_...") cannot be read statically


def test_every_threshold_the_code_reads_is_required():
    # Read the code, not a list: any `<table>["name"]` lookup on a threshold/default table in the package must
    # be a required key, so a missing one stops loading instead of raising KeyError while planning.
    tables = {"threshold", "cautions", "planning", "fresh_gas", "fg", "defaults", "oxygen", "th"}
    read: dict[str, set[str]] = {}
    for path in (ROOT / "ventset").rglob("*.py"):
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.Subscript) and ast.unparse(node.value).split(".")[-1].split("(")[0] in tables:
                for key in _literal_keys(node.slice):
                    read.setdefault(key, set()).add(path.name)
    assert len([k for k, where in read.items() if "cautions.py" in where]) >= 10  # the scan found the rules
    missing = {k: sorted(w) for k, w in read.items() if k not in _required_section_keys()}
    assert not missing


# ---------------------------------------------------------------------------------------------------------
# Malformed copies: one line naming file, entry and field
# ---------------------------------------------------------------------------------------------------------

def dog(d):
    return d["species"]["dog"]


def rename(table, old, new):
    table[new] = table.pop(old)


def fish(d, key):
    return d["groups"][key]


def row(d, i):
    return d["observation"][i]


CASES = [
    # (id, file, mutate, substrings the one-line message must contain)
    ("missing-threshold", "cautions.toml", lambda d: d["thresholds"].pop("pao2_danger_mmhg"),
     ["[thresholds]", "field 'pao2_danger_mmhg' is missing"]),
    ("every-threshold-missing", "cautions.toml", lambda d: d["thresholds"].clear(),
     ["[thresholds]", "is missing"]),
    ("vt-range-0-0", "species.toml", lambda d: dog(d)["tidal_volume_ml_kg"].update(min=0, max=0, start=0),
     ["species 'dog'", "field 'tidal_volume_ml_kg' min"]),
    ("zero-width-span", "species.toml", lambda d: dog(d)["tidal_volume_ml_kg"].update(min=12, max=12, start=12),
     ["species 'dog'", "field 'tidal_volume_ml_kg'", "zero-width"]),
    ("min-above-max", "species.toml", lambda d: d["species"]["cat"]["rate_per_min"].update(min=20, max=10),
     ["species 'cat'", "field 'rate_per_min'", "must be below max"]),
    ("start-outside", "species.toml", lambda d: dog(d)["rate_per_min"].update(start=30),
     ["species 'dog'", "field 'rate_per_min' start 30 is outside"]),
    ("temperature-value-outside", "species.toml", lambda d: dog(d)["body_temperature_c"].update(value=41),
     ["species 'dog'", "field 'body_temperature_c' value 41 is outside"]),
    ("resistance-exponent-9", "species.toml", lambda d: dog(d)["resistance_cmh2o_l_s"].update(exponent=9),
     ["species 'dog'", "field 'resistance_cmh2o_l_s' exponent", "got 9"]),
    ("dead-space-exponent", "species.toml", lambda d: dog(d)["anatomical_dead_space"].update(exponent=3),
     ["species 'dog'", "field 'anatomical_dead_space' exponent"]),
    ("metabolic-exponent", "species.toml", lambda d: d["groups"]["reptile"]["metabolic_exponent"].update(value=2),
     ["group 'reptile'", "field 'metabolic_exponent' value"]),
    ("rate-scaling-exponent", "species.toml", lambda d: dog(d)["rate_mass_scaling"].update(exponent=0.26),
     ["species 'dog'", "field 'rate_mass_scaling' exponent"]),
    ("ti-mass-exponent", "planning.toml", lambda d: d["defaults"]["ti_mass_exponent"].update(value=-0.26),
     ["[defaults]", "field 'ti_mass_exponent' value"]),
    ("misspelt-field", "species.toml", lambda d: rename(dog(d), "peep_cmh2o", "peep_cmh20"),
     ["species 'dog'", "unknown field 'peep_cmh20'", "did you mean 'peep_cmh2o'"]),
    ("misspelt-subkey", "species.toml", lambda d: rename(dog(d)["peep_cmh2o"], "value", "valeu"),
     ["species 'dog'", "field 'peep_cmh2o' has unknown key 'valeu'", "did you mean 'value'"]),
    ("misspelt-threshold", "cautions.toml", lambda d: rename(d["thresholds"], "peep_high_cmh2o", "peep_hihg_cmh2o"),
     ["[thresholds]", "'peep_hihg_cmh2o'", "did you mean 'peep_high_cmh2o'"]),
    ("unknown-key-no-match", "apparatus.toml", lambda d: d["parts"]["hme_adult"].update(colour="blue"),
     ["part 'hme_adult'", "unknown field 'colour'", "known: label, kind, volume_ml"]),
    ("unknown-top-level", "species.toml", lambda d: d.update(specie={}),
     ["unknown key 'specie'", "did you mean 'species'"]),
    ("unknown-band-key", "oxygenation.toml", lambda d: d["pf_bands"][0].update(severity="x"),
     ["pf_bands #1", "unknown field 'severity'"]),
    ("string-number", "species.toml", lambda d: d["species"]["horse"]["pip_limit_cmh2o"].update(value="35"),
     ["species 'horse'", "field 'pip_limit_cmh2o' value must be a number (got text '35')"]),
    ("string-threshold", "titration.toml", lambda d: d["defaults"]["max_step_fraction"].update(value="0.25"),
     ["[defaults]", "field 'max_step_fraction' value must be a number"]),
    ("bool-number", "apparatus.toml", lambda d: d["parts"]["hme_adult"]["volume_ml"].update(value=True),
     ["part 'hme_adult'", "field 'volume_ml' value must be a number (got true)"]),
    ("table-number", "species.toml", lambda d: dog(d)["resistance_cmh2o_l_s"].update(coefficient={"value": 66}),
     ["species 'dog'", "field 'resistance_cmh2o_l_s' coefficient must be a number (got a table)"]),
    ("bare-number-for-sourced", "species.toml", lambda d: dog(d).update(rq=0.8),
     ["species 'dog'", "field 'rq' must be a table like { value, source }"]),
    ("bool-no", "species.toml", lambda d: dog(d).update(mechanics_reliable="no"),
     ["species 'dog'", "field 'mechanics_reliable' must be true or false"]),
    ("bool-yes", "apparatus.toml", lambda d: d["circuits"]["non_rebreathing"].update(rebreathing="yes"),
     ["circuit 'non_rebreathing'", "field 'rebreathing' must be true or false"]),
    ("bool-one", "oxygenation.toml", lambda d: d["pf_bands"][2].update(inclusive=1),
     ["pf_bands #3", "field 'inclusive' must be true or false"]),
    ("bool-zero-subkey", "species.toml", lambda d: dog(d)["paco2_etco2_gradient_mmhg"].update(reliable=0),
     ["species 'dog'", "field 'paco2_etco2_gradient_mmhg' reliable must be true or false"]),
    ("nan", "species.toml", lambda d: dog(d)["rq"].update(value=math.nan),
     ["species 'dog'", "field 'rq' value must be a finite number (got nan)"]),
    ("inf", "cautions.toml", lambda d: d["thresholds"]["peep_high_cmh2o"].update(value=math.inf),
     ["[thresholds]", "field 'peep_high_cmh2o' value must be a finite number (got inf)"]),
    ("minus-inf-span", "species.toml", lambda d: dog(d)["mass_kg"].update(min=-math.inf),
     ["species 'dog'", "field 'mass_kg' min must be a finite number"]),
    ("empty-source", "species.toml", lambda d: dog(d)["peep_cmh2o"].update(source="  "),
     ["species 'dog'", "field 'peep_cmh2o' has no source"]),
    ("missing-source", "planning.toml", lambda d: d["defaults"]["fio2"].pop("source"),
     ["[defaults]", "field 'fio2' has no source"]),
    ("empty-note-source", "species.toml", lambda d: dog(d)["notes"][0].update(source=""),
     ["species 'dog' notes #1", "field 'source' is missing or empty"]),
    ("empty-band-source", "oxygenation.toml", lambda d: d["pf_bands"][1].pop("source"),
     ["pf_bands #2", "field 'source'"]),
    ("unknown-group", "species.toml", lambda d: d["species"]["cat"].update(group="fish"),
     ["species 'cat'", "field 'group' names unknown group 'fish'"]),
    ("danger-note", "species.toml", lambda d: d["species"]["horse"]["notes"][1].update(severity="danger"),
     ["species 'horse' notes #2", "field 'severity' must be one of info, caution"]),
    ("lower-case-code", "species.toml", lambda d: dog(d)["notes"][0].update(code="lean mass"),
     ["species 'dog' notes #1", "field 'code' must be UPPER_SNAKE"]),
    ("band-code", "oxygenation.toml", lambda d: d["pf_bands"][0].update(code="VetALI"),
     ["pf_bands #1", "field 'code' must be UPPER_SNAKE"]),
    ("repeated-note-code", "species.toml",
     lambda d: d["species"]["horse"]["notes"][1].update(code="DORSAL_HYPOXAEMIA"),
     ["species 'horse' notes #2", "field 'code' repeats 'DORSAL_HYPOXAEMIA'"]),
    ("repeated-band-code", "oxygenation.toml", lambda d: d["pf_bands"][1].update(code="VETALI"),
     ["pf_bands #2", "field 'code' repeats 'VETALI'"]),
    ("missing-circuit", "apparatus.toml", lambda d: d["circuits"].pop("non_rebreathing"),
     ["circuit 'non_rebreathing': is missing"]),
    ("missing-species-field", "species.toml", lambda d: dog(d).pop("rate_per_min"),
     ["species 'dog': field 'rate_per_min' is missing"]),
    ("missing-fresh-gas", "apparatus.toml", lambda d: d["fresh_gas"].pop("rebreathing_floor_ml_min"),
     ["[fresh_gas]", "field 'rebreathing_floor_ml_min' is missing"]),
    ("missing-oxygen-threshold", "oxygenation.toml", lambda d: d["thresholds"].pop("spo2_danger_percent"),
     ["[thresholds]", "field 'spo2_danger_percent' is missing"]),
    ("missing-titration-default", "titration.toml", lambda d: d["defaults"].pop("remeasure_blood_gas_min"),
     ["[defaults]", "field 'remeasure_blood_gas_min' is missing"]),
    ("no-bands", "oxygenation.toml", lambda d: d.pop("pf_bands"), ["field 'pf_bands' is missing"]),
    ("bad-choice", "species.toml", lambda d: d["species"]["horse"].update(default_mode="jet"),
     ["species 'horse'", "field 'default_mode' must be one of volume, pressure"]),
    ("bad-part-kind", "apparatus.toml", lambda d: d["parts"]["hme_adult"].update(kind="tube"),
     ["part 'hme_adult'", "field 'kind' must be one of"]),
    ("negative-volume", "apparatus.toml", lambda d: d["parts"]["hme_adult"]["volume_ml"].update(value=-5),
     ["part 'hme_adult'", "field 'volume_ml' value must be from 0 to 5000 mL (got -5 mL)"]),
    ("step-fraction-1", "titration.toml", lambda d: d["defaults"]["max_step_fraction"].update(value=1),
     ["[defaults]", "field 'max_step_fraction' value must be above 0 and below 1"]),
    ("caution-above-danger", "cautions.toml", lambda d: d["thresholds"]["apparatus_share_caution"].update(value=0.4),
     ["[thresholds]", "field 'apparatus_share_caution' 0.4 must be below apparatus_share_danger 0.3"]),
    ("spo2-order", "oxygenation.toml", lambda d: d["thresholds"]["spo2_danger_percent"].update(value=96),
     ["[thresholds]", "field 'spo2_danger_percent'"]),
    ("paco2-order", "cautions.toml", lambda d: d["thresholds"]["paco2_danger_high_mmhg"].update(value=15),
     ["[thresholds]", "field 'paco2_danger_low_mmhg' 20 must be below paco2_danger_high_mmhg 15"]),
    ("tube-ratio-order", "cautions.toml", lambda d: d["thresholds"]["tube_id_ratio_small_danger"].update(value=0.6),
     ["[thresholds]", "field 'tube_id_ratio_small_danger' 0.6 must be below tube_id_ratio_small_caution 0.55"]),
    ("tube-ratio-large-1", "cautions.toml", lambda d: d["thresholds"]["tube_id_ratio_large_caution"].update(value=1),
     ["[thresholds]", "field 'tube_id_ratio_large_caution'"]),
    ("fresh-gas-order", "apparatus.toml", lambda d: d["fresh_gas"]["non_rebreathing_below_kg"].update(value=200),
     ["[fresh_gas]", "field 'non_rebreathing_below_kg' 200 must be below large_animal_circle_above_kg"]),
    ("dead-space-swallows-breath", "species.toml", lambda d: dog(d)["anatomical_dead_space"].update(coefficient_ml=25),
     ["species 'dog'", "field 'anatomical_dead_space' leaves", "smallest usual tidal volume"]),
    ("wrong-version", "species.toml", lambda d: d.update(schema_version=2),
     ["field 'schema_version' must be 1 (got 2)"]),
    ("version-as-text", "planning.toml", lambda d: d.update(schema_version="1"),
     ["field 'schema_version' must be 1 (got text '1')"]),
    ("version-missing", "titration.toml", lambda d: d.pop("schema_version"), ["field 'schema_version' is missing"]),
    ("section-not-table", "cautions.toml", lambda d: d.update(thresholds=3),
     ["field 'thresholds' must be a table [thresholds]"]),
    ("species-key-case", "species.toml", lambda d: rename(d["species"], "dog", "Dog"),
     ["species 'Dog'", "the key must be lower_snake"]),
    ("no-species", "species.toml", lambda d: d["species"].clear(), ["field 'species'"]),
    ("notes-not-list", "species.toml", lambda d: dog(d).update(notes="none"),
     ["species 'dog'", "field 'notes' must be a list of tables"]),
    ("note-not-table", "species.toml", lambda d: dog(d).update(notes=["careful"]),
     ["species 'dog' notes #1", "must be a table"]),
    ("alias-number", "species.toml", lambda d: dog(d).update(aliases=["canine", 7]),
     ["species 'dog'", "field 'aliases' item 2 must be non-empty text"]),
    ("empty-label", "apparatus.toml", lambda d: d["circuits"]["non_rebreathing"].update(label=" "),
     ["circuit 'non_rebreathing'", "field 'label' must not be empty"]),
    ("label-number", "species.toml", lambda d: d["groups"]["placental"].update(label=1),
     ["group 'placental'", "field 'label' must be text"]),
    ("repeated-label", "species.toml", lambda d: d["species"]["cat"].update(label="Dog"),
     ["species 'cat'", "field 'label' 'Dog' already names species 'dog'"]),
    ("alias-of-another-species", "species.toml", lambda d: d["species"]["cat"]["aliases"].append("Canine"),
     ["species 'cat'", "field 'aliases' 'Canine' already names species 'dog'"]),
    # aquatic.toml
    ("aquatic-text-number", "aquatic.toml", lambda d: fish(d, "goldfish")["q10"].update(value="2.4"),
     ["group 'goldfish'", "field 'q10' value must be a number (got text '2.4')"]),
    ("aquatic-missing-default", "aquatic.toml", lambda d: d["defaults"].pop("low_saturation_percent"),
     ["[defaults]", "field 'low_saturation_percent' is missing"]),
    ("aquatic-default-range", "aquatic.toml", lambda d: d["defaults"]["demand_factor"].update(value=30),
     ["[defaults]", "field 'demand_factor' value must be from 1 to 3 × (got 30 ×)"]),
    ("aquatic-default-order", "aquatic.toml", lambda d: d["defaults"]["supersaturation_percent"].update(value=150),
     ["[defaults]", "field 'supersaturation_percent' 150 must be at most gas_bubble_percent 136"]),
    ("aquatic-two-rates", "aquatic.toml", lambda d: fish(d, "carp_koi")["resting_vo2"].update(mg_kg_h=100),
     ["group 'carp_koi'", "field 'resting_vo2' needs exactly one of", "(got model, mg_kg_h)"]),
    ("aquatic-unknown-model", "aquatic.toml", lambda d: fish(d, "carp_koi")["resting_vo2"].update(model="guess"),
     ["group 'carp_koi'", "field 'resting_vo2' model must be one of clarke_johnston_1999 (got text 'guess')"]),
    ("aquatic-kind", "aquatic.toml", lambda d: fish(d, "shark").update(kind="mammal"),
     ["group 'shark'", "field 'kind' must be one of teleost, elasmobranch, amphibian"]),
    ("aquatic-gill-alone", "aquatic.toml", lambda d: fish(d, "carp_koi").pop("barrier_um"),
     ["group 'carp_koi'", "field 'gill_area' needs barrier_um too"]),
    ("aquatic-extraction-order", "aquatic.toml", lambda d: fish(d, "ray")["extraction"].update(conservative=0.5),
     ["group 'ray'", "field 'extraction' conservative 0.5 must be at most usual 0.3"]),
    ("aquatic-water-outside", "aquatic.toml", lambda d: fish(d, "goldfish")["water_temperature_c"].update(value=35),
     ["group 'goldfish'", "field 'water_temperature_c' value 35 is outside min..max 8..28"]),
    ("aquatic-danger-note", "aquatic.toml", lambda d: fish(d, "ray")["notes"][1].update(severity="danger"),
     ["group 'ray' notes #2", "field 'severity' must be one of info, caution"]),
    ("aquatic-note-source", "aquatic.toml", lambda d: fish(d, "ray")["notes"][0].pop("source"),
     ["group 'ray' notes #1", "field 'source' is missing or empty"]),
    ("aquatic-group-key", "aquatic.toml", lambda d: rename(d["groups"], "ray", "Ray"),
     ["group 'Ray'", "the key must be lower_snake"]),
    ("aquatic-no-version-line", "aquatic.toml", lambda d: d.update(schema_version=1),
     ["unknown key 'schema_version'"]),
    # validation.toml
    ("validation-repeated-id", "validation.toml", lambda d: d["observation"][1].update(id="dog_bumbacher2017_vt10"),
     ["observation 'dog_bumbacher2017_vt10'", "field 'id' is used twice"]),
    ("validation-mass", "validation.toml", lambda d: row(d, 0)["conditions"].update(mass_kg=0),
     ["observation 'dog_bumbacher2017_vt10'", "field 'conditions' mass_kg must be above 0.001"]),
    ("validation-no-mass", "validation.toml", lambda d: row(d, 0)["conditions"].pop("mass_kg"),
     ["observation 'dog_bumbacher2017_vt10'", "field 'conditions' mass_kg is missing"]),
    ("validation-whole-n", "validation.toml", lambda d: row(d, 0)["conditions"].update(n=12.5),
     ["observation 'dog_bumbacher2017_vt10'", "field 'conditions' n must be a whole number (got 12.5)"]),
    ("validation-no-rate", "validation.toml",
     lambda d: [row(d, 0)["conditions"].pop(k) for k in ("rate_min", "rate_max")],
     ["observation 'dog_bumbacher2017_vt10'", "field 'conditions' needs the rate used for an outcome"]),
    ("validation-rate-range-mean", "validation.toml", lambda d: row(d, 0).update(published={"mean": 37.0}),
     ["observation 'dog_bumbacher2017_vt10'", "field 'published' must be a band"]),
    ("validation-mean-and-band", "validation.toml", lambda d: row(d, 0)["published"].update(mean=37.0),
     ["observation 'dog_bumbacher2017_vt10'", "field 'published' give a mean (± sd) or a band"]),
    ("validation-negative-sd", "validation.toml", lambda d: row(d, 3)["published"].update(sd=-0.27),
     ["observation 'dog_mikat1984_vo2_ippv'", "field 'published' sd must be at least 0"]),
    ("validation-disagreement-on-outcome", "validation.toml", lambda d: row(d, 0).update(known_disagreement="x"),
     ["observation 'dog_bumbacher2017_vt10'", "field 'known_disagreement' is for inputs only"]),
    ("validation-empty-source", "validation.toml", lambda d: row(d, 0).update(source=" "),
     ["observation 'dog_bumbacher2017_vt10'", "field 'source' is missing or empty"]),
    ("validation-assumed-unknown", "validation.toml", lambda d: row(d, 0)["assumed"].update(colour="why"),
     ["observation 'dog_bumbacher2017_vt10'", "field 'assumed' has unknown key 'colour'"]),
    ("validation-row-without-id", "validation.toml", lambda d: row(d, 2).pop("id"),
     ["observation #3", "field 'id' is missing"]),
    ("validation-no-rows", "validation.toml", lambda d: d.pop("observation"), ["field 'observation' is missing"]),
]


@pytest.mark.parametrize(("name", "mutate", "needles"), [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_malformed_copy_fails_with_one_line(tmp_path, name, mutate, needles):
    doc = shipped(name)
    mutate(doc)
    folder = copy_of_resources(tmp_path)
    (folder / name).write_text(dump_toml(doc), encoding="utf-8")
    msg = error_of(name, folder)
    for needle in needles:
        assert needle in msg, msg


@pytest.mark.parametrize("name", sorted(FILES))
def test_missing_file(tmp_path, name):
    copy_of_resources(tmp_path)
    (tmp_path / name).unlink()
    assert "data file not found at" in error_of(name, tmp_path)


@pytest.mark.parametrize(("content", "needle"), [
    (b"schema_version = 1\n[species.dog\n", "not valid TOML"),
    (b"schema_version = 1\nschema_version = 1\n", "not valid TOML"),          # duplicate key
    (b"schema_version = 1\n[groups]\nx = \xff\n", "not UTF-8 text"),
    (b"schema_version = 1\nwhen = 1979-05-27\n", "unknown key 'when'"),
])
def test_unreadable_file(tmp_path, content, needle):
    copy_of_resources(tmp_path)
    (tmp_path / "species.toml").write_bytes(content)
    assert needle in error_of("species.toml", tmp_path)


def test_date_where_a_number_belongs(tmp_path):
    copy_of_resources(tmp_path)
    path = tmp_path / "cautions.toml"
    path.write_text(path.read_text(encoding="utf-8").replace("value = 10.0", "value = 2024-01-01"), encoding="utf-8")
    assert "field 'peep_high_cmh2o' value must be a number (got a date)" in error_of("cautions.toml", tmp_path)


def test_optional_fields_may_be_left_out_and_whole_numbers_are_numbers(tmp_path):
    doc = shipped("species.toml")
    for key in ("aliases", "notes", "rate_mass_scaling", "inspiratory_time_s"):
        dog(doc).pop(key, None)
    dog(doc)["paco2_etco2_gradient_mmhg"].pop("reliable")
    dog(doc)["peep_cmh2o"]["value"] = 5.0
    (copy_of_resources(tmp_path) / "species.toml").write_text(dump_toml(doc), encoding="utf-8")
    sp = load_library(tmp_path).species["dog"]
    assert (sp.aliases, sp.notes, sp.rate_scaling, sp.inspiratory_time_s) == ((), (), None, None)
    assert sp.gradient_reliable is True and sp.peep_cmh2o.value == 5


# ---------------------------------------------------------------------------------------------------------
# Properties: any wrong type anywhere in a species entry is refused by name
# ---------------------------------------------------------------------------------------------------------

_SPECIES_DOC = shipped("species.toml")
_WRONG = st.one_of(st.text(max_size=5), st.booleans(), st.just(math.nan), st.just(math.inf), st.just(-math.inf),
                   st.lists(st.integers(), max_size=2), st.just({}))


@given(key=st.sampled_from(sorted(_SPECIES_DOC["species"])), data=st.data())
def test_any_number_replaced_by_a_wrong_type_is_refused(key, data):
    doc = json.loads(json.dumps(_SPECIES_DOC))
    entry = doc["species"][key]
    field = data.draw(st.sampled_from(sorted(k for k, v in entry.items() if isinstance(v, dict))))
    sub = data.draw(st.sampled_from(sorted(k for k, v in entry[field].items() if isinstance(v, int | float)
                                           and not isinstance(v, bool))))
    entry[field][sub] = data.draw(_WRONG)
    with pytest.raises(DataError) as err:
        SPECIES.read(doc)
    msg = str(err.value)
    assert msg.startswith(f"species.toml: species '{key}': field '{field}' {sub} must be") and "\n" not in msg


@given(key=st.sampled_from(sorted(_SPECIES_DOC["species"])), data=st.data())
def test_any_required_field_left_out_is_named(key, data):
    doc = json.loads(json.dumps(_SPECIES_DOC))
    required = sorted(f.name for f in SPECIES_ENTRY.fields if f.required)
    field = data.draw(st.sampled_from(required))
    doc["species"][key].pop(field)
    with pytest.raises(DataError, match=re.escape(f"species.toml: species '{key}': field '{field}' is missing")):
        SPECIES.read(doc)


@given(key=st.sampled_from(sorted(_SPECIES_DOC["species"])), data=st.data())
def test_any_misspelt_field_is_refused_with_the_right_name(key, data):
    doc = json.loads(json.dumps(_SPECIES_DOC))
    entry = doc["species"][key]
    field = data.draw(st.sampled_from(sorted(k for k in entry if len(k) > 6)))
    i = data.draw(st.integers(1, len(field) - 2))
    typo = field[:i] + field[i + 1] + field[i] + field[i + 2:]  # swap two neighbouring letters
    if typo == field:
        return
    entry[typo] = entry.pop(field)
    with pytest.raises(DataError) as err:
        SPECIES.read(doc)
    assert f"unknown field {typo!r} (did you mean {field!r}?)" in str(err.value)


# ---------------------------------------------------------------------------------------------------------
# The command line with a broken data folder: one line, exit 2
# ---------------------------------------------------------------------------------------------------------

def _broken(folder):
    doc = shipped("species.toml")
    dog(doc)["resistance_cmh2o_l_s"]["exponent"] = 9
    (copy_of_resources(folder) / "species.toml").write_text(dump_toml(doc), encoding="utf-8")
    return folder


def test_cli_with_broken_data_folder_prints_one_line(tmp_path, monkeypatch, capsys):
    from ventset.cli import main

    monkeypatch.setenv(RESOURCES_DIR_ENV, str(_broken(tmp_path)))
    assert main(["plan", "--species", "dog", "--mass", "20 kg"]) == 2
    out = capsys.readouterr()
    assert out.out == ""
    assert out.err.count("\n") == 1
    assert out.err.startswith("ventset: data file problem: species.toml: species 'dog': "
                              "field 'resistance_cmh2o_l_s' exponent")


@pytest.mark.parametrize(("argv", "file"), [
    (["plan", "--species", "dog", "--mass", "20 kg"], "species.toml"),
    (["adjust", "--species", "dog", "--mass", "20kg", "--tidal-volume", "200", "--rate", "10",
      "--measured-paco2", "55"], "titration.toml"),
])
def test_cli_process_with_broken_data_exits_2_without_traceback(tmp_path, argv, file):
    folder = _broken(tmp_path) if file == "species.toml" else copy_of_resources(tmp_path)
    if file == "titration.toml":
        (folder / file).write_text("schema_version = 1\n[defaults]\nmax_step_fraction = 0.25\n", encoding="utf-8")
    env = {**os.environ, RESOURCES_DIR_ENV: str(folder)}
    r = subprocess.run([sys.executable, "-m", "ventset", *argv], capture_output=True, text=True, env=env, cwd=ROOT)
    assert r.returncode == 2, r.stderr
    assert r.stderr.count("\n") == 1 and "Traceback" not in r.stderr
    assert r.stderr.startswith(f"ventset: data file problem: {file}: "), r.stderr


# ---------------------------------------------------------------------------------------------------------
# The descriptors themselves: a new file is one declaration
# ---------------------------------------------------------------------------------------------------------

def test_a_new_file_is_one_declaration():
    machines = FileSchema("machines.toml", "example", fields=(
        Entries("machines", label="machine", fields=(
            Text("label"),
            Flag("piston", required=False, default=False),
            SourcedNumber("max_tidal_volume_ml", unit="mL", lo=0, lo_open=True),
            SpanField("rate_per_min", unit="1/min", lo=0, lo_open=True),
            Table("extra", required=False, default=None, fields=(Text("note"),)),
        )),
    ))
    good = {"schema_version": 1, "machines": {"bench": {
        "label": "Bench unit", "max_tidal_volume_ml": {"value": 1500, "source": "from memory"},
        "rate_per_min": {"min": 4, "max": 60, "start": 12, "source": "from memory"}}}}
    v = machines.read(good)["machines"]["bench"]
    assert v["piston"] is False and v["extra"] is None and v["max_tidal_volume_ml"].value == 1500
    assert v["rate_per_min"].start == 12
    good["machines"]["bench"]["pistn"] = True
    with pytest.raises(DataError, match=r"^machines.toml: machine 'bench': unknown field 'pistn' \(did you mean"):
        machines.read(good)
