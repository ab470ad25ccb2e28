"""The on-disk cache of parsed TOML: same document as tomllib, never trusted when it does not match the file."""

import json
import tomllib

import pytest

from ventset.library import load_library
from ventset.parsecache import CACHE_DIR_ENV, cache_dir, parse_toml
from ventset.resources import resource_path

RAW = resource_path("species.toml").read_bytes()


@pytest.fixture
def cache(tmp_path, monkeypatch):
    folder = tmp_path / "cache"
    monkeypatch.setenv(CACHE_DIR_ENV, str(folder))
    return folder


def test_a_hit_gives_what_tomllib_gives(cache):
    # tomllib (the standard library's TOML reader) is the reference for what a parse must return.
    expected = tomllib.loads(RAW.decode("utf-8"))
    assert parse_toml("species.toml", RAW) == expected  # miss: parsed and stored
    assert len(list(cache.glob("species.toml-*.json"))) == 1
    assert parse_toml("species.toml", RAW) == expected  # hit


def test_an_entry_that_does_not_hold_the_files_text_is_ignored(cache):
    parse_toml("species.toml", RAW)
    entry = next(cache.glob("species.toml-*.json"))
    stored = json.loads(entry.read_text(encoding="utf-8"))
    stored["doc"]["species"]["dog"]["peep_cmh2o"]["value"] = 99   # tampered document, text unchanged ...
    stored["text"] += " "                                          # ... but the text no longer matches
    entry.write_text(json.dumps(stored), encoding="utf-8")
    assert parse_toml("species.toml", RAW)["species"]["dog"]["peep_cmh2o"]["value"] == 5


def test_a_damaged_entry_is_ignored_and_replaced(cache):
    parse_toml("species.toml", RAW)
    entry = next(cache.glob("species.toml-*.json"))
    entry.write_bytes(b"{not json")
    assert parse_toml("species.toml", RAW) == tomllib.loads(RAW.decode("utf-8"))
    assert json.loads(entry.read_text(encoding="utf-8"))["text"] == RAW.decode("utf-8")


def test_one_entry_per_file_is_kept(cache):
    parse_toml("planning.toml", b"schema_version = 1\n")
    parse_toml("planning.toml", b"schema_version = 1\n[defaults]\n")
    parse_toml("cautions.toml", b"schema_version = 1\n")
    assert len(list(cache.glob("planning.toml-*.json"))) == 1
    assert len(list(cache.glob("cautions.toml-*.json"))) == 1


def test_no_usable_folder_still_parses(tmp_path, monkeypatch):
    blocker = tmp_path / "a-file"
    blocker.write_text("x", encoding="utf-8")
    monkeypatch.setenv(CACHE_DIR_ENV, str(blocker / "cache"))
    assert parse_toml("species.toml", RAW)["schema_version"] == 1


def test_off_writes_nothing(tmp_path, monkeypatch):
    monkeypatch.setenv(CACHE_DIR_ENV, "off")
    assert cache_dir() is None
    assert parse_toml("species.toml", RAW)["schema_version"] == 1


def test_a_document_json_cannot_hold_is_parsed_but_not_cached(cache):
    doc = parse_toml("x.toml", b"schema_version = 1\nwhen = 2024-01-01\n")
    assert str(doc["when"]) == "2024-01-01"
    assert not list(cache.glob("x.toml-*.json"))


def test_invalid_toml_still_fails_through_the_cache(cache):
    with pytest.raises(tomllib.TOMLDecodeError):
        parse_toml("x.toml", b"[species.dog\n")


def test_library_from_the_cache_equals_the_library_from_the_files(cache):
    load_library.cache_clear()
    try:
        first = load_library(resource_path("species.toml").parent)  # every file parsed and stored
        assert len(list(cache.glob("*.json"))) == 5  # species, apparatus, cautions, planning, situations
        load_library.cache_clear()
        second = load_library(resource_path("species.toml").parent)  # now every file comes from the cache
        assert second is not first and second == first
    finally:
        load_library.cache_clear()
