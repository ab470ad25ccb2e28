"""Numbers and arrays behind the window's plots and read-outs, computed from a finished Plan.

Pure numpy, no Qt, so every curve the window draws can be checked without a display. All
quantities are plain floats/arrays with the unit in the name, exactly as the planner uses them:
PaCO2 = VCO2·K(T) / (f·(VT·(1 − f_alv) − VD_fixed)) (alveolar ventilation equation), plateau =
VT/C + PEEP, constant-flow peak = plateau + R·VT/Ti, pressure-mode rise = VT/(C·(1 − e^(−Ti/τ)))
(single-compartment equation of motion).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ventset.library import Library, Species, load_library
from ventset.model import Plan
from ventset.physiology import gas, mechanics
from ventset.planner import default_ti_s, paco2_grid

# Half-width of the target band drawn on the plots. A display choice: clinicians titrate EtCO2/PaCO2
# to within about ±5 mmHg (0.7 kPa) of the aim (common practice).
BAND_HALF_WIDTH_MMHG = 5.0
# Expiration is called complete after this many time constants (same number as the caution rule uses
# by default; cautions.toml expiration_tau_caution, common practice).
COMPLETE_EXPIRATION_TAU = 3.0

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
ZONE_TRAPPING = 2      # expiration shorter than 3 time constants
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


@dataclass(frozen=True)
class Mechanics:
    """What the zone and point calculations need from a plan."""

    vco2_ml_min: float
    body_temp_c: float
    vd_fixed_ml: float
    f_alv: float
    compliance_ml_cmh2o: float
    resistance_cmh2o_l_s: float
    tau_s: float
    peep_cmh2o: float
    limit_cmh2o: float
    compressible_ml_cmh2o: float
    gradient_mmhg: float
    mode: str
    lean_kg: float


def plan_mechanics(plan: Plan) -> Mechanics:
    d, p, r = plan.dead_space, plan.pressures, plan.resolved
    return Mechanics(plan.metabolism.vco2_ml_min, r.body_temp_c, d.total_ml - d.alveolar_ml,
                     r.alveolar_dead_space_fraction, p.compliance_ml_cmh2o, p.resistance_cmh2o_l_s,
                     p.time_constant_s, p.peep_cmh2o, p.pressure_limit_cmh2o, p.compressible_ml_cmh2o,
                     r.gradient_mmhg, r.mode, r.lean_mass_kg)


def _species(plan: Plan, library: Library | None) -> tuple[Species, Library]:
    lib = library or load_library()
    sp = lib.find_species(plan.resolved.species)
    if sp is None:  # pragma: no cover - a plan always names a library species
        raise KeyError(plan.resolved.species)
    return sp, lib


def ti_at_rates(plan: Plan, rates_per_min: np.ndarray, library: Library | None = None) -> np.ndarray:
    """Inspiratory time (s) the planner would use at each rate, by the same rule as the plan.

    Entered Ti: that Ti; entered I:E: (60/f)/(1 + E); neither: the shorter of the species' typical Ti
    and the Ti its I:E gives (planner._timing).
    """
    rates = np.asarray(rates_per_min, dtype=float)
    cycle = 60.0 / rates
    t = plan.request.targets
    if t.ti_s is not None:
        return np.full_like(cycle, t.ti_s)
    if t.ie_expiratory_part is not None:
        return cycle / (1.0 + t.ie_expiratory_part)
    sp, lib = _species(plan, library)
    ti_typ, _ = default_ti_s(plan.resolved.lean_mass_kg, sp, lib)
    return np.minimum(ti_typ, cycle / (1.0 + sp.ie_expiratory_part.value))


def nice_ceiling(x: float) -> float:
    """Smallest of 1, 1.5, 2, 2.5, 3, 4, 5, 6, 8 × 10^k that is ≥ x (for axis ranges)."""
    if not math.isfinite(x) or x <= 0:
        return 1.0
    mag = 10 ** math.floor(math.log10(x))
    for step in (1, 1.5, 2, 2.5, 3, 4, 5, 6, 8, 10):
        if step * mag >= x * (1 - 1e-12):
            return step * mag
    return 10 * mag  # pragma: no cover


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
          m: Mechanics | None = None) -> np.ndarray:
    """Zone index (ZONE_*) for each (rate, tidal volume) pair on the outer grid (rows = rates)."""
    m = m or plan_mechanics(plan)
    lim = plan.limits
    vt = np.asarray(vt_ml, dtype=float)[None, :]
    rate = np.asarray(rate_per_min, dtype=float)[:, None]
    ti = ti_at_rates(plan, rate[:, 0], library)[:, None]
    cycle = 60.0 / rate
    te = cycle - ti
    z = np.zeros((rate.shape[0], vt.shape[1]), dtype=np.uint8)
    outside = ((vt < lim.vt_min_ml - 1e-9) | (vt > lim.vt_max_ml + 1e-9) | (rate < lim.rate_min_per_min - 1e-9)
               | (rate > lim.rate_max_per_min + 1e-9))
    z[outside] = ZONE_OUTSIDE
    z[np.broadcast_to(te < COMPLETE_EXPIRATION_TAU * m.tau_s, z.shape)] = ZONE_TRAPPING
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if m.mode == "pressure":
            top = m.peep_cmh2o + vt / (m.compliance_ml_cmh2o * (1.0 - np.exp(-ti / m.tau_s)))
        else:
            top = vt / m.compliance_ml_cmh2o + m.peep_cmh2o + m.resistance_cmh2o_l_s * vt / 1000.0 / ti
    z[top > m.limit_cmh2o + 1e-9] = ZONE_PEAK
    plateau = vt / m.compliance_ml_cmh2o + m.peep_cmh2o
    z[np.broadcast_to(plateau > m.limit_cmh2o + 1e-9, z.shape)] = ZONE_PLATEAU
    if plan.request.targets.ti_s is not None:
        z[np.broadcast_to(ti >= 0.8 * cycle, z.shape)] = ZONE_IMPOSSIBLE
    z[np.broadcast_to(vt * (1.0 - m.f_alv) <= m.vd_fixed_ml, z.shape)] = ZONE_DEAD
    return z


def settings_map(plan: Plan, n_vt: int = 200, n_rate: int = 200, library: Library | None = None,
                 ranges: tuple[tuple[float, float], tuple[float, float]] | None = None) -> SettingsMap:
    """PaCO2 (planner.paco2_grid) and zones on an n_rate × n_vt grid of cell centres."""
    (v0, v1), (r0, r1) = ranges or map_ranges(plan)
    m = plan_mechanics(plan)
    vt = v0 + (np.arange(n_vt) + 0.5) * (v1 - v0) / n_vt
    rate = r0 + (np.arange(n_rate) + 0.5) * (r1 - r0) / n_rate
    pa = paco2_grid(vt, rate, m.vco2_ml_min, m.body_temp_c, m.vd_fixed_ml, m.f_alv)
    target = plan.ventilation.target_paco2_mmhg
    band = (target - BAND_HALF_WIDTH_MMHG, target + BAND_HALF_WIDTH_MMHG)
    in_band = (pa >= band[0]) & (pa <= band[1])
    z = zones(plan, vt, rate, library, m)
    cell = z + np.uint8(N_ZONES) * in_band.astype(np.uint8)
    return SettingsMap(vt, rate, pa, z, in_band, cell, (v0, v1), (r0, r1), band)


def isopaco2_rate(level_mmhg: float, vt_ml: np.ndarray, m: Mechanics) -> np.ndarray:
    """Rate (/min) at which each tidal volume gives PaCO2 = level: VCO2·K/(level·(VT(1−f_alv) − VD)).

    NaN where the breath is all dead space. The analytic form of the map's contour lines.
    """
    va = m.vco2_ml_min * gas.alveolar_constant_mmhg(m.body_temp_c) / level_mmhg
    eff = np.asarray(vt_ml, dtype=float) * (1.0 - m.f_alv) - m.vd_fixed_ml
    with np.errstate(divide="ignore", invalid="ignore"):
        out = va / eff
    out[eff <= 0] = np.nan
    return out


def contour_levels(target_mmhg: float, gas_unit: str = "mmHg", count: int = 7) -> list[float]:
    """PaCO2 levels (mmHg) for the map: round steps in the user's unit around the target, plus the target."""
    if gas_unit == "kPa":
        step_mmhg = 7.500615758  # 1 kPa
    else:
        step_mmhg = 10.0
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


def _label_at(level: float, m: Mechanics, target: float, ranges) -> tuple[float, float] | None:
    """A label spot for the line of PaCO2 = level: all labels on one vertical where the target line sits at
    80 % of the rate axis (lines are well apart there); a line that leaves the top first is labelled at the top."""
    (v0, v1), (r0, r1) = ranges
    k = m.vco2_ml_min * gas.alveolar_constant_mmhg(m.body_temp_c)

    def vt_at(rate: float, lev: float) -> float:
        return (k / lev / rate + m.vd_fixed_ml) / (1.0 - m.f_alv)

    vt = vt_at(r0 + 0.8 * (r1 - r0), target)
    if not v0 < vt < v1:
        vt = v0 + 0.6 * (v1 - v0)
    eff = vt * (1.0 - m.f_alv) - m.vd_fixed_ml
    rate = k / level / eff if eff > 0 else math.inf
    top = r0 + 0.92 * (r1 - r0)
    if rate > top:
        vt, rate = vt_at(top, level), top
    if not (v0 < vt < v1 and r0 < rate < r1):
        return None
    return vt, rate


def isolines(plan: Plan, gas_unit: str = "mmHg", n: int = 160,
             ranges: tuple[tuple[float, float], tuple[float, float]] | None = None) -> list[IsoLine]:
    """Lines of equal predicted PaCO2 across the map (points beyond the rate range are NaN)."""
    (v0, v1), (r0, r1) = ranges or map_ranges(plan)
    m = plan_mechanics(plan)
    vt = np.linspace(v0, v1, n)
    target = plan.ventilation.target_paco2_mmhg
    out = []
    for level in contour_levels(target, gas_unit):
        rate = isopaco2_rate(level, vt, m)
        rate[(rate > r1) | (rate < r0)] = np.nan
        out.append(IsoLine(level, vt, rate, abs(level - target) < 1e-9, _label_at(level, m, target,
                                                                                ((v0, v1), (r0, r1)))))
    return out


def all_dead_space_vt_ml(plan: Plan) -> float:
    """Tidal volume (mL) that is all dead space: VD_fixed/(1 − f_alv); the map's lines rise steeply towards it."""
    m = plan_mechanics(plan)
    return m.vd_fixed_ml / (1.0 - m.f_alv)


def pressure_boundary_vt(plan: Plan, rates_per_min: np.ndarray, library: Library | None = None) -> np.ndarray:
    """Largest tidal volume (mL) at each rate whose predicted peak (volume mode) or inspiratory pressure
    (pressure mode) stays at the limit."""
    m = plan_mechanics(plan)
    ti = ti_at_rates(plan, rates_per_min, library)
    room = m.limit_cmh2o - m.peep_cmh2o
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if m.mode == "pressure":
            return room * m.compliance_ml_cmh2o * (1.0 - np.exp(-ti / m.tau_s))
        return room / (1.0 / m.compliance_ml_cmh2o + m.resistance_cmh2o_l_s / 1000.0 / ti)


def trapping_rate_per_min(plan: Plan, library: Library | None = None, rate_hi: float = 1000.0) -> float:
    """Rate (/min) above which expiration is shorter than 3 time constants (inf if never within rate_hi)."""
    tau = plan.pressures.time_constant_s
    rates = np.linspace(0.5, rate_hi, 4000)
    te = 60.0 / rates - ti_at_rates(plan, rates, library)
    bad = np.nonzero(te < COMPLETE_EXPIRATION_TAU * tau)[0]
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
    """Predicted PaCO2, EtCO2 and pressures at (vt_ml, rate_per_min) for this patient."""
    m = plan_mechanics(plan)
    eff = vt_ml * (1.0 - m.f_alv) - m.vd_fixed_ml
    va = rate_per_min * eff
    paco2 = gas.paco2_mmhg_from_va(m.vco2_ml_min, va, m.body_temp_c) if va > 0 else math.inf
    ti = float(ti_at_rates(plan, np.array([rate_per_min]), library)[0])
    te = 60.0 / rate_per_min - ti
    plateau = mechanics.plateau_cmh2o(vt_ml, m.compliance_ml_cmh2o, m.peep_cmh2o)
    if m.mode == "pressure":
        top = m.peep_cmh2o + mechanics.pressure_control_delta_cmh2o(vt_ml, ti, m.compliance_ml_cmh2o, m.tau_s)
        name, compressed = "inspiratory pressure", 0.0
    else:
        top = mechanics.peak_cmh2o_constant_flow(vt_ml, ti, m.compliance_ml_cmh2o, m.resistance_cmh2o_l_s,
                                                 m.peep_cmh2o)
        name, compressed = "peak", m.compressible_ml_cmh2o * (top - m.peep_cmh2o)
    zone = int(zones(plan, np.array([vt_ml]), np.array([rate_per_min]), library, m)[0, 0])
    return PointSummary(vt_ml, rate_per_min, vt_ml / m.lean_kg, vt_ml * rate_per_min, paco2,
                        paco2 - m.gradient_mmhg, plateau, top, name, ti, te / m.tau_s, vt_ml + compressed, zone)


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
    complete: bool                  # Te ≥ 3 τ
    time_range: tuple[float, float]
    pressure_range: tuple[float, float]
    flow_range: tuple[float, float]
    volume_range: tuple[float, float]


def waveforms(plan: Plan, breaths: int = 3, points_per_breath: int = 200) -> Waveforms:
    """Airway pressure, flow and volume over a few breaths at the plan's settings (mechanics.waveforms)."""
    v, p, r = plan.ventilation, plan.pressures, plan.resolved
    w = mechanics.waveforms(v.tidal_volume_ml, v.rate_per_min, v.ti_s, p.compliance_ml_cmh2o,
                            p.resistance_cmh2o_l_s, p.peep_cmh2o, r.mode, breaths, points_per_breath)
    cycle = 60.0 / v.rate_per_min
    tau, c = p.time_constant_s, p.compliance_ml_cmh2o
    # Volume above the relaxed lung at the end of the last breath (same recurrence as mechanics.waveforms).
    left = 0.0
    for _ in range(breaths):
        if r.mode == "pressure":
            full = c * mechanics.pressure_control_delta_cmh2o(v.tidal_volume_ml, v.ti_s, c, tau)
            end_insp = full + (left - full) * math.exp(-v.ti_s / tau)
        else:
            end_insp = left + v.tidal_volume_ml
        left = end_insp * math.exp(-(cycle - v.ti_s) / tau)
    frac = left / v.tidal_volume_ml if v.tidal_volume_ml > 0 else 0.0
    te_tau = v.te_s / p.time_constant_s
    p_top = max(float(np.max(w["pressure_cmh2o"])), p.pressure_limit_cmh2o)
    q_top = float(np.max(np.abs(w["flow_l_min"])))
    vol_top = float(np.max(w["volume_ml"]))
    return Waveforms(w["time_s"], w["pressure_cmh2o"], w["flow_l_min"], w["volume_ml"], left, frac,
                     left / p.compliance_ml_cmh2o, te_tau, te_tau >= COMPLETE_EXPIRATION_TAU,
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


def dead_space_sensitivity(plan: Plan, n: int = 160) -> Sensitivity:
    """PaCO2 = VCO2·K/(f·(VT(1 − f_alv) − VD_anat − x)) for apparatus dead space x from 0 upwards."""
    m = plan_mechanics(plan)
    v, d = plan.ventilation, plan.dead_space
    k_vco2 = m.vco2_ml_min * gas.alveolar_constant_mmhg(m.body_temp_c)
    current = d.apparatus_ml + d.tube_ml
    fixed_rest = m.vd_fixed_ml - current          # anatomical dead space
    room = v.tidal_volume_ml * (1.0 - m.f_alv) - fixed_rest   # apparatus volume that leaves no exchange
    target = v.target_paco2_mmhg
    y_max = nice_ceiling(max(2.0 * target, target + 3 * BAND_HALF_WIDTH_MMHG))
    x_at_ymax = room - k_vco2 / (v.rate_per_min * y_max)
    x_hi = nice_ceiling(max(x_at_ymax * 1.05, current * 1.3, 1.0))
    x = np.linspace(0.0, x_hi, n)
    eff = room - x
    with np.errstate(divide="ignore", invalid="ignore"):
        pa = k_vco2 / (v.rate_per_min * eff)
        # Minute volume holding the target at this rate: f·VT with VT = (VA/f + VD)/(1 − f_alv).
        minute = (m.vco2_ml_min * gas.alveolar_constant_mmhg(m.body_temp_c) / target
                  + v.rate_per_min * (fixed_rest + x)) / (1.0 - m.f_alv)
    pa[(eff <= 0) | (pa > y_max)] = np.nan
    eff0 = room - current
    cur = k_vco2 / (v.rate_per_min * eff0) if eff0 > 0 else math.inf
    slope = k_vco2 / (v.rate_per_min * eff0 * eff0) if eff0 > 0 else math.inf
    return Sensitivity(x, pa, minute, current, cur, slope, room, (0.0, x_hi), (0.0, y_max),
                       (target - BAND_HALF_WIDTH_MMHG, target + BAND_HALF_WIDTH_MMHG))


# ---------------------------------------------------------------------------------------------
# Defaults the form shows as placeholders
# ---------------------------------------------------------------------------------------------


def field_defaults(plan: Plan, library: Library | None = None) -> dict[str, float]:
    """The value each input field took in this plan when left empty (internal units, FIELDS keys)."""
    sp, lib = _species(plan, library)
    r, m, v, p, o = plan.resolved, plan.metabolism, plan.ventilation, plan.pressures, plan.oxygen
    out = {
        "lean-mass": r.lean_mass_kg, "body-temperature": r.body_temp_c, "metabolic-rate": m.allometric_rate_w,
        "rq": m.rq, "alveolar-dead-space": r.alveolar_dead_space_fraction, "compliance": p.compliance_ml_cmh2o,
        "resistance": p.resistance_cmh2o_l_s, "compressible-volume": p.compressible_ml_cmh2o, "sampling-flow": 0.0,
        "target-paco2": v.target_paco2_mmhg, "target-etco2": v.target_paco2_mmhg - r.gradient_mmhg,
        "gradient": r.gradient_mmhg, "peep": p.peep_cmh2o, "ie": r.ie_expiratory_part, "ti": v.ti_s,
        "pressure-limit": p.pressure_limit_cmh2o, "fio2": o.fio2, "altitude": plan.request.targets.altitude_m,
        "barometric-pressure": o.barometric_mmhg, "vt-per-kg": sp.tidal_volume_ml_kg.start,
        "rate": v.rate_per_min,
    }
    return {k: float(x) for k, x in out.items() if isinstance(x, int | float) and math.isfinite(x)}
