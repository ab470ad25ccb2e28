"""The record on a machine: settings in use given as the machine's controls, and each proposal turned into
control values, re-evaluated as dialled.

Settings in use: the controls as read on the machine are delivered on the patient (ventset.machines.dial
``deliver``: the volume it pushes plus coupled fresh gas, less what the circuit and machine compress), which gives
the tidal volume at the patient and the rate the measurement is read at. A proposal: the settings the adjustment
chose are dialled on the machine (ventset.machines.stage ``on_machine``) for the same patient with the measured CO2
output, so the PaCO2 shown beside the controls is the one evaluation at the dialled values. No Qt here.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import replace

from ventset.errors import InputError
from ventset.library import Library
from ventset.machines.data import MachineClass
from ventset.machines.dial import deliver, make_rig
from ventset.machines.kinds import BREATHS
from ventset.machines.result import MachineSettings
from ventset.model import Plan, Request
from ventset.titrate.record import Dials


def _finite(x: float) -> float | None:
    return float(x) if math.isfinite(x) else None


def dials_of(ms: MachineSettings) -> Dials:
    """A proposal on the machine, as it is dialled, with what the dialled breath gives."""
    ev = ms.evaluation
    return Dials(ms.machine.key, tuple((s.control.kind, s.value) for s in ms.settings), _finite(ev.vt_ml),
                 _finite(ev.rate_per_min), _finite(ev.paco2_mmhg), ms.all_in_range)


def required_controls(m: MachineClass) -> tuple[str, ...]:
    """The controls a breath of ``m`` cannot be worked out without (PEEP and pressure limit may be left out:
    the plan's are taken)."""
    groups, _ = BREATHS[m.breath]
    return tuple(c.kind for c in m.controls if any(c.kind in g for g in groups))


def read_dials(m: MachineClass, given: Sequence[tuple[str, object]]) -> tuple[tuple[str, float], ...]:
    """The settings in use as typed (control → value in its unit), checked against the machine's controls and
    ranges; InputError naming the control. A setting outside the range is refused: the machine cannot be set so."""
    from ventset.partslib_machines import find_control, number_in_unit

    found: dict[str, float] = {}
    for text, raw in given:
        c = find_control(m, text)
        if c.kind in found:
            raise InputError("machine-control", c.kind, "is given twice", label=c.label)
        value = number_in_unit(c, "in use", raw)
        if not c.inside(value):
            raise InputError("machine-control", c.wanted(value), f"is outside the machine's range ({c.shown(c.min)} "
                                                                 f"to {c.shown(c.max)})", label=f"{c.label} in use")
        found[c.kind] = value
    missing = [k for k in required_controls(m) if k not in found]
    if missing:
        need = m.control(missing[0])
        assert need is not None
        raise InputError("machine-control", "", f"is needed to know the breath in use ({need.kind}=VALUE in "
                                                f"{need.unit})", label=f"{need.label} in use")
    return tuple((c.kind, found[c.kind]) for c in m.controls if c.kind in found)


def settings_from_dials(request: Request, m: MachineClass, given: Sequence[tuple[str, object]],
                        library: Library) -> Dials:
    """The settings in use given as the controls of ``m``: the breath they deliver to this patient."""
    from ventset.planner import plan

    values = read_dials(m, given)
    base = plan(replace(request, strategy=replace(request.strategy, vt_ml_kg=None, rate_per_min=None),
                        circuit=replace(request.circuit, machine=None)), library)
    rig = make_rig(base, m)
    core = {k: c.to_core(v) for k, v in values if (c := m.control(k)) is not None}
    dv = deliver(rig, core)
    ev = dv.evaluation
    if dv.cycling or not ev.vt_ml > 0:
        raise InputError("machine-control", ", ".join(f"{k}={v:g}" for k, v in values),
                         "give no breath this patient can be read at (check the settings in use)",
                         label="Settings in use")
    return Dials(m.key, values, ev.vt_ml, ev.rate_per_min, None, True)


def on_the_machine(proposal: Plan, m: MachineClass, library: Library) -> MachineSettings:
    """A proposal's plan (made by ``planner.plan_at`` with the measured CO2 output) dialled on ``m``."""
    from ventset.machines.stage import on_machine
    from ventset.planner import plan_at

    return on_machine(proposal, m, library, plan_at)


def dials_text(d: Dials) -> str:
    """'Bellows volume 250 mL, Breaths per minute 12 /min, …' for a record's card (the machine's own labels and
    units; a machine no longer known here shows its control kinds)."""
    from ventset.machines.stage import find_machine

    try:
        m: MachineClass | None = find_machine(d.machine)
    except InputError:
        m = None
    parts = []
    for kind, value in d.values:
        c = m.control(kind) if m is not None else None
        parts.append(f"{kind} {value:g}" if c is None else
                     f"{c.label} 1:{c.text(value)}" if c.unit == "1:E" else f"{c.label} {c.text(value)} {c.unit}")
    return ", ".join(parts)
