"""Putting a record's settings back into the plan: the next Request, and the metabolic rate a measured CO2
output implies (so the window holds no physiology)."""

from __future__ import annotations

from dataclasses import replace

from ventset.model import Plan, Request
from ventset.physiology import metabolism


def metabolic_rate_from_vco2_w(vco2_ml_min: float, rq: float) -> float:
    """Metabolic rate (W) implied by a measured CO2 output (mL/min STPD) at respiratory quotient ``rq``:
    VO2 = VCO2 / RQ, then Weir 1949."""
    return metabolism.power_w_from_vo2(vco2_ml_min / rq, rq)


def request_with_settings(request: Request, plan: Plan, tidal_volume_ml: float, rate_per_min: float,
                          metabolic_rate_w: float | None = None) -> Request:
    """The request that plans exactly these settings (tidal volume at the patient, mL; rate /min), with the
    measured metabolic rate when one is given."""
    strategy = replace(request.strategy, rate_per_min=rate_per_min,
                       vt_ml_kg=tidal_volume_ml / plan.resolved.lean_mass_kg)
    patient = request.patient if metabolic_rate_w is None else replace(request.patient,
                                                                       metabolic_rate_w=metabolic_rate_w)
    return replace(request, patient=patient, strategy=strategy)
