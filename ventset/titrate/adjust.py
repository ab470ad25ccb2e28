"""Next settings from a measured PaCO2 (or EtCO2 + gradient), read through the one evaluation of the patient.

Model (alveolar ventilation equation; reference sheet §3.4): the settings in use are evaluated on the
plan's resolved patient (ventset.evaluate): VA = f·(VT(1 − f_alv) − VD_fixed). The measured PaCO2 gives the
patient's actual CO2 output, VCO2 = VA·PaCO2/K(T), and the ventilation that reaches the target,
VA_new = VA·PaCO2_measured/PaCO2_target. The settings on that line are chosen by the planner's solver inside
the species ranges (widened to include the settings in use) and the pressure limit, and each proposal is
evaluated for the same patient with the measured CO2 output (``planner.plan_at``): nothing is invented.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

from ventset.errors import InputError
from ventset.evaluate import Evaluation, evaluate
from ventset.fields import FIELDS
from ventset.library import Library, Sourced, load_library
from ventset.machines.result import MachineSettings
from ventset.model import STANDING_NOTICE, Caution, Limits, Plan, Request
from ventset.planner import plan, plan_at
from ventset.present.phrases import Phrase
from ventset.solver import Choice, choose_settings
from ventset.titrate.data import load_titration_data
from ventset.titrate.fields import MEASURED_FIELDS
from ventset.titrate.oxygenation import Oxygenation, oxygenation
from ventset.titrate.record import Measurement, Proposal, validate_measurement
from ventset.titrate.rules import (  # noqa: F401 (the preferences are re-exported here)
    PREFERENCE_LABELS,
    PREFERENCES,
    AdjustContext,
    adjustment_cautions,
    rationale,
)
from ventset.units import fmt


@dataclass(frozen=True)
class InUseDeadSpace:
    """Dead space at the tidal volume in use (mL): the plan's fixed parts plus f_alv·VT."""

    anatomical_ml: float
    apparatus_ml: float
    tube_ml: float
    alveolar_ml: float
    total_ml: float
    fixed_ml: float
    alveolar_fraction: float


@dataclass(frozen=True)
class Reading:
    """The measurement read through the model at the settings in use."""

    in_use: Evaluation
    paco2_mmhg: float
    source: str
    gradient_mmhg: float
    vco2_ml_min: float
    target_mmhg: float
    needed_alveolar_ml_min: float


@dataclass(frozen=True)
class Steps:
    """The full proposal and the part-way step, each evaluated for the patient."""

    box: Limits
    moved: frozenset[str]
    full: Choice
    full_plan: Plan
    proposal: Proposal
    partial_plan: Plan
    partial: Proposal
    large: bool
    max_step: Sourced


@dataclass(frozen=True)
class Adjustment:
    """Everything ``adjust`` found: the measurement read through the model, the proposal and its cautions."""

    request: Request
    measurement: Measurement
    prefer: str
    plan: Plan
    dead_space: InUseDeadSpace
    limits: Limits
    in_use_alveolar_ml_min: float
    in_use_minute_ml_min: float
    in_use_plateau_cmh2o: float
    paco2_used_mmhg: float
    paco2_source: str
    gradient_mmhg: float
    gradient_measured: bool
    alveolar_fraction_from_gradient: float | None
    vco2_ml_min: float
    vco2_estimate_ml_min: float
    target_paco2_mmhg: float
    needed_alveolar_ml_min: float
    proposal: Proposal
    partial_step: Proposal
    large_step: bool
    max_step: Sourced
    oxygenation: Oxygenation | None
    cautions: tuple[Caution, ...]
    rationale: tuple[Phrase, ...]
    standing_notice: str = STANDING_NOTICE
    # With a machine in use (circuit.machine): the proposal and the part-way step dialled on it, re-evaluated as
    # dialled with the measured CO2 output (ventset.titrate.dials); None without a machine.
    machine_proposal: MachineSettings | None = None
    machine_partial: MachineSettings | None = None

    @property
    def vco2_ratio(self) -> float:
        return self.vco2_ml_min / self.vco2_estimate_ml_min


def _check(prefer: str, m: Measurement) -> None:
    if prefer not in PREFERENCES:
        raise InputError("prefer", prefer, f"must be one of {', '.join(PREFERENCES)}")
    validate_measurement(m)
    if m.paco2_mmhg is None and m.etco2_mmhg is None:
        raise InputError(MEASURED_FIELDS["paco2"], "", "is needed (or a measured EtCO2)")
    if m.paco2_mmhg is None and m.etco2_mmhg == 0:
        raise InputError(MEASURED_FIELDS["etco2"], "0 mmHg",
                         "no CO2 detected: check for disconnection, oesophageal intubation or cardiac arrest first; "
                         "there is nothing to adjust from")


def measured_gradient(request: Request, m: Measurement) -> tuple[float | None, bool]:
    """The measured PaCO2 − EtCO2 (mmHg) and whether the plan uses it (entered gradient absent, value plausible)."""
    if m.paco2_mmhg is None or m.etco2_mmhg is None:
        return None, False
    g, spec = m.paco2_mmhg - m.etco2_mmhg, FIELDS["gradient"]
    lo, hi = spec.lo if spec.lo is not None else -math.inf, spec.hi if spec.hi is not None else math.inf
    return g, request.targets.gradient_mmhg is None and lo <= g <= hi


def base_plan(request: Request, m: Measurement, lib: Library) -> Plan:
    """The plan of this patient with the species ranges only (the strategy's choices do not widen them here)."""
    req = replace(request, strategy=replace(request.strategy, vt_ml_kg=None, rate_per_min=None))
    g, use = measured_gradient(request, m)
    if use:
        req = replace(req, targets=replace(req.targets, gradient_mmhg=g))
    return plan(req, lib)


def read_measurement(base: Plan, m: Measurement) -> Reading:
    """Evaluate the settings in use and read the patient's CO2 output from the measured PaCO2."""
    s = base.subject
    assert s is not None
    ev = evaluate(s, m.tidal_volume_ml, m.rate_per_min)
    if ev.exchange_ml <= 0:
        raise InputError(MEASURED_FIELDS["tidal-volume"], f"{fmt(m.tidal_volume_ml)} mL",
                         f"is not above the dead space the model has for this patient and circuit "
                         f"({fmt(s.vd_fixed_ml + s.alveolar_fraction * m.tidal_volume_ml)} mL at this volume); check "
                         "the tidal volume and the apparatus list, or enter a measured alveolar dead-space fraction")
    gradient = base.resolved.gradient_mmhg
    if m.paco2_mmhg is not None:
        paco2, source = m.paco2_mmhg, "arterial blood gas"
    else:
        assert m.etco2_mmhg is not None
        paco2 = m.etco2_mmhg + gradient
        source = f"EtCO2 {fmt(m.etco2_mmhg)} + gradient {fmt(gradient)} mmHg"
        lo = MEASURED_FIELDS["paco2"].lo or 0.0
        if paco2 < lo:
            raise InputError(MEASURED_FIELDS["etco2"], f"{fmt(m.etco2_mmhg)} mmHg",
                             f"plus the gradient ({fmt(gradient)} mmHg) gives PaCO2 {fmt(paco2)} mmHg, too low to "
                             "adjust from; check the capnograph and the gradient")
    vco2 = ev.alveolar_ml_min * paco2 / s.alveolar_constant_mmhg
    target = base.ventilation.target_paco2_mmhg
    return Reading(ev, paco2, source, gradient, vco2, target, ev.alveolar_ml_min * paco2 / target)


def _box(base: Plan, vt0: float, f0: float) -> tuple[Limits, frozenset[str]]:
    """The species ranges widened to include the settings in use, and which bounds the settings in use moved."""
    lim = base.limits
    moved = {name for name, out in (("vt_min", vt0 < lim.vt_min_ml), ("vt_max", vt0 > lim.vt_max_ml),
                                    ("rate_min", f0 < lim.rate_min_per_min), ("rate_max", f0 > lim.rate_max_per_min))
             if out}
    return Limits(min(lim.vt_min_ml, vt0), max(lim.vt_max_ml, vt0), min(lim.rate_min_per_min, f0),
                  max(lim.rate_max_per_min, f0), lim.vt_pressure_max_ml, ()), frozenset(moved)


def _solve(base: Plan, va_ml_min: float, prefer: str, vt0: float, f0: float, va0: float, lim: Limits) -> Choice:
    """Settings on the line of the needed alveolar ventilation, by the planner's solver, from the point in use."""
    if prefer == "rate":
        pref_vt, pref_rate = vt0, None
    elif prefer == "tidal_volume":
        pref_vt, pref_rate = None, f0
    else:  # equal relative change in rate and in the alveolar part of each breath
        pref_vt, pref_rate = None, f0 * math.sqrt(va_ml_min / va0)
    s = base.subject
    assert s is not None
    return choose_settings(va_ml_min, s.vd_fixed_ml, s.alveolar_fraction, lim.vt_min_ml, lim.vt_max_ml,
                           lim.rate_min_per_min, lim.rate_max_per_min, lim.vt_pressure_max_ml, pref_vt, pref_rate)


def _proposal(at: Plan, choice: Choice, m: Measurement, va0: float, va_full: float) -> Proposal:
    v, pr = at.ventilation, at.pressures
    vt, rate, va = v.tidal_volume_ml, v.rate_per_min, v.delivered_alveolar_ml_min
    dvt = not math.isclose(vt, m.tidal_volume_ml, rel_tol=1e-6)
    drate = not math.isclose(rate, m.rate_per_min, rel_tol=1e-6)
    changed = "both" if dvt and drate else "tidal_volume" if dvt else "rate" if drate else "none"
    frac = 1.0 if math.isclose(va_full, va0, rel_tol=1e-12) else (va - va0) / (va_full - va0)
    return Proposal(vt, v.set_tidal_volume_ml, rate, v.ti_s, v.te_s, va, v.minute_ml_min, v.expected_paco2_mmhg,
                    v.expected_etco2_mmhg, pr.plateau_cmh2o, pr.peak_cmh2o, choice.reached, choice.binding, changed,
                    frac, va / va0 - 1)


def _at(base: Plan, choice: Choice, vco2: float, lib: Library) -> Plan:
    try:
        return plan_at(base, choice.vt_ml, choice.rate_per_min, lib, vco2_ml_min=vco2)
    except InputError as err:  # e.g. an entered Ti that does not fit the proposed rate
        raise InputError(err, err.value, f"{err.reason} (at the proposed {fmt(choice.vt_ml)} mL and "
                                         f"{fmt(choice.rate_per_min)}/min)", err.unit) from None


def steps(base: Plan, r: Reading, m: Measurement, prefer: str, lib: Library) -> Steps:
    """The full proposal and, when it changes ventilation by more than the step size, a part-way step."""
    box, moved = _box(base, m.tidal_volume_ml, m.rate_per_min)
    va0 = r.in_use.alveolar_ml_min
    full = _solve(base, r.needed_alveolar_ml_min, prefer, m.tidal_volume_ml, m.rate_per_min, va0, box)
    full_plan = _at(base, full, r.vco2_ml_min, lib)
    va_full = full_plan.ventilation.delivered_alveolar_ml_min
    proposal = _proposal(full_plan, full, m, va0, va_full)
    max_step = load_titration_data().defaults["max_step_fraction"]
    large = va_full > 0 and abs(va_full / va0 - 1) > max_step.value + 1e-9
    part_plan, partial = full_plan, proposal
    if large:
        va_part = va0 * (1 + math.copysign(max_step.value, va_full - va0))
        part = _solve(base, va_part, prefer, m.tidal_volume_ml, m.rate_per_min, va0, box)
        part_plan = _at(base, part, r.vco2_ml_min, lib)
        partial = _proposal(part_plan, part, m, va0, va_full)
        large = abs(partial.ventilation_change) <= max_step.value + 1e-9  # else a limit forces the whole change
        if not large:
            part_plan, partial = full_plan, proposal
    return Steps(replace(box, binding=full.binding), moved, full, full_plan, proposal, part_plan, partial, large,
                 max_step)


def adjust(request: Request, measurement: Measurement, prefer: str = "rate",
           library: Library | None = None, gradient_source: str = "") -> Adjustment:
    """Read a measured PaCO2 (or EtCO2 + gradient) through the model and propose the next settings.

    ``measurement`` carries the settings in use (VT the patient receives, rate). ``prefer``: 'rate' keeps VT and
    changes the rate (exact at constant VCO2 and dead space), 'tidal_volume' keeps the rate, 'both' shares the
    change. ``gradient_source`` says where an entered gradient came from (e.g. an earlier blood gas). Raises
    InputError naming the field.
    """
    lib = library or load_library()
    _check(prefer, measurement)
    m = measurement
    base = base_plan(request, m, lib)
    r = read_measurement(base, m)
    st = steps(base, r, m, prefer, lib)
    g, use = measured_gradient(request, m)
    alv = (None if g is None or m.paco2_mmhg is None else g / m.paco2_mmhg)
    oxy = None
    if m.pao2_mmhg is not None:
        fio2 = m.fio2 if m.fio2 is not None else base.oxygen.fio2
        oxy = oxygenation(m.pao2_mmhg, fio2, base.oxygen.barometric_mmhg, r.paco2_mmhg, base.resolved.body_temp_c,
                          base.metabolism.rq)
    st, on_machine = _on_machine(request, st, lib)
    ctx = AdjustContext(request, m, prefer, base, r, st, g, use, alv, oxy, lib, gradient_source)
    s = base.subject
    assert s is not None
    ev = r.in_use
    ds = InUseDeadSpace(base.dead_space.anatomical_ml, base.dead_space.apparatus_ml + base.dead_space.tube_ml,
                        base.dead_space.tube_ml, s.alveolar_fraction * m.tidal_volume_ml,
                        s.vd_fixed_ml + s.alveolar_fraction * m.tidal_volume_ml, s.vd_fixed_ml, s.alveolar_fraction)
    return Adjustment(request, m, prefer, base, ds, st.box, ev.alveolar_ml_min, ev.minute_ml_min, ev.plateau_cmh2o,
                      r.paco2_mmhg, r.source, r.gradient_mmhg, use, alv, r.vco2_ml_min, base.metabolism.vco2_ml_min,
                      r.target_mmhg, r.needed_alveolar_ml_min, st.proposal, st.partial, st.large, st.max_step, oxy,
                      _with_machine(adjustment_cautions(ctx), on_machine), rationale(ctx), base.standing_notice,
                      *on_machine)


def _on_machine(request: Request, st: Steps, lib: Library) -> tuple[Steps, tuple[MachineSettings | None, ...]]:
    """With a machine in use: the proposal and part-way step dialled on it, and their dials in the proposals."""
    if not request.circuit.machine:
        return st, (None, None)
    from ventset.machines.stage import find_machine
    from ventset.titrate.dials import dials_of, on_the_machine

    m = find_machine(request.circuit.machine)
    full = on_the_machine(st.full_plan, m, lib)
    part = on_the_machine(st.partial_plan, m, lib) if st.large else None
    proposal = replace(st.proposal, dials=dials_of(full))
    partial = replace(st.partial, dials=dials_of(part)) if part is not None else proposal
    return replace(st, proposal=proposal, partial=partial), (full, part)


def _with_machine(cautions: tuple[Caution, ...], on: tuple[MachineSettings | None, ...]) -> tuple[Caution, ...]:
    """The adjustment's cautions and those of the proposal on the machine (each code once)."""
    from ventset.cautions import sort_cautions

    full = on[0]
    if full is None:
        return cautions
    have = {c.code for c in cautions}
    return tuple(sort_cautions([*cautions, *(c for c in full.cautions if c.code not in have)]))
