"""A chart of starting settings by body mass for one species on the clinic's own circuit.

Every row comes from ``ventset.sweep.sweep_mass`` (the planner's own stages over an array of masses, equal
to ``plan()`` at that mass). A row whose settings a limit moved, that misses the target, that leaves no
gas exchange or whose pressure exceeds the limit is marked with the reason: nothing is clamped silently.
The chart carries the standing notice, the assumptions that hold for every row, and the names of those that
change with mass (a single plan at that mass lists them with their values).
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass
from datetime import datetime
from typing import Any

from ventset import __version__
from ventset.chart_dials import DialRow, dial_rows
from ventset.errors import InputError
from ventset.library import Library, load_library
from ventset.model import STANDING_NOTICE, Assumption, Request
from ventset.present.quantities import MMHG, Units, fmt, split
from ventset.sweep import MassSweep, sweep_mass, with_mass

# Columns of the chart: (key, header, kind) — key is a MassSweep field; kind gives the unit (present.quantities).
COLUMNS: tuple[tuple[str, str, str], ...] = (
    ("mass_kg", "Body mass", "mass"),
    ("set_tidal_volume_ml", "Set VT", "volume"),
    ("tidal_volume_ml", "VT at patient", "volume"),
    ("rate_per_min", "Rate", "rate"),
    ("minute_ml_min", "Minute vol.", "flow_ml"),
    ("ti_s", "Ti", "seconds"),
    ("peep_cmh2o", "PEEP", "cmh2o"),
    ("peak_cmh2o", "Peak", "cmh2o"),
    ("expected_paco2_mmhg", "PaCO2", "gas"),
    ("expected_etco2_mmhg", "EtCO2", "gas"),
    ("fresh_gas_ml_min", "Fresh gas", "flow_ml"),
)
# Further per-row numbers in the JSON and CSV (not in the printed table).
EXTRA = ("plateau_cmh2o", "inspiratory_pressure_cmh2o", "ie_expiratory_part", "inspiratory_flow_l_min",
         "total_dead_space_ml", "apparatus_ml", "tube_ml", "anatomical_ml", "alveolar_ml", "vco2_ml_min",
         "target_paco2_mmhg", "pao2_alveolar_mmhg", "reservoir_bag_l", "tube_id_mm", "tube_length_cm")


@dataclass(frozen=True)
class Chart:
    request: Request
    sweep: MassSweep
    species_label: str
    circuit_labels: dict[str, str]
    marks: tuple[tuple[str, ...], ...]
    common: tuple[Assumption, ...]
    varying: tuple[str, ...]
    preset: str = ""
    made: str = ""
    standing_notice: str = STANDING_NOTICE
    dials: tuple[DialRow, ...] = ()  # each row on the machine chosen (empty without one)
    machine_label: str = ""

    @property
    def marked_rows(self) -> int:
        return sum(1 for m in self.marks if m)

    def mark_groups(self) -> list[tuple[tuple[str, ...], list[int]]]:
        """Each distinct set of marks once, in order of first appearance, with the rows that carry it."""
        groups: dict[tuple[str, ...], list[int]] = {}
        for i, m in enumerate(self.marks):
            if m:
                groups.setdefault(m, []).append(i)
        return list(groups.items())

    def refs(self) -> dict[int, int]:
        """Row index → the number of its set of marks (1, 2, …); unmarked rows are absent."""
        return {i: k for k, (_, rows) in enumerate(self.mark_groups(), start=1) for i in rows}


def _usual_range(sw: MassSweep, lib: Library) -> tuple[Any, Any, Any, Any]:
    """The species' usual tidal volume (mL) and rate at each mass, before widening to what was entered."""
    sp = lib.species[sw.species]
    vt, rate = sp.tidal_volume_ml_kg, sp.rate_span_for(sw.mass_kg)
    return vt.min * sw.mass_kg, vt.max * sw.mass_kg, rate.min, rate.max


def row_marks(sw: MassSweep, lib: Library) -> tuple[tuple[str, ...], ...]:
    """Why each row needs a second look (empty when it sits inside every limit and reaches the target)."""
    from ventset.cautions import limit_words

    vt_lo, vt_hi, rate_lo, rate_hi = _usual_range(sw, lib)
    out = []
    for i in range(len(sw)):
        marks: list[str] = []
        if float(sw.alveolar_ml_min[i]) <= 0:
            marks.append("NO GAS EXCHANGE: the dead space takes the whole breath")
        elif not sw.target_reached[i]:
            marks.append("TARGET NOT REACHED: the expected PaCO2 in the table is off the target")
        binding = tuple(b for b in sw.binding_at(i) if b != "fixed_by_user")
        if binding:
            marks.append(f"limited by {limit_words(binding)}")
        if sw.peak_cmh2o[i] > sw.pressure_limit_cmh2o[i] + 1e-9:
            marks.append("peak pressure above the pressure limit")
        vt, rate = float(sw.tidal_volume_ml[i]), float(sw.rate_per_min[i])
        if vt < vt_lo[i] * (1 - 1e-9) or vt > vt_hi[i] * (1 + 1e-9):
            marks.append("tidal volume outside the species' usual range")
        if rate < _at(rate_lo, i) * (1 - 1e-9) or rate > _at(rate_hi, i) * (1 + 1e-9):
            marks.append("rate outside the species' usual range")
        out.append(tuple(marks))
    return tuple(out)


def _at(x: Any, i: int) -> float:
    return float(x[i]) if hasattr(x, "__len__") else float(x)


def _assumptions(request: Request, lo: float, hi: float, lib: Library) -> tuple[tuple[Assumption, ...],
                                                                              tuple[str, ...]]:
    """Assumptions equal at both ends of the range (they hold for every row) and the names of the others."""
    from ventset.planner import plan

    a, b = plan(with_mass(request, lo), lib), plan(with_mass(request, hi), lib)
    at_hi = {x.key or x.name: x for x in b.assumptions}
    common = tuple(x for x in a.assumptions if at_hi.get(x.key or x.name) == x)
    varying = tuple(dict.fromkeys(x.name for x in (*a.assumptions, *b.assumptions) if x not in common))
    return common, varying


def make_chart(request: Request, masses_kg: Any, library: Library | None = None, *, preset: str = "",
               when: datetime | None = None) -> Chart:
    """The chart for ``request`` (its mass ignored) at ``masses_kg``; InputError naming the field."""
    lib = library or load_library()
    sw = sweep_mass(request, masses_kg, lib)
    dials = dial_rows(request, sw.mass_kg, lib)
    machine = next((d.label for d in dials if d.label), "")
    common, varying = _assumptions(request, float(sw.mass_kg.min()), float(sw.mass_kg.max()), lib)
    labels = {k: lib.circuits[k].label for k in dict.fromkeys(sw.circuit.tolist())}
    made = (when or datetime.now()).strftime("%Y-%m-%d %H:%M")
    return Chart(request, sw, lib.species[sw.species].label, labels, row_marks(sw, lib), common, varying, preset,
                 made, dials=dials, machine_label=machine)


def _number(x: Any) -> float | None:
    v = float(x)
    return round(v, 4) if math.isfinite(v) else None


def chart_rows(chart: Chart) -> list[dict]:
    """One JSON-ready dict per row: the columns, the further numbers, the circuit and the marks."""
    sw = chart.sweep
    rows = []
    for i in range(len(sw)):
        row: dict[str, object] = {k: _number(getattr(sw, k)[i]) for k, _, _ in COLUMNS}
        row.update({k: _number(getattr(sw, k)[i]) for k in EXTRA})
        row.update(circuit=str(sw.circuit[i]), age=str(sw.age[i]), target_reached=bool(sw.target_reached[i]),
                   limits=list(sw.binding_at(i)), marks=list(chart.marks[i]))
        if chart.dials:
            d = chart.dials[i]
            row["machine"] = {"controls": [{"name": n, "value": v} for n, v in d.controls],
                              "expected_paco2_mmhg": _number(d.paco2_mmhg), "cautions": list(d.codes)}
        rows.append(row)
    return rows


def chart_to_dict(chart: Chart) -> dict:
    """{"rows": [...], "species", "circuits", "standing_notice", "assumptions", ...} (units in the key names)."""
    req = chart.request
    return {
        "ventset_version": __version__, "made": chart.made, "standing_notice": chart.standing_notice,
        "species": chart.sweep.species, "species_label": chart.species_label, "mode": chart.sweep.mode,
        "preset": chart.preset, "circuits": chart.circuit_labels,
        "parts": [{"name": p.name, "volume_ml": p.volume_ml, "source": p.source} for p in req.circuit.parts],
        "rows": chart_rows(chart), "marked_rows": chart.marked_rows,
        "assumptions": [{"key": a.key, "name": a.name, "value": a.value, "unit": a.unit, "source": a.source}
                        for a in chart.common],
        "assumptions_varying_with_mass": list(chart.varying),
    }


def chart_to_csv(chart: Chart) -> str:
    """CSV: '#' lines with the notice, species and circuit, then one header row and one row per mass."""
    out = io.StringIO()
    for line in header_lines(chart):
        out.write(f"# {line}\n")
    keys = [k for k, _, _ in COLUMNS] + list(EXTRA) + ["circuit", "target_reached", "marks"]
    if chart.dials:
        keys.append("machine")
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(keys)
    for i, row in enumerate(chart_rows(chart)):
        writer.writerow(["" if row.get(k) is None else chart.dials[i].text() if k == "machine"
                         else "; ".join(row[k]) if k == "marks" else row[k] for k in keys])
    return out.getvalue()


def header_lines(chart: Chart) -> list[str]:
    """What every printout of the chart says before the rows."""
    from ventset.present.rows import one_line

    parts = ", ".join(f"{one_line(p.name)} {fmt(p.volume_ml)} mL" for p in chart.request.circuit.parts) or "none"
    preset = f"clinic preset '{one_line(chart.preset)}'; " if chart.preset else ""
    return [f"ventset {__version__} — starting settings by body mass, {chart.species_label} ({chart.sweep.mode} "
            f"mode), made {chart.made}",
            f"NOTICE: {chart.standing_notice}",
            f"Breathing system: {preset}{'; '.join(chart.circuit_labels.values())}; apparatus: {parts}"]


def cell(chart: Chart, i: int, key: str, kind: str, units: Units = MMHG) -> str:
    """One table cell in the reader's units ('—' when not finite)."""
    number, unit = split(float(getattr(chart.sweep, key)[i]), kind, units)
    return number if number == "—" else f"{number}{unit}" if unit == "/min" else f"{number} {unit}"


def chart_to_text(chart: Chart, units: Units = MMHG) -> str:
    """A plain-text table for the terminal, with the marks under the table and the notice at the end."""
    from ventset.present.rows import assumption_value

    head = [h for _, h, _ in COLUMNS] + ["see"]
    refs = chart.refs()
    body = [[cell(chart, i, k, kind, units) for k, _, kind in COLUMNS] + [f"[{refs[i]}]" if i in refs else ""]
            for i in range(len(chart.sweep))]
    notes = [f"  [{k}] {mark_rows_text(chart, rows, units)}: " + "; ".join(marks)
             for k, (marks, rows) in enumerate(chart.mark_groups(), start=1)]
    widths = [max(len(r[c]) for r in (head, *body)) for c in range(len(head))]
    lines = header_lines(chart)[:1] + [header_lines(chart)[2], ""]
    lines += ["  ".join(x.rjust(w) for x, w in zip(r, widths, strict=True)).rstrip() for r in (head, *body)]
    if len(chart.circuit_labels) > 1:
        lines += ["", circuit_changes(chart, units)]
    if chart.dials:
        lines += ["", f"ON THE MACHINE: {chart.machine_label.upper()}", *dial_lines(chart, range(len(chart.sweep)),
                                                                                   units)]
    lines += ["", "MARKED ROWS", *(notes or ["  none"])]
    lines += ["", "ASSUMPTIONS FOR EVERY ROW",
              *(f"  {a.name}: {assumption_value(a, units)} — {a.source}" for a in chart.common)]
    if chart.varying:
        lines += ["", "Change with mass (see a single plan at that mass): " + "; ".join(chart.varying)]
    lines += ["", "NOTICE: " + chart.standing_notice]
    return "\n".join(lines)


def dial_lines(chart: Chart, rows: range, units: Units = MMHG) -> list[str]:
    """Each row's controls as dialled, its PaCO2 as dialled and the machine's cautions."""
    out = []
    for i in rows:
        d = chart.dials[i]
        said = f" ({', '.join(d.codes)})" if d.codes else ""
        paco2 = split(d.paco2_mmhg, "gas", units)
        out.append(f"  {cell(chart, i, 'mass_kg', 'mass', units)}: {d.text() or '—'}; PaCO2 as dialled "
                   f"{paco2[0]} {paco2[1]}{said}")
    return out


def circuit_changes(chart: Chart, units: Units = MMHG) -> str:
    """Which breathing system the rows use, from which mass on ('' when one serves every row)."""
    sw = chart.sweep
    changes = [f"{cell(chart, i, 'mass_kg', 'mass', units)}: {chart.circuit_labels[str(sw.circuit[i])]}"
               for i in range(len(sw)) if i == 0 or sw.circuit[i] != sw.circuit[i - 1]]
    return "Breathing system by mass (from): " + "; ".join(changes) if len(changes) > 1 else ""


def mark_rows_text(chart: Chart, rows: list[int], units: Units = MMHG) -> str:
    """The masses a set of marks applies to: '2 kg', '2–6 kg' for consecutive rows, or a list."""
    def mass(i: int) -> str:
        return cell(chart, i, "mass_kg", "mass", units)

    runs: list[list[int]] = []
    for i in rows:
        if runs and i == runs[-1][-1] + 1:
            runs[-1].append(i)
        else:
            runs.append([i])
    return ", ".join(mass(r[0]) if len(r) == 1 else f"{mass(r[0])} to {mass(r[-1])}" for r in runs)


def parse_mass_range(text: str) -> tuple[str, str]:
    """'2-40 kg' or '2kg-40kg' → ('2 kg', '40 kg') (the unit of the upper end applies to a bare lower end)."""
    lo, sep, hi = str(text).partition("-")
    if not sep or not lo.strip() or not hi.strip():
        raise InputError("masses", text, "give a range LO-HI, e.g. '2-40 kg'")
    hi_unit = hi.strip().lstrip("0123456789.").strip()
    lo = lo.strip()
    return (lo if lo.rstrip("0123456789.") or not hi_unit else f"{lo} {hi_unit}"), hi.strip()
