"""Comparing a stored plan with a fresh one: plain sentences for what differs (settings first). No Qt here."""

from __future__ import annotations

import math

from ventset.errors import visible

_LABELLED = (
    ("mode", "Mode", ""),
    ("ventilation.set_tidal_volume_ml", "Set tidal volume", "mL"),
    ("ventilation.rate_per_min", "Rate", "/min"),
    ("ventilation.ti_s", "Inspiratory time", "s"),
    ("ventilation.inspiratory_flow_l_min", "Inspiratory flow", "L/min"),
    ("pressures.peep_cmh2o", "PEEP", "cmH2O"),
    ("pressures.pressure_limit_cmh2o", "Pressure limit", "cmH2O"),
    ("pressures.inspiratory_pressure_cmh2o", "Inspiratory pressure", "cmH2O"),
    ("oxygen.fio2", "FiO2", ""),
    ("oxygen.fresh_gas_ml_min", "Fresh gas", "mL/min"),
    ("ventilation.expected_paco2_mmhg", "Expected PaCO2", "mmHg"),
    ("ventilation.expected_etco2_mmhg", "Expected EtCO2", "mmHg"),
    ("ventilation.target_paco2_mmhg", "Target PaCO2", "mmHg"),
    ("irrigation.flow_l_min", "Irrigation flow", "L/min"),   # a fish's irrigation case (ventset.case_irrigation)
    ("irrigation.flow_range_l_min", "Irrigation flow range", "L/min"),
    ("irrigation.extraction", "Gill O2 extraction", ""),
    ("water.o2_mg_l", "O2 in the supply water", "mg/L"),
    ("metabolism.vo2_mg_h", "O2 need", "mg/h"),
)
_SKIP = {"ventset_version", "cautions", "assumptions", "standing_notice"}
MAX_DIFFERENCES = 14


def _flatten(obj: object, prefix: str = "") -> dict[str, object]:
    out: dict[str, object] = {}
    stack = [(prefix, obj)]
    while stack:
        where, value = stack.pop()
        if isinstance(value, dict):
            for k, v in value.items():
                if not where and k in _SKIP:
                    continue
                stack.append((f"{where}.{k}" if where else str(k), v))
        else:
            out[where] = value
    return out


def _same(a: object, b: object) -> bool:
    if isinstance(a, int | float) and isinstance(b, int | float) and not isinstance(a, bool) \
            and not isinstance(b, bool):
        return math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-9)
    return a == b


def _show(value: object, unit: str = "") -> str:
    from ventset.units import fmt

    if value is None:
        return "—"
    if isinstance(value, int | float) and not isinstance(value, bool):
        return f"{fmt(float(value))}{' ' + unit if unit else ''}"
    return visible(value, 60)


def compare_plan_dicts(stored: object, current: object) -> list[str]:
    """Plain sentences for what differs between two ``plan_to_dict`` outputs (settings first)."""
    if stored is None or current is None:
        return [] if stored is current else ["One of the plans is missing."]
    if not isinstance(stored, dict) or not isinstance(current, dict):
        return ["The stored plan is not in a form this version can compare."]
    a, b = _flatten(stored), _flatten(current)
    lines: list[str] = []
    labelled = set()
    for key, label, unit in _LABELLED:
        labelled.add(key)
        if key in a or key in b:
            if not _same(a.get(key), b.get(key)):
                lines.append(f"{label}: stored {_show(a.get(key), unit)}, now {_show(b.get(key), unit)}")
    lines += _compare_cautions(stored.get("cautions"), current.get("cautions"))
    lines += _compare_assumptions(stored.get("assumptions"), current.get("assumptions"))
    others = [k for k in sorted(set(a) | set(b)) if k not in labelled and not _same(a.get(k), b.get(k))]
    if others:
        shown = ", ".join(f"{visible(k, 60)} {_show(a.get(k))} → {_show(b.get(k))}" for k in others[:4])
        more = f" and {len(others) - 4} more" if len(others) > 4 else ""
        lines.append(f"Derived values: {shown}{more}")
    if len(lines) > MAX_DIFFERENCES:
        lines = lines[: MAX_DIFFERENCES - 1] + [f"... and {len(lines) - MAX_DIFFERENCES + 1} more differences"]
    return lines


def _by(items: object, key: str) -> dict[str, dict]:
    """Entries of a stored list by ``key`` (codes and names made safe to show: they come from a file)."""
    if not isinstance(items, list):
        return {}
    return {visible(i.get(key), 80): i for i in items if isinstance(i, dict)}


def _compare_cautions(stored: object, current: object) -> list[str]:
    a, b = _by(stored, "code"), _by(current, "code")
    lines = [f"New caution: [{_show(b[c].get('severity', '')).upper()}] {c}" for c in b if c not in a]
    lines += [f"Caution no longer raised: {c}" for c in a if c not in b]
    lines += [f"Caution {c} changed: [{_show(a[c].get('severity', '')).upper()}] → "
              f"[{_show(b[c].get('severity', '')).upper()}]" for c in a if c in b
              and a[c].get("severity") != b[c].get("severity")]
    lines += [f"Caution {c}: wording changed" for c in a if c in b and a[c].get("severity") == b[c].get("severity")
              and a[c].get("message") != b[c].get("message")]
    return lines


def _compare_assumptions(stored: object, current: object) -> list[str]:
    a, b = _by(stored, "name"), _by(current, "name")
    lines = []
    for name in b:
        if name not in a:
            lines.append(f"New assumption: {name} {_show(b[name].get('value'), _show(b[name].get('unit', '')))}")
        elif not _same(a[name].get("value"), b[name].get("value")) or a[name].get("unit") != b[name].get("unit"):
            lines.append(f"Assumption {name}: stored {_show(a[name].get('value'), _show(a[name].get('unit', '')))}, "
                         f"now {_show(b[name].get('value'), _show(b[name].get('unit', '')))}")
        elif a[name].get("source") != b[name].get("source"):
            lines.append(f"Assumption {name}: source changed to {_show(b[name].get('source'))}")
    lines += [f"Assumption no longer used: {name}" for name in a if name not in b]
    return lines
