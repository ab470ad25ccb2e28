"""The tube-size check: an entered tube far from the usual internal diameter for the patient's mass."""

from __future__ import annotations

import dataclasses

import pytest

from ventset.demo import demo_request
from ventset.planner import plan


def _plan(library, species: str, mass_kg: float, tube_id_mm: float | None):
    req = demo_request(library)
    patient = dataclasses.replace(req.patient, species=species, mass_kg=mass_kg)
    circuit = dataclasses.replace(req.circuit, tube_id_mm=tube_id_mm,
                                  tube_length_cm=None if tube_id_mm is None else 5.0, parts=())
    return plan(dataclasses.replace(req, patient=patient, circuit=circuit), library)


def _tube(p):
    return [c for c in p.cautions if c.code.startswith("TUBE_TOO")]


def test_a_cat_tube_in_a_horse_is_a_danger(library):
    # Common practice: an adult horse of about 450 kg takes a tube of about 26-30 mm internal diameter, so a
    # 4 mm cat tube is about 0.15 of the usual bore (Poiseuille: resistance about 1/0.15^4 ≈ 2000 times).
    found = _tube(_plan(library, "horse", 450, 4.0))
    assert [(c.severity, c.code) for c in found] == [("danger", "TUBE_TOO_SMALL")]
    ratio = dict(found[0].values)["ratio"]
    assert 4 / 30 <= ratio <= 4 / 24
    assert "4 mm" in found[0].text() and "450 kg" in found[0].text()


def test_a_horse_sized_tube_in_a_cat_cannot_fit(library):
    # Common practice: a 4 kg cat takes a 3.5-4.5 mm tube; 10 mm is more than twice that.
    found = _tube(_plan(library, "cat", 4, 10.0))
    assert [(c.severity, c.code) for c in found] == [("caution", "TUBE_TOO_LARGE")]


@pytest.mark.parametrize(("species", "mass", "tube"), [("cat", 4, 4.5), ("cat", 4, 3.5), ("dog", 20, 8),
                                                        ("dog", 30, 10), ("horse", 450, 26), ("horse", 450, 30)])
def test_usual_tubes_raise_nothing(library, species, mass, tube):
    # Common practice sizes (cat 3.5-4.5 mm at 4 kg, dog 8 mm at 20 kg and 10 mm at 30 kg, horse 26-30 mm).
    assert _tube(_plan(library, species, mass, tube)) == []


def test_no_tube_entered_is_not_checked(library):
    assert _tube(_plan(library, "horse", 450, None)) == []


def test_thresholds_are_sourced(library):
    for key in ("tube_id_ratio_large_caution", "tube_id_ratio_small_caution", "tube_id_ratio_small_danger"):
        assert library.cautions[key].source.startswith("common practice")
    assert library.cautions["tube_id_ratio_small_danger"].value < library.cautions["tube_id_ratio_small_caution"].value
