"""The irrigation plan: how much water, at what oxygen, meets the anaesthetised fish's O2 need.

Convective requirement (Fick principle applied to the water): VO2 = Vw·(CwO2,in − CwO2,out) = Vw·CwO2,in·E, so
Vw = VO2 / (CwO2,in·E), E the fraction of the inflowing O2 the gills remove. CwO2,in comes from Henry's law
(:mod:`ventset.aquatic.water`): it follows the water's PO2, i.e. FO2·(PB − pw) × saturation, not the O2 fraction
alone. Diffusion check (order of magnitude): Dm = K·A/x (Krogh), the water layer's conductance Dw = Dm/1.84
(Piiper et al. 1986), and the mean water-blood gradient VO2/(1/(1/Dm + 1/Dw))⁻¹ compared with the inflow's PO2.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ventset.aquatic.data import AquaticData, AquaticGroup, aquatic_data
from ventset.aquatic.inputs import AQUATIC_FIELDS, label_of, parse_optional, parse_supply_o2
from ventset.aquatic.metabolism import Metabolism, metabolism
from ventset.aquatic.water import ATM_MMHG, O2_MG_PER_UMOL, WaterO2, water_o2
from ventset.errors import InputError
from ventset.fields import FieldSpec
from ventset.model import STANDING_NOTICE, Assumption, Caution
from ventset.physiology.gas import barometric_pressure_mmhg
from ventset.textpolicy import check_text
from ventset.units import check_range


@dataclass(frozen=True)
class IrrigationRequest:
    """What an irrigation plan is asked for. ``None`` means the group's (or the shared) default."""

    species: str
    mass_kg: float
    water_temp_c: float | None = None
    salinity: float | None = None
    altitude_m: float = 0.0
    barometric_mmhg: float | None = None
    saturation_percent: float | None = None
    measured_o2_mg_l: float | None = None
    duration_min: float | None = None
    system_volume_l: float | None = None
    vo2_mg_kg_h: float | None = None
    extraction: float | None = None
    demand_factor: float | None = None
    name: str = ""


@dataclass(frozen=True)
class Irrigation:
    """Flows in L/min (and per kg), O2 contents in mg/L, volumes in L, times in min."""

    extraction: float
    extraction_range: tuple[float, float]          # (usual, conservative): the range's low flow end first
    flow_l_min: float
    flow_range_l_min: tuple[float, float]
    flow_l_kg_min: float
    flow_range_l_kg_min: tuple[float, float]
    clinical_flow_l_kg_min: tuple[float, float] | None
    clinical_flow_l_min: tuple[float, float] | None
    o2_fall_mg_l: float
    outflow_mg_l: float
    outflow_saturation_percent: float
    convection_l_mmol: float
    duration_min: float
    single_pass_volume_l: float
    reservoir_floor_mg_l: float
    reservoir_volume_l: float | None               # None: the supply is already at or below the floor
    system_volume_l: float | None
    reservoir_minutes: float | None
    turnover_min: float | None
    high_flow_l_min: float                         # where irrigated trout stopped breathing movements, × mass


@dataclass(frozen=True)
class Diffusion:
    """Order-of-magnitude diffusion check. Conductances in mL O2 min⁻¹ mmHg⁻¹, gradients in mmHg."""

    gill_area_cm2: float
    barrier_um: float
    krogh_tissue_cm2_min_atm: float
    krogh_water_cm2_min_atm: float
    membrane_ml_min_mmhg: float
    water_ml_min_mmhg: float
    water_layer_um: float
    membrane_gradient_mmhg: float
    total_gradient_mmhg: float
    inspired_po2_mmhg: float
    fraction_of_inspired: float


@dataclass(frozen=True)
class IrrigationPlan:
    """The result of :func:`plan_irrigation`."""

    request: IrrigationRequest
    group: AquaticGroup
    mass_kg: float
    water: WaterO2
    metabolism: Metabolism
    irrigation: Irrigation
    diffusion: Diffusion | None
    cautions: tuple[Caution, ...]
    assumptions: tuple[Assumption, ...]
    standing_notice: str = STANDING_NOTICE


TEXT_KEYS = ("mass", "water-temperature", "salinity", "altitude", "barometric-pressure", "duration", "system-volume",
             "vo2", "extraction", "demand-factor")


def request_from_texts(values: dict[str, str | None], *, required: tuple[str, ...] = ("species", "mass"),
                       name: str = "") -> IrrigationRequest:
    """An IrrigationRequest from typed texts keyed like the CLI options ('mass', 'water-temperature', …,
    'saturation' for % or mg/L, 'species'); empty means the default. Raises InputError naming the field."""
    for key in required:
        if not (values.get(key) or "").strip():
            label = "Species" if key == "species" else label_of(key)
            example = {"species": "koi", "mass": "2 kg", "water-temperature": "20 °C",
                       "salinity": "0 (fresh) or 35 (sea)"}.get(key, "")
            raise InputError(label, "", f"is required (e.g. {example})" if example else "is required")
    v = {k: parse_optional(k, values.get(k)) for k in TEXT_KEYS}
    saturation, measured = parse_supply_o2(values.get("saturation"))
    name = check_text("name", name or "")
    return IrrigationRequest(str(values.get("species") or "").strip(), v["mass"] or 0.0, v["water-temperature"],
                             v["salinity"], v["altitude"] or 0.0, v["barometric-pressure"], saturation, measured,
                             v["duration"], v["system-volume"], v["vo2"], v["extraction"], v["demand-factor"], name)


_TEXT_OF = (("mass", "mass_kg", " kg"), ("water-temperature", "water_temp_c", ""), ("salinity", "salinity", ""),
            ("altitude", "altitude_m", " m"), ("barometric-pressure", "barometric_mmhg", " mmHg"),
            ("duration", "duration_min", " min"), ("system-volume", "system_volume_l", " L"),
            ("vo2", "vo2_mg_kg_h", ""), ("extraction", "extraction", ""), ("demand-factor", "demand_factor", ""))


def _exact(x: float) -> str:
    """The shortest text that reads back as exactly ``x`` ('2', '0.3', '1e-05')."""
    text = repr(float(x))
    return text[:-2] if text.endswith(".0") else text


def texts_from_request(req: IrrigationRequest) -> dict[str, str]:
    """The entry texts (keyed as for :func:`request_from_texts`, plus 'name') that give ``req`` back exactly; a
    default (None) is an empty text. The inverse used when a stored case is shown in the window."""
    out = {key: "" if getattr(req, attr) is None else f"{_exact(getattr(req, attr))}{unit}"
           for key, attr, unit in _TEXT_OF}
    if req.measured_o2_mg_l is not None:
        out["saturation"] = f"{_exact(req.measured_o2_mg_l)} mg/L"
    else:
        out["saturation"] = "" if req.saturation_percent is None else f"{_exact(req.saturation_percent)} %"
    if req.altitude_m == 0.0:
        out["altitude"] = ""
    return {"species": req.species, "name": req.name, **out}


def flow_for_need_l_min(vo2_mg_min: float, o2_in_mg_l: float, extraction: float) -> float:
    """Vw = VO2/(CwO2,in·E), L/min: the water flow whose removed O2 equals the need."""
    return vo2_mg_min / (o2_in_mg_l * extraction)


def diffusion_check(vo2_ml_min: float, gill_area_cm2: float, barrier_um: float, inspired_po2_mmhg: float,
                    alpha_ml_l_mmhg: float, *, krogh_tissue_cm2_min_atm: float, o2_diffusivity_cm2_s: float,
                    membrane_to_water: float) -> Diffusion:
    """Krogh/Fick: Dm = K·A/x, Dw = Dm/ratio, gradient = VO2/D (D = 1/(1/Dm + 1/Dw)); order of magnitude.

    K_water = D_O2·α (cm² min⁻¹ atm⁻¹); the water-layer thickness is the one that gives Dw with K_water.
    """
    dm = krogh_tissue_cm2_min_atm * gill_area_cm2 / (barrier_um * 1e-4) / ATM_MMHG
    dw = dm / membrane_to_water
    total = 1.0 / (1.0 / dm + 1.0 / dw)
    k_water = o2_diffusivity_cm2_s * 60.0 * alpha_ml_l_mmhg * ATM_MMHG / 1000.0
    water_layer_um = k_water * gill_area_cm2 / (dw * ATM_MMHG) * 1e4
    grad = vo2_ml_min / total
    return Diffusion(gill_area_cm2, barrier_um, krogh_tissue_cm2_min_atm, k_water, dm, dw, water_layer_um,
                     vo2_ml_min / dm, grad, inspired_po2_mmhg, grad / inspired_po2_mmhg)


def _spec_limits(key: str, value: float | None) -> None:
    spec: FieldSpec = AQUATIC_FIELDS[key]
    if value is not None:
        unit = {"degC": "°C", "percent": "%"}.get(spec.unit, spec.unit)
        check_range(float(value), spec.lo, spec.hi, spec.label, unit, lo_open=spec.lo_open)


def validate_irrigation_request(req: IrrigationRequest) -> None:
    """Check every number of a request against its hard limit; raises InputError naming the field."""
    for key, value in (("mass", req.mass_kg), ("water-temperature", req.water_temp_c), ("salinity", req.salinity),
                       ("altitude", req.altitude_m), ("barometric-pressure", req.barometric_mmhg),
                       ("saturation", req.saturation_percent), ("duration", req.duration_min),
                       ("system-volume", req.system_volume_l), ("vo2", req.vo2_mg_kg_h),
                       ("extraction", req.extraction), ("demand-factor", req.demand_factor)):
        if value is not None and (isinstance(value, bool) or not isinstance(value, int | float)):
            raise InputError(label_of(key), value, "must be a number")
        _spec_limits(key, value)
    if req.measured_o2_mg_l is not None:
        check_range(float(req.measured_o2_mg_l), 0.0, 80.0, label_of("saturation"), "mg/L", lo_open=True)


def _irrigation(req: IrrigationRequest, g: AquaticGroup, data: AquaticData, w: WaterO2, m: Metabolism) -> Irrigation:
    d = data.defaults
    e = req.extraction if req.extraction is not None else g.extraction.usual
    e_lo_flow, e_hi_flow = max(e, g.extraction.usual), min(e, g.extraction.conservative)
    flow = flow_for_need_l_min(m.vo2_mg_min, w.o2_mg_l, e)
    rng = (flow_for_need_l_min(m.vo2_mg_min, w.o2_mg_l, e_lo_flow),
           flow_for_need_l_min(m.vo2_mg_min, w.o2_mg_l, e_hi_flow))
    mass = req.mass_kg
    clin = g.clinical_flow_l_kg_min
    duration = req.duration_min if req.duration_min is not None else d["planned_duration_min"].value
    floor = w.saturated_mg_l * d["low_saturation_percent"].value / 100.0
    usable = w.o2_mg_l - floor
    reservoir = m.vo2_mg_min * duration / usable if usable > 0 else None
    vol = req.system_volume_l
    minutes = vol * usable / m.vo2_mg_min if vol is not None and usable > 0 else (0.0 if vol is not None else None)
    fall = m.vo2_mg_min / flow
    return Irrigation(
        e, (e_lo_flow, e_hi_flow), flow, rng, flow / mass, (rng[0] / mass, rng[1] / mass),
        (clin.min, clin.max) if clin else None, (clin.min * mass, clin.max * mass) if clin else None,
        fall, w.o2_mg_l - fall, 100.0 * (w.o2_mg_l - fall) / w.saturated_mg_l,
        flow / (m.vo2_mg_min / (O2_MG_PER_UMOL * 1000.0)), duration, rng[1] * duration, floor, reservoir, vol,
        minutes, vol / flow if vol is not None else None, d["high_flow_l_kg_min"].value * mass)


def plan_irrigation(req: IrrigationRequest, data: AquaticData | None = None) -> IrrigationPlan:
    """Plan gill irrigation for one fish or aquatic amphibian; raises InputError naming a bad field."""
    from ventset.aquatic.cautions import assumptions_for, cautions_for

    data = data or aquatic_data()
    validate_irrigation_request(req)
    g = data.find_group(req.species)
    if g is None:
        raise InputError("Species", req.species, "unknown aquatic species; run 'ventset irrigate --list'")
    d = data.defaults
    temp = req.water_temp_c if req.water_temp_c is not None else g.water_temperature_c.start
    sal = req.salinity if req.salinity is not None else g.salinity.start
    pb = req.barometric_mmhg if req.barometric_mmhg is not None else barometric_pressure_mmhg(req.altitude_m)
    sat = req.saturation_percent if req.saturation_percent is not None else d["supply_saturation_percent"].value
    w = water_o2(temp, sal, pb, saturation_percent=sat, measured_o2_mg_l=req.measured_o2_mg_l)
    demand = req.demand_factor if req.demand_factor is not None else d["demand_factor"].value
    m = metabolism(req.mass_kg, temp, g.resting_vo2, g.mass_exponent.value, g.q10.value,
                   anaesthesia_factor=g.anaesthesia_factor.value, demand_factor=demand,
                   entered_mg_kg_h=req.vo2_mg_kg_h)
    irr = _irrigation(req, g, data, w, m)
    diff = None
    if g.gill is not None:
        diff = diffusion_check(m.vo2_ml_min, g.gill.area_cm2(req.mass_kg), g.gill.barrier_um.value, w.po2_mmhg,
                               w.alpha_ml_l_mmhg, krogh_tissue_cm2_min_atm=d["krogh_tissue_cm2_min_atm"].value,
                               o2_diffusivity_cm2_s=d["o2_diffusivity_water_cm2_s"].value,
                               membrane_to_water=d["membrane_to_water_conductance"].value)
    partial = IrrigationPlan(req, g, req.mass_kg, w, m, irr, diff, (), ())
    return IrrigationPlan(req, g, req.mass_kg, w, m, irr, diff, cautions_for(partial, data),
                          assumptions_for(partial, data))


def finite_or_none(x: float | None) -> float | None:
    """A number for JSON: None for missing or non-finite values."""
    return None if x is None or not math.isfinite(x) else float(x)
