"""Finding an entry by any name a person would type (issue 13), on the command line and in `ventset species`.

Young aliases choose the species and a young age together; the ages are those the species entry declares
(neonate below its neonate mass, else juvenile), checked here on the plan's own assumptions.
"""

from __future__ import annotations

import json

import pytest

from ventset.cli import main
from ventset.library import load_library

LIB = load_library()

# (what a person types, the entry it must find, a mass in the entry's range)
ALIASES = [
    ("elephant", "asian_elephant", 3000), ("orangutan", "orangutan", 60), ("sea lion", "sea_lion", 100),
    ("dolphin", "dolphin", 200), ("emu", "emu", 40), ("penguin", "penguin", 4), ("flamingo", "flamingo", 3),
    ("python", "python", 5), ("monitor", "monitor_lizard", 5), ("sea turtle", "sea_turtle", 50),
    ("hamster", "hamster", 0.12), ("koala", "koala", 8), ("bat", "bat", 0.5), ("chicken", "chicken", 2),
    ("calf", "cattle", 60), ("piglet", "pig", 1.5), ("puppy", "dog", 5), ("kitten", "cat", 1.0),
    ("echidna", "echidna", 4),
]
YOUNG = {"calf", "piglet", "puppy", "kitten"}


@pytest.mark.parametrize(("typed", "key", "mass"), ALIASES)
def test_alias_plans_the_entry_from_the_command_line(capsys, typed, key, mass):
    assert main(["plan", "--species", typed, "--mass", f"{mass} kg", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["patient"]["species"] == key
    young = [a["name"] for a in data["assumptions"] if a["key"] == "age_factor"]
    if typed in YOUNG:
        sp = LIB.species[key]
        newborn = sp.neonate_below_kg is not None and mass < sp.neonate_below_kg.value
        assert young == [f"Metabolic level of a {'neonate' if newborn else 'juvenile'}"]
    else:
        assert young == []


@pytest.mark.parametrize(("typed", "key"), [(a, k) for a, k, _ in ALIASES])
def test_species_command_finds_an_alias(capsys, typed, key):
    assert main(["species", typed, "--json"]) == 0
    keys = [e["key"] for e in json.loads(capsys.readouterr().out)]
    assert key in keys
    assert main(["species", typed]) == 0
    assert key in capsys.readouterr().out


def test_species_json_lists_every_entry_for_scripts(capsys):
    assert main(["species", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert [e["key"] for e in data] == list(LIB.species)
    for e in data:
        assert {"key", "label", "group", "aliases", "young_aliases", "mass_kg"} <= set(e)
        assert e["group"] in LIB.groups
        lo, hi = e["mass_kg"]
        assert 0 < lo < hi
    dog = next(e for e in data if e["key"] == "dog")
    assert "puppy" in dog["young_aliases"] and "canine" in dog["aliases"]


def test_species_list_shows_group_and_mass_range_and_the_taxon_path(capsys):
    assert main(["species"]) == 0
    out = capsys.readouterr().out
    for sp in LIB.species.values():
        line = next(x for x in out.splitlines() if x.startswith(sp.key + " "))
        assert sp.group.key in line and f"{sp.mass_kg.min:g}-{sp.mass_kg.max:g}" in line
    assert "--taxon" in out and all(g in out for g in LIB.taxa)


def test_species_search_that_finds_nothing_says_what_to_do(capsys):
    assert main(["species", "unicorn"]) == 2
    err = capsys.readouterr().err
    assert "unicorn" in err and "--taxon" in err
