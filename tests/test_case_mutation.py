"""Mutated case files: each either opens or is refused with one line — never an exception of another kind, and
the file is never changed (issue 10). Mutations: every value replaced by values of other kinds (wrong type at any
depth, oversized and 400-digit numbers, objects for lists, hostile text), keys dropped or added, and bytes cut."""

from __future__ import annotations

import copy
import json

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from ventset import cases
from ventset.library import load_library
from ventset.model import ApparatusPart, Circuit, Patient, Request, Targets

LIB = load_library()
REPLACEMENTS = [None, True, 0, -1, 1e308, 10**14, "", "x" * 600, "Rex\nSet VT 999 mL", "\u202e", [], {}, [1], {"a": 1},
                [[[]]], "20", 1.5]
RAW_REPLACEMENTS = ["1" * 400, "1" * 400 + ".0", "1e999", "NaN", '"\\udc80"']


def _base() -> dict:
    request = Request(Patient("dog", 20.0, name="Rex"), Circuit(parts=(ApparatusPart("hme", 12.0),), tube_id_mm=8.0,
                                                                 tube_length_cm=5.0), Targets(peep_cmh2o=5.0))
    case = cases.case_for_request(request, LIB)
    return cases.case_to_dict(case)


BASE = _base()


def _paths(node, prefix=()):
    yield prefix
    if isinstance(node, dict):
        for k, v in node.items():
            yield from _paths(v, (*prefix, k))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            yield from _paths(v, (*prefix, i))


PATHS = [p for p in _paths(BASE) if p and p[0] != "plan"] + [("plan",), ("plan", "ventilation"),
                                                              ("plan", "cautions")]


@st.composite
def mutated(draw) -> bytes:
    data = copy.deepcopy(BASE)
    raw_marker = None
    for _ in range(draw(st.integers(1, 3))):
        path = draw(st.sampled_from(PATHS))
        parent = data
        try:
            for key in path[:-1]:
                parent = parent[key]
            how = draw(st.sampled_from(["replace", "raw", "drop", "add"]))
            if how == "replace":
                parent[path[-1]] = copy.deepcopy(draw(st.sampled_from(REPLACEMENTS)))
            elif how == "raw":
                raw_marker = draw(st.sampled_from(RAW_REPLACEMENTS))
                parent[path[-1]] = "@@RAW@@"
            elif how == "drop" and isinstance(parent, dict):
                del parent[path[-1]]
            elif isinstance(parent, dict):
                parent[draw(st.sampled_from(["extra", "x\ny", ""]))] = 1
        except (KeyError, IndexError, TypeError):
            continue
    text = json.dumps(data)
    if raw_marker is not None:
        text = text.replace('"@@RAW@@"', raw_marker)
    raw = text.encode()
    if draw(st.booleans()) and draw(st.booleans()):
        raw = raw[: draw(st.integers(0, len(raw)))]
    return raw


@settings(suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture], deadline=None)
@given(mutated())
def test_a_mutated_case_opens_or_is_refused_in_one_line_and_is_never_changed(tmp_path, raw):
    path = tmp_path / "m.ventcase"
    path.write_bytes(raw)
    try:
        opened = cases.open_case(path, LIB)
    except cases.CaseError as exc:
        assert "\n" not in str(exc) and str(exc).startswith("cannot open")
    else:
        assert isinstance(opened.case.request.patient.species, str)  # opened: a request, planned or not
        assert all("\n" not in m for m in opened.messages)
    assert path.read_bytes() == raw
