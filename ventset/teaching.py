"""Dead space, step by step: one patient whose apparatus volumes and tube length are changed by hand.

The numbers behind the window's teaching view, Qt-free. With the settings held (the default), the patient
keeps the tidal volume and rate of the first plan, as a ventilator left alone would, and the view shows what
the change does: the breath's composition, the PaCO2 those settings now give, and the minute volume that
would hold the target at that rate. With the settings free, the planner chooses again. Every number is a
``plan()`` of the changed request (so its cautions come with it) or ``plotdata.dead_space_sensitivity`` of
that plan; nothing here writes a formula.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

from ventset.library import Library, load_library
from ventset.model import ApparatusPart, Plan, Request
from ventset.plotdata import Sensitivity, dead_space_sensitivity, nice_ceiling, subject_of

ADDED_PART = "Added part"
ADDED_SOURCE = "added in the teaching view"


@dataclass(frozen=True)
class LessonInputs:
    """The volumes the view lets one change: each part of the first plan, an added part, the tube."""

    part_volumes_ml: tuple[float, ...]   # one per part of the first plan's request, in order
    added_ml: float
    tube_id_mm: float
    tube_length_cm: float
    hold_settings: bool = True


@dataclass(frozen=True)
class Lesson:
    """The changed patient: its plan and what its dead space does (mL, mL/min, mmHg)."""

    plan: Plan
    sensitivity: Sensitivity
    apparatus_ml: float           # parts + tube, the x of the curves
    exchange_ml: float            # what one breath leaves for gas exchange (≤ 0: none)
    stop_ml: float                # parts + tube at which the breath exchanges nothing
    minute_needed_ml_min: float   # holds the target PaCO2 at the plan's rate
    dead_space_share: float       # total dead space / tidal volume

    @property
    def exchange_stopped(self) -> bool:
        return self.exchange_ml <= 0


def start(first: Plan, library: Library | None = None) -> LessonInputs:
    """The first plan's volumes (its tube, or the usual tube it counted when none was entered)."""
    from ventset.stages.airway import usual_tube

    c = first.request.circuit
    if c.tube_id_mm is not None and c.tube_length_cm is not None:
        tid, length = c.tube_id_mm, c.tube_length_cm
    else:
        tid, length = usual_tube(first.resolved.mass_kg, library or load_library())
    return LessonInputs(tuple(p.volume_ml for p in c.parts), 0.0, tid, length)


def request_for(first: Plan, inputs: LessonInputs) -> Request:
    """The first plan's request with the lesson's volumes (and, when held, its tidal volume and rate)."""
    base = first.request
    parts = [ApparatusPart(p.name, v, p.source) for p, v in zip(base.circuit.parts, inputs.part_volumes_ml,
                                                                 strict=True)]
    if inputs.added_ml > 0:
        parts.append(ApparatusPart(ADDED_PART, inputs.added_ml, ADDED_SOURCE))
    circuit = replace(base.circuit, parts=tuple(parts), tube_id_mm=inputs.tube_id_mm,
                      tube_length_cm=inputs.tube_length_cm)
    strategy = base.strategy
    if inputs.hold_settings:
        v = first.ventilation
        strategy = replace(strategy, vt_ml_kg=v.tidal_volume_ml / first.resolved.lean_mass_kg,
                           rate_per_min=v.rate_per_min)
    return replace(base, circuit=circuit, strategy=strategy)


def axis_ml(first: Plan) -> float:
    """A fixed x range for the curves: past the volume at which the first plan's breath exchanges nothing."""
    s = dead_space_sensitivity(first)
    return nice_ceiling(max(s.no_exchange_ml * 1.25, s.current_ml * 1.5, 1.0))


def lesson(first: Plan, inputs: LessonInputs, library: Library | None = None, x_max_ml: float | None = None) \
        -> Lesson:
    """Plan the changed patient and read what its dead space does; InputError naming the field."""
    from ventset.planner import plan

    lib = library or load_library()
    p = plan(request_for(first, inputs), lib)
    sens = dead_space_sensitivity(p, x_max_ml=x_max_ml if x_max_ml is not None else axis_ml(first))
    s, v, d = subject_of(p), p.ventilation, p.dead_space
    needed = v.rate_per_min * s.vt_for_rate(v.alveolar_ml_min, v.rate_per_min)
    share = d.total_ml / v.tidal_volume_ml if v.tidal_volume_ml > 0 else math.inf
    return Lesson(p, sens, d.apparatus_ml + d.tube_ml, s.exchange_ml(v.tidal_volume_ml), sens.no_exchange_ml,
                  needed, share)
