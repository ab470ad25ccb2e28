"""Ideal settings → the settings a machine class can be dialled to, evaluated as dialled.

The machine is modelled only by what it changes in the one evaluation (``ventset.evaluate``): which mode the
breath is (pressure for a pressure-held breath, else volume), the gas the breath path absorbs (the circuit's
compressible volume plus the machine's own gas, Boyle), the fresh gas added during inspiration when it is
coupled (FGF × Ti), the PEEP it can hold, and how its controls make the tidal volume, rate and inspiratory time
(``deliver``). ``dial`` rounds every control that shapes the breath (rate, times, I:E, flow, PEEP, limit) to its
nearest step, then sizes the breath with the control that sizes it (volume, flow, a pressure, a press time):
the continuous value that keeps the plan's PaCO2 is found through ``deliver`` and the neighbouring step that
comes closest to that PaCO2 is taken. Values outside a control's range are held at its end and reported
(``Setting.in_range``); the cautions say so (ventset.machines.cautions).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, replace

from ventset.evaluate import Evaluation, Subject, TimingRule, evaluate
from ventset.machines import physics
from ventset.machines.data import Control, MachineClass
from ventset.model import Limits, Plan

SOLVE_STEPS = 36  # bisection halvings: 2^-36 (1.5e-11) of the bracket, far below any control's step
# Two settings whose PaCO2 differ by less than this (mmHg) are equally good; the one nearer the ideal is taken
# (half the 1 mmHg a capnograph or blood-gas analyser resolves; derived from common practice).
PACO2_EQUAL_MMHG = 0.5
TI_BOUNDS_S = (0.01, 10.0)  # a pressure-cycled breath is looked for in this window (10 s: the Ti input's limit)


@dataclass(frozen=True)
class Rig:
    """A plan's patient on a machine class: what the machine changes in the evaluation."""

    machine: MachineClass
    subject: Subject
    mode: str
    compressible_ml_cmh2o: float  # the breath's gas path: circuit (unless the machine has its own) + machine
    machine_compressible_ml_cmh2o: float  # the machine's own gas (Boyle)
    fresh_gas_ml_min: float  # flowing into the breath during inspiration (0 when not coupled)
    default_peep_cmh2o: float  # with no PEEP control: the plan's (an add-on valve) or 0
    default_limit_cmh2o: float
    valve_flow_l_min: float

    def subject_at(self, ti_s: float, peep_cmh2o: float, limit_cmh2o: float) -> Subject:
        """The patient on this machine with an inspiratory time, PEEP and pressure limit as dialled."""
        t = self.subject.timing
        return replace(self.subject, mode=self.mode, peep_cmh2o=peep_cmh2o, pressure_limit_cmh2o=limit_cmh2o,
                       compressible_ml_cmh2o=self.compressible_ml_cmh2o,
                       timing=TimingRule(ti_s, None, t.typical_ti_s, t.species_ie, t.pause_s))


def machine_compressible_ml_cmh2o(machine: MachineClass, barometric_mmhg: float) -> float:
    """The machine's own compressible volume: as measured for a clinic machine, else its internal gas by Boyle."""
    if machine.compressible_ml_cmh2o is not None:
        return machine.compressible_ml_cmh2o.value
    return physics.compressible_ml_cmh2o(machine.internal_gas_ml.value, barometric_mmhg)


def make_rig(plan: Plan, machine: MachineClass) -> Rig:
    """The rig of ``plan`` (made by ventset.planner.plan) on ``machine``."""
    s = plan.subject
    if s is None:
        raise ValueError("a machine needs a plan made by ventset.planner.plan")
    own = machine_compressible_ml_cmh2o(machine, plan.oxygen.barometric_mmhg)
    circuit = 0.0 if machine.own_gas_path else s.compressible_ml_cmh2o
    coupled = machine.coupled and not machine.own_gas_path
    has_peep = machine.control("peep") is not None or machine.peep_without_control == "add_on_valve"
    return Rig(machine, s, "pressure" if machine.breath == "pressure" else "volume", circuit + own, own,
               plan.oxygen.fresh_gas_ml_min if coupled else 0.0, plan.pressures.peep_cmh2o if has_peep else 0.0,
               plan.pressures.pressure_limit_cmh2o,
               machine.valve_flow_l_min.value if machine.valve_flow_l_min is not None else 0.0)


@dataclass(frozen=True)
class Delivery:
    """What a set of dials gives: the patient as dialled, its evaluation, and the gas per breath."""

    subject: Subject
    evaluation: Evaluation
    machine_ml: float  # gas the machine (or bag, or valve) delivers per breath
    coupled_ml: float  # fresh gas added to the breath during inspiration
    cycling: str = ""  # pressure-cycled only: "" cycles, "never" (pressure not reached), "at_once"


def patient_vt_ml(s: Subject, into_ml: float, rate_per_min: float) -> float:
    """Tidal volume at the patient when ``into_ml`` enters the breath path: the evaluation's set volume
    (patient + compression) equals it. The evaluator's set volume is proportional to VT, so one evaluation
    gives the ratio; bisection is the fallback if that ever stops being true."""
    if into_ml <= 0:
        return 0.0
    ratio = evaluate(s, 1.0, rate_per_min).set_vt_ml
    vt = into_ml / ratio
    if abs(evaluate(s, vt, rate_per_min).set_vt_ml - into_ml) <= 1e-9 * into_ml:
        return vt
    return bisect(lambda x: evaluate(s, x, rate_per_min).set_vt_ml, into_ml, 0.0, into_ml)  # pragma: no cover


def bisect(f: Callable[[float], float], target: float, lo: float, hi: float, log: bool = False) -> float:
    """x in [lo, hi] with f(x) = target for an increasing f (geometric halving when ``log``)."""
    for _ in range(SOLVE_STEPS):
        mid = math.sqrt(lo * hi) if log else (lo + hi) / 2.0
        if f(mid) < target:
            lo = mid
        else:
            hi = mid
    return math.sqrt(lo * hi) if log else (lo + hi) / 2.0


def timing(m: MachineClass, d: dict[str, float]) -> tuple[float, float]:
    """Rate (/min) and inspiratory time (s) from the timing controls (rate or Te; Ti, I:E, or volume ÷ flow)."""
    if m.breath == "volume_flow":
        ti: float | None = physics.flow_time_s(d["tidal_volume"], d["flow"])
    else:
        ti = d.get("ti", d.get("press_time"))
    if "rate" in d:
        rate = d["rate"]
        return rate, ti if ti is not None else 60.0 / rate / (1.0 + d["ie"])
    te = d["te"]
    ti = ti if ti is not None else te / d["ie"]
    return 60.0 / (ti + te), ti


def deliver(rig: Rig, d: dict[str, float]) -> Delivery:
    """The breath a set of dials gives this patient (dials by control kind, in the core's units)."""
    m = rig.machine
    peep, limit = d.get("peep", rig.default_peep_cmh2o), d.get("pressure_limit", rig.default_limit_cmh2o)
    if m.breath == "pressure_cycled":
        return _cycled(rig, d, peep, limit)
    rate, ti = timing(m, d)
    s = rig.subject_at(ti, peep, limit)
    if m.breath in ("pressure", "manual"):
        target = peep + d["pressure"] if m.breath == "pressure" else d["squeeze_pressure"]
        ev = evaluate(s, max(float(s.vt_at_pressure(target, ti)), 0.0), rate)
        return Delivery(s, ev, ev.set_vt_ml, 0.0)
    if m.breath in ("volume", "volume_flow"):
        machine_ml = d["tidal_volume"]
    else:  # flow_time, demand
        machine_ml = physics.flow_volume_ml(d["flow"] if m.breath == "flow_time" else rig.valve_flow_l_min, ti)
    coupled = physics.coupled_ml(rig.fresh_gas_ml_min, ti)
    ev = evaluate(s, patient_vt_ml(s, machine_ml + coupled, rate), rate)
    return Delivery(s, ev, machine_ml, coupled)


def _cycled(rig: Rig, d: dict[str, float], peep: float, limit: float) -> Delivery:
    """A set flow until the airway reaches the cycling pressure, then the set expiratory time."""
    flow, te, cycle = d["flow"], d["te"], d["cycle_pressure"]

    def at(ti: float) -> Delivery:
        s, rate = rig.subject_at(ti, peep, limit), 60.0 / (ti + te)
        machine_ml, coupled = physics.flow_volume_ml(flow, ti), physics.coupled_ml(rig.fresh_gas_ml_min, ti)
        return Delivery(s, evaluate(s, patient_vt_ml(s, machine_ml + coupled, rate), rate), machine_ml, coupled)

    lo, hi = TI_BOUNDS_S
    if at(hi).evaluation.peak_cmh2o < cycle:
        return replace(at(hi), cycling="never")
    if at(lo).evaluation.peak_cmh2o >= cycle:
        return replace(at(lo), cycling="at_once")
    return at(bisect(lambda ti: at(ti).evaluation.peak_cmh2o, cycle, lo, hi))


@dataclass(frozen=True)
class Setting:
    """One control as dialled: what the plan asks of it (``ideal``) and the setting (``value``), in its unit."""

    control: Control
    ideal: float
    value: float
    in_range: bool


@dataclass(frozen=True)
class Dialled:
    settings: tuple[Setting, ...]
    delivery: Delivery
    aim_paco2_mmhg: float


def ideal_controls(rig: Rig, plan: Plan) -> dict[str, float]:
    """What the ideal plan asks of each control that shapes the breath (core units)."""
    v, p = plan.ventilation, plan.pressures
    out = {"rate": v.rate_per_min, "ti": v.ti_s, "te": v.te_s, "ie": v.te_s / v.ti_s, "peep": p.peep_cmh2o,
           "pressure_limit": p.pressure_limit_cmh2o, "press_time": v.ti_s}
    s = rig.subject_at(v.ti_s, p.peep_cmh2o, p.pressure_limit_cmh2o)
    set_ml = evaluate(s, v.tidal_volume_ml, v.rate_per_min).set_vt_ml
    machine_ml = set_ml - physics.coupled_ml(rig.fresh_gas_ml_min, v.ti_s)
    out["flow"] = machine_ml / 1000.0 / v.ti_s * 60.0
    return out


def _solve_sizing(rig: Rig, c: Control, d: dict[str, float], aim_mmhg: float) -> float:
    """The continuous setting of the sizing control (core units) whose breath gives PaCO2 = aim."""
    def minus_paco2(x: float) -> float:
        paco2 = deliver(rig, {**d, c.kind: x}).evaluation.paco2_mmhg
        return -paco2 if math.isfinite(paco2) else -math.inf

    floor = d.get("peep", rig.default_peep_cmh2o) if c.kind == "cycle_pressure" else 0.0
    lo, hi = floor + c.to_core(c.step) / 1000.0, c.to_core(c.max) * 100.0
    if minus_paco2(hi) < -aim_mmhg:
        return hi
    return bisect(minus_paco2, -aim_mmhg, lo, hi, log=True)


def _score(dv: Delivery, aim_mmhg: float, steps_away: float, limits: Limits) -> tuple[bool, float, int, float]:
    """Lower is better: a breath that fits its cycle, then a PaCO2 within PACO2_EQUAL_MMHG of the aim, then one
    inside the plan's limits (the species' usual tidal volume and rate, the pressure limit), then the setting
    fewest steps from the ideal."""
    ev = dv.evaluation
    miss = abs(ev.paco2_mmhg - aim_mmhg) if math.isfinite(ev.paco2_mmhg) else math.inf
    outside = ((not limits.vt_min_ml * (1 - 1e-9) <= ev.vt_ml <= limits.vt_max_ml * (1 + 1e-9))
               + (not limits.rate_min_per_min * (1 - 1e-9) <= ev.rate_per_min <= limits.rate_max_per_min * (1 + 1e-9))
               + (ev.peak_cmh2o > dv.subject.pressure_limit_cmh2o + 1e-9))
    return (not ev.ti_fits or bool(dv.cycling), max(miss - PACO2_EQUAL_MMHG, 0.0), outside, steps_away)


def _neighbours(c: Control, x: float) -> list[float]:
    """The settings of ``c`` on either side of ``x`` (held to its range)."""
    return sorted({c.fit(c.below(x)), c.fit(c.above(x))})


def _shape(m: MachineClass, ideal: dict[str, float], sizing: Control) -> dict[str, Setting]:
    """Every control but the sizing one at its nearest setting."""
    out = {}
    for c in m.controls:
        if c is not sizing:
            want = c.from_core(ideal[c.kind])
            out[c.kind] = Setting(c, want, c.fit(want), c.min <= c.snap(want) <= c.max)
    return out


def dial(plan: Plan, rig: Rig) -> Dialled:
    """The settings of ``rig``'s machine nearest the ideal ``plan``, sized to keep its PaCO2.

    The rate (or expiratory time) is tried at the steps on either side of the ideal, the breath sized for each,
    and the two sizing steps around each continuous size are compared (``_score``).
    """
    m = rig.machine
    v = plan.ventilation
    aim = v.expected_paco2_mmhg if math.isfinite(v.expected_paco2_mmhg) else v.target_paco2_mmhg
    sizing = m.control(m.sizing)
    assert sizing is not None  # the schema requires it
    settings = _shape(m, ideal_controls(rig, plan), sizing)
    alt = next((c for c in m.controls if c.kind in ("rate", "te") and c is not sizing), None)
    best: tuple[tuple[bool, float, int, float], dict[str, float], float, Delivery] | None = None
    for a in _neighbours(alt, settings[alt.kind].ideal) if alt is not None else [math.nan]:
        d = {k: s.control.to_core(s.value) for k, s in settings.items()}
        if alt is not None:
            d[alt.kind] = alt.to_core(a)
        needed = sizing.from_core(_solve_sizing(rig, sizing, d, aim))
        away = abs(a - settings[alt.kind].ideal) / alt.step if alt is not None else 0.0
        for value in _neighbours(sizing, needed):
            dv = deliver(rig, {**d, sizing.kind: sizing.to_core(value)})
            score = _score(dv, aim, away + abs(value - needed) / sizing.step, plan.limits)
            if best is None or score < best[0]:
                best = (score, {**d, "_needed": needed, "_alt": a, "_value": value}, needed, dv)
    assert best is not None
    _, chosen, needed, dv = best
    if alt is not None:
        settings[alt.kind] = replace(settings[alt.kind], value=chosen["_alt"])
    settings[sizing.kind] = Setting(sizing, needed, chosen["_value"], sizing.min <= sizing.snap(needed) <= sizing.max)
    return Dialled(tuple(settings[c.kind] for c in m.controls), dv, aim)
