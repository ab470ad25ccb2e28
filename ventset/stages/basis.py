"""The Basis: every stage result before the choice of settings, and the Subject they resolve to."""

from __future__ import annotations

from dataclasses import dataclass

from ventset.evaluate import Subject, TimingRule
from ventset.library import Library
from ventset.model import Assumption, Metabolism, Request
from ventset.situations import Applied
from ventset.stages.airway import AirwayDeadSpace, Mechanics, dead_space_stage, mechanics_stage
from ventset.stages.circuit import Atmosphere, BreathingSystem, atmosphere_stage, circuit_stage
from ventset.stages.inputs import Inputs, resolve_inputs
from ventset.stages.metabolic import Co2Target, Growth, co2_target_stage, metabolism_stage
from ventset.stages.timing import timing_rule


@dataclass(frozen=True)
class Basis:
    """What a plan knows about the patient and circuit before choosing settings."""

    request: Request
    inputs: Inputs
    metabolism: Metabolism
    growth: Growth
    target: Co2Target
    dead_space: AirwayDeadSpace
    mechanics: Mechanics
    system: BreathingSystem
    atmosphere: Atmosphere
    timing: TimingRule
    typical_ti_source: str
    assumptions: tuple[Assumption, ...]
    situations: Applied | None = None  # what the patient's situations changed (ventset.stages.situation)

    def subject(self, vco2_ml_min: float | None = None) -> Subject:
        """The resolved patient for the evaluator (optionally with a measured CO2 output, mL/min)."""
        m, a, d = self.mechanics, self.atmosphere, self.dead_space
        return Subject(
            vco2_ml_min=self.metabolism.vco2_ml_min if vco2_ml_min is None else vco2_ml_min,
            body_temp_c=self.inputs.body_temp_c, vd_fixed_ml=d.fixed_ml, alveolar_fraction=d.alveolar_fraction,
            compliance_ml_cmh2o=m.compliance_ml_cmh2o, resistance_cmh2o_l_s=m.resistance_cmh2o_l_s,
            peep_cmh2o=m.peep_cmh2o, pressure_limit_cmh2o=m.pressure_limit_cmh2o,
            compressible_ml_cmh2o=self.system.compressible_ml_cmh2o, gradient_mmhg=self.target.gradient_mmhg,
            mode=self.inputs.mode, timing=self.timing, lean_mass_kg=self.inputs.lean_mass_kg, fio2=a.fio2,
            barometric_mmhg=a.barometric_mmhg, water_vapour_mmhg=a.water_vapour_mmhg, rq=self.metabolism.rq)


def resolve_basis(request: Request, library: Library) -> Basis:
    """Run the stages up to the choice of settings; raises InputError naming the field."""
    return basis_from_inputs(request, resolve_inputs(request, library), library)


def basis_from_inputs(request: Request, inputs: Inputs, library: Library) -> Basis:
    """The stages after the inputs are resolved (a sweep over body mass passes arrays of masses in ``inputs``)."""
    p, c, t = request.patient, request.circuit, request.targets
    met, growth, met_notes = metabolism_stage(p, inputs, library)
    target = co2_target_stage(t, inputs)
    dead = dead_space_stage(p, c, inputs, library)
    mech = mechanics_stage(p, t, inputs)
    system = circuit_stage(c, inputs.mass_kg, library)
    atmosphere = atmosphere_stage(t, inputs.body_temp_c, library)
    rule, ti_source = timing_rule(t, inputs.species, inputs.lean_mass_kg, library)
    notes = (*inputs.assumptions, *met_notes, *target.assumptions, *dead.assumptions, *mech.assumptions)
    return Basis(request, inputs, met, growth, target, dead, mech, system, atmosphere, rule, ti_source, notes)
