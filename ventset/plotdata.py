"""Numbers and arrays behind the window's plots, computed from a finished Plan.

Pure numpy, no Qt, so every curve the window draws can be checked without a display. Every point is
evaluated through the one evaluation of the patient (ventset.evaluate: ``evaluate`` for a point,
``evaluate_grid`` for the settings map), on the plan's own resolved patient (``plan.subject``); nothing here
writes a physiological formula of its own.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ventset.evaluate import GridEvaluation, Subject, evaluate, evaluate_grid
from ventset.library import Library
from ventset.model import Plan
from ventset.physiology import deadspace, gas, mechanics

# Half-width of the target band drawn on the plots. A display choice: clinicians titrate EtCO2/PaCO2
# to within about ±5 mmHg (0.7 kPa) of the aim (common practice).
BAND_HALF_WIDTH_MMHG = 5.0

# ---------------------------------------------------------------------------------------------
# 1. Breath composition
# ---------------------------------------------------------------------------------------------

BREATH_CATEGORIES: dict[str, str] = {
    "circuit": "Taken up by the circuit (compression)",
    "apparatus": "Apparatus dead space",
    "anatomical": "Anatomical dead space",
    "alveolar": "Alveolar dead space",
    "exchange": "Volume that exchanges gas",
}


@dataclass(frozen=True)
class Segment:
    """One stretch of the set breath, in mL from its start."""

    category: str
    label: str
    start_ml: float
    end_ml: float

    @property
    def volume_ml(self) -> float:
        return self.end_ml - self.start_ml


@dataclass(frozen=True)
class BreathComposition:
    """The set breath laid end to end: circuit, apparatus parts, tube, airway, alveolar dead space, exchange.

    ``patient_end_ml`` is where the breath that reaches the patient ends. When the dead space is larger
    than the breath, the dead-space segments run past that point and ``exchange_ml`` is 0.
    """

    segments: tuple[Segment, ...]
    set_ml: float
    patient_start_ml: float
    patient_end_ml: float
    dead_space_ml: float
    exchange_ml: float

    def total_by_category(self) -> dict[str, float]:
        out = dict.fromkeys(BREATH_CATEGORIES, 0.0)
        for s in self.segments:
            out[s.category] += s.volume_ml
        return out


def breath_composition(plan: Plan) -> BreathComposition:
    """Split one set breath into where its volume goes (mL)."""
    d, v = plan.dead_space, plan.ventilation
    segs: list[Segment] = []
    pos = 0.0

    def add(cat: str, label: str, ml: float) -> None:
        nonlocal pos
        if ml > 0:
            segs.append(Segment(cat, label, pos, pos + ml))
            pos += ml

    add("circuit", "Circuit compression", plan.pressures.compressed_ml)
    patient_start = pos
    for part in d.parts:
        add("apparatus", part.name, part.volume_ml)
    add("apparatus", "Tube beyond the incisors", d.tube_ml)
    add("anatomical", "Airway (intubated)", d.anatomical_ml)
    add("alveolar", "Unperfused alveoli", d.alveolar_ml)
    exchange = max(0.0, v.tidal_volume_ml - d.total_ml)
    add("exchange", "Exchanges gas", exchange)
    return BreathComposition(tuple(segs), v.set_tidal_volume_ml, patient_start,
                             patient_start + v.tidal_volume_ml, d.total_ml, exchange)


# ---------------------------------------------------------------------------------------------
# 2. Settings map (tidal volume × rate)
# ---------------------------------------------------------------------------------------------

ZONE_USUAL = 0
ZONE_OUTSIDE = 1       # outside the species' usual tidal volume or rate
ZONE_TRAPPING = 2      # expiration shorter than the caution threshold in time constants
ZONE_PEAK = 3          # peak (volume mode) or inspiratory (pressure mode) pressure above the limit
ZONE_PLATEAU = 4       # plateau above the limit
ZONE_IMPOSSIBLE = 5    # the entered inspiratory time does not fit the breath at this rate
ZONE_DEAD = 6          # the breath is no larger than the dead space: no gas exchange at all
ZONE_LABELS = {
    ZONE_USUAL: "inside the usual range",
    ZONE_OUTSIDE: "outside the species' usual tidal volume or rate",
    ZONE_TRAPPING: "expiration under 3 time constants (gas trapping)",
    ZONE_PEAK: "predicted peak pressure above the limit",
    ZONE_PLATEAU: "predicted plateau above the limit",
    ZONE_IMPOSSIBLE: "inspiratory time does not fit the breath",
    ZONE_DEAD: "breath no larger than the dead space: no gas exchange",
}
N_ZONES = len(ZONE_LABELS)


def subject_of(plan: Plan) -> Subject:
    """The resolved patient the plan's settings were evaluated on."""
    if plan.subject is None:  # pragma: no cover - every plan from planner.plan carries it
        raise ValueError("a plan from ventset.planner.plan is needed")
    return plan.subject


def _trapping_tau(library: Library | None) -> float:
    """Expiration is called complete after this many time constants (cautions.toml expiration_tau_caution)."""
    from ventset.library import load_library

    return (library or load_library()).cautions["expiration_tau_caution"].value


def ti_at_rates(plan: Plan, rates_per_min: np.ndarray) -> np.ndarray:
    """Inspiratory time (s) the planner would use at each rate, by the plan's own Ti rule."""
    return np.asarray(subject_of(plan).timing.ti_s(np.asarray(rates_per_min, dtype=float)), dtype=float)


def same(a: object, b: object) -> bool:
    """True when two plot data records (or tuples of them) hold equal values: a view whose data is the same
    need not be drawn again. Arrays are compared bit for bit (a NaN equals the same NaN), one memory comparison
    instead of element by element; the only values that are equal but not the same bits (0.0 and -0.0, NaNs
    made differently) count as changed, which redraws the view once."""
    if type(a) is not type(b):
        return False
    if isinstance(a, np.ndarray) and isinstance(b, np.ndarray):
        return a.shape == b.shape and a.dtype == b.dtype and a.tobytes() == b.tobytes()
    if isinstance(a, tuple | list) and isinstance(b, tuple | list):
        return len(a) == len(b) and all(same(x, y) for x, y in zip(a, b, strict=True))
    if hasattr(a, "__dataclass_fields__"):
        return all(same(getattr(a, f), getattr(b, f)) for f in a.__dataclass_fields__)
    if isinstance(a, float) and isinstance(b, float) and math.isnan(a) and math.isnan(b):
        return True
    return bool(a == b)


def nice_ceiling(x: float) -> float:
    """Smallest of 1, 1.5, 2, 2.5, 3, 4, 5, 6, 8 × 10^k that is ≥ x (for axis ranges)."""
    if not math.isfinite(x) or x <= 0:
        return 1.0
    mag = 10 ** math.floor(math.log10(x))
    for step in (1, 1.5, 2, 2.5, 3, 4, 5, 6, 8, 10):
        if step * mag >= x * (1 - 1e-12):
            return step * mag
    return 10 * mag  # pragma: no cover


def all_dead_space_vt_ml(plan: Plan) -> float:
    """Tidal volume (mL) that is all dead space: VD_fixed/(1 − f_alv); the map's lines rise steeply towards it."""
    return subject_of(plan).all_dead_space_vt_ml


def map_ranges(plan: Plan) -> tuple[tuple[float, float], tuple[float, float]]:
    """Axis ranges (mL, /min) for the settings map: the usual box with room around it, the plan inside, and
    room beyond the breath that is all dead space (so some lines of equal PaCO2 always show)."""
    lim, v = plan.limits, plan.ventilation
    vt_hi = nice_ceiling(max(1.4 * lim.vt_max_ml, 1.2 * v.tidal_volume_ml, 1.4 * all_dead_space_vt_ml(plan)))
    rate_hi = nice_ceiling(max(1.5 * lim.rate_max_per_min, 1.2 * v.rate_per_min))
    return (0.0, vt_hi), (0.0, rate_hi)


@dataclass(frozen=True)
class SettingsMap:
    """PaCO2 over a tidal volume × rate grid with the zone of each cell (rows = rates, columns = volumes).

    ``cell`` = zone + N_ZONES × (1 if the cell is inside the target band), an index for a colour table.
    Cell centres are ``vt_ml`` and ``rate_per_min``; the grid covers ``vt_range`` × ``rate_range``.
    """

    vt_ml: np.ndarray
    rate_per_min: np.ndarray
    paco2_mmhg: np.ndarray
    zone: np.ndarray
    in_band: np.ndarray
    cell: np.ndarray
    vt_range: tuple[float, float]
    rate_range: tuple[float, float]
    band_mmhg: tuple[float, float]


def zones(plan: Plan, vt_ml: np.ndarray, rate_per_min: np.ndarray, library: Library | None = None,
          grid: GridEvaluation | None = None) -> np.ndarray:
    """Zone index (ZONE_*) for each (rate, tidal volume) pair on the outer grid (rows = rates); ``grid`` is
    ``evaluate_grid`` of the same axes when the caller has it already."""
    s, lim = subject_of(plan), plan.limits
    g = grid if grid is not None else evaluate_grid(s, vt_ml, rate_per_min)
    vt, rate = g.vt_ml[None, :], g.rate_per_min[:, None]
    z = np.zeros(g.paco2_mmhg.shape, dtype=np.uint8)
    outside = ((vt < lim.vt_min_ml - 1e-9) | (vt > lim.vt_max_ml + 1e-9) | (rate < lim.rate_min_per_min - 1e-9)
               | (rate > lim.rate_max_per_min + 1e-9))
    z[outside] = ZONE_OUTSIDE
    z[g.te_s < _trapping_tau(library) * s.time_constant_s] = ZONE_TRAPPING
    z[g.peak_cmh2o > s.pressure_limit_cmh2o + 1e-9] = ZONE_PEAK
    z[g.plateau_cmh2o > s.pressure_limit_cmh2o + 1e-9] = ZONE_PLATEAU
    if s.timing.entered_ti_s is not None:
        z[~g.ti_fits] = ZONE_IMPOSSIBLE
    z[g.exchange_ml <= 0] = ZONE_DEAD
    return z


def settings_map(plan: Plan, n_vt: int = 200, n_rate: int = 200, library: Library | None = None,
                 ranges: tuple[tuple[float, float], tuple[float, float]] | None = None) -> SettingsMap:
    """PaCO2 and zones on an n_rate × n_vt grid of cell centres (evaluate_grid)."""
    (v0, v1), (r0, r1) = ranges or map_ranges(plan)
    vt = v0 + (np.arange(n_vt) + 0.5) * (v1 - v0) / n_vt
    rate = r0 + (np.arange(n_rate) + 0.5) * (r1 - r0) / n_rate
    grid = evaluate_grid(subject_of(plan), vt, rate)
    pa = grid.paco2_mmhg
    target = plan.ventilation.target_paco2_mmhg
    band = (target - BAND_HALF_WIDTH_MMHG, target + BAND_HALF_WIDTH_MMHG)
    in_band = (pa >= band[0]) & (pa <= band[1])
    z = zones(plan, vt, rate, library, grid)
    cell = z + np.uint8(N_ZONES) * in_band.astype(np.uint8)
    return SettingsMap(vt, rate, pa, z, in_band, cell, (v0, v1), (r0, r1), band)


def isopaco2_rate(level_mmhg: float, vt_ml: np.ndarray, s: Subject) -> np.ndarray:
    """Rate (/min) at which each tidal volume gives PaCO2 = level (NaN where the breath is all dead space)."""
    vt = np.asarray(vt_ml, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.asarray(s.rate_for_vt_array(s.alveolar_ventilation_ml_min(level_mmhg), vt), dtype=float)
    out[s.exchange_ml(vt) <= 0] = np.nan
    return out


def contour_levels(target_mmhg: float, gas_unit: str = "mmHg", count: int = 7) -> list[float]:
    """PaCO2 levels (mmHg) for the map: round steps in the user's unit around the target, plus the target."""
    from ventset.present.quantities import MMHG_PER_KPA

    step_mmhg = MMHG_PER_KPA if gas_unit == "kPa" else 10.0
    base = round(target_mmhg / step_mmhg) * step_mmhg
    half = count // 2
    levels = [base + k * step_mmhg for k in range(-half, count - half)]
    levels = [x for x in levels if x > 5.0 and abs(x - target_mmhg) > 0.2 * step_mmhg]
    return sorted([*levels, target_mmhg])


@dataclass(frozen=True)
class IsoLine:
    level_mmhg: float
    vt_ml: np.ndarray
    rate_per_min: np.ndarray
    is_target: bool
    label_at: tuple[float, float] | None  # where its label goes (mL, /min), None when off the map


def _label_at(level: float, s: Subject, target: float, ranges) -> tuple[float, float] | None:
    """A label spot for the line of PaCO2 = level: all labels on one vertical where the target line sits at
    80 % of the rate axis (lines are well apart there); a line that leaves the top first is labelled at the top."""
    (v0, v1), (r0, r1) = ranges
    vt = s.vt_for_rate(s.alveolar_ventilation_ml_min(target), r0 + 0.8 * (r1 - r0))
    if not v0 < vt < v1:
        vt = v0 + 0.6 * (v1 - v0)
    rate = s.rate_for_vt(s.alveolar_ventilation_ml_min(level), vt)
    top = r0 + 0.92 * (r1 - r0)
    if rate > top:
        vt, rate = s.vt_for_rate(s.alveolar_ventilation_ml_min(level), top), top
    if not (v0 < vt < v1 and r0 < rate < r1):
        return None
    return vt, rate


def isolines(plan: Plan, gas_unit: str = "mmHg", n: int = 160,
             ranges: tuple[tuple[float, float], tuple[float, float]] | None = None) -> list[IsoLine]:
    """Lines of equal predicted PaCO2 across the map (points beyond the rate range are NaN)."""
    (v0, v1), (r0, r1) = ranges or map_ranges(plan)
    s = subject_of(plan)
    vt = np.linspace(v0, v1, n)
    target = plan.ventilation.target_paco2_mmhg
    out = []
    for level in contour_levels(target, gas_unit):
        rate = isopaco2_rate(level, vt, s)
        rate[(rate > r1) | (rate < r0)] = np.nan
        out.append(IsoLine(level, vt, rate, abs(level - target) < 1e-9,
                           _label_at(level, s, target, ((v0, v1), (r0, r1)))))
    return out


def pressure_boundary_vt(plan: Plan, rates_per_min: np.ndarray) -> np.ndarray:
    """Largest tidal volume (mL) at each rate whose predicted peak (volume mode) or inspiratory pressure
    (pressure mode) stays at the limit (Subject.vt_at_pressure)."""
    s = subject_of(plan)
    rates = np.asarray(rates_per_min, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        ti = np.asarray(s.timing.ti_s(rates), dtype=float)
        vt = np.asarray(s.vt_at_pressure(s.pressure_limit_cmh2o, ti), dtype=float)
    return np.where(ti > s.timing.pause_s, vt, np.nan)  # no boundary where the pause leaves no time for flow


def trapping_rate_per_min(plan: Plan, library: Library | None = None, rate_hi: float = 1000.0) -> float:
    """Rate (/min) above which expiration is shorter than the caution threshold of time constants."""
    s = subject_of(plan)
    rates = np.linspace(0.5, rate_hi, 4000)
    te = 60.0 / rates - s.timing.ti_s(rates)
    bad = np.nonzero(te < _trapping_tau(library) * s.time_constant_s)[0]
    return float(rates[bad[0]]) if bad.size else math.inf


@dataclass(frozen=True)
class PointSummary:
    """What a tidal volume and rate would give this patient (for a clicked point on the map)."""

    vt_ml: float
    rate_per_min: float
    vt_ml_kg: float
    minute_ml_min: float
    paco2_mmhg: float
    etco2_mmhg: float
    plateau_cmh2o: float
    top_cmh2o: float
    top_name: str
    ti_s: float
    te_tau: float
    set_vt_ml: float
    zone: int


def point_summary(plan: Plan, vt_ml: float, rate_per_min: float, library: Library | None = None) -> PointSummary:
    """Predicted PaCO2, EtCO2 and pressures at (vt_ml, rate_per_min) for this patient (ventset.evaluate)."""
    s = subject_of(plan)
    ev = evaluate(s, vt_ml, rate_per_min)
    name = "inspiratory pressure" if s.mode == "pressure" else "peak"
    zone = int(zones(plan, np.array([vt_ml]), np.array([rate_per_min]), library)[0, 0])
    return PointSummary(vt_ml, rate_per_min, vt_ml / s.lean_mass_kg, ev.minute_ml_min, ev.paco2_mmhg, ev.etco2_mmhg,
                        ev.plateau_cmh2o, ev.peak_cmh2o, name, ev.ti_s, ev.te_tau, ev.set_vt_ml, zone)


# ---------------------------------------------------------------------------------------------
# 3. Airway waveforms
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Waveforms:
    time_s: np.ndarray
    pressure_cmh2o: np.ndarray
    flow_l_min: np.ndarray
    volume_ml: np.ndarray
    end_expiratory_ml: float        # volume left above relaxed volume at the end of the last breath
    end_expiratory_fraction: float  # of the tidal volume
    auto_peep_cmh2o: float          # that volume over compliance
    te_tau: float
    complete: bool                  # Te ≥ the caution threshold of time constants
    time_range: tuple[float, float]
    pressure_range: tuple[float, float]
    flow_range: tuple[float, float]
    volume_range: tuple[float, float]


def waveforms(plan: Plan, breaths: int = 3, points_per_breath: int = 50,
              library: Library | None = None) -> Waveforms:
    """Airway pressure, flow and volume over a few breaths at the plan's settings (mechanics.waveforms)."""
    v, p, s = plan.ventilation, plan.pressures, subject_of(plan)
    w = mechanics.waveforms(v.tidal_volume_ml, v.rate_per_min, v.ti_s, p.compliance_ml_cmh2o, p.resistance_cmh2o_l_s,
                            p.peep_cmh2o, s.mode, breaths, points_per_breath, s.timing.pause_s)
    left = float(w["end_expiratory_ml"])
    frac = left / v.tidal_volume_ml if v.tidal_volume_ml > 0 else 0.0
    te_tau = v.te_s / p.time_constant_s
    p_top = max(float(np.max(w["pressure_cmh2o"])), p.pressure_limit_cmh2o)
    q_top = float(np.max(np.abs(w["flow_l_min"])))
    vol_top = float(np.max(w["volume_ml"]))
    cycle = 60.0 / v.rate_per_min
    return Waveforms(w["time_s"], w["pressure_cmh2o"], w["flow_l_min"], w["volume_ml"], left, frac,
                     left / p.compliance_ml_cmh2o, te_tau, te_tau >= _trapping_tau(library),
                     (0.0, breaths * cycle), (0.0, nice_ceiling(p_top * 1.1)),
                     (-nice_ceiling(q_top * 1.1), nice_ceiling(q_top * 1.1)), (0.0, nice_ceiling(vol_top * 1.1)))


# ---------------------------------------------------------------------------------------------
# 4. Dead-space sensitivity
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Sensitivity:
    """Predicted PaCO2 against apparatus (parts + tube) dead space at the plan's tidal volume and rate.

    ``paco2_mmhg`` is NaN above ``paco2_max_mmhg`` (off the plot). ``minute_needed_ml_min`` is the minute
    volume that would hold the target at the plan's rate with that much apparatus.
    """

    apparatus_ml: np.ndarray
    paco2_mmhg: np.ndarray
    minute_needed_ml_min: np.ndarray
    current_ml: float
    current_paco2_mmhg: float
    slope_mmhg_per_ml: float
    no_exchange_ml: float
    x_range: tuple[float, float]
    y_range: tuple[float, float]
    band_mmhg: tuple[float, float]


def dead_space_sensitivity(plan: Plan, n: int = 160, x_max_ml: float | None = None) -> Sensitivity:
    """PaCO2 for apparatus dead space x from 0 upwards: the plan's patient with VD_fixed = anatomical + x
    (up to ``x_max_ml`` when given, so a view that changes the dead space keeps its axis)."""
    from dataclasses import replace

    s, v, d = subject_of(plan), plan.ventilation, plan.dead_space
    current = d.apparatus_ml + d.tube_ml
    bare = replace(s, vd_fixed_ml=s.vd_fixed_ml - current)   # the patient with no apparatus
    room = bare.exchange_ml(v.tidal_volume_ml)                # apparatus volume that leaves no exchange
    target = v.target_paco2_mmhg
    y_max = nice_ceiling(max(2.0 * target, target + 3 * BAND_HALF_WIDTH_MMHG))
    x_at_ymax = room - bare.alveolar_ventilation_ml_min(y_max) / v.rate_per_min
    x_hi = nice_ceiling(max(x_at_ymax * 1.05, current * 1.3, 1.0)) if x_max_ml is None else x_max_ml
    x = np.linspace(0.0, x_hi, n)
    va = v.rate_per_min * (room - x)
    with np.errstate(divide="ignore", invalid="ignore"):
        pa = np.where(va > 0, gas.paco2_mmhg_from_va(s.vco2_ml_min, va, s.body_temp_c), np.nan)
        minute = v.rate_per_min * deadspace.vt_for_alveolar_ml(bare.alveolar_ventilation_ml_min(target),
                                                               v.rate_per_min, bare.vd_fixed_ml + x,
                                                               s.alveolar_fraction)
    pa[pa > y_max] = np.nan
    cur = evaluate(s, v.tidal_volume_ml, v.rate_per_min).paco2_mmhg
    # dPaCO2/dx = PaCO2²·f/(K·VCO2): the derivative of the alveolar ventilation equation in VD.
    slope = cur * cur * v.rate_per_min / (s.vco2_ml_min * s.alveolar_constant_mmhg) if math.isfinite(cur) \
        else math.inf
    return Sensitivity(x, pa, minute, current, cur, slope, room, (0.0, x_hi), (0.0, y_max),
                       (target - BAND_HALF_WIDTH_MMHG, target + BAND_HALF_WIDTH_MMHG))


# ---------------------------------------------------------------------------------------------
# Defaults the form shows as placeholders
# ---------------------------------------------------------------------------------------------


def field_defaults(plan: Plan, library: Library | None = None) -> dict[str, float]:
    """The value each input field took in this plan when left empty (internal units, FIELDS keys)."""
    from ventset.library import load_library

    sp = (library or load_library()).entry(plan.resolved.species)
    r, m, v, p, o = plan.resolved, plan.metabolism, plan.ventilation, plan.pressures, plan.oxygen
    out = {
        "lean-mass": r.lean_mass_kg, "body-temperature": r.body_temp_c, "metabolic-rate": m.allometric_rate_w,
        "rq": m.rq, "alveolar-dead-space": r.alveolar_dead_space_fraction, "compliance": p.compliance_ml_cmh2o,
        "resistance": p.resistance_cmh2o_l_s, "compressible-volume": p.compressible_ml_cmh2o, "sampling-flow": 0.0,
        "target-paco2": v.target_paco2_mmhg, "target-etco2": v.target_paco2_mmhg - r.gradient_mmhg,
        "gradient": r.gradient_mmhg, "peep": p.peep_cmh2o, "ie": r.ie_expiratory_part, "ti": v.ti_s,
        "inspiratory-pause": v.pause_s,
        "pressure-limit": p.pressure_limit_cmh2o, "fio2": o.fio2, "altitude": plan.request.targets.altitude_m,
        "barometric-pressure": o.barometric_mmhg, "vt-per-kg": sp.tidal_volume_ml_kg.start,
        "rate": v.rate_per_min,
    }
    return {k: float(x) for k, x in out.items() if isinstance(x, int | float) and math.isfinite(x)}
