"""The gas arithmetic of a machine, each formula once: compression of the gas inside it (Boyle), fresh gas
added to the breath, volume from flow and time, driving gas, and how long a supply lasts.

Units: volumes mL, flows L/min (machine settings) or mL/min (fresh gas, as the plan holds it), times s or min,
pressures cmH2O (airway) or mmHg (barometric).
"""

from __future__ import annotations

import math

from ventset.units import PA_PER_CMH2O, PA_PER_MMHG


def barometric_cmh2o(barometric_mmhg: float) -> float:
    """Barometric pressure in cmH2O (1 mmHg = 133.322387415 Pa, 1 cmH2O = 98.0665 Pa)."""
    return barometric_mmhg * PA_PER_MMHG / PA_PER_CMH2O


def compressible_ml_cmh2o(gas_ml: float, barometric_mmhg: float) -> float:
    """Volume a gas space of ``gas_ml`` loses per cmH2O of pressure rise: V/PB.

    Isothermal Boyle's law P·V = const, linearised for a rise ΔP small beside PB: ΔV = V·ΔP/PB (at sea level
    about V/1033 per cmH2O).
    """
    return gas_ml / barometric_cmh2o(barometric_mmhg)


def coupled_ml(fresh_gas_ml_min: float, ti_s: float) -> float:
    """Fresh gas that flows into the breath during inspiration when it is coupled: FGF × Ti (mL)."""
    return fresh_gas_ml_min / 60.0 * ti_s


def flow_volume_ml(flow_l_min: float, ti_s: float) -> float:
    """Volume a constant flow delivers in a time: V = flow × Ti (mL from L/min and s)."""
    return flow_l_min * 1000.0 / 60.0 * ti_s


def flow_time_s(volume_ml: float, flow_l_min: float) -> float:
    """Time a constant flow takes to deliver a volume: Ti = V / flow (s)."""
    return volume_ml / (flow_l_min * 1000.0 / 60.0)


def driving_gas_l_min(ve_multiple: float, machine_minute_ml_min: float) -> float:
    """Driving gas a gas-driven machine uses (L/min): a multiple of the minute volume it delivers."""
    return ve_multiple * machine_minute_ml_min / 1000.0


def supply_minutes(content_l: float, use_l_min: float) -> float:
    """Minutes a supply of ``content_l`` litres of free gas lasts at ``use_l_min``; inf when nothing is used."""
    return content_l / use_l_min if use_l_min > 0 else math.inf
