"""The patient's situations as every view shows them: rows for the text report, and the JSON block.

A plan's situations are ``plan.basis.situations`` (ventset.situations.Applied), None when none were chosen.
"""

from __future__ import annotations

import math

from ventset.model import Plan
from ventset.physiology.co2stores import course_mmhg
from ventset.present.quantities import MMHG, Units, fmt, show
from ventset.present.rows import Row
from ventset.situation_cautions import co2_course_numbers
from ventset.situations import Applied, effect_words


def num(x: float | None) -> float | None:
    """A float for JSON: 4 decimals, None when missing or not finite (as ventset.report.json_number)."""
    return None if x is None or not math.isfinite(x) else round(x, 4)


def applied(plan: Plan) -> Applied | None:
    """The situations the plan was made for, or None."""
    return plan.basis.situations if plan.basis is not None else None


def situation_rows(plan: Plan, units: Units = MMHG) -> list[Row]:
    """One row per situation (its effects in words), then the combined limits and CO2 factor."""
    a = applied(plan)
    if a is None:
        return []
    rows = [Row(f"situation:{s.key}", s.label, "; ".join(effect_words(s)) or "cautions only", "")
            for s in a.situations]
    combined = [f"CO2 output ×{fmt(a.co2_factor)}"] if abs(a.co2_factor - 1) > 1e-9 else []
    if a.paco2_band_mmhg:
        combined.append(f"target PaCO2 {show(a.paco2_band_mmhg[0], 'gas', units)}–"
                        f"{show(a.paco2_band_mmhg[1], 'gas', units)}")
    if a.paco2_ceiling_mmhg is not None:
        combined.append(f"accept PaCO2 up to {show(a.paco2_ceiling_mmhg, 'gas', units)}")
    for name, value in (("plateau", a.plateau_limit_cmh2o), ("driving pressure", a.driving_limit_cmh2o)):
        if value is not None:
            combined.append(f"{name} at most {show(value, 'cmh2o')}")
    if len(a.situations) > 1 and combined:
        rows.append(Row("situations_combined", "Combined", "; ".join(combined), ""))
    return rows


def situations_to_dict(plan: Plan) -> dict:
    """The JSON block ``situations`` (docs/plan-json.md): what was applied and the expected CO2 course."""
    a = applied(plan)
    if a is None:
        return {"applied": [], "combined": None, "co2_course": None}
    combined = {"co2_factor": num(a.co2_factor), "vco2_before_ml_min": num(a.vco2_before_ml_min),
                "paco2_band_mmhg": None if a.paco2_band_mmhg is None else [num(x) for x in a.paco2_band_mmhg],
                **{k: num(getattr(a, k)) for k in ("paco2_ceiling_mmhg", "peep_min_cmh2o", "peep_max_cmh2o",
                                                   "pressure_limit_cmh2o", "plateau_limit_cmh2o",
                                                   "driving_limit_cmh2o")}}
    course = None
    if abs(a.co2_factor - 1) > 1e-9:
        c = co2_course_numbers(plan, a)
        course = {"unchanged_ventilation_from_mmhg": num(c["from_mmhg"]),
                  "unchanged_ventilation_to_mmhg": num(c["to_mmhg"]), "half_time_min": num(c["half_min"]),
                  "minutes_to_95_percent": num(c["t95_min"]),
                  "points": [{"minute": t, "paco2_mmhg": num(p)}
                             for t, p in course_mmhg(c["from_mmhg"], c["to_mmhg"], c["half_min"])],
                  **{k: num(v) for k, v in a.co2_stores.items() if k.startswith(("recheck", "judge"))}}
    return {"applied": [{"key": s.key, "label": s.label, "category": s.category, "effects": effect_words(s)}
                        for s in a.situations], "combined": combined, "co2_course": course}
