"""The demo patient, as data: what the window opens with and what ``ventset demo`` plans.

An invented patient (a 4.2 kg cat with a paediatric heat-and-moisture exchanger and a mainstream capnograph
adapter), entered by input key exactly as a person would type it, and built through the one request builder
(ventset.fields.request_from_inputs), so it is checked like any other entry.
"""

from __future__ import annotations

from ventset.model import Request

DEMO_INPUTS: dict[str, object] = {
    "species": "cat", "mass": "4.2 kg", "name": "Pickle (demo)", "tube-id": "4 mm", "tube-length": "5 cm",
}
DEMO_PARTS: tuple[str, ...] = ("hme_paediatric", "capnograph_mainstream_adult")  # catalogue keys


def demo_request(library=None) -> Request:
    """The demo patient's Request (catalogue parts from ``library``, the shipped library by default)."""
    from ventset.fields import request_from_inputs
    from ventset.library import load_library
    from ventset.part_text import part_from_text

    lib = library or load_library()
    parts = tuple(part_from_text(key, lib) for key in DEMO_PARTS)
    request, errors = request_from_inputs(DEMO_INPUTS, parts, library=lib)
    if request is None:  # pragma: no cover - the demo data is checked by the tests
        raise errors[0]
    return request


def run_demo(gas_unit: str = "mmHg") -> int:
    """Print the demo patient's plan (``ventset demo``, and the window's fallback without a display)."""
    from ventset.library import load_library
    from ventset.planner import plan
    from ventset.report import plan_to_text

    lib = load_library()
    print(plan_to_text(plan(demo_request(lib), lib), gas_unit))
    return 0
