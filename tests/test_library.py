"""The shipped data loads, covers the required species, and bad entries fail with a named field."""

import copy
import tomllib

import pytest

from ventset.errors import DataError
from ventset.library import parse_apparatus, parse_species
from ventset.resources import resource_path

REQUIRED = ["dog", "cat", "horse", "cattle", "sheep", "goat", "pig", "camelid", "rabbit", "guinea_pig", "rat",
            "mouse", "ferret", "primate", "marsupial", "psittacine", "raptor", "waterfowl", "passerine",
            "chelonian", "snake", "lizard", "crocodilian", "large_felid"]


@pytest.fixture(scope="module")
def species_doc():
    return tomllib.loads(resource_path("species.toml").read_text(encoding="utf-8"))


def test_required_species_present(library):
    assert len(library.species) >= 25
    assert set(REQUIRED) <= set(library.species)
    # The five original groups stay in use; taxon groups (monotreme, reptile_*) may be added.
    assert {"placental", "marsupial", "passerine", "non_passerine", "reptile"} <= {
        s.group.key for s in library.species.values()}


def test_every_number_has_a_source(species_doc):
    def walk(node, path):
        if isinstance(node, dict):
            if any(k in node for k in ("value", "min", "coefficient", "coefficient_ml")):
                assert str(node.get("source", "")).strip(), path
            for k, v in node.items():
                walk(v, f"{path}.{k}")
        elif isinstance(node, list):
            for i, v in enumerate(node):
                walk(v, f"{path}[{i}]")
    walk(species_doc, "species.toml")


def test_search_by_alias(library):
    assert library.find_species("Dog").key == "dog"
    assert library.find_species("canine").key == "dog"


@pytest.mark.parametrize(("mutate", "needle"), [
    (lambda d: d["species"]["dog"].pop("rate_per_min"), "species 'dog': field 'rate_per_min' is missing"),
    (lambda d: d["species"]["dog"]["peep_cmh2o"].pop("source"), "species 'dog': field 'peep_cmh2o' has no source"),
    (lambda d: d["species"]["cat"]["tidal_volume_ml_kg"].update(start=99), "species 'cat': field 'tidal_volume_ml_kg'"),
    (lambda d: d["species"]["cat"].update(group="fish"), "species 'cat': field 'group'"),
    (lambda d: d["species"]["horse"]["pip_limit_cmh2o"].update(value="high"), "species 'horse': field 'pip_limit"),
    (lambda d: d["species"]["horse"].update(default_mode="jet"), "species 'horse': field 'default_mode'"),
])
def test_malformed_species_fails_naming_species_and_field(species_doc, mutate, needle):
    doc = copy.deepcopy(species_doc)
    mutate(doc)
    with pytest.raises(DataError) as err:
        parse_species(doc)
    assert needle in str(err.value)


def test_malformed_part_fails_naming_part():
    doc = tomllib.loads(resource_path("apparatus.toml").read_text(encoding="utf-8"))
    doc["parts"]["hme_adult"]["volume_ml"]["value"] = -5
    with pytest.raises(DataError, match="part 'hme_adult': field 'volume_ml'"):
        parse_apparatus(doc)


def test_malformed_file_gives_one_line_cli_error(tmp_path, monkeypatch, capsys):
    import shutil

    from ventset.cli import main
    from ventset.resources import RESOURCES_DIR_ENV

    for f in resource_path("species.toml").parent.glob("*.toml"):
        shutil.copy(f, tmp_path / f.name)
    bad = tmp_path / "species.toml"
    bad.write_text("schema_version = 1\n[species.dog\n", encoding="utf-8")
    monkeypatch.setenv(RESOURCES_DIR_ENV, str(tmp_path))  # the data-folder override, not a patched internal
    assert main(["species"]) == 2
    assert "species.toml" in capsys.readouterr().err
