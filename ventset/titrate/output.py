"""Text and JSON of the titration's results (the adjustment and a dead-space measurement), rendered by the
presentation layer from the results' own values in the chosen units."""

from __future__ import annotations

from ventset import __version__
from ventset.errors import visible
from ventset.machines.result import MachineSettings
from ventset.present.quantities import Units, fmt, gas
from ventset.report import caution_lines, cautions_to_json, patient_to_dict
from ventset.report import json_number as n
from ventset.titrate.adjust import PREFERENCE_LABELS, Adjustment
from ventset.titrate.deadspace import DeadSpaceMeasurement
from ventset.titrate.record import Proposal


def dead_space_to_dict(d: DeadSpaceMeasurement) -> dict:
    """JSON-ready dict of a dead-space measurement (units in the key names)."""
    return {
        "ventset_version": __version__,
        "standing_notice": d.standing_notice,
        "inputs": {"paco2_mmhg": n(d.paco2_mmhg), "mixed_expired_mmhg": n(d.mixed_expired_mmhg),
                   "alveolar_pco2_mmhg": n(d.alveolar_pco2_mmhg), "etco2_mmhg": n(d.etco2_mmhg),
                   "tidal_volume_ml": n(d.tidal_volume_ml), "apparatus_ml": n(d.apparatus_ml)},
        "enghoff_vd_vt": n(d.enghoff_vd_vt),
        "bohr_vd_vt": n(d.bohr_vd_vt),
        "alveolar_fraction_of_alveolar_vt": n(d.alveolar_fraction_of_alveolar_vt),
        "volumes": None if d.tidal_volume_ml is None else {
            "tidal_volume_ml": n(d.tidal_volume_ml), "enghoff_ml": n(d.enghoff_ml), "bohr_ml": n(d.bohr_ml),
            "physiological_ml": n(d.physiological_ml), "physiological_method": d.physiological_method,
            "apparatus_ml": n(d.apparatus_ml), "anatomical_ml": n(d.anatomical_ml),
            "anatomical_source": d.anatomical_source or None, "airway_ml": n(d.airway_ml),
            "alveolar_ml": n(d.alveolar_ml), "alveolar_fraction_of_vt": n(d.alveolar_fraction_of_vt),
            "alveolar_ml_from_gradient": n(d.alveolar_ml_from_gradient)},
        "sources": {"enghoff": "Enghoff 1938", "bohr": "Bohr 1891",
                    "alveolar_fraction_of_alveolar_vt": "Mosing et al. 2018"},
        "cautions": cautions_to_json(d.cautions),
    }


def dead_space_to_text(d: DeadSpaceMeasurement) -> str:
    """Plain-text summary of a dead-space measurement."""
    lines = [f"ventset {__version__} — dead space from measured CO2", "",
             f"  Enghoff VD/VT      {fmt(d.enghoff_vd_vt, 2)}   (PaCO2 {fmt(d.paco2_mmhg)}, mixed-expired "
             f"{fmt(d.mixed_expired_mmhg)} mmHg; Enghoff 1938)"]
    if d.bohr_vd_vt is not None:
        lines.append(f"  Bohr VD/VT         {fmt(d.bohr_vd_vt, 2)}   (mean alveolar {fmt(d.alveolar_pco2_mmhg)} mmHg; "
                     "Bohr 1891)")
    if d.alveolar_fraction_of_alveolar_vt is not None:
        lines.append(f"  Alveolar VD/VTalv  {fmt(d.alveolar_fraction_of_alveolar_vt, 2)}   ((PaCO2 − EtCO2)/PaCO2; "
                     "Mosing et al. 2018)")
    if d.tidal_volume_ml is not None:
        lines += ["", f"  VOLUMES at VT {fmt(d.tidal_volume_ml)} mL",
                  f"  Physiological      {fmt(d.physiological_ml)} mL ({d.physiological_method})"
                  + (f"; Enghoff {fmt(d.enghoff_ml)} mL" if d.bohr_ml is not None else "")]
        if d.apparatus_ml is not None:
            lines.append(f"  Apparatus          {fmt(d.apparatus_ml)} mL (entered)")
        if d.anatomical_ml is not None:
            lines.append(f"  Anatomical         {fmt(d.anatomical_ml)} mL ({d.anatomical_source})")
        if d.alveolar_ml is not None:
            lines.append(f"  Alveolar           {fmt(d.alveolar_ml)} mL = {fmt(d.alveolar_fraction_of_vt, 2)} of VT "
                         "(enter as --alveolar-dead-space in 'ventset plan')")
        if d.alveolar_ml_from_gradient is not None:
            lines.append(f"  Alveolar, gradient {fmt(d.alveolar_ml_from_gradient)} mL ((PaCO2 − EtCO2)/PaCO2 × "
                         "(VT − airway); Mosing et al. 2018)")
        if d.apparatus_ml is None or d.anatomical_ml is None:
            lines.append("  (give --apparatus-volume and --species/--mass to split off the alveolar part)")
    lines += ["", "CAUTIONS"]
    lines += caution_lines(d.cautions)
    lines += ["", "NOTICE: " + d.standing_notice]
    return "\n".join(lines)


def adjustment_to_dict(a: Adjustment) -> dict:
    """The JSON shape of ``ventset adjust --json`` (units in the key names; docs/titration.md)."""
    r, m, ds = a.plan.resolved, a.measurement, a.dead_space

    def prop(p: Proposal) -> dict:
        return {"tidal_volume_ml": n(p.tidal_volume_ml), "set_tidal_volume_ml": n(p.set_tidal_volume_ml),
                "tidal_volume_ml_kg": n(p.tidal_volume_ml / r.lean_mass_kg), "rate_per_min": n(p.rate_per_min),
                "ti_s": n(p.ti_s), "te_s": n(p.te_s), "alveolar_ml_min": n(p.alveolar_ml_min),
                "minute_ml_min": n(p.minute_ml_min), "expected_paco2_mmhg": n(p.expected_paco2_mmhg),
                "expected_etco2_mmhg": n(p.expected_etco2_mmhg), "plateau_cmh2o": n(p.plateau_cmh2o),
                "peak_cmh2o": n(p.peak_cmh2o), "reached": p.reached, "binding": list(p.binding),
                "changed": p.changed, "fraction_of_change": n(p.fraction_of_change),
                "ventilation_change": n(p.ventilation_change)}

    return {
        "ventset_version": __version__,
        "standing_notice": a.standing_notice,
        "patient": patient_to_dict(r, a.request.patient.name),
        "mode": r.mode,
        "prefer": a.prefer,
        "in_use": {"tidal_volume_ml": n(m.tidal_volume_ml), "rate_per_min": n(m.rate_per_min),
                   "minute_ml_min": n(a.in_use_minute_ml_min), "alveolar_ml_min": n(a.in_use_alveolar_ml_min),
                   "plateau_cmh2o": n(a.in_use_plateau_cmh2o),
                   **({"dials": m.dials.to_dict()} if m.dials is not None else {})},
        "dead_space": {"anatomical_ml": n(ds.anatomical_ml), "apparatus_ml": n(ds.apparatus_ml),
                       "tube_ml": n(ds.tube_ml), "alveolar_ml": n(ds.alveolar_ml), "total_ml": n(ds.total_ml),
                       "fixed_ml": n(ds.fixed_ml), "alveolar_fraction": n(ds.alveolar_fraction),
                       "fraction_of_vt": n(ds.total_ml / m.tidal_volume_ml)},
        "measured": {"paco2_mmhg": n(m.paco2_mmhg), "etco2_mmhg": n(m.etco2_mmhg),
                     "pao2_mmhg": n(m.pao2_mmhg), "spo2_percent": n(m.spo2_percent),
                     "paco2_used_mmhg": n(a.paco2_used_mmhg), "paco2_source": a.paco2_source,
                     "gradient_mmhg": n(a.gradient_mmhg), "gradient_measured": a.gradient_measured,
                     "alveolar_fraction_from_gradient": n(a.alveolar_fraction_from_gradient),
                     "alveolar_ml_min": n(a.in_use_alveolar_ml_min), "vco2_ml_min": n(a.vco2_ml_min),
                     "vco2_estimate_ml_min": n(a.vco2_estimate_ml_min), "vco2_ratio": n(a.vco2_ratio)},
        "target": {"paco2_mmhg": n(a.target_paco2_mmhg), "alveolar_ml_min": n(a.needed_alveolar_ml_min)},
        "proposal": {**prop(a.proposal), **_machine(a.machine_proposal)},
        "partial_step": {**prop(a.partial_step), **_machine(a.machine_partial or a.machine_proposal)},
        "step": {"large": a.large_step, "max_change_fraction": n(a.max_step.value), "source": a.max_step.source},
        "oxygenation": a.oxygenation.to_dict() if a.oxygenation else None,
        "rationale": [p.text() for p in a.rationale],
        "cautions": cautions_to_json(a.cautions),
    }


def _machine(ms: MachineSettings | None) -> dict:
    """{"machine": the proposal on the machine, as the plan JSON's "machine" block} (nothing without one)."""
    if ms is None:
        return {}
    from ventset.machines.output import machine_to_dict

    return {"machine": {**machine_to_dict(ms, n), "cautions": cautions_to_json(ms.cautions)}}


def _dial_lines(label: str, ms: MachineSettings, units: Units) -> list[str]:
    """The proposal as the machine's controls, then what the dialled breath gives (through the one evaluation)."""
    ev = ms.evaluation
    controls = " · ".join(f"{s.control.label} {s.control.shown(s.value)}" + ("" if s.in_range else " (END OF RANGE)")
                          for s in ms.settings)
    return [f"{label:<14}{controls}",
            f"{'':<14}as dialled: {fmt(ev.vt_ml)} mL at the patient, {fmt(ev.rate_per_min)}/min → PaCO2 "
            f"{gas(ev.paco2_mmhg, units)}, EtCO2 {gas(ev.etco2_mmhg, units)}; peak {fmt(ev.peak_cmh2o)} cmH2O"]


def _machine_text(a: Adjustment, units: Units) -> list[str]:
    """The section "ON THE MACHINE" of the text (empty without a machine)."""
    ms = a.machine_proposal
    if ms is None:
        return []
    title = ms.machine.label + (f" ({ms.machine.class_label})" if ms.machine.is_clinic else "")
    lines = ["", f"ON THE MACHINE: {title}"]
    d = a.measurement.dials
    if d is not None:
        shown = {s.control.kind: s.control for s in ms.settings}
        lines.append(f"{'IN USE':<14}" + " · ".join(f"{shown[k].label} {shown[k].shown(v)}" for k, v in d.values
                                                     if k in shown))
    lines += _dial_lines("PROPOSAL", ms, units)
    if a.large_step and a.machine_partial is not None:
        lines += _dial_lines("PART-WAY", a.machine_partial, units)
    return lines


def adjustment_to_text(a: Adjustment, gas_unit: str = "mmHg") -> str:
    """Readable summary of an adjustment: settings in use, what the measurement says, the proposal."""
    units = Units(gas=gas_unit)
    r, m, ds, p, q = a.plan.resolved, a.measurement, a.dead_space, a.proposal, a.partial_step

    def g(x: float) -> str:
        return gas(x, units)

    name = f"{a.request.patient.name} — " if a.request.patient.name else ""
    lines = [
        f"ventset {__version__} — next settings from a measurement",
        f"{name}{r.species_label}, {fmt(r.mass_kg)} kg; {r.mode} mode; {PREFERENCE_LABELS[a.prefer]}",
        "",
        f"IN USE        {fmt(m.tidal_volume_ml)} mL at {fmt(m.rate_per_min)}/min (minute "
        f"{fmt(a.in_use_minute_ml_min)} mL/min; alveolar {fmt(a.in_use_alveolar_ml_min)} mL/min; plateau "
        f"{fmt(a.in_use_plateau_cmh2o)} cmH2O)",
        f"DEAD SPACE    anatomical {fmt(ds.anatomical_ml)} + apparatus and tube {fmt(ds.apparatus_ml)} + alveolar "
        f"{fmt(ds.alveolar_ml)} = {fmt(ds.total_ml)} mL ({fmt(ds.total_ml / m.tidal_volume_ml * 100, 2)} % of VT)",
        f"MEASURED      PaCO2 {g(a.paco2_used_mmhg)} ({a.paco2_source})"
        + (f"; EtCO2 {g(m.etco2_mmhg)}, gradient {g(m.paco2_mmhg - m.etco2_mmhg)}"
           if m.paco2_mmhg is not None and m.etco2_mmhg is not None else ""),
        f"              CO2 output {fmt(a.vco2_ml_min)} mL/min ({fmt(a.vco2_ratio, 2)} × the plan's estimate "
        f"{fmt(a.vco2_estimate_ml_min)} mL/min)",
        f"TARGET        PaCO2 {g(a.target_paco2_mmhg)}: alveolar ventilation {fmt(a.needed_alveolar_ml_min)} mL/min",
        "",
        f"PROPOSAL      {fmt(p.tidal_volume_ml)} mL (set {fmt(p.set_tidal_volume_ml)} mL) at {fmt(p.rate_per_min)}/min"
        f"  → PaCO2 {g(p.expected_paco2_mmhg)}, EtCO2 {g(p.expected_etco2_mmhg)}"
        + ("" if p.reached else "  ** TARGET NOT REACHED **"),
        f"              plateau {fmt(p.plateau_cmh2o)}, peak {fmt(p.peak_cmh2o)} cmH2O; Ti {fmt(p.ti_s)} s, Te "
        f"{fmt(p.te_s)} s; alveolar {fmt(p.alveolar_ml_min)} mL/min ({'+' if p.ventilation_change >= 0 else ''}"
        f"{fmt(p.ventilation_change * 100, 2)} %)",
    ]
    if a.large_step:
        lines += [
            f"PART-WAY      {fmt(q.tidal_volume_ml)} mL (set {fmt(q.set_tidal_volume_ml)} mL) at "
            f"{fmt(q.rate_per_min)}/min  → PaCO2 {g(q.expected_paco2_mmhg)}; plateau {fmt(q.plateau_cmh2o)} cmH2O",
            f"              {fmt(q.fraction_of_change * 100, 2)} % of the change (alveolar ventilation "
            f"{'+' if q.ventilation_change >= 0 else ''}{fmt(q.ventilation_change * 100, 2)} %; at most "
            f"{fmt(a.max_step.value * 100, 2)} % per step, {a.max_step.source.split(' (')[0]})",
        ]
    if a.oxygenation:
        o = a.oxygenation
        bands = "; ".join(f"P/F {b.label} ({b.source})" for b in o.bands) or \
            "P/F at or above 300 mmHg: outside the lung-injury bands (Wilkins et al. 2007)"
        lines += ["", f"OXYGENATION   PaO2 {g(o.pao2_mmhg)} at FiO2 {fmt(o.fio2)}: PAO2 {g(o.alveolar_po2_mmhg)}, "
                      f"A–a gradient {g(o.aa_gradient_mmhg)}, PaO2/FiO2 {fmt(o.pf_ratio_mmhg)} mmHg",
                  f"              {bands}"]
    lines += _machine_text(a, units)
    lines += ["", "WHY"] + [f"  {s.text(units)}" for s in a.rationale]
    lines += ["", "CAUTIONS"]
    lines += caution_lines(a.cautions, units)
    lines += ["", "NOTICE: " + a.standing_notice]
    return "\n".join(lines)


RECORD_COLUMNS = ("Time", "In use", "EtCO2", "PaCO2", "PaO2 / SpO2", "FiO2", "Proposed", "Set", "Note")
_SET_AS = {"proposal": "proposal", "partial_step": "part-way", "own": "own"}


def _vt_rate(tidal_volume_ml: float, rate_per_min: float) -> str:
    return f"{fmt(tidal_volume_ml)} mL × {fmt(rate_per_min)}/min"


def record_rows(entries: tuple, units: Units | None = None) -> list[tuple[str, ...]]:
    """The anaesthetic record as text rows under RECORD_COLUMNS (the printed plan's table); user notes as typed,
    on one line."""
    u = units or Units()
    rows: list[tuple[str, ...]] = []
    for e in entries:
        m = e.measurement
        when = f"{m.clock} ({fmt(m.time_min)} min)" if m.clock else f"{fmt(m.time_min)} min"
        oxygen = " / ".join(t for t in (gas(m.pao2_mmhg, u) if m.pao2_mmhg is not None else "",
                                        f"{fmt(m.spo2_percent)} %" if m.spo2_percent is not None else "") if t)
        proposed = _vt_rate(e.proposal.tidal_volume_ml, e.proposal.rate_per_min) if e.proposal else (
            e.error or "—")
        if e.partial_step:
            proposed += f"; part-way {_vt_rate(e.partial_step.tidal_volume_ml, e.partial_step.rate_per_min)}"
        done = (f"{_vt_rate(e.settings_set.tidal_volume_ml, e.settings_set.rate_per_min)} "
                f"({_SET_AS.get(e.accepted, e.accepted)})" if e.settings_set else "—")
        rows.append((when, _vt_rate(m.tidal_volume_ml, m.rate_per_min),
                     gas(m.etco2_mmhg, u) if m.etco2_mmhg is not None else "—",
                     gas(m.paco2_mmhg, u) if m.paco2_mmhg is not None else "—", oxygen or "—",
                     fmt(m.fio2) if m.fio2 is not None else "—", proposed, done, visible(m.note, 300)))
    return rows
