"""An irrigation plan as JSON (CLI, case files), as text for a clinician, and as lines for a printout.

``irrigation_to_dict`` uses the same ``cautions`` / ``assumptions`` shapes as ``ventset.report.plan_to_dict``, so
``ventset.cases.compare_plan_dicts`` compares two stored irrigation plans unchanged. ``irrigation_from_dict``
reads the stored inputs strictly (unknown keys and wrong types refused, naming the field); the plan itself is
planned again from them, never trusted from the file.
"""

from __future__ import annotations

import math
from dataclasses import asdict, fields
from typing import Any

from ventset import __version__
from ventset.aquatic.irrigation import IrrigationPlan, IrrigationRequest, validate_irrigation_request
from ventset.errors import InputError
from ventset.model import Assumption
from ventset.units import fmt

KIND = "aquatic-irrigation"
VERSION = 1


def _num(x: float | None) -> float | None:
    return None if x is None or not math.isfinite(x) else round(float(x), 6)


def _pair(p: tuple[float, float] | None) -> list[float | None] | None:
    return None if p is None else [_num(p[0]), _num(p[1])]


def request_to_dict(req: IrrigationRequest) -> dict[str, Any]:
    """Plain dict of the inputs (units in the key names)."""
    return asdict(req)


def request_from_dict(data: object, where: str = "irrigation.request") -> IrrigationRequest:
    """Rebuild an IrrigationRequest; raises InputError naming ``where.field`` for a bad shape or value."""
    if not isinstance(data, dict):
        raise InputError(where, type(data).__name__, "must be an object")
    known = {f.name: f for f in fields(IrrigationRequest)}
    unknown = sorted(set(data) - set(known))
    if unknown:
        raise InputError(f"{where}.{unknown[0]}", "", "is not a field of an irrigation request")
    for name in ("species", "mass_kg"):
        if name not in data:
            raise InputError(f"{where}.{name}", "", "is missing")
    values: dict[str, object] = {}
    for name, value in data.items():
        text_field = name in ("species", "name")
        if text_field:
            if not isinstance(value, str) or len(value) > 200:
                raise InputError(f"{where}.{name}", value, "must be text (at most 200 characters)")
        elif value is not None and (isinstance(value, bool) or not isinstance(value, int | float)
                                    or not math.isfinite(value)):
            raise InputError(f"{where}.{name}", value, "must be a finite number or null")
        elif value is None and name in ("mass_kg", "altitude_m"):
            raise InputError(f"{where}.{name}", "null", "must be a number")
        values[name] = value if text_field or value is None else float(value)
    # Each value was checked above (text for species and name, else a finite float or None); mypy cannot see
    # that per key in a dict[str, object].
    req = IrrigationRequest(**values)  # type: ignore[arg-type]
    validate_irrigation_request(req)
    return req


def irrigation_to_dict(plan: IrrigationPlan) -> dict[str, Any]:
    """The JSON shape of an irrigation plan (``kind`` "aquatic-irrigation", ``version`` 1; units in key names)."""
    w, m, i, d, g = plan.water, plan.metabolism, plan.irrigation, plan.diffusion, plan.group
    return {
        "kind": KIND, "version": VERSION, "ventset_version": __version__, "standing_notice": plan.standing_notice,
        "request": request_to_dict(plan.request),
        "group": {"key": g.key, "label": g.label, "kind": g.kind, "obligate_ram": g.obligate_ram},
        "water": {"temp_c": _num(w.temp_c), "salinity": _num(w.salinity), "barometric_mmhg": _num(w.barometric_mmhg),
                  "water_vapour_mmhg": _num(w.water_vapour_mmhg), "density_kg_l": _num(w.density_kg_l),
                  "solubility_umol_kg": _num(w.solubility_umol_kg), "saturated_mg_l": _num(w.saturated_mg_l),
                  "saturation_percent": _num(w.saturation_percent), "o2_mg_l": _num(w.o2_mg_l),
                  "o2_ml_l": _num(w.o2_ml_l), "po2_mmhg": _num(w.po2_mmhg),
                  "alpha_ml_l_mmhg": _num(w.alpha_ml_l_mmhg), "measured": w.measured},
        "metabolism": {"resting_vo2_mg_h": _num(m.resting_mg_h), "resting_vo2_mg_kg_h": _num(m.resting_mg_kg_h),
                       "anaesthesia_factor": _num(m.anaesthesia_factor), "demand_factor": _num(m.demand_factor),
                       "vo2_mg_h": _num(m.vo2_mg_h), "vo2_mg_kg_h": _num(m.vo2_mg_kg_h),
                       "vo2_mg_min": _num(m.vo2_mg_min), "vo2_ml_min": _num(m.vo2_ml_min), "entered": m.entered,
                       "teleost_line_mg_kg_h": _num(m.teleost_line_mg_kg_h)},
        "irrigation": {"extraction": _num(i.extraction), "extraction_range": _pair(i.extraction_range),
                       "flow_l_min": _num(i.flow_l_min), "flow_range_l_min": _pair(i.flow_range_l_min),
                       "flow_l_kg_min": _num(i.flow_l_kg_min), "flow_range_l_kg_min": _pair(i.flow_range_l_kg_min),
                       "clinical_flow_l_kg_min": _pair(i.clinical_flow_l_kg_min),
                       "clinical_flow_l_min": _pair(i.clinical_flow_l_min), "o2_fall_mg_l": _num(i.o2_fall_mg_l),
                       "outflow_mg_l": _num(i.outflow_mg_l),
                       "outflow_saturation_percent": _num(i.outflow_saturation_percent),
                       "convection_l_mmol": _num(i.convection_l_mmol), "duration_min": _num(i.duration_min),
                       "single_pass_volume_l": _num(i.single_pass_volume_l),
                       "reservoir_floor_mg_l": _num(i.reservoir_floor_mg_l),
                       "reservoir_volume_l": _num(i.reservoir_volume_l), "system_volume_l": _num(i.system_volume_l),
                       "reservoir_minutes": _num(i.reservoir_minutes), "turnover_min": _num(i.turnover_min),
                       "high_flow_l_min": _num(i.high_flow_l_min)},
        "diffusion": None if d is None else {
            "order_of_magnitude": True, "gill_area_cm2": _num(d.gill_area_cm2), "barrier_um": _num(d.barrier_um),
            "krogh_tissue_cm2_min_atm": _num(d.krogh_tissue_cm2_min_atm),
            "krogh_water_cm2_min_atm": _num(d.krogh_water_cm2_min_atm),
            "membrane_ml_min_mmhg": _num(d.membrane_ml_min_mmhg), "water_ml_min_mmhg": _num(d.water_ml_min_mmhg),
            "water_layer_um": _num(d.water_layer_um), "membrane_gradient_mmhg": _num(d.membrane_gradient_mmhg),
            "total_gradient_mmhg": _num(d.total_gradient_mmhg), "inspired_po2_mmhg": _num(d.inspired_po2_mmhg),
            "fraction_of_inspired": _num(d.fraction_of_inspired)},
        "cautions": [{"severity": c.severity, "code": c.code, "message": c.message} for c in plan.cautions],
        "assumptions": [{"name": a.name, "value": a.value, "unit": a.unit, "source": a.source}
                        for a in plan.assumptions],
    }


def irrigation_from_dict(data: object) -> IrrigationRequest:
    """The inputs of a stored irrigation plan (``irrigation_to_dict`` output), checked; plan them again."""
    if not isinstance(data, dict) or data.get("kind") != KIND:
        raise InputError("irrigation.kind", "" if not isinstance(data, dict) else data.get("kind"),
                         f"is not an aquatic irrigation plan (expected kind '{KIND}')")
    if data.get("version") != VERSION:
        raise InputError("irrigation.version", data.get("version"), f"is not supported (this version reads {VERSION})")
    return request_from_dict(data.get("request"))


def flow_text(l_min: float) -> str:
    """A water flow for a clinician: mL/min below 0.1 L/min, else L/min."""
    return f"{fmt(l_min * 1000)} mL/min" if l_min < 0.1 else f"{fmt(l_min)} L/min"


def mass_text(kg: float) -> str:
    """A body mass for a clinician: g below 1 kg, else kg."""
    return f"{fmt(kg * 1000)} g" if kg < 1 else f"{fmt(kg)} kg"


def _range(a: float, b: float) -> str:
    lo, hi = flow_text(a), flow_text(b)
    return f"{lo.split()[0]}-{hi}" if lo.split()[1] == hi.split()[1] else f"{lo} to {hi}"


def summary_lines(plan: IrrigationPlan) -> list[str]:
    """The plan's key numbers, one line each (text output, window, printout)."""
    w, m, i, g = plan.water, plan.metabolism, plan.irrigation, plan.group
    lines = [f"Patient: {plan.request.name + ', ' if plan.request.name else ''}{g.label}, {mass_text(plan.mass_kg)}",
             f"Water: {fmt(w.temp_c)} °C, salinity {fmt(w.salinity)}, {fmt(w.barometric_mmhg)} mmHg barometric; "
             f"{fmt(w.o2_mg_l)} mg/L O2 ({fmt(w.o2_ml_l)} mL/L) at {fmt(w.saturation_percent)} % saturation, "
             f"PO2 {fmt(w.po2_mmhg)} mmHg" + (" (measured)" if w.measured else ""),
             f"O2 need: {fmt(m.vo2_mg_h)} mg/h ({fmt(m.vo2_ml_min)} mL/min) = resting {fmt(m.resting_mg_kg_h)} "
             f"mg/kg/h × anaesthesia {fmt(m.anaesthesia_factor)} × demand {fmt(m.demand_factor)}",
             f"Irrigation flow: {flow_text(i.flow_l_min)} ({fmt(i.flow_l_kg_min)} L/kg/min) at extraction "
             f"{fmt(i.extraction)}; range {_range(*i.flow_range_l_min)} (extraction {fmt(i.extraction_range[0])} "
             f"to {fmt(i.extraction_range[1])})"]
    if i.clinical_flow_l_min is not None and i.clinical_flow_l_kg_min is not None:
        lines.append(f"Per-kg practice: {fmt(i.clinical_flow_l_kg_min[0])}-{fmt(i.clinical_flow_l_kg_min[1])} "
                     f"L/kg/min = {_range(*i.clinical_flow_l_min)} (common practice, no primary source)")
    else:
        lines.append("Per-kg practice: none known for this group; plan by the need")
    lines.append(f"O2 fall across the gills: {fmt(i.o2_fall_mg_l)} mg/L; outflow {fmt(i.outflow_mg_l)} mg/L "
                 f"({fmt(i.outflow_saturation_percent)} % saturation)")
    lines.append(f"Water for {fmt(i.duration_min)} min: single pass {fmt(i.single_pass_volume_l)} L at the top of "
                 "the range; recirculating without aeration "
                 + (f"{fmt(i.reservoir_volume_l)} L keeps the supply above {fmt(i.reservoir_floor_mg_l)} mg/L"
                    if i.reservoir_volume_l is not None else "— the supply is already below the floor"))
    if i.system_volume_l is not None:
        lasts = "—" if i.reservoir_minutes is None else f"{fmt(i.reservoir_minutes)} min"
        lines.append(f"Recirculating {fmt(i.system_volume_l)} L: lasts {lasts} without aeration; "
                     f"turnover {fmt(i.turnover_min or 0)} min")
    d = plan.diffusion
    if d is None:
        lines.append("Diffusion check: no gill-area data for this group")
    else:
        lines.append(f"Diffusion check (order of magnitude): gill area {fmt(d.gill_area_cm2)} cm², barrier "
                     f"{fmt(d.barrier_um)} µm; mean water-blood gradient ≈ {fmt(d.total_gradient_mmhg)} mmHg "
                     f"({fmt(100 * d.fraction_of_inspired)} % of the inflow PO2); Krogh constant of the water "
                     f"{d.krogh_water_cm2_min_atm:.2g} cm²/min/atm")
    return lines


def _value(a: Assumption) -> str:
    v = a.value
    if isinstance(v, str):
        return v
    return f"{float(v):.3g}" if 0 < abs(float(v)) < 1e-3 else fmt(float(v), 4)


def irrigation_to_text(plan: IrrigationPlan) -> str:
    """A readable plan: numbers, cautions, assumptions, then the standing notice."""
    out = ["Gill irrigation plan", *summary_lines(plan), "", "Cautions:"]
    out += [f"  [{c.severity.upper()}] {c.code}: {c.message}" for c in plan.cautions] or ["  none"]
    out += ["", "Assumptions:"]
    out += [f"  {a.name}: {_value(a)}{' ' + a.unit if a.unit else ''} — {a.source}" for a in plan.assumptions]
    out += ["", plan.standing_notice]
    return "\n".join(out)


def irrigation_summary(plan: IrrigationPlan) -> str:
    """A few lines for the clinical record (``ventset show CASE --summary``): the key numbers, the cautions by
    code and the standing notice."""
    lines = [f"Gill irrigation plan (ventset {__version__}): " + summary_lines(plan)[0].removeprefix("Patient: "),
             *summary_lines(plan)[1:4]]
    lines.append("Cautions: " + ("; ".join(f"{c.severity.upper()} {c.code}" for c in plan.cautions) or "none") + ".")
    lines.append("Notice: " + plan.standing_notice)
    return "\n".join(lines)


def printout_tiles(plan: IrrigationPlan) -> list[tuple[str, str, str, str]]:
    """(label, value, unit, detail) of the large-type numbers at the top of the printed page, flow first."""
    w, m, i = plan.water, plan.metabolism, plan.irrigation
    value, unit = flow_text(i.flow_l_min).split()
    k = 1000.0 if unit == "mL/min" else 1.0
    lo, hi = i.flow_range_l_min
    return [("Flow to set", value, unit, f"{fmt(i.flow_l_kg_min)} L/kg/min at extraction {fmt(i.extraction)}; "
                                        "mouth to gills"),
            ("Flow range", f"{fmt(lo * k)}-{fmt(hi * k)}", unit,
             f"extraction {fmt(i.extraction_range[0])} to {fmt(i.extraction_range[1])}"),
            ("O2 in the supply", fmt(w.o2_mg_l), "mg/L", f"{fmt(w.saturation_percent)} % saturation, PO2 "
                                                         f"{fmt(w.po2_mmhg)} mmHg" + (" (measured)" if w.measured
                                                                                       else "")),
            ("O2 need", fmt(m.vo2_mg_h), "mg/h", f"{fmt(m.vo2_ml_min)} mL/min; outflow {fmt(i.outflow_mg_l)} mg/L "
                                                 f"(fall {fmt(i.o2_fall_mg_l)})")]


def printout_lines(plan: IrrigationPlan) -> list[tuple[str, str]]:
    """(style, text) lines for a printed page: "title", "line", "heading", "caution:<severity>", "small",
    "notice". No markup; the printer draws them in order."""
    out = [("title", f"Gill irrigation — {plan.group.label}, {mass_text(plan.mass_kg)}")]
    out += [("line", s) for s in summary_lines(plan)[1:]]
    out.append(("heading", "Cautions"))
    out += [(f"caution:{c.severity}", f"{c.code}: {c.message}") for c in plan.cautions]
    out.append(("heading", "Assumptions and sources"))
    out += [("small", f"{a.name}: {_value(a)}{' ' + a.unit if a.unit else ''} — {a.source}")
            for a in plan.assumptions]
    out.append(("notice", plan.standing_notice))
    return out
