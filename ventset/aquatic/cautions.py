"""Cautions and assumptions of an irrigation plan. Codes are stable UPPER_SNAKE strings: never rename one.

Standing cautions (every plan): IRRIGATE_MOUTH_TO_GILLS, FLOW_GENTLE_NOT_TOO_HIGH, WATER_MATCHES_TANK_AND_AERATED,
MONITOR_OPERCULA_AND_HEART. Conditional: RAM_VENTILATOR_NEEDS_CONTINUOUS_FLOW, AMPHIBIAN_KEEP_SKIN_WET,
FLOW_ABOVE_OBSERVED_RANGE, NEED_ABOVE_PRACTICE_FLOW, SUPPLY_O2_LOW, SUPPLY_SUPERSATURATED, OUTSIDE_SOLUBILITY_FIT,
WATER_TEMPERATURE_UNUSUAL, SALINITY_UNUSUAL, MASS_OUTSIDE_GROUP_RANGE, RESERVOIR_O2_RUNS_OUT,
DIFFUSION_MARGIN_THIN, plus the group's own notes from aquatic.toml.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from ventset.aquatic.data import AquaticData
from ventset.aquatic.water import FIT_SALINITY, FIT_TEMPERATURE_C
from ventset.model import Assumption, Caution
from ventset.units import fmt

if TYPE_CHECKING:
    from ventset.aquatic.irrigation import IrrigationPlan

SEVERITY_ORDER = {"danger": 0, "caution": 1, "info": 2}
DAVIS_CAMERON = "Davis & Cameron 1971, J Exp Biol 54:1"


def _c(severity: str, code: str, message: str, **values: float) -> Caution:
    return Caution(severity, code, message, tuple((k, round(float(v), 4)) for k, v in values.items()))


def _standing(p: IrrigationPlan) -> list[Caution]:
    return [
        _c("caution", "IRRIGATE_MOUTH_TO_GILLS",
           "Run the water in through the mouth and out over the gills (normograde), tube loose in the mouth so "
           "water can leave under the opercula. Retrograde flow defeats counter-current exchange and may damage "
           "the gills (Neiffer & Stamper 2009, ILAR J 50:343)."),
        _c("info", "FLOW_GENTLE_NOT_TOO_HIGH",
           "Start at the planned flow and raise it only for a reason: a jet or high pressure onto the gill arches "
           "splays filaments and causes haemorrhage (common practice); match the tube to the mouth. In trout, "
           f"opercular movements stopped above about 3.5 L/kg/min ({DAVIS_CAMERON})."),
        _c("caution", "WATER_MATCHES_TANK_AND_AERATED",
           f"Use water from or matched to the home tank: {fmt(p.water.temp_c)} °C (±1 °C), same salinity, pH and "
           "hardness, aerated to air saturation; buffer MS-222 in soft water. Incompletely irrigated filaments "
           "collapse and become ischaemic (Loh & Chia 2016; Brønstad 2022, Biology 11:1355; common practice).",
           water_temp_c=p.water.temp_c),
        _c("caution", "MONITOR_OPERCULA_AND_HEART",
           "Deeply anaesthetised fish stop breathing (Iwama et al. 1989, Can J Zool): keep the flow running and "
           "watch opercular (gill-cover) rate and amplitude, equilibrium and reflexes; heart rate by Doppler probe, "
           "ultrasound or ECG; DO, temperature and pH of the supply and, if possible, the outflow (common practice)."),
    ]


def _group_rules(p: IrrigationPlan) -> list[Caution]:
    g, out = p.group, []
    if g.obligate_ram:
        out.append(_c("danger", "RAM_VENTILATOR_NEEDS_CONTINUOUS_FLOW",
                      f"{g.label}: obligate ram ventilators cannot pump water over their gills. Forced flow through "
                      f"the mouth must run without a break from capture to full recovery, at least "
                      f"{fmt(p.irrigation.flow_l_min)} L/min; think of water velocity across the gills, not only "
                      "volume (Young et al. 2002, Zoo Biol 21:243; common practice).",
                      flow_l_min=p.irrigation.flow_l_min))
    if g.kind == "amphibian":
        out.append(_c("caution", "AMPHIBIAN_KEEP_SKIN_WET",
                      "Amphibian skin is a respiratory and absorptive surface: keep it wet all the time with aerated, "
                      "anaesthetic-free (or dosed) water; lung breathing stops at surgical depth (Penn State "
                      "amphibian anaesthesia guideline). Gilled forms need irrigated water like fish."))
    out += [Caution(n.severity, n.code, f"{n.text} ({n.source})") for n in g.notes]
    return out


def _flow_rules(p: IrrigationPlan, data: AquaticData) -> list[Caution]:
    i, out = p.irrigation, []
    high = data.defaults["high_flow_l_kg_min"].value
    if i.flow_range_l_kg_min[1] > high:
        out.append(_c("caution", "FLOW_ABOVE_OBSERVED_RANGE",
                      f"The need-based flow reaches {fmt(i.flow_range_l_kg_min[1])} L/kg/min, above the "
                      f"{fmt(high)} L/kg/min at which irrigated trout stopped breathing movements ({DAVIS_CAMERON}; "
                      "no harm to gas exchange up to about 6). Small or warm fish need high per-kg flows: deliver "
                      "them gently, and check the supply is oxygenated to raise its content rather than the flow.",
                      flow_l_kg_min=i.flow_range_l_kg_min[1]))
    if i.clinical_flow_l_kg_min is not None and i.flow_range_l_kg_min[1] > i.clinical_flow_l_kg_min[1]:
        out.append(_c("caution", "NEED_ABOVE_PRACTICE_FLOW",
                      f"This fish's O2 need calls for up to {fmt(i.flow_range_l_kg_min[1])} L/kg/min, more than the "
                      f"usual practice of {fmt(i.clinical_flow_l_kg_min[0])}-{fmt(i.clinical_flow_l_kg_min[1])} "
                      "L/kg/min: plan by the need, not by the per-kg habit (derived).",
                      flow_l_kg_min=i.flow_range_l_kg_min[1]))
    if i.reservoir_minutes is not None and i.reservoir_minutes < i.duration_min:
        out.append(_c("caution", "RESERVOIR_O2_RUNS_OUT",
                      f"Without aeration the {fmt(i.system_volume_l or 0)} L in the system falls below "
                      f"{fmt(data.defaults['low_saturation_percent'].value)} % saturation after "
                      f"{fmt(i.reservoir_minutes)} min, before the planned {fmt(i.duration_min)} min: aerate the "
                      "reservoir continuously or use a larger volume; change water if ammonia or CO2 build up "
                      "(common practice).", minutes=i.reservoir_minutes))
    d = p.diffusion
    if d is not None and d.fraction_of_inspired > data.defaults["diffusion_margin_fraction"].value:
        out.append(_c("caution", "DIFFUSION_MARGIN_THIN",
                      f"Order-of-magnitude diffusion check: the mean water-blood gradient needed is about "
                      f"{fmt(d.total_gradient_mmhg)} mmHg of the inflow's {fmt(d.inspired_po2_mmhg)} mmHg. Low "
                      "extraction (a generous flow) and well-oxygenated water keep the water's PO2 high; gill area "
                      "and barrier thickness are the weakest inputs (derived).",
                      fraction=d.fraction_of_inspired))
    return out


def _water_rules(p: IrrigationPlan, data: AquaticData) -> list[Caution]:
    w, g, df, out = p.water, p.group, data.defaults, []
    if w.saturation_percent < df["low_saturation_percent"].value:
        out.append(_c("caution", "SUPPLY_O2_LOW",
                      f"The supply is at {fmt(w.saturation_percent)} % of air saturation ({fmt(w.o2_mg_l)} mg/L): "
                      f"aerate it to at least {fmt(df['low_saturation_percent'].value)} %, ideally 100 % "
                      "(common practice).", saturation_percent=w.saturation_percent))
    if w.saturation_percent > df["supersaturation_percent"].value:
        bubble = w.saturation_percent >= df["gas_bubble_percent"].value
        out.append(_c("danger" if bubble else "caution", "SUPPLY_SUPERSATURATED",
                      f"The supply is at {fmt(w.saturation_percent)} % O2 saturation. Gas-bubble disease killed "
                      f"trout at {fmt(df['gas_bubble_percent'].value)} % (Machova et al. 2017); hyperoxia also "
                      "depresses breathing and raises PaCO2 (Smith & Jones 1982, J Exp Biol 97:325). Mild hyperoxia "
                      "is used in recovery; degas and check total gas pressure.",
                      saturation_percent=w.saturation_percent))
    if not (FIT_TEMPERATURE_C[0] <= w.temp_c <= FIT_TEMPERATURE_C[1] and w.salinity <= FIT_SALINITY[1]):
        out.append(_c("caution", "OUTSIDE_SOLUBILITY_FIT",
                      f"{fmt(w.temp_c)} °C at salinity {fmt(w.salinity)} is outside the 0-40 °C, 0-40 range of the "
                      "Benson & Krause data (Garcia & Gordon 1992): the O2 content is extrapolated; measure it.",
                      temp_c=w.temp_c, salinity=w.salinity))
    t, s = g.water_temperature_c, g.salinity
    if not t.min <= w.temp_c <= t.max:
        out.append(_c("caution", "WATER_TEMPERATURE_UNUSUAL",
                      f"{fmt(w.temp_c)} °C is outside the usual {fmt(t.min)}-{fmt(t.max)} °C for {g.label}: check "
                      "the home water; metabolism is extrapolated by Q10.", temp_c=w.temp_c))
    if not s.min <= w.salinity <= s.max:
        out.append(_c("caution", "SALINITY_UNUSUAL",
                      f"Salinity {fmt(w.salinity)} is outside the usual {fmt(s.min)}-{fmt(s.max)} for {g.label}: "
                      "irrigate with the fish's own home water (common practice).", salinity=w.salinity))
    if not g.mass_kg.min <= p.mass_kg <= g.mass_kg.max:
        out.append(_c("caution", "MASS_OUTSIDE_GROUP_RANGE",
                      f"{fmt(p.mass_kg)} kg is outside the usual {fmt(g.mass_kg.min)}-{fmt(g.mass_kg.max)} kg for "
                      f"{g.label}: the O2 need is extrapolated by allometry.", mass_kg=p.mass_kg))
    return out


def cautions_for(p: IrrigationPlan, data: AquaticData) -> tuple[Caution, ...]:
    """Every caution for a plan, most severe first (stable order within a severity)."""
    found = _group_rules(p) + _water_rules(p, data) + _flow_rules(p, data) + _standing(p)
    return tuple(sorted(found, key=lambda c: SEVERITY_ORDER[c.severity]))


def assumptions_for(p: IrrigationPlan, data: AquaticData) -> tuple[Assumption, ...]:
    """Every number the plan took by default or from a published equation, with its source."""
    g, r, d, w, m = p.group, p.request, data.defaults, p.water, p.metabolism
    a = [Assumption("O2 solubility", round(w.solubility_umol_kg, 2), "µmol/kg at 1 atm",
                    "Garcia & Gordon 1992 fit of Benson & Krause 1984 (as TEOS-10 gsw.O2sol_SP_pt), t68 = 1.00024·t90"),
         Assumption("Water density", round(w.density_kg_l, 5), "kg/L", "UNESCO 1983 one-atmosphere equation of state"),
         Assumption("Barometric pressure", round(w.barometric_mmhg, 1), "mmHg", "entered" if r.barometric_mmhg
                    is not None else f"ISA standard atmosphere at {fmt(r.altitude_m)} m"),
         Assumption("Water vapour pressure", round(w.water_vapour_mmhg, 2), "mmHg",
                    "IAPWS-IF97 at the water temperature; solubility × (PB − pw)/(760 − pw)")]
    if r.water_temp_c is None:
        a.append(Assumption("Water temperature", g.water_temperature_c.start, "°C", g.water_temperature_c.source))
    if r.salinity is None:
        a.append(Assumption("Salinity", g.salinity.start, "g/kg", g.salinity.source))
    if w.measured:
        a.append(Assumption("Supply O2", w.o2_mg_l, "mg/L", "entered as measured (overrides saturation)"))
    elif r.saturation_percent is None:
        a.append(Assumption("Supply saturation", w.saturation_percent, "%", d["supply_saturation_percent"].source))
    if m.entered:
        a.append(Assumption("Resting VO2", round(m.resting_mg_kg_h, 1), "mg/kg/h", "entered"))
    else:
        ref = g.resting_vo2
        a += [Assumption("Resting VO2 reference", round(ref.mg_kg_h, 1),
                         f"mg/kg/h at {fmt(ref.reference_mass_kg)} kg, {fmt(ref.reference_temperature_c)} °C",
                         ref.source),
              Assumption("Mass exponent", g.mass_exponent.value, "", g.mass_exponent.source),
              Assumption("Q10", g.q10.value, "", g.q10.source)]
    a.append(Assumption("Anaesthesia factor", g.anaesthesia_factor.value, "×", g.anaesthesia_factor.source))
    if r.demand_factor is None:
        a.append(Assumption("Demand factor", d["demand_factor"].value, "×", d["demand_factor"].source))
    if r.extraction is None:
        a.append(Assumption("Gill O2 extraction", g.extraction.usual,
                            f"(range {fmt(g.extraction.conservative)}-{fmt(g.extraction.usual)})", g.extraction.source))
    if g.clinical_flow_l_kg_min is not None:
        c = g.clinical_flow_l_kg_min
        a.append(Assumption("Per-kg practice", f"{fmt(c.min)}-{fmt(c.max)}", "L/kg/min", c.source))
    if r.duration_min is None:
        a.append(Assumption("Planned duration", d["planned_duration_min"].value, "min",
                            d["planned_duration_min"].source))
    a.append(Assumption("Reservoir floor", d["low_saturation_percent"].value, "% saturation",
                        d["low_saturation_percent"].source))
    if p.diffusion is not None and g.gill is not None:
        a += [Assumption("Gill area", round(p.diffusion.gill_area_cm2), "cm²", g.gill.source),
              Assumption("Water-blood barrier", g.gill.barrier_um.value, "µm", g.gill.barrier_um.source),
              Assumption("Krogh constant, tissue", d["krogh_tissue_cm2_min_atm"].value, "cm²/min/atm",
                         d["krogh_tissue_cm2_min_atm"].source),
              Assumption("O2 diffusivity in water", d["o2_diffusivity_water_cm2_s"].value, "cm²/s",
                         d["o2_diffusivity_water_cm2_s"].source),
              Assumption("Membrane/water conductance", d["membrane_to_water_conductance"].value, "",
                         d["membrane_to_water_conductance"].source)]
    return tuple(a)
