"""The ventilator classes and oxygen supplies of resources/machines.toml as frozen records.

Control values are held in the control's own unit (``Control.unit``: mL or L, L/min, /min, s, cmH2O, or the E
of 1:E); ``to_core``/``from_core`` convert to the core's units (mL, L/min, /min, s, cmH2O).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from typing import Any

from ventset.library import load_resource
from ventset.machines.filedecl import on_grid
from ventset.machines.kinds import BREATHS
from ventset.resources import resource_dir
from ventset.schema import Sourced
from ventset.units import fmt

# Control unit → factor to the core's unit of that quantity (volumes to mL; everything else is already core).
_TO_CORE = {"mL": 1.0, "L": 1000.0, "L/min": 1.0, "/min": 1.0, "s": 1.0, "cmH2O": 1.0, "1:E": 1.0}


@dataclass(frozen=True)
class Control:
    """One control of a machine class: its range and step, in ``unit``."""

    kind: str
    label: str
    unit: str
    min: float
    max: float
    step: float
    source: str

    def to_core(self, value: float) -> float:
        """A setting of this control in the core's unit (mL for volumes)."""
        return value * _TO_CORE[self.unit]

    def from_core(self, value: float) -> float:
        """A core value (mL for volumes) in this control's unit."""
        return value / _TO_CORE[self.unit]

    def on_step(self, value: float) -> bool:
        return on_grid(value, self.step)

    def inside(self, value: float) -> bool:
        tol = self.step * 1e-6
        return self.min - tol <= value <= self.max + tol

    def snap(self, value: float) -> float:
        """The step nearest ``value`` (no range applied), without float noise."""
        return self._clean(round(value / self.step) * self.step)

    def below(self, value: float) -> float:
        """The step at or below ``value``."""
        return self._clean(math.floor(value / self.step + 1e-9) * self.step)

    def above(self, value: float) -> float:
        """The step at or above ``value``."""
        return self._clean(math.ceil(value / self.step - 1e-9) * self.step)

    def fit(self, value: float) -> float:
        """The nearest setting the control has: the nearest step, held to the range ends."""
        return min(max(self.snap(value), self.min), self.max)

    @property
    def decimals(self) -> int:
        """Decimal places the step needs (0.05 → 2, 1 → 0)."""
        text = f"{self.step:.6f}".rstrip("0").rstrip(".")
        return len(text.split(".")[1]) if "." in text else 0

    def _clean(self, value: float) -> float:
        return round(value, self.decimals + 6) + 0.0

    def text(self, value: float) -> str:
        """A setting as the dial shows it ('0.8', '17', '5.5'), with the step's decimals."""
        return f"{value:.{self.decimals}f}"

    def wanted(self, value: float) -> str:
        """A value the control would need (not a setting): three significant figures with the unit."""
        return self._with_unit(fmt(value))

    def shown(self, value: float) -> str:
        """A setting with its unit: '0.8 s', '17/min', '1:2', '5.5 L'."""
        return self._with_unit(self.text(value))

    def _with_unit(self, number: str) -> str:
        if self.unit == "1:E":
            return f"1:{number}"
        return f"{number}/min" if self.unit == "/min" else f"{number} {self.unit}"


@dataclass(frozen=True)
class MachineClass:
    """A generic ventilator class: how the breath is set, its controls in the order they are set, its gas."""

    key: str
    label: str
    breath: str
    description: str
    drive: str
    driving_gas_ve_multiple: Sourced
    coupled: bool
    coupling_source: str
    internal_gas_ml: Sourced
    peep_without_control: str
    own_gas_path: bool
    valve_flow_l_min: Sourced | None
    cycles_after_disconnection: bool
    usual_supply: str
    controls: tuple[Control, ...]
    source: str
    # A clinic's own machine (ventset.partslib_machines) is a class with the clinic's ranges: ``class_key`` names
    # the class it is made from ("" for a class itself), ``key`` and ``label`` are the clinic's name.
    class_key: str = ""
    class_label: str = ""
    driving_gas: str = "oxygen"  # what drives a gas-driven machine: "oxygen" (from the supply) or "air"
    compressible_ml_cmh2o: Sourced | None = None  # measured for the machine and its hose; None: internal gas / PB
    note: str = ""

    def control(self, kind: str) -> Control | None:
        return next((c for c in self.controls if c.kind == kind), None)

    @property
    def class_of(self) -> str:
        """The key of the class: its own key, or for a clinic machine the class it is made from."""
        return self.class_key or self.key

    @property
    def is_clinic(self) -> bool:
        return bool(self.class_key)

    @property
    def oxygen_driven(self) -> bool:
        """True when driving gas is drawn from the oxygen supply."""
        return self.drive == "gas" and self.driving_gas == "oxygen"

    @property
    def sizing(self) -> str:
        """The control that sets the size of the breath (tidal volume, flow, a pressure, a press time)."""
        return BREATHS[self.breath][1]


@dataclass(frozen=True)
class Supply:
    key: str
    label: str
    content_l: Sourced


@dataclass(frozen=True)
class Machines:
    """Everything in machines.toml."""

    classes: dict[str, MachineClass]
    supplies: dict[str, Supply]
    thresholds: dict[str, Sourced]

    def matches(self, text: str) -> list[MachineClass]:
        """The class whose key or label is ``text`` (any case), else every class with it in its key or label."""
        t = text.strip().lower()
        if not t:
            return []
        exact = [m for m in self.classes.values() if t in (m.key, m.label.lower())]
        return exact or [m for m in self.classes.values() if t in m.key or t in m.label.lower()]

    def find(self, text: str) -> MachineClass | None:
        """A class by key or label (any case), else by a unique part of its key or label; None otherwise."""
        hits = self.matches(text)
        return hits[0] if len(hits) == 1 else None


def _control(c: dict[str, Any]) -> Control:
    return Control(c["control"], c["label"], c["unit"], c["min"], c["max"], c["step"], c["source"])


def _class(key: str, v: dict[str, Any]) -> MachineClass:
    return MachineClass(key, v["label"], v["breath"], v["description"], v["drive"], v["driving_gas_ve_multiple"],
                        v["fresh_gas_coupling"]["value"], v["fresh_gas_coupling"]["source"], v["internal_gas_ml"],
                        v["peep_without_control"], v["own_gas_path"], v["valve_flow_l_min"],
                        v["cycles_after_disconnection"], v["usual_supply"], tuple(_control(c) for c in v["controls"]),
                        v["source"])


def load_machines(folder: Path | None = None) -> Machines:
    """The classes and supplies of machines.toml in resources/ (or ``folder``), checked and cached."""
    return _load(resource_dir(folder))


@lru_cache(maxsize=4)
def _load(folder: Path) -> Machines:
    v = load_resource("machines.toml", folder)
    return Machines({k: _class(k, c) for k, c in v["classes"].items()},
                    {k: Supply(k, s["label"], s["content_l"]) for k, s in v["supplies"].items()},
                    dict(v["thresholds"]))


load_machines.cache_clear = _load.cache_clear  # type: ignore[attr-defined]
