"""A chart's rows dialled on a ventilator class: each mass planned with the machine (ventset.machines through
``plan()``), so every row says what to turn on that machine and what the dialled breath gives."""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Any

from ventset.errors import InputError
from ventset.library import Library
from ventset.model import Request
from ventset.planner import plan
from ventset.present.dials import machine_rows

# Each row is one full plan on the machine (a few ms each; the pressure-cycled class about 0.2 s): a chart on a
# machine is kept to this many rows (a rule of this project, so a chart stays quick to make).
MAX_DIALLED_ROWS = 60


@dataclass(frozen=True)
class DialRow:
    """One chart row on the machine: each control as dialled ((name, value text)), PaCO2 as dialled (mmHg), and
    the machine's cautions for that mass (codes)."""

    controls: tuple[tuple[str, str], ...]
    paco2_mmhg: float
    codes: tuple[str, ...]
    label: str = ""  # the machine's generic name

    def text(self) -> str:
        return "; ".join(f"{name} {value}" for name, value in self.controls)


def dial_rows(request: Request, masses_kg: Any, library: Library) -> tuple[DialRow, ...]:
    """The rows of a chart at ``masses_kg`` dialled on ``request.circuit.machine`` (empty without a machine)."""
    if not request.circuit.machine:
        return ()
    if len(masses_kg) > MAX_DIALLED_ROWS:
        raise InputError("machine", request.circuit.machine, f"a chart on a machine takes at most "
                                                             f"{MAX_DIALLED_ROWS} rows; use fewer rows or a wider step")
    out = []
    for m in masses_kg:
        p = plan(replace(request, patient=replace(request.patient, mass_kg=float(m))), library)
        if p.machine is None:
            out.append(DialRow((), math.nan, ()))
            continue
        controls = tuple((r.name, f"{r.value} {r.unit}".strip()) for r in machine_rows(p))
        codes = tuple(c.code for c in p.cautions if "MACHINE" in c.code)
        out.append(DialRow(controls, p.machine.evaluation.paco2_mmhg, codes, p.machine.machine.label))
    return tuple(out)
