"""Body CO2 stores: PaCO2 approaches a new steady level over minutes after a change in CO2 output or ventilation.

One-compartment approach with a half-time (min): P(t) = P_end + (P_start − P_end)·0.5^(t / half-time), so a fraction
1 − 0.5^(t / half-time) of the change is complete at t. Half-times (resources/situations.toml [co2_stores]): about
4 min for a fall in dogs (Farhi & Rahn 1955), about 16 min for a rise in people (Nunn, from memory). The steady
level itself comes from the alveolar ventilation equation (ventset.physiology.gas).
"""

from __future__ import annotations

import math


def approach_mmhg(start_mmhg: float, end_mmhg: float, minutes: float, half_time_min: float) -> float:
    """PaCO2 (mmHg) ``minutes`` after a step that moves its steady level from ``start_mmhg`` to ``end_mmhg``."""
    return end_mmhg + (start_mmhg - end_mmhg) * 0.5 ** (minutes / half_time_min)


def time_to_fraction_min(fraction: float, half_time_min: float) -> float:
    """Minutes until ``fraction`` (0–1) of the change is complete: half-time · log2(1 / (1 − fraction))."""
    if not 0.0 <= fraction < 1.0:
        raise ValueError("fraction must be from 0 to below 1")
    return half_time_min * math.log2(1.0 / (1.0 - fraction))


def course_mmhg(start_mmhg: float, end_mmhg: float, half_time_min: float,
                minutes: tuple[float, ...] = (0, 5, 10, 15, 20, 30, 45, 60)) -> list[tuple[float, float]]:
    """(minute, PaCO2 mmHg) points of the approach from ``start_mmhg`` to ``end_mmhg``."""
    return [(t, approach_mmhg(start_mmhg, end_mmhg, t, half_time_min)) for t in minutes]
