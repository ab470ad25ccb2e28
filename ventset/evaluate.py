"""One evaluation of a patient at given settings: what a tidal volume and rate imply.

Every question of the form "what do these settings give this patient?" (the plan itself, the titration,
the settings map and its zones, a clicked point, waveforms, dead-space sensitivity, machine dials,
charts) goes through ``evaluate`` (one point) or ``evaluate_grid`` (arrays). Both call the same
equations in ``ventset.physiology``; nothing here imports numpy unless arrays are passed in.

Model, steady state:
- alveolar ventilation VA = f·(VT(1 − f_alv) − VD_fixed) (VD_fixed = anatomical + apparatus + tube);
- PaCO2 = VCO2·K(T)/VA (alveolar ventilation equation), EtCO2 = PaCO2 − gradient, never below 0;
- PAO2 by the full alveolar gas equation, never below 0;
- single-compartment equation of motion for plateau, peak (constant flow) or the square-pressure rise,
  τ = R·C; the circuit's compressible volume adds to the set volume in volume mode (Chatburn 2014).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields, replace
from typing import Any

from ventset.elementwise import is_scalar, larger, smaller
from ventset.physiology import deadspace, gas, mechanics

# The alveolar gas equation is fed at most this PaCO2 (mmHg): beyond it the patient is far outside any
# steady state the equation describes, and the PaCO2 itself is the danger (derived; display guard only).
PACO2_CAP_FOR_PAO2_MMHG = 200.0
# Expiration must keep at least this share of the breath cycle (common practice: an inspiratory time
# above 80 % of the cycle leaves no time to breathe out; I:E 4:1 is the usual ceiling of ventilators).
MAX_TI_FRACTION = 0.8

Num = Any  # a float, or a numpy array of floats (evaluate_grid)


@dataclass(frozen=True)
class TimingRule:
    """How the inspiratory time follows the rate, by the rule the plan used.

    An entered Ti is held; an entered I:E gives Ti = (60/f)/(1 + E); otherwise the shorter of the
    typical Ti for the patient (species value, or ≈1 s at 20 kg × (M/20)^0.26, Stahl 1967) and the Ti the
    species' usual I:E gives. ``pause_s`` is an inspiratory pause inside Ti (no flow; plateau held): with Ti
    or I:E entered it comes out of that Ti, otherwise it is added to the rule's flow time, so Te is shorter.
    """

    entered_ti_s: float | None
    entered_ie: float | None
    typical_ti_s: float
    species_ie: float
    pause_s: float = 0.0

    def ti_s(self, rate_per_min: Num) -> Num:
        """Inspiratory time (s) at a rate (float or array), the pause included."""
        cycle = 60.0 / rate_per_min
        if self.entered_ti_s is not None:
            return cycle * 0.0 + self.entered_ti_s
        if self.entered_ie is not None:
            return cycle / (1.0 + self.entered_ie)
        return smaller(self.typical_ti_s, cycle / (1.0 + self.species_ie)) + self.pause_s

    def flow_time_s(self, rate_per_min: Num) -> Num:
        """The part of Ti with inspiratory flow (s): Ti − pause (≤ 0 means the pause fills Ti)."""
        return self.ti_s(rate_per_min) - self.pause_s

    def fits(self, rate_per_min: float) -> bool:
        """Ti keeps under MAX_TI_FRACTION of the cycle and the pause leaves time for flow at this rate."""
        ti = float(self.ti_s(rate_per_min))
        return self.pause_s < ti < MAX_TI_FRACTION * 60.0 / rate_per_min

    def highest_rate_per_min(self, lo: float = 0.01, hi: float = 1000.0) -> float:
        """The highest rate (/min) at which the breath still ``fits`` (bisection: the rates that fit are those
        below one rate, since Ti falls no faster than the cycle); ``hi`` if all fit, 0 if none does."""
        if self.fits(hi):
            return hi
        if not self.fits(lo):
            return 0.0
        for _ in range(60):
            mid = (lo * hi) ** 0.5
            lo, hi = (mid, hi) if self.fits(mid) else (lo, mid)
        return lo

    def te_without_pause_s(self, rate_per_min: float) -> float:
        """Te (s) this rule would give at the rate with no pause (to show what the pause costs)."""
        return 60.0 / rate_per_min - float(replace(self, pause_s=0.0).ti_s(rate_per_min))

    def rule_at(self, rate_per_min: float) -> str:
        """Which rule set Ti at this rate: 'entered_ti', 'entered_ie', 'typical_ti' or 'species_ie'."""
        if self.entered_ti_s is not None:
            return "entered_ti"
        if self.entered_ie is not None:
            return "entered_ie"
        return "typical_ti" if self.typical_ti_s < 60.0 / rate_per_min / (1.0 + self.species_ie) else "species_ie"


@dataclass(frozen=True)
class Subject:
    """The resolved patient and circuit: everything a tidal volume and rate need to be evaluated.

    Volumes mL, flows mL/min, pressures cmH2O (airway) or mmHg (gas), temperature °C.
    """

    vco2_ml_min: float
    body_temp_c: float
    vd_fixed_ml: float
    alveolar_fraction: float
    compliance_ml_cmh2o: float
    resistance_cmh2o_l_s: float
    peep_cmh2o: float
    pressure_limit_cmh2o: float
    compressible_ml_cmh2o: float
    gradient_mmhg: float
    mode: str
    timing: TimingRule
    lean_mass_kg: float
    fio2: float
    barometric_mmhg: float
    water_vapour_mmhg: float
    rq: float

    @property
    def alveolar_constant_mmhg(self) -> float:
        """K(T) of the alveolar ventilation equation at body temperature (gas.alveolar_constant_mmhg)."""
        return gas.alveolar_constant_mmhg(self.body_temp_c)

    @property
    def time_constant_s(self) -> float:
        return mechanics.time_constant_s(self.resistance_cmh2o_l_s, self.compliance_ml_cmh2o)

    @property
    def all_dead_space_vt_ml(self) -> float:
        """Tidal volume (mL) that is all dead space: VD_fixed/(1 − f_alv)."""
        return self.vd_fixed_ml / (1.0 - self.alveolar_fraction)

    def exchange_ml(self, vt_ml: Num) -> Num:
        """Volume of one breath that exchanges gas: VT·(1 − f_alv) − VD_fixed (mL; ≤ 0 means none)."""
        return deadspace.exchange_per_breath_ml(vt_ml, self.vd_fixed_ml, self.alveolar_fraction)

    def alveolar_ventilation_ml_min(self, paco2_mmhg: float) -> float:
        """Alveolar ventilation (mL/min) that holds PaCO2 at this patient's CO2 output."""
        return gas.alveolar_ventilation_ml_min(self.vco2_ml_min, paco2_mmhg, self.body_temp_c)

    def vt_for_rate(self, va_ml_min: Num, rate_per_min: Num) -> Num:
        """Tidal volume (mL) giving alveolar ventilation ``va`` at a rate: (VA/f + VD_fixed)/(1 − f_alv)."""
        return deadspace.vt_for_alveolar_ml(va_ml_min, rate_per_min, self.vd_fixed_ml, self.alveolar_fraction)

    def rate_for_vt_array(self, va_ml_min: float, vt_ml: Num) -> Num:
        """``rate_for_vt`` for arrays (unchecked: the caller masks breaths that are all dead space)."""
        return va_ml_min / self.exchange_ml(vt_ml)

    def vt_at_pressure(self, pressure_cmh2o: float, ti_s: Num) -> Num:
        """Largest tidal volume (mL) whose peak (volume mode) or square pressure (pressure mode) is ``pressure``."""
        flow_s = ti_s - self.timing.pause_s
        if self.mode == "pressure":
            return mechanics.vt_at_square_pressure(pressure_cmh2o - self.peep_cmh2o, flow_s, self.compliance_ml_cmh2o,
                                                   self.time_constant_s)
        return mechanics.vt_at_peak_constant_flow(pressure_cmh2o, flow_s, self.compliance_ml_cmh2o,
                                                  self.resistance_cmh2o_l_s, self.peep_cmh2o)

    def rate_for_vt(self, va_ml_min: float, vt_ml: float) -> float:
        """Rate (/min) giving alveolar ventilation ``va`` at a tidal volume; inf when the breath is all dead space."""
        return deadspace.rate_for_alveolar_per_min(va_ml_min, vt_ml, self.vd_fixed_ml, self.alveolar_fraction)


@dataclass(frozen=True)
class Evaluation:
    """What one tidal volume (at the patient) and rate give this patient."""

    vt_ml: float
    rate_per_min: float
    exchange_ml: float
    alveolar_ml_min: float
    minute_ml_min: float
    paco2_mmhg: float
    etco2_mmhg: float
    etco2_floored: bool
    ti_s: float
    te_s: float
    ti_fits: bool  # expiration keeps its share of the cycle and the pause leaves time for flow
    ie_expiratory_part: float
    plateau_cmh2o: float
    peak_cmh2o: float
    inspiratory_pressure_cmh2o: float
    compressed_ml: float
    set_vt_ml: float
    inspiratory_flow_l_min: float
    te_tau: float
    ti_tau: float
    pao2_mmhg: float
    pao2_floored: bool

    peep_cmh2o: float
    pause_s: float = 0.0

    @property
    def flow_time_s(self) -> float:
        """The part of Ti with inspiratory flow (s)."""
        return self.ti_s - self.pause_s

    @property
    def driving_cmh2o(self) -> float:
        """Plateau − PEEP (cmH2O)."""
        return self.plateau_cmh2o - self.peep_cmh2o


def _airway(s: Subject, vt: Num, ti: Num) -> tuple[Num, Num, Num]:
    """Plateau, peak (or the square pressure in pressure mode) and the rise above PEEP (cmH2O).

    Flow (or the square pressure) lasts Ti − pause; during the pause the airway pressure is the plateau."""
    c, tau = s.compliance_ml_cmh2o, s.time_constant_s
    plateau = mechanics.plateau_cmh2o(vt, c, s.peep_cmh2o)
    flow_s = ti - s.timing.pause_s
    if s.mode == "pressure":
        rise = mechanics.pressure_control_delta_cmh2o(vt, flow_s, c, tau)
    else:
        rise = mechanics.peak_cmh2o_constant_flow(vt, flow_s, c, s.resistance_cmh2o_l_s, s.peep_cmh2o) - s.peep_cmh2o
    return plateau, s.peep_cmh2o + rise, rise


def _pao2(s: Subject, paco2: Num) -> Num:
    return gas.alveolar_po2_mmhg(s.fio2, s.barometric_mmhg, s.water_vapour_mmhg, paco2, s.rq)


def _paco2(s: Subject, va: Num) -> Num:
    """PaCO2 (mmHg) from alveolar ventilation; inf where there is none."""
    if is_scalar(va):
        return gas.paco2_mmhg_from_va(s.vco2_ml_min, va, s.body_temp_c) if va > 0 else math.inf
    import numpy as np

    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        return np.where(va > 0, gas.paco2_mmhg_from_va(s.vco2_ml_min, va, s.body_temp_c), np.inf)


def _evaluation(s: Subject, vt_ml: Num, rate_per_min: Num) -> Evaluation:
    """The one evaluation: floats give floats; arrays (and a Subject with array fields) give arrays element-wise."""
    exchange = s.exchange_ml(vt_ml)
    va = rate_per_min * exchange
    paco2 = _paco2(s, va)
    etco2 = paco2 - s.gradient_mmhg
    ti, pause = s.timing.ti_s(rate_per_min), s.timing.pause_s
    cycle = 60.0 / rate_per_min
    te = cycle - ti
    plateau, peak, rise = _airway(s, vt_ml, ti)
    compressed = s.compressible_ml_cmh2o * rise if s.mode == "volume" else 0.0
    set_vt = vt_ml + compressed
    pao2 = _pao2(s, smaller(paco2, PACO2_CAP_FOR_PAO2_MMHG))
    tau = s.time_constant_s
    return Evaluation(
        vt_ml=vt_ml, rate_per_min=rate_per_min, exchange_ml=exchange, alveolar_ml_min=larger(va, 0.0),
        minute_ml_min=vt_ml * rate_per_min, paco2_mmhg=paco2, etco2_mmhg=larger(etco2, 0.0),
        etco2_floored=etco2 < 0, ti_s=ti, te_s=te, ti_fits=(ti < MAX_TI_FRACTION * cycle) & (ti > pause),
        ie_expiratory_part=te / ti, plateau_cmh2o=plateau, peak_cmh2o=peak, inspiratory_pressure_cmh2o=rise,
        compressed_ml=compressed, set_vt_ml=set_vt, inspiratory_flow_l_min=set_vt / 1000.0 / (ti - pause) * 60.0,
        te_tau=te / tau, ti_tau=ti / tau, pao2_mmhg=larger(pao2, 0.0), pao2_floored=pao2 < 0,
        peep_cmh2o=s.peep_cmh2o, pause_s=pause)


def evaluate(s: Subject, vt_ml: float, rate_per_min: float) -> Evaluation:
    """Everything (vt_ml at the patient, rate_per_min) implies for subject ``s``."""
    return _evaluation(s, vt_ml, rate_per_min)


def evaluate_points(s: Subject, vt_ml: Any, rate_per_min: Any) -> Evaluation:
    """``evaluate`` element by element: arrays of tidal volume and rate (and a Subject whose numbers may be
    arrays of the same shape, one patient per element, as a sweep over body mass makes). Every field of the
    result is a numpy array of the common shape, computed by the same code as ``evaluate``."""
    import numpy as np

    vt = np.asarray(vt_ml, dtype=float)
    rate = np.asarray(rate_per_min, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        ev = _evaluation(s, vt, rate)
    shape = np.broadcast_shapes(*(np.shape(getattr(ev, f.name)) for f in fields(ev)))
    return Evaluation(**{f.name: _spread(getattr(ev, f.name), shape) for f in fields(ev)})


def _spread(x: Any, shape: tuple[int, ...]) -> Any:
    """``x`` as an array of ``shape`` (a read-only view when it has to be broadcast)."""
    import numpy as np

    return x if isinstance(x, np.ndarray) and x.shape == shape else np.broadcast_to(x, shape)


def vt_at_patient(s: Subject, set_vt_ml: float, rate_per_min: float) -> float:
    """The tidal volume (mL) the patient receives when ``set_vt_ml`` is set (or measured at the machine) at this
    rate: the inverse of ``evaluate(s, vt, rate).set_vt_ml``. In volume mode the circuit takes
    C_circuit·(peak − PEEP) of each breath (Chatburn 2014); the peak's rise above PEEP is proportional to the
    volume (VT/C + R·VT/Ti), so VT = set / (set volume per mL at the patient). In pressure mode nothing is
    taken."""
    if set_vt_ml <= 0 or s.mode != "volume" or s.compressible_ml_cmh2o <= 0:
        return set_vt_ml
    return set_vt_ml / evaluate(s, 1.0, rate_per_min).set_vt_ml


@dataclass(frozen=True)
class GridEvaluation:
    """``evaluate`` over a grid: rows = rates, columns = tidal volumes (numpy arrays, same units)."""

    vt_ml: Any
    rate_per_min: Any
    paco2_mmhg: Any
    ti_s: Any
    te_s: Any
    plateau_cmh2o: Any
    peak_cmh2o: Any
    exchange_ml: Any
    ti_fits: Any


def paco2_over_grid(vt_ml: Any, rate_per_min: Any, vco2_ml_min: float, body_temp_c: float, vd_fixed_ml: float,
                    alveolar_fraction: float) -> Any:
    """Predicted PaCO2 (mmHg) on a grid, rows = rates, columns = tidal volumes; inf where VT ≤ dead space.

    PaCO2 = VCO2·K(T) / (f·(VT(1 − f_alv) − VD_fixed)) (alveolar ventilation equation).
    """
    import numpy as np

    vt = np.asarray(vt_ml, dtype=float)[None, :]
    rate = np.asarray(rate_per_min, dtype=float)[:, None]
    va = rate * deadspace.exchange_per_breath_ml(vt, vd_fixed_ml, alveolar_fraction)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        return np.where(va > 0, gas.paco2_mmhg_from_va(vco2_ml_min, va, body_temp_c), np.inf)


def evaluate_grid(s: Subject, vt_ml: Any, rate_per_min: Any) -> GridEvaluation:
    """``evaluate`` for every (rate, tidal volume) pair of the outer grid; PaCO2 inf where VT ≤ dead space."""
    import numpy as np

    vt = np.asarray(vt_ml, dtype=float)[None, :]
    rate = np.asarray(rate_per_min, dtype=float)[:, None]
    exchange = s.exchange_ml(vt)
    paco2 = paco2_over_grid(vt[0], rate[:, 0], s.vco2_ml_min, s.body_temp_c, s.vd_fixed_ml, s.alveolar_fraction)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        ti = s.timing.ti_s(rate)
        plateau, peak, _ = _airway(s, vt, ti)
    cycle = 60.0 / rate
    shape = (rate.shape[0], vt.shape[1])
    return GridEvaluation(vt[0], rate[:, 0], paco2, np.broadcast_to(ti, shape), np.broadcast_to(cycle - ti, shape),
                          np.broadcast_to(plateau, shape), np.broadcast_to(peak, shape),
                          np.broadcast_to(exchange, shape),
                          np.broadcast_to((ti < MAX_TI_FRACTION * cycle) & (ti > s.timing.pause_s), shape))
