"""The volume set on a volume-preset ventilator and the volume the patient receives: the circuit's compressible
volume takes C_circuit·(peak − PEEP) of every breath (Chatburn 2014), and the record converts between them."""

from __future__ import annotations

import dataclasses

import pytest

from ventset.demo import demo_request
from ventset.evaluate import evaluate, vt_at_patient
from ventset.planner import plan
from ventset.titrate import (
    Measurement,
    Settings,
    measurement_at_set,
    patient_tidal_volume,
    timeline_from_dict,
    timeline_to_dict,
)
from ventset.titrate.record import TimelineEntry


@pytest.mark.parametrize("species,mass", [("cat", 4.2), ("dog", 20.0), ("horse", 450.0), ("psittacine", 0.35)])
def test_the_patient_volume_is_the_set_volume_less_the_circuits(library, species, mass):
    req = demo_request(library)
    req = dataclasses.replace(req, patient=dataclasses.replace(req.patient, species=species, mass_kg=mass),
                              circuit=dataclasses.replace(req.circuit, tube_id_mm=None, tube_length_cm=None))
    p = plan(req, library)
    s, v = p.subject, p.ventilation
    vt = vt_at_patient(s, v.set_tidal_volume_ml, v.rate_per_min)
    assert vt == pytest.approx(v.tidal_volume_ml, rel=1e-9)
    if s.mode == "volume":
        # Chatburn 2014: set = VT + C_circuit·(P_peak − PEEP), with the peak of this breath.
        peak = evaluate(s, vt, v.rate_per_min).peak_cmh2o
        assert vt + s.compressible_ml_cmh2o * (peak - s.peep_cmh2o) == pytest.approx(v.set_tidal_volume_ml)
        assert vt < v.set_tidal_volume_ml
    else:
        assert vt == v.set_tidal_volume_ml  # a pressure mode sets no volume


def test_a_measurement_entered_as_set_gets_the_patients_volume(library):
    req = demo_request(library)
    p = plan(req, library)
    v = p.ventilation
    m = measurement_at_set(req, Measurement(0, 0.0, v.rate_per_min, etco2_mmhg=45,
                                            set_tidal_volume_ml=v.set_tidal_volume_ml), library)
    assert m.tidal_volume_ml == pytest.approx(v.tidal_volume_ml, rel=1e-9)
    assert patient_tidal_volume(req, v.set_tidal_volume_ml, v.rate_per_min, library) == pytest.approx(
        v.tidal_volume_ml, rel=1e-9)


def test_the_record_keeps_the_set_volume_and_reads_older_records():
    m = Measurement(3.0, 42.0, 20.0, paco2_mmhg=50.0, set_tidal_volume_ml=48.4)
    e = TimelineEntry(m, accepted="own", settings_set=Settings(44.0, 18.0, 50.7))
    back = timeline_from_dict(timeline_to_dict((e,)))[0]
    assert back.measurement.set_tidal_volume_ml == 48.4 and back.settings_set.set_tidal_volume_ml == 50.7
    old = timeline_to_dict((TimelineEntry(Measurement(0.0, 42.0, 20.0, paco2_mmhg=50.0)),))
    assert "set_tidal_volume_ml" not in old["entries"][0]["measurement"]
    assert timeline_from_dict(old)[0].measurement.set_tidal_volume_ml is None
