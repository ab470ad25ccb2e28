"""Request → Plan: the planner as a short pipeline of named stages (ventset.stages).

``plan`` resolves the inputs, metabolism, CO2 target, dead space, mechanics, breathing system and
atmosphere into a Basis, applies the patient's situations to it (ventset.stages.situation), chooses the
settings on the line of equal PaCO2, evaluates them through the one evaluation of a patient at given
settings (ventset.evaluate), adds oxygen and fresh gas, and attaches the cautions. ``plan_at`` evaluates
other settings for the same patient (titration, machine dials, a clicked point) without resolving anything
again.
"""

from __future__ import annotations

from dataclasses import replace

from ventset.evaluate import paco2_over_grid as paco2_grid
from ventset.library import Library, load_library
from ventset.model import Plan, Request
from ventset.physiology.deadspace import exchange_per_breath_ml as breath_alveolar_ml
from ventset.solver import Choice, choose_settings
from ventset.stages.circuit import reservoir_bag_l
from ventset.stages.finish import choose_stage, finish
from ventset.stages.situation import situation_basis
from ventset.stages.timing import default_ti_s

__all__ = ["Choice", "breath_alveolar_ml", "choose_settings", "default_ti_s", "paco2_grid", "plan", "plan_at",
           "reservoir_bag_l"]


def plan(request: Request, library: Library | None = None) -> Plan:
    """Draft starting ventilator settings for ``request``. Pure: same request, same plan.

    Raises InputError naming the field for any input outside its hard limits.
    """
    lib = library or load_library()
    basis = situation_basis(request, lib)  # resolve_basis, then the patient's situations (if any)
    subject = basis.subject()
    choice, limits, notes = choose_stage(basis, subject)
    ideal = finish(basis, subject, choice, limits, lib, notes)
    if not request.circuit.machine:
        return ideal
    from ventset.machines.stage import machine_stage

    return machine_stage(ideal, lib, plan_at)


def plan_at(base: Plan, vt_ml: float, rate_per_min: float, library: Library | None = None,
            vco2_ml_min: float | None = None) -> Plan:
    """``base``'s patient evaluated at exactly (vt_ml at the patient, rate_per_min).

    With ``vco2_ml_min`` the patient's CO2 output is taken as measured instead of estimated. The limits are
    ``base``'s; the binding is 'evaluated', so no caution speaks of a choice that was not made here.
    """
    if base.basis is None or base.subject is None:
        raise ValueError("plan_at needs a plan made by ventset.planner.plan")
    lib = library or load_library()
    subject = base.subject if vco2_ml_min is None else replace(base.subject, vco2_ml_min=vco2_ml_min)
    choice = Choice(vt_ml, rate_per_min, False, ("evaluated",), vt_ml, rate_per_min)
    limits = replace(base.limits, binding=("evaluated",), preferred_vt_ml=vt_ml, preferred_rate_per_min=rate_per_min)
    extra = tuple(a for a in base.assumptions if a.key in ("vt_range", "rate_range", "starting_vt", "otis_rate"))
    return finish(base.basis, subject, choice, limits, lib, extra)
