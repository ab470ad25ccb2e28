"""Request → Plan: the pure planning function and the tidal-volume × rate solver.

Model (all steady state): VA = VCO2·K(T)/PaCO2 (alveolar ventilation equation);
each breath VT = VD_fixed + f_alv·VT + VA/f, with VD_fixed = anatomical (intubated) +
apparatus + tube beyond the incisors, f_alv = alveolar dead-space fraction.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

from ventset import cautions as caution_rules
from ventset.errors import InputError
from ventset.fields import validate_request
from ventset.library import Library, Species, load_library
from ventset.model import (
    MODES,
    STRATEGIES,
    Assumption,
    DeadSpace,
    Limits,
    Metabolism,
    Oxygen,
    Plan,
    Pressures,
    Request,
    Resolved,
    Ventilation,
)
from ventset.physiology import deadspace, gas, mechanics, metabolism
from ventset.units import check_range, fmt

if TYPE_CHECKING:
    import numpy as np


@dataclass(frozen=True)
class Choice:
    """Solver output: the chosen point and why it sits there."""

    vt_ml: float
    rate_per_min: float
    reached: bool
    binding: tuple[str, ...]
    preferred_vt_ml: float
    preferred_rate_per_min: float


def breath_alveolar_ml(vt_ml: float | np.ndarray, vd_fixed_ml: float, f_alv: float) -> float | np.ndarray:
    """Volume of one breath that exchanges gas: VT·(1 − f_alv) − VD_fixed (mL)."""
    return vt_ml * (1.0 - f_alv) - vd_fixed_ml


def vt_for_rate(va_ml_min: float, rate: float, vd_fixed_ml: float, f_alv: float) -> float:
    """Tidal volume (mL) that gives alveolar ventilation va at rate f: (VA/f + VD_fixed)/(1 − f_alv)."""
    return (va_ml_min / rate + vd_fixed_ml) / (1.0 - f_alv)


def rate_for_vt(va_ml_min: float, vt_ml: float, vd_fixed_ml: float, f_alv: float) -> float:
    """Rate (/min) that gives alveolar ventilation va at tidal volume vt; inf when VT is all dead space."""
    eff = breath_alveolar_ml(vt_ml, vd_fixed_ml, f_alv)
    return va_ml_min / eff if eff > 0 else math.inf


def paco2_grid(vt_ml: np.ndarray, rate_per_min: np.ndarray, vco2_ml_min: float, body_temp_c: float,
               vd_fixed_ml: float, f_alv: float) -> np.ndarray:
    """Predicted PaCO2 (mmHg) on a grid: rows = rates, columns = tidal volumes; inf where VT ≤ dead space.

    PaCO2 = VCO2·K(T) / (f·(VT(1 − f_alv) − VD_fixed)).
    """
    import numpy as np

    eff = breath_alveolar_ml(np.asarray(vt_ml, dtype=float), vd_fixed_ml, f_alv)
    va = np.outer(np.asarray(rate_per_min, dtype=float), eff)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = vco2_ml_min * gas.alveolar_constant_mmhg(body_temp_c) / va
    out[va <= 0] = np.inf
    return out


def choose_settings(va_ml_min: float, vd_fixed_ml: float, f_alv: float, vt_lo: float, vt_hi: float,
                    rate_lo: float, rate_hi: float, vt_pressure_max: float, preferred_vt: float | None,
                    preferred_rate: float | None) -> Choice:
    """Pick (VT, f) on the target line f·(VT(1 − f_alv) − VD_fixed) = VA inside the limits.

    The preferred point (a VT, or a rate) is moved along the target line only as far as a limit
    requires; each limit that moved it is named in ``binding``. If no point inside the limits reaches
    VA, the closest point is returned with ``reached`` False.
    """
    if preferred_rate is not None:
        pref_rate = preferred_rate
        pref_vt = vt_for_rate(va_ml_min, pref_rate, vd_fixed_ml, f_alv)
    else:
        pref_vt = float(preferred_vt)
        pref_rate = rate_for_vt(va_ml_min, pref_vt, vd_fixed_ml, f_alv)
    box_hi = min(vt_hi, vt_pressure_max)
    hi_name = "pressure_limit" if vt_pressure_max < vt_hi else "vt_max"
    binding: list[str] = []
    if box_hi < vt_lo:
        binding.append("pressure_limit_below_vt_min")
        vt_lo = box_hi
    # The target line crosses the rate limits at these tidal volumes.
    vt_at_rate_hi = vt_for_rate(va_ml_min, rate_hi, vd_fixed_ml, f_alv)
    vt_at_rate_lo = vt_for_rate(va_ml_min, rate_lo, vd_fixed_ml, f_alv)
    lo, lo_name = (vt_at_rate_hi, "rate_max") if vt_at_rate_hi > vt_lo else (vt_lo, "vt_min")
    hi, hi_name2 = (vt_at_rate_lo, "rate_min") if vt_at_rate_lo < box_hi else (box_hi, hi_name)
    if lo <= hi:
        if pref_vt < lo:
            vt, name = lo, lo_name
        elif pref_vt > hi:
            vt, name = hi, hi_name2
        else:
            vt, name = pref_vt, ""
        if name:
            binding.append(name)
        if preferred_rate is not None and name == "":
            return Choice(vt, pref_rate, True, tuple(binding), pref_vt, pref_rate)
        return Choice(vt, rate_for_vt(va_ml_min, vt, vd_fixed_ml, f_alv), True, tuple(binding), pref_vt, pref_rate)
    # Unreachable: too little ventilation even at the top of the box, or too much at the bottom.
    if vt_at_rate_hi > box_hi:
        binding += [hi_name, "rate_max"]
        return Choice(box_hi, rate_hi, False, tuple(binding), pref_vt, pref_rate)
    binding += ["vt_min", "rate_min"]
    return Choice(vt_lo, rate_lo, False, tuple(binding), pref_vt, pref_rate)


BAG_SIZES_L = (0.25, 0.5, 1.0, 2.0, 3.0, 4.0, 5.0, 15.0, 30.0)  # commonly stocked reservoir bags


def reservoir_bag_l(set_vt_ml: float, multiple: float) -> float:
    """Smallest stocked bag holding ``multiple`` × the set tidal volume (L); the largest if none does."""
    need = set_vt_ml * multiple / 1000.0
    return next((b for b in BAG_SIZES_L if b >= need), BAG_SIZES_L[-1])


def default_ti_s(lean_mass_kg: float, species: Species, library: Library) -> tuple[float, str]:
    """Default inspiratory time (s) and its source: the species value, else ~1 s at 20 kg × (M/20)^0.26."""
    if species.inspiratory_time_s is not None:
        return species.inspiratory_time_s.value, species.inspiratory_time_s.source
    d = library.planning
    ti = d["ti_reference_s"].value * (lean_mass_kg / d["ti_reference_mass_kg"].value) ** d["ti_mass_exponent"].value
    return ti, f"{d['ti_reference_s'].source}; scaled with {d['ti_mass_exponent'].source}"


def _timing(rate: float, ti_entered: float | None, ie_entered: float | None, sp: Species, lean: float,
            lib: Library, used) -> tuple[float, float, float]:
    """Ti, Te (s) and the resulting E of I:E = 1:E, from an entered Ti, an entered I:E, or the defaults."""
    cycle = 60.0 / rate
    if ti_entered is not None:
        if ti_entered >= cycle * 0.8:
            raise InputError("ti", f"{fmt(ti_entered)} s",
                             f"leaves too little time to breathe out at {fmt(rate)}/min (cycle {fmt(cycle)} s)")
        ti = ti_entered
    elif ie_entered is not None:
        ti, _ = mechanics.breath_timing_s(rate, ie_entered)
    else:
        ti_ie, _ = mechanics.breath_timing_s(rate, sp.ie_expiratory_part.value)
        ti_typ, source = default_ti_s(lean, sp, lib)
        if ti_typ < ti_ie:
            ti = ti_typ
            used("Inspiratory time", ti, "s", source)
        else:
            ti = ti_ie
            used("I:E", f"1:{fmt(sp.ie_expiratory_part.value)}", "", sp.ie_expiratory_part.source)
    te = cycle - ti
    return ti, te, te / ti


def _species(library: Library, key: str) -> Species:
    sp = library.find_species(key) if key else None
    if sp is None:
        raise InputError("species", key, "unknown species; run 'ventset species' for the list")
    return sp


def plan(request: Request, library: Library | None = None) -> Plan:
    """Draft starting ventilator settings for ``request``. Pure: same request, same plan.

    Raises InputError naming the field for any input outside its hard limits.
    """
    lib = library or load_library()
    validate_request(request)
    p, c, t, s = request.patient, request.circuit, request.targets, request.strategy
    sp = _species(lib, p.species)
    g = sp.group
    notes: list[Assumption] = []

    def used(name: str, value: float | str, unit: str, source: str) -> None:
        notes.append(Assumption(name, round(value, 4) if isinstance(value, float) else value, unit, source))

    try:
        check_range(p.mass_kg, sp.mass_kg.min, sp.mass_kg.max, "mass", "kg")
    except InputError as err:
        raise InputError(err, err.value, f"{err.reason} for {sp.label} ({sp.mass_kg.source})", "kg") from None
    species_label = sp.label
    custom = p.custom_species.strip()
    if custom:
        species_label = f"{custom} (values from {sp.label})"
        used("Species values", sp.label, "", f"base species for '{custom}', which is not in the library: "
             "its values are used for everything not entered")
    lean = p.lean_mass_kg if p.lean_mass_kg is not None else p.mass_kg
    if lean > p.mass_kg:
        raise InputError("lean-mass", f"{fmt(lean)} kg",
                         f"must not exceed the body mass of {fmt(p.mass_kg)} kg")
    if p.lean_mass_kg is None:
        used("Lean mass", lean, "kg", "taken as the body mass (no lean mass entered)")
    if s.name not in STRATEGIES:
        raise InputError("strategy", s.name, f"must be one of {', '.join(STRATEGIES)}")
    mode = c.mode or sp.default_mode
    if mode not in MODES:
        raise InputError("mode", mode, f"must be one of {', '.join(MODES)}")
    if c.mode is None:
        used("Ventilation mode", mode, "", f"species default for {sp.label} (common practice)")

    # --- metabolism ---------------------------------------------------------------
    temp = p.body_temp_c if p.body_temp_c is not None else sp.body_temperature_c.start
    if p.body_temp_c is None:
        used("Body temperature", temp, "°C", sp.body_temperature_c.source)
    ectotherm = g.key == "reptile"
    t_ref = g.reference_temperature_c.value if ectotherm else sp.body_temperature_c.start
    rq = p.rq if p.rq is not None else sp.rq.value
    if p.rq is None:
        used("Respiratory quotient", rq, "", sp.rq.source)
    basal_kcal = metabolism.allometric_rate_kcal_day(lean, g.k_kcal_day.value, g.exponent.value)
    allometric_w = (metabolism.kcal_day_to_w(basal_kcal) * metabolism.q10_factor(temp, t_ref, g.q10.value)
                    * sp.anaesthesia_factor.value)
    if p.metabolic_rate_w is None:
        power_w = allometric_w
        used(f"Metabolic constant K ({g.label})", g.k_kcal_day.value, "kcal/day/kg^b", g.k_kcal_day.source)
        used("Metabolic exponent b", g.exponent.value, "", g.exponent.source)
        used("Temperature the rate refers to", t_ref, "°C",
             g.reference_temperature_c.source if ectotherm else sp.body_temperature_c.source)
        used("Q10", g.q10.value, "", g.q10.source)
        used("Anaesthesia factor on metabolic rate", sp.anaesthesia_factor.value, "", sp.anaesthesia_factor.source)
    else:
        power_w = p.metabolic_rate_w
    if power_w <= 0:
        raise InputError("metabolic-rate", power_w, "must be above 0 W")
    vo2 = metabolism.vo2_ml_min(power_w, rq)
    vco2 = rq * vo2
    met = Metabolism(power_w, allometric_w, vo2, vco2, rq, p.metabolic_rate_w is not None)

    # --- targets ------------------------------------------------------------------
    gradient = t.gradient_mmhg if t.gradient_mmhg is not None else sp.gradient_mmhg.value
    if t.gradient_mmhg is None:
        used("PaCO2 − EtCO2 gradient", gradient, "mmHg", sp.gradient_mmhg.source)
    if t.paco2_mmhg is not None and t.etco2_mmhg is not None:
        raise InputError("target-etco2", t.etco2_mmhg, "give a target PaCO2 or a target EtCO2, not both")
    if t.paco2_mmhg is not None:
        target = t.paco2_mmhg
    elif t.etco2_mmhg is not None:
        target = t.etco2_mmhg + gradient
        check_range(target, 10.0, 120.0, "target-etco2", "mmHg", label="Target EtCO2 + gradient")
    else:
        target = sp.paco2_target_mmhg.start
        used("Target PaCO2", target, "mmHg", sp.paco2_target_mmhg.source)
    va = gas.alveolar_ventilation_ml_min(vco2, target, temp)
    used("Alveolar ventilation constant K(T)", gas.alveolar_constant_mmhg(temp) / 1000, "",
         f"VA (L/min) = VCO2 (mL/min) × K / PaCO2 (mmHg) at {fmt(temp)} °C; 0.863 at 37 °C "
         "(alveolar ventilation equation, derived)")

    # --- dead space ---------------------------------------------------------------
    anat_full = deadspace.anatomical_dead_space_ml(lean, sp.anatomical_coefficient_ml, sp.anatomical_exponent)
    anat = anat_full * sp.intubated_fraction
    used("Anatomical dead space (unintubated)", anat_full, "mL",
         f"{sp.anatomical_coefficient_ml}·M^{sp.anatomical_exponent}: {sp.anatomical_source}")
    used("Share of anatomical dead space kept after intubation", sp.intubated_fraction, "", sp.anatomical_source)
    tube = 0.0
    if (c.tube_id_mm is None) != (c.tube_length_cm is None):
        missing = "tube-length" if c.tube_length_cm is None else "tube-id"
        raise InputError(missing, "", "enter both tube internal diameter and length beyond the incisors, or neither")
    if c.tube_id_mm is not None and c.tube_length_cm is not None:
        tube = deadspace.tube_volume_ml(c.tube_id_mm, c.tube_length_cm)
    for part in c.parts:
        if not math.isfinite(part.volume_ml) or part.volume_ml < 0:
            raise InputError("apparatus", part.volume_ml, "volume must be 0 mL or more",
                             label=f"Apparatus '{part.name}'")
    apparatus = sum(part.volume_ml for part in c.parts)
    vd_fixed = anat + apparatus + tube
    f_alv = (p.alveolar_dead_space_fraction if p.alveolar_dead_space_fraction is not None
             else sp.alveolar_dead_space_fraction.value)
    if p.alveolar_dead_space_fraction is None:
        used("Alveolar dead-space fraction", f_alv, "of VT", sp.alveolar_dead_space_fraction.source)

    # --- mechanics ----------------------------------------------------------------
    compliance = (p.compliance_ml_cmh2o if p.compliance_ml_cmh2o is not None
                  else sp.compliance_ml_cmh2o_kg.value * lean)
    if p.compliance_ml_cmh2o is None:
        used("Respiratory-system compliance per kg", sp.compliance_ml_cmh2o_kg.value, "mL/cmH2O/kg",
             sp.compliance_ml_cmh2o_kg.source)
    resistance = (p.resistance_cmh2o_l_s if p.resistance_cmh2o_l_s is not None
                  else sp.resistance_coefficient * lean**sp.resistance_exponent)
    if p.resistance_cmh2o_l_s is None:
        used("Airway resistance", resistance, "cmH2O/(L/s)",
             f"{sp.resistance_coefficient}·M^{sp.resistance_exponent}: {sp.resistance_source}")
    tau = mechanics.time_constant_s(resistance, compliance)
    peep = t.peep_cmh2o if t.peep_cmh2o is not None else sp.peep_cmh2o.value
    if t.peep_cmh2o is None:
        used("PEEP", peep, "cmH2O", sp.peep_cmh2o.source)
    limit = t.pressure_limit_cmh2o if t.pressure_limit_cmh2o is not None else sp.pip_limit_cmh2o.value
    if t.pressure_limit_cmh2o is None:
        used("Pressure limit", limit, "cmH2O", sp.pip_limit_cmh2o.source)
    if limit <= peep:
        raise InputError("pressure-limit", f"{fmt(limit)} cmH2O", f"must be above PEEP ({fmt(peep)} cmH2O)")
    if t.ti_s is not None and t.ie_expiratory_part is not None:
        raise InputError("ti", t.ti_s, "give an inspiratory time or an I:E, not both")

    # --- the limits and the choice ------------------------------------------------
    vt_span, rate_span = sp.tidal_volume_ml_kg, sp.rate_span_for(lean)
    vt_lo_kg, vt_hi_kg = vt_span.min, vt_span.max
    rate_lo, rate_hi = rate_span.min, rate_span.max
    used("Tidal volume range", f"{fmt(vt_lo_kg)}–{fmt(vt_hi_kg)}", "mL/kg", vt_span.source)
    used("Rate range", f"{fmt(rate_lo)}–{fmt(rate_hi)}", "/min", rate_span.source)
    if s.vt_ml_kg is not None:  # the clinician's own choice widens the range to include it
        vt_lo_kg, vt_hi_kg = min(vt_lo_kg, s.vt_ml_kg), max(vt_hi_kg, s.vt_ml_kg)
    if s.rate_per_min is not None:
        rate_lo, rate_hi = min(rate_lo, s.rate_per_min), max(rate_hi, s.rate_per_min)
    vt_pressure_max = (limit - peep) * compliance
    if s.rate_per_min is not None:
        pref_vt, pref_rate = None, s.rate_per_min
    elif s.name == "least_work":
        va_eff, vd_eff = va / (1 - f_alv), vd_fixed / (1 - f_alv)
        pref_rate = mechanics.otis_optimal_rate_per_min(va_eff / 1000, max(vd_eff, 1e-9) / 1000, tau)
        pref_vt = None
        used("Rate of least work (Otis, Fenn & Rahn 1950)", pref_rate, "/min", "Otis, Fenn & Rahn 1950 (derived)")
    else:
        per_kg = s.vt_ml_kg if s.vt_ml_kg is not None else vt_span.start
        if s.vt_ml_kg is None:
            used("Starting tidal volume", per_kg, "mL/kg", vt_span.source)
        pref_vt, pref_rate = per_kg * lean, None
    if s.vt_ml_kg is not None and s.rate_per_min is not None:
        # Both fixed by the clinician: evaluate exactly these settings; the cautions say where they land.
        fixed_vt = s.vt_ml_kg * lean
        eff = breath_alveolar_ml(fixed_vt, vd_fixed, f_alv)
        exact = eff > 0 and math.isclose(s.rate_per_min * eff, va, rel_tol=1e-9)
        choice = Choice(fixed_vt, s.rate_per_min, exact, ("fixed_by_user",), fixed_vt, s.rate_per_min)
    else:
        choice = choose_settings(va, vd_fixed, f_alv, vt_lo_kg * lean, vt_hi_kg * lean, rate_lo, rate_hi,
                                 vt_pressure_max, pref_vt, pref_rate)
    vt, rate = choice.vt_ml, choice.rate_per_min
    delivered_va = rate * breath_alveolar_ml(vt, vd_fixed, f_alv)
    expected = gas.paco2_mmhg_from_va(vco2, delivered_va, temp) if delivered_va > 0 else math.inf

    # --- timing and pressures -----------------------------------------------------
    ti, te, ie = _timing(rate, t.ti_s, t.ie_expiratory_part, sp, lean, lib, used)
    plateau = mechanics.plateau_cmh2o(vt, compliance, peep)
    if mode == "pressure":
        insp = mechanics.pressure_control_delta_cmh2o(vt, ti, compliance, tau)
        peak = peep + insp
    else:
        peak = mechanics.peak_cmh2o_constant_flow(vt, ti, compliance, resistance, peep)
        insp = peak - peep

    # --- circuit ------------------------------------------------------------------
    fg = lib.fresh_gas
    if c.circuit_type is not None:
        if c.circuit_type not in lib.circuits:
            raise InputError("circuit", c.circuit_type, f"must be one of {', '.join(lib.circuits)}")
        ckey = c.circuit_type
    elif p.mass_kg < fg["direct_small_patient_below_kg"].value:
        ckey = "direct_small_patient"
    elif p.mass_kg < fg["non_rebreathing_below_kg"].value:
        ckey = "non_rebreathing"
    elif p.mass_kg > fg["large_animal_circle_above_kg"].value:
        ckey = "rebreathing_large_animal"
    else:
        ckey = "rebreathing_small_animal"
    circuit = lib.circuits[ckey]
    if c.circuit_type is None:
        rule = fg["direct_small_patient_below_kg" if ckey == "direct_small_patient" else "non_rebreathing_below_kg"]
        used("Breathing system", circuit.label, "", f"{rule.source}; chosen by body mass")
    comp_circ = c.compressible_ml_cmh2o if c.compressible_ml_cmh2o is not None else circuit.compressible_ml_cmh2o.value
    if c.compressible_ml_cmh2o is None:
        used("Circuit compressible volume", comp_circ, "mL/cmH2O", circuit.compressible_ml_cmh2o.source)
    compressed = comp_circ * (peak - peep) if mode == "volume" else 0.0
    set_vt = vt + compressed

    # --- oxygen -------------------------------------------------------------------
    fio2 = t.fio2 if t.fio2 is not None else lib.planning["fio2"].value
    if t.fio2 is None:
        used("FiO2", fio2, "", lib.planning["fio2"].source)
    if t.barometric_mmhg is not None:
        pb = t.barometric_mmhg
    else:
        pb = gas.barometric_pressure_mmhg(t.altitude_m)
        used("Barometric pressure", pb, "mmHg", f"ISA standard atmosphere at {fmt(t.altitude_m)} m (ICAO Doc 7488)")
    ph2o = gas.water_vapour_pressure_mmhg(temp)
    used("Water vapour pressure", ph2o, "mmHg", f"saturated at {fmt(temp)} °C (IAPWS-IF97)")
    pao2 = gas.alveolar_po2_mmhg(fio2, pb, ph2o, min(expected, 200.0), rq)
    minute = rate * vt
    sampling_loss = c.sampling_ml_min if circuit.rebreathing else 0.0
    min_o2 = vo2 + sampling_loss
    if circuit.rebreathing:
        size = "large_animal" if ckey == "rebreathing_large_animal" else "rebreathing"
        maint, induct = fg[f"{size}_maintenance_ml_kg_min"], fg[f"{size}_induction_ml_kg_min"]
        fresh = max(maint.value * p.mass_kg, fg["rebreathing_floor_ml_min"].value, min_o2)
        induction = max(induct.value * p.mass_kg, fresh)
        used("Fresh gas, maintenance", maint.value, "mL/kg/min", maint.source)
        used("Fresh gas, induction and changes", induct.value, "mL/kg/min", induct.source)
    else:
        fresh = max(fg["non_rebreathing_minute_volume_multiple"].value * minute,
                    fg["non_rebreathing_floor_ml_min"].value, min_o2)
        induction = fresh
        used("Fresh gas, non-rebreathing multiple of minute volume",
             fg["non_rebreathing_minute_volume_multiple"].value, "× VE",
             fg["non_rebreathing_minute_volume_multiple"].source)

    used("Reservoir bag", lib.planning["reservoir_bag_vt_multiple"].value, "× set VT",
         lib.planning["reservoir_bag_vt_multiple"].source)
    resolved = Resolved(sp.key, species_label, p.mass_kg, lean, temp, mode, s.name, ie, f_alv, gradient,
                        sp.gradient_reliable, sp.mechanics_reliable)
    result = Plan(
        request=request,
        resolved=resolved,
        metabolism=met,
        dead_space=DeadSpace(anat, apparatus, tube, f_alv * vt, vd_fixed + f_alv * vt, c.parts),
        ventilation=Ventilation(va, minute, vt, set_vt, rate, ti, te, set_vt / 1000 / ti * 60, target, expected,
                                expected - gradient, choice.reached, delivered_va),
        pressures=Pressures(peep, plateau, peak, plateau - peep, insp, limit, compliance, resistance, tau, comp_circ,
                            compressed),
        oxygen=Oxygen(fio2, pb, ph2o, pao2, min_o2, fresh, induction, ckey, circuit.label,
                      reservoir_bag_l(set_vt, lib.planning["reservoir_bag_vt_multiple"].value)),
        limits=Limits(vt_lo_kg * lean, vt_hi_kg * lean, rate_lo, rate_hi, vt_pressure_max, choice.binding),
        cautions=(),
        assumptions=tuple(notes),
    )
    return caution_rules.attach(result, sp, lib, choice)
