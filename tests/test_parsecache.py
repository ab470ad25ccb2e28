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
    monkeypatch.setattr("sys.dont_write_bytecode", False)  # else the library's entry is not kept (ventset.pkgcache)
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


def test_library_from_the_cache_equals_the_library_from_the_files(cache, monkeypatch):
    from ventset import pkgcache

    monkeypatch.setattr(pkgcache, "folder", lambda: None)  # the checked library built each time: parses are read
    load_library.cache_clear()
    try:
        first = load_library(resource_path("species.toml").parent)  # every file parsed and stored
        assert len(list(cache.glob("*.json"))) == 5  # species, apparatus, cautions, planning, situations
        load_library.cache_clear()
        second = load_library(resource_path("species.toml").parent)  # now every file comes from the cache
        assert second is not first and second == first
    finally:
        load_library.cache_clear()


# ---- built(): the checked library kept on disk, stamped with the bytes of its data files and the core's code.

def _fresh(folder=None):
    load_library.cache_clear()
    try:
        return load_library(folder)
    finally:
        load_library.cache_clear()


def test_the_kept_library_equals_one_built_with_every_cache_off(cache, monkeypatch):
    from ventset import pkgcache

    first, second = _fresh(), _fresh()  # the second comes from the kept entry
    assert pkgcache.path("library", "pickle").is_file()
    assert not list(cache.glob("*.pickle"))  # never in the cache folder a user may name (ventset.pkgcache)
    monkeypatch.setenv(CACHE_DIR_ENV, "off")
    reference = _fresh()  # parsed by tomllib and checked, nothing read from a cache
    assert second == first == reference
    assert second.species["dog"].peep_cmh2o == reference.species["dog"].peep_cmh2o


def test_the_library_reads_exactly_the_files_its_entry_is_stamped_with(monkeypatch):
    import ventset.library as lib

    monkeypatch.setenv(CACHE_DIR_ENV, "off")
    read = []
    real = lib._read_toml
    monkeypatch.setattr(lib, "_read_toml", lambda path: read.append(path.name) or real(path))
    _fresh()
    assert sorted(set(read)) == sorted(lib.LIBRARY_FILES)


def test_a_changed_data_file_is_read_again(cache, tmp_path):
    import shutil

    data = tmp_path / "data"
    shutil.copytree(resource_path("species.toml").parent, data)
    assert _fresh(data).species["dog"].peep_cmh2o.value == 5
    text = (data / "species.toml").read_text(encoding="utf-8")
    dog = text.index("[species.dog]")
    at = text.index('peep_cmh2o = { value = 5,', dog)
    (data / "species.toml").write_text(text[:at] + text[at:].replace("value = 5,", "value = 6,", 1), encoding="utf-8")
    assert _fresh(data).species["dog"].peep_cmh2o.value == 6


def test_a_changed_code_file_builds_again_and_a_damaged_entry_is_replaced(cache, tmp_path):
    from ventset.parsecache import built

    data, code = tmp_path / "d.toml", tmp_path / "c.py"
    data.write_text("x = 1\n", encoding="utf-8")
    code.write_text("A = 1\n", encoding="utf-8")
    calls = []

    def build():
        calls.append(1)
        return {"n": len(calls)}

    assert built("probe", [data, code], build) == {"n": 1}
    assert built("probe", [data, code], build) == {"n": 1}  # kept
    code.write_text("A = 2\n", encoding="utf-8")             # same size, other bytes
    assert built("probe", [data, code], build) == {"n": 2}
    from ventset import pkgcache

    kept = pkgcache.path("probe", "pickle")
    kept.write_bytes(b"\x80damaged")
    assert built("probe", [data, code], build) == {"n": 3}
    assert built("probe", [data, code], build) == {"n": 3}
    kept.unlink()
