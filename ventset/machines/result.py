"""The plan on a machine: the settings as dialled, what they give, the oxygen they use, and the cautions."""

from __future__ import annotations

from dataclasses import dataclass

from ventset.evaluate import Evaluation
from ventset.machines.data import MachineClass
from ventset.machines.dial import Delivery, Rig, Setting
from ventset.machines.supply import OxygenUse
from ventset.model import Assumption, Caution, Plan


@dataclass(frozen=True)
class MachineSettings:
    """``settings`` in the class's control order; ``dialled`` is the plan re-evaluated at the dialled settings
    (ventset.planner.plan_at), None when the dialled timing leaves no time to breathe out."""

    machine: MachineClass
    settings: tuple[Setting, ...]
    delivery: Delivery
    dialled: Plan | None
    aim_paco2_mmhg: float
    rig: Rig
    oxygen: OxygenUse
    cautions: tuple[Caution, ...] = ()
    assumptions: tuple[Assumption, ...] = ()

    @property
    def evaluation(self) -> Evaluation:
        return self.delivery.evaluation

    @property
    def expected_paco2_mmhg(self) -> float:
        return self.evaluation.paco2_mmhg

    @property
    def expected_etco2_mmhg(self) -> float:
        return self.evaluation.etco2_mmhg

    @property
    def delivered_tidal_volume_ml(self) -> float:
        """Tidal volume reaching the patient as dialled (after coupling and compression)."""
        return self.evaluation.vt_ml

    @property
    def all_in_range(self) -> bool:
        return all(s.in_range for s in self.settings)

    def setting(self, kind: str) -> Setting | None:
        return next((s for s in self.settings if s.control.kind == kind), None)
