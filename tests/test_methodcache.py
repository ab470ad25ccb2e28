"""ventset.methodcache: ventset's dataclass methods come from a cache of compiled code, and are the same as
Python's own ``dataclasses`` makes them (the outside reference: the same class made without the cache, and
``compile`` itself)."""

from __future__ import annotations

import dataclasses
import os
import subprocess
import sys
import types

import pytest

from ventset import methodcache

needs_311 = pytest.mark.skipif(sys.version_info[:2] != (3, 11), reason="written for Python 3.11's dataclasses")

CLASS = '''
from dataclasses import dataclass, field

@dataclass(frozen=True)
class Reading:
    """A test record."""
    name: str
    value_ml: float = 0.0
    tags: tuple = field(default_factory=tuple)
'''


def _from_cache(method) -> bool:
    """Whether ``method``'s code is the very object the cache holds (inside the cached ``__create_fn__``)."""
    return any(method.__code__ is inner for outer in methodcache._compiled.values()
               for maker in outer.co_consts if isinstance(maker, types.CodeType)
               for inner in maker.co_consts)


def _make(module_name: str, monkeypatch):
    module = types.ModuleType(module_name)
    monkeypatch.setitem(sys.modules, module_name, module)  # dataclasses looks the module up
    exec(compile(CLASS, module_name, "exec", dont_inherit=True), module.__dict__)
    return module.Reading


@needs_311
def test_the_cache_is_installed_for_ventsets_own_classes():
    assert methodcache.install() is True
    assert dataclasses.exec is methodcache._exec
    import ventset.model

    assert _from_cache(ventset.model.Patient.__init__)  # the method Python runs is the one the cache holds


@needs_311
def test_a_class_made_through_the_cache_is_the_class_dataclasses_makes(monkeypatch):
    methodcache.install()
    ours, theirs = _make("ventset.fake_module", monkeypatch), _make("elsewhere", monkeypatch)
    assert _from_cache(ours.__init__) and _from_cache(ours.__eq__)
    assert not _from_cache(theirs.__init__)  # a class outside ventset is compiled by Python as always
    assert not _from_cache(_make("ventsetlike", monkeypatch).__init__)  # a package merely named alike, too
    for name in ("__init__", "__repr__", "__eq__", "__hash__", "__setattr__", "__delattr__"):
        assert getattr(ours, name).__code__.co_code == getattr(theirs, name).__code__.co_code, name
    a, b = ours("vd", 12.5), theirs("vd", 12.5)
    assert repr(a).replace("ventset.fake_module", "") == repr(b).replace("elsewhere", "")
    assert a == ours("vd", 12.5) and hash(a) == hash(ours("vd", 12.5)) and a != ours("vd", 13.0)
    assert dataclasses.fields(a) == tuple(dataclasses.fields(a)) and [f.name for f in dataclasses.fields(a)] == \
        [f.name for f in dataclasses.fields(b)]
    with pytest.raises(dataclasses.FrozenInstanceError):
        a.value_ml = 1.0  # type: ignore[misc]


def test_a_cached_text_is_exactly_its_compilation():
    text = "def __create_fn__(x):\n def f(self):\n  return x\n return f"
    assert methodcache.compiled(text) == compile(text, "<string>", "exec", dont_inherit=True)


def _run(cache: str = "") -> list[str]:
    env = dict(os.environ, VENTSET_CACHE_DIR=cache)
    env.pop("PYTHONDONTWRITEBYTECODE", None)  # which keeps the cache from being written (ventset.pkgcache)
    code = ("import ventset.model, ventset.plotdata, ventset.methodcache as m\n"
            "print(m._state['new'], len(m._compiled))\n"
            "from ventset.planner import plan\nfrom ventset.demo import demo_request\n"
            "print(round(plan(demo_request()).ventilation.tidal_volume_ml, 6))")
    out = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True, timeout=120)
    assert out.returncode == 0, out.stderr
    return out.stdout.split()


@needs_311
def test_the_second_process_compiles_nothing_and_plans_the_same():
    methodcache.cache_file().unlink(missing_ok=True)
    first, second = _run(), _run()
    assert int(first[0]) > 100 and int(second[0]) == 0  # every method came from the file
    assert int(second[1]) >= int(first[1]) and second[2] == first[2]
    off = _run("off")
    assert int(off[0]) == 0 and off[2] == first[2]  # turned off: Python compiles, and the plan is the same


@needs_311
def test_a_damaged_cache_file_is_ignored_and_written_again():
    _run()
    methodcache.cache_file().write_bytes(b"\x00not marshal data")
    again = _run()
    assert int(again[0]) > 100
    assert int(_run()[0]) == 0
