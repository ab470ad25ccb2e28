"""Oxygen use on a machine (fresh gas + driving gas, when the driving gas is oxygen) and how long the supply lasts.

The fresh gas is the plan's maintenance flow, counted as oxygen (the supply is not overstated when part of it is
air); gas sampled and not returned is already inside it (the plan's fresh gas is at least VO2 + sampling). A
gas-driven machine adds its driving gas, a multiple of the minute volume it delivers; a demand valve gives the
patient's gas straight from the supply, with no circuit fresh gas.
"""

from __future__ import annotations

from dataclasses import dataclass

from ventset.machines import physics
from ventset.machines.data import MachineClass, Machines
from ventset.machines.dial import Delivery
from ventset.model import Assumption, Plan
from ventset.stages.trail import note


@dataclass(frozen=True)
class OxygenUse:
    """Flows in L/min, supply in L (free gas), times in min."""

    fresh_gas_l_min: float
    driving_gas_l_min: float
    supply_key: str
    supply_label: str
    content_l: float
    entered: bool  # the content was entered (else a full cylinder of the class's usual size)
    planned_min: float
    assumptions: tuple[Assumption, ...]
    driving_gas: str = "oxygen"  # what the driving gas is: "oxygen" (drawn from the supply) or "air"

    @property
    def driving_oxygen_l_min(self) -> float:
        """Driving gas drawn from the oxygen supply (none when the machine is driven by air)."""
        return self.driving_gas_l_min if self.driving_gas == "oxygen" else 0.0

    @property
    def use_l_min(self) -> float:
        return self.fresh_gas_l_min + self.driving_oxygen_l_min

    @property
    def supply_min(self) -> float:
        return physics.supply_minutes(self.content_l, self.use_l_min)

    @property
    def fresh_only_min(self) -> float:
        """How long the supply would last on fresh gas alone."""
        return physics.supply_minutes(self.content_l, self.fresh_gas_l_min)


def oxygen_use(plan: Plan, m: MachineClass, dv: Delivery, machines: Machines) -> OxygenUse:
    """Oxygen used on ``m`` as dialled (``dv``) and the supply it draws on."""
    notes: list[Assumption] = []
    fresh = 0.0 if m.own_gas_path else plan.oxygen.fresh_gas_ml_min / 1000.0
    minute_ml = dv.machine_ml * dv.evaluation.rate_per_min
    driving = physics.driving_gas_l_min(m.driving_gas_ve_multiple.value, minute_ml)
    if m.driving_gas_ve_multiple.value > 0:
        notes.append(note("machine_driving_gas", "Driving gas (multiple of the machine's minute volume)",
                          m.driving_gas_ve_multiple.value, "× VE", m.driving_gas_ve_multiple.source))
    supply = machines.supplies[m.usual_supply]
    entered = plan.request.circuit.oxygen_supply_l
    content = entered if entered is not None else supply.content_l.value
    if entered is None:
        notes.append(note("machine_supply", f"Oxygen supply ({supply.label}, full)", content, "L",
                          supply.content_l.source))
    planned = plan.request.targets.duration_min
    if planned is None:
        default = machines.thresholds["planned_duration_min"]
        planned = default.value
        notes.append(note("machine_duration", "Planned duration", planned, "min", default.source))
    label = f"a full {supply.label[0].lower()}{supply.label[1:]}" if entered is None else "the oxygen supply as entered"
    return OxygenUse(fresh, driving, supply.key, label, content, entered is not None, planned, tuple(notes),
                     m.driving_gas if m.drive == "gas" else "oxygen")
