"""Plot data for an irrigation plan (numpy, no Qt): O2 delivered against the need across flow, and the water's
O2 content against temperature. Every array and axis range is computed here; the window only draws them."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ventset.aquatic.irrigation import IrrigationPlan
from ventset.aquatic.water import saturated_o2_mg_l


@dataclass(frozen=True)
class DeliveryCurve:
    """O2 delivered (mg/h) = flow × CwO2,in × E against flow, beside the need.

    Zones along the flow axis: below ``flow_usual`` the gills would have to extract more than the usual
    extraction (outside its range); from ``flow_usual`` to ``flow_conservative`` the need is met only at better
    than conservative extraction; above ``flow_conservative`` it is met even at conservative extraction.
    Flows are in ``flow_unit`` ("L/min" or "mL/min" for small patients).
    """

    flow_unit: str
    flow: np.ndarray
    delivered_usual_mg_h: np.ndarray
    delivered_conservative_mg_h: np.ndarray
    required_extraction: np.ndarray
    need_mg_h: float
    flow_usual: float
    flow_conservative: float
    flow_chosen: float
    clinical: tuple[float, float] | None
    high_flow: float
    x_range: tuple[float, float]
    y_range: tuple[float, float]


@dataclass(frozen=True)
class ContentCurve:
    """O2 content of the water (mg/L) against temperature (°C) at the plan's salinity and barometric pressure."""

    temp_c: np.ndarray
    saturated_mg_l: np.ndarray
    supply_mg_l: np.ndarray
    fresh_sea_level_mg_l: np.ndarray
    point: tuple[float, float]
    salinity: float
    x_range: tuple[float, float]
    y_range: tuple[float, float]


def _nice_top(x: float) -> float:
    """The next 1, 2, 2.5 or 5 × 10^k at or above x (axis tops that read cleanly)."""
    if x <= 0 or not math.isfinite(x):
        return 1.0
    k = 10 ** math.floor(math.log10(x))
    return float(next(m * k for m in (1, 2, 2.5, 5, 10) if m * k >= x * (1 - 1e-12)))


def delivery_curve(plan: IrrigationPlan, points: int = 161) -> DeliveryCurve:
    """Delivered O2 at the usual and conservative extraction across flow, from 0 to past the planned range."""
    i, w, m = plan.irrigation, plan.water, plan.metabolism
    scale = 1000.0 if i.flow_range_l_min[1] < 0.1 else 1.0
    ex = plan.group.extraction
    clin = i.clinical_flow_l_min
    span_l = max(1.6 * i.flow_range_l_min[1], 1.1 * (clin[1] if clin else 0.0))
    x_top = _nice_top(span_l * scale)
    flow = np.linspace(0.0, x_top, points)
    per = flow / scale * w.o2_mg_l * 60.0  # mg/h carried per unit extraction
    required = np.divide(m.vo2_mg_h, per, out=np.full_like(per, np.inf), where=per > 0)
    delivered_usual = per * ex.usual
    y_top = _nice_top(max(2.0 * m.vo2_mg_h, float(delivered_usual[-1]) * 0.6))
    return DeliveryCurve("mL/min" if scale > 1 else "L/min", flow, delivered_usual, per * ex.conservative,
                         required, m.vo2_mg_h, i.flow_range_l_min[0] * scale, i.flow_range_l_min[1] * scale,
                         i.flow_l_min * scale, None if clin is None else (clin[0] * scale, clin[1] * scale),
                         i.high_flow_l_min * scale, (0.0, x_top), (0.0, y_top))


def content_curve(plan: IrrigationPlan, points: int = 81) -> ContentCurve:
    """Air-saturated O2 content 0-40 °C at the plan's salinity and pressure, the supply at its saturation, and
    fresh water at sea level for comparison; the plan's water marked."""
    w = plan.water
    temps = np.linspace(0.0, 40.0, points)
    sat = np.array([saturated_o2_mg_l(float(t), w.salinity, w.barometric_mmhg) for t in temps])
    fresh = np.array([saturated_o2_mg_l(float(t), 0.0) for t in temps])
    supply = sat * w.saturation_percent / 100.0
    top = _nice_top(max(float(fresh.max()), float(supply.max()), w.o2_mg_l) * 1.05)
    return ContentCurve(temps, sat, supply, fresh, (w.temp_c, w.o2_mg_l), w.salinity, (0.0, 40.0), (0.0, top))
