"""The rows every view shows of a plan: the settings, the derived values, the patient line, the
expectation line and the assumptions, each a number and a unit in the reader's units.

The text report, the record summary, the PDF and the window's panels all take their rows from here.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ventset.errors import visible
from ventset.model import STRATEGY_LABELS, Assumption, Plan
from ventset.present.quantities import MMHG, Units, fmt, show, split


@dataclass(frozen=True)
class Row:
    """One shown quantity: ``value`` and ``unit`` as text, ``detail`` a short line under or beside it."""

    key: str
    name: str
    value: str
    unit: str
    detail: str = ""

    @property
    def text(self) -> str:
        """'value unit' (no space before '/min')."""
        if not self.unit:
            return self.value
        return f"{self.value}{self.unit}" if self.unit == "/min" else f"{self.value} {self.unit}"


def _row(key: str, name: str, value: float, kind: str, units: Units, detail: str = "") -> Row:
    number, unit = split(value, kind, units)
    return Row(key, name, number, unit, detail)


def one_line(text: str) -> str:
    """User text (names) on one line: control characters and line breaks shown as escapes, never raw."""
    return visible(text, 600)


def ie_text(ie_expiratory_part: float) -> str:
    """I:E as '1:E' with E to three significant figures."""
    return f"1:{fmt(ie_expiratory_part)}"


def setting_rows(plan: Plan, units: Units = MMHG) -> list[Row]:
    """The eight settings in the order they are set on a ventilator (what the large tiles show)."""
    r, v, p, o = plan.resolved, plan.ventilation, plan.pressures, plan.oxygen
    per_kg = show(v.tidal_volume_ml / r.lean_mass_kg, "ml_kg")
    if r.mode == "pressure":
        first = _row("set_vt", "Tidal volume (expected)", v.tidal_volume_ml, "volume", units,
                     f"{per_kg} from the inspiratory pressure")
        fourth = _row("flow", "Inspiratory pressure", p.inspiratory_pressure_cmh2o, "cmh2o", units,
                      f"above PEEP; {show(p.peak_cmh2o, 'cmh2o')} at the airway")
    else:
        circuit = f"; + {show(p.compressed_ml, 'volume')} circuit" if p.compressed_ml >= 0.05 else ""
        first = _row("set_vt", "Set tidal volume", v.set_tidal_volume_ml, "volume", units,
                     f"{show(v.tidal_volume_ml, 'volume')} = {per_kg} at the patient{circuit}")
        over = "Ti" if v.pause_s <= 0 else f"the {show(v.ti_s - v.pause_s, 'seconds')} before the pause"
        fourth = _row("flow", "Inspiratory flow", v.inspiratory_flow_l_min, "flow_l", units,
                      f"constant over {over} ({show(v.inspiratory_flow_l_min * 1000 / 60, 'plain')} mL/s)")
    over = " — ABOVE THE LIMIT" if p.peak_cmh2o > p.pressure_limit_cmh2o + 1e-9 else ""
    what = "inspiratory" if r.mode == "pressure" else "peak"
    induction = (f"; induction {show(o.fresh_gas_induction_ml_min, 'flow_ml')}"
                 if o.fresh_gas_induction_ml_min > o.fresh_gas_ml_min + 1e-9 else "")
    bag = f"; bag {show(o.reservoir_bag_l, 'litre')}" if o.reservoir_bag_l else ""
    fresh_value, fresh_unit = split(o.fresh_gas_ml_min, "flow_ml", units)
    return [
        first,
        _row("rate", "Rate", v.rate_per_min, "rate", units, f"minute volume {show(v.minute_ml_min, 'flow_ml')}"),
        _row("ti", "Inspiratory time", v.ti_s, "seconds", units,
             f"Te {show(v.te_s, 'seconds')} · I:E {ie_text(r.ie_expiratory_part)}"
             + (f" · pause {show(v.pause_s, 'seconds')} inside Ti" if v.pause_s > 0 else "")),
        fourth,
        _row("peep", "PEEP", p.peep_cmh2o, "cmh2o", units,
             f"plateau {show(p.plateau_cmh2o, 'cmh2o')}, driving {show(p.driving_cmh2o, 'cmh2o')}"),
        _row("limit", "Pressure limit", p.pressure_limit_cmh2o, "cmh2o", units,
             f"{what} {show(p.peak_cmh2o, 'cmh2o')}{over}"),
        Row("fio2", "FiO2", fmt(o.fio2), "", f"{fmt(o.fio2 * 100)} % oxygen; alveolar PO2 "
            f"{gas_or_none(o.pao2_alveolar_mmhg, units)}"),
        Row("fresh_gas", "Fresh gas flow", fresh_value, fresh_unit,
            f"{o.circuit_label.split(' (')[0]}{induction}{bag}"),
    ]


def gas_or_none(mmhg: float, units: Units = MMHG) -> str:
    """A gas pressure, or '— (no alveolar ventilation)' when the model has none."""
    return show(mmhg, "gas", units) if math.isfinite(mmhg) else "— (no alveolar ventilation)"


def _dead_space_rows(plan: Plan, units: Units) -> list[Row]:
    d, v = plan.dead_space, plan.ventilation
    rows = [_row("anatomical", "Anatomical (airway, intubated)", d.anatomical_ml, "volume", units)]
    rows += [_row(f"part{i}", f"  {one_line(part.name)}", part.volume_ml, "volume", units, part.source)
             for i, part in enumerate(d.parts)]
    share = d.total_ml / v.tidal_volume_ml * 100 if v.tidal_volume_ml > 0 else math.inf
    rows += [_row("tube", "Tube beyond the incisors", d.tube_ml, "volume", units),
             _row("alveolar_ds", "Alveolar dead space", d.alveolar_ml, "volume", units),
             _row("total_ds", "Total dead space", d.total_ml, "volume", units, f"{fmt(share, 2)} % of VT")]
    return rows


def _pause_rows(plan: Plan, units: Units) -> list[Row]:
    """The inspiratory pause and what it does to the breath (none without a pause)."""
    v, tau = plan.ventilation, plan.pressures.time_constant_s
    if v.pause_s <= 0:
        return []
    return [_row("pause", "Inspiratory pause (inside Ti)", v.pause_s, "seconds", units,
                 f"no flow, plateau held; flow for {show(v.ti_s - v.pause_s, 'seconds')}"),
            _row("te_without_pause", "Expiratory time without the pause", v.te_without_pause_s, "seconds", units,
                 f"{fmt(v.te_without_pause_s / tau)} τ against {fmt(v.te_s / tau)} τ with it")]


def derived_sections(plan: Plan, units: Units = MMHG) -> list[tuple[str, list[Row]]]:
    """The derived values, grouped: metabolism, ventilation, dead space, mechanics, gases."""
    m, v, p, o, r = plan.metabolism, plan.ventilation, plan.pressures, plan.oxygen, plan.resolved
    te_tau = v.te_s / p.time_constant_s
    gases = [("target_paco2", "Target PaCO2", v.target_paco2_mmhg), ("paco2", "Expected PaCO2", v.expected_paco2_mmhg),
             ("etco2", "Expected EtCO2", v.expected_etco2_mmhg),
             ("gradient", "PaCO2 − EtCO2 gradient", r.gradient_mmhg),
             ("pao2", "Alveolar PO2 (PAO2)", o.pao2_alveolar_mmhg), ("pb", "Barometric pressure", o.barometric_mmhg),
             ("ph2o", "Water vapour pressure", o.water_vapour_mmhg)]
    return [
        ("Metabolism", [
            _row("metabolic_rate", "Metabolic rate", m.metabolic_rate_w, "watt", units,
                 "entered" if m.entered else "estimated"),
            _row("vo2", "O2 consumption (VO2)", m.vo2_ml_min, "flow_ml", units),
            _row("vco2", "CO2 output (VCO2)", m.vco2_ml_min, "flow_ml", units),
            _row("rq", "Respiratory quotient", m.rq, "plain", units)]),
        ("Ventilation", [
            _row("alveolar_ventilation", "Alveolar ventilation", v.alveolar_ml_min, "flow_ml", units),
            _row("minute_ventilation", "Minute ventilation", v.minute_ml_min, "flow_ml", units),
            _row("patient_vt", "Tidal volume at patient", v.tidal_volume_ml, "volume", units),
            _row("vt_per_kg", "Tidal volume per kg lean mass", v.tidal_volume_ml / r.lean_mass_kg, "ml_kg", units),
            _row("te", "Expiratory time", v.te_s, "seconds", units),
            *_pause_rows(plan, units)]),
        ("Dead space", _dead_space_rows(plan, units)),
        ("Mechanics (predicted)", [
            _row("plateau", "Plateau pressure", p.plateau_cmh2o, "cmh2o", units),
            _row("peak", "Peak airway pressure", p.peak_cmh2o, "cmh2o", units),
            _row("driving", "Driving pressure (plateau − PEEP)", p.driving_cmh2o, "cmh2o", units),
            _row("compliance", "Compliance", p.compliance_ml_cmh2o, "compliance", units),
            _row("resistance", "Resistance", p.resistance_cmh2o_l_s, "resistance", units),
            _row("tau", "Time constant τ = R·C", p.time_constant_s, "seconds", units),
            Row("te_tau", "Expiration in time constants", fmt(te_tau), "τ"),
            _row("compressed", "Circuit compression", p.compressed_ml, "volume", units,
                 f"{show(p.compressible_ml_cmh2o, 'compliance')}")]),
        ("Gases", [*(_row(k, n, x, "gas", units) for k, n, x in gases),
                   _row("min_o2", "Minimum O2 flow", o.min_o2_flow_ml_min, "flow_ml", units),
                   Row("reservoir_bag", "Reservoir bag", fmt(o.reservoir_bag_l) if o.reservoir_bag_l else "—",
                       "L" if o.reservoir_bag_l else "")]),
    ]


def mass_text(kg: float, units: Units = MMHG) -> str:
    return show(kg, "mass", units)


def species_text(plan: Plan) -> str:
    """The species as the plan used it (a custom species names its base: 'Fennec fox (values from Cat)')."""
    label = plan.resolved.species_label
    custom = (getattr(plan.request.patient, "custom_species", "") or "").strip()
    if custom and custom.lower() not in label.lower():
        label = f"{custom} (values from {label})"
    return one_line(label)


def patient_line(plan: Plan, units: Units = MMHG) -> str:
    """'Name — Species, 4.2 kg (lean …), 38.5 °C · volume-controlled' (user text on one line)."""
    r = plan.resolved
    name = one_line(plan.request.patient.name)
    lean = f", lean {mass_text(r.lean_mass_kg, units)}" if abs(r.lean_mass_kg - r.mass_kg) > 1e-12 else ""
    age = plan.basis.growth.age if plan.basis is not None else "adult"
    state = plan.request.patient.state
    young = f" ({age}{', ' + state if state != 'fasted' else ''})" if age != "adult" or state != "fasted" else ""
    return (f"{name + ' — ' if name else ''}{species_text(plan)}{young}, {mass_text(r.mass_kg, units)}{lean}, "
            f"{show(r.body_temp_c, 'temperature')} · {r.mode}-controlled")


def expectation_line(plan: Plan, units: Units = MMHG) -> str:
    """What to expect on the monitor, or the danger when nothing exchanges gas (plain text)."""
    v, p, r = plan.ventilation, plan.pressures, plan.resolved
    if not math.isfinite(v.expected_paco2_mmhg):
        return ("⚠ NO ALVEOLAR VENTILATION at these settings: every breath is dead space. Remove apparatus dead "
                "space before ventilating.")
    reached = "" if v.target_reached else "  ·  ⚠ TARGET NOT REACHED"
    return (f"Expect EtCO2 ≈ {show(v.expected_etco2_mmhg, 'gas', units)} and PaCO2 ≈ "
            f"{show(v.expected_paco2_mmhg, 'gas', units)} (target {show(v.target_paco2_mmhg, 'gas', units)}) · "
            f"plateau {show(p.plateau_cmh2o, 'cmh2o')} · {STRATEGY_LABELS[r.strategy].split(',')[0].lower()}"
            f"{reached}")


def assumption_value(a: Assumption, units: Units = MMHG) -> str:
    """An assumption's value with its unit, gas pressures in the reader's unit."""
    if isinstance(a.value, float) and a.unit == "mmHg":
        return show(a.value, "gas", units)
    value = fmt(a.value) if isinstance(a.value, float) else str(a.value)
    return f"{value}{a.unit}" if a.unit == "/min" else f"{value} {a.unit}".strip()


# The assumptions that matter most on paper come first (common practice: what changes the settings most).
_PRIORITY = ("target_paco2", "body_temperature", "metabolic_constant", "anaesthesia_factor", "rq",
             "anatomical_dead_space", "intubated_share", "alveolar_fraction", "gradient", "compliance_per_kg",
             "resistance", "peep", "pressure_limit", "vt_range", "rate_range", "starting_vt", "ti", "ie", "circuit",
             "compressible_volume", "fio2", "barometric")


def ordered_assumptions(plan: Plan) -> list[Assumption]:
    """The plan's assumptions, the most important first (stable within a rank)."""
    rank = {k: i for i, k in enumerate(_PRIORITY)}
    return sorted(plan.assumptions, key=lambda a: rank.get(a.key, len(_PRIORITY)))


def assumption_rows(plan: Plan, units: Units = MMHG) -> list[Row]:
    """Every default the plan used: name, value with unit (in ``value``), source (in ``detail``)."""
    return [Row(a.key, a.name, assumption_value(a, units), "", a.source) for a in plan.assumptions]
