"""Settings from the record back into a plan (ventset.titrate.apply), checked by hand."""

from __future__ import annotations

import pytest

from ventset.model import Circuit, Patient, Request, Targets
from ventset.planner import plan
from ventset.titrate.apply import metabolic_rate_from_vco2_w, request_with_settings


def test_metabolic_rate_from_measured_co2_by_weir():
    # Weir 1949: kcal/min = 3.941·VO2 + 1.106·VCO2 (L/min); VCO2 80 mL/min at RQ 0.8 → VO2 100 mL/min;
    # (3.941·0.100 + 1.106·0.080) kcal/min × 4184 J/kcal / 60 s = 33.65 W.
    assert metabolic_rate_from_vco2_w(80.0, 0.8) == pytest.approx((3.941 * 0.1 + 1.106 * 0.08) * 4184 / 60, rel=1e-4)


def test_the_request_plans_exactly_the_settings_given(library):
    req = Request(Patient("dog", 20.0), Circuit(tube_id_mm=8.0, tube_length_cm=8.0), Targets(paco2_mmhg=40.0))
    first = plan(req, library)
    nxt = request_with_settings(req, first, 180.0, 14.0, metabolic_rate_w=30.0)
    p = plan(nxt, library)
    assert p.ventilation.tidal_volume_ml == pytest.approx(180.0) and p.ventilation.rate_per_min == pytest.approx(14.0)
    assert p.metabolism.metabolic_rate_w == pytest.approx(30.0) and p.metabolism.entered
    assert request_with_settings(req, first, 180.0, 14.0).patient == req.patient  # no measured rate: unchanged
