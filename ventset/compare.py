"""Two to four setups for one patient, planned side by side, and what differs between them.

A setup is the base request with some inputs changed, written as a spec: ``none`` (the base as it is), or
``key=value`` items joined by commas, e.g. ``apparatus=hme_paediatric``, ``circuit=non_rebreathing``,
``tube=7.0`` or ``peep=5, fio2=0.5``. The keys are the input keys of the field table (``ventset.fields``:
every number and every text input), read from ``fields.inputs_from_request``, so a new input needs no change
here. A few keys are the spec's own:

* ``apparatus=PART`` (repeatable) replaces the base's parts: a catalogue key, a clinic part, or
  ``NAME=VOLUME`` (``apparatus=hme=12 mL``); ``apparatus=none`` removes every part;
* ``add=PART`` (repeatable) adds a part to the base's parts;
* ``tube=ID`` or ``tube=ID/LENGTH`` sets the tube's internal diameter (mm) and length beyond the incisors
  (cm); with no length and none in the base, the usual length for the mass is used and said so;
  ``tube=none`` goes back to the usual tube;
* ``key=default`` (or ``key=``) leaves that input to its default.

Every setup is planned by ``plan()``; the differences are read from the plans (first setup = reference).
"""

from __future__ import annotations

import difflib
from collections.abc import Callable, Sequence
from dataclasses import dataclass

from ventset.errors import InputError, visible
from ventset.fields import FIELDS, INPUT_LABELS, inputs_from_request, request_from_inputs
from ventset.library import Library, load_library
from ventset.model import ApparatusPart, Caution, Patient, Plan, Request
from ventset.present.quantities import fmt, kind_of

MIN_SETUPS, MAX_SETUPS = 2, 4
MAX_SPEC_CHARS = 500
SPEC_KEYS = {"apparatus": "Apparatus (replaces the parts)", "add": "Apparatus to add",
             "tube": "Tube (internal diameter, optionally /length)"}
DEFAULT_WORDS = ("", "default")
NONE_WORDS = ("none", "no", "nothing")


@dataclass(frozen=True)
class SetupSpec:
    """A parsed spec: its text as typed (normalised) and its (key, value) items in order."""

    text: str
    items: tuple[tuple[str, str], ...]

    @property
    def label(self) -> str:
        """A short name for the setup: its changes, or 'as entered'."""
        return ", ".join(f"{k}={v}" for k, v in self.items) if self.items else "as entered"


@dataclass(frozen=True)
class Setup:
    spec: SetupSpec
    request: Request
    plan: Plan
    notes: tuple[str, ...] = ()

    @property
    def label(self) -> str:
        return self.spec.label


@dataclass(frozen=True)
class Quantity:
    """One compared number: its values in the setups' order (core units; kind gives the unit)."""

    key: str
    label: str
    kind: str
    values: tuple[float, ...]

    @property
    def changed(self) -> bool:
        """True when some setup shows a different value (three significant figures, as every view shows it)."""
        return len({fmt(v) for v in self.values}) > 1

    def change_from_first(self) -> tuple[float, ...]:
        return tuple(v - self.values[0] for v in self.values)


@dataclass(frozen=True)
class CautionChange:
    """Cautions of setup ``setup`` (index) that the first setup lacks (added) or has and it lacks (removed)."""

    setup: int
    added: tuple[Caution, ...]
    removed: tuple[Caution, ...]


@dataclass(frozen=True)
class Comparison:
    setups: tuple[Setup, ...]
    quantities: tuple[Quantity, ...]
    texts: tuple[tuple[str, str, tuple[str, ...]], ...]  # (key, label, value per setup)
    cautions: tuple[CautionChange, ...]

    @property
    def plans(self) -> tuple[Plan, ...]:
        return tuple(s.plan for s in self.setups)

    def changed(self) -> tuple[Quantity, ...]:
        return tuple(q for q in self.quantities if q.changed)


def _share(p: Plan) -> float:
    vt = p.ventilation.tidal_volume_ml
    return p.dead_space.total_ml / vt * 100 if vt > 0 else float("inf")


def _minute_needed(p: Plan) -> float:
    """Minute volume (mL/min) that holds the target PaCO2 at the plan's rate: f·(VA/f + VD_fixed)/(1 − f_alv)."""
    if p.subject is None:  # pragma: no cover - every plan from planner.plan carries it
        return float("nan")
    v = p.ventilation
    return v.rate_per_min * p.subject.vt_for_rate(v.alveolar_ml_min, v.rate_per_min)


def _path(path: str) -> Callable[[Plan], float]:
    def get(p: Plan) -> float:
        obj: object = p
        for part in path.split("."):
            obj = getattr(obj, part)
        return float(obj)  # type: ignore[arg-type]
    return get


# The numbers a comparison shows, in order: (key, label, getter). The key's unit suffix gives the kind.
COMPARED: tuple[tuple[str, str, Callable[[Plan], float]], ...] = tuple(
    (key, label, getter or _path(key)) for key, label, getter in (
        ("ventilation.set_tidal_volume_ml", "Set tidal volume", None),
        ("ventilation.tidal_volume_ml", "Tidal volume at the patient", None),
        ("ventilation.rate_per_min", "Rate", None),
        ("ventilation.minute_ml_min", "Minute volume", None),
        ("ventilation.alveolar_ml_min", "Alveolar ventilation needed", None),
        ("ventilation.minute_needed_ml_min", "Minute volume holding the target at this rate", _minute_needed),
        ("ventilation.ti_s", "Inspiratory time", None),
        ("ventilation.inspiratory_flow_l_min", "Inspiratory flow", None),
        ("ventilation.expected_paco2_mmhg", "Expected PaCO2", None),
        ("ventilation.expected_etco2_mmhg", "Expected EtCO2", None),
        ("dead_space.anatomical_ml", "Anatomical dead space (intubated)", None),
        ("dead_space.apparatus_ml", "Apparatus dead space (parts)", None),
        ("dead_space.tube_ml", "Tube beyond the incisors", None),
        ("dead_space.alveolar_ml", "Alveolar dead space", None),
        ("dead_space.total_ml", "Total dead space", None),
        ("dead_space.share_of_vt_percent", "Dead space share of the tidal volume", _share),
        ("pressures.peep_cmh2o", "PEEP", None),
        ("pressures.plateau_cmh2o", "Plateau pressure", None),
        ("pressures.peak_cmh2o", "Peak (or inspiratory) pressure", None),
        ("pressures.driving_cmh2o", "Driving pressure", None),
        ("pressures.pressure_limit_cmh2o", "Pressure limit", None),
        ("pressures.compressed_ml", "Circuit compression", None),
        ("oxygen.fio2", "FiO2", None),
        ("oxygen.pao2_alveolar_mmhg", "Alveolar PO2 (PAO2)", None),
        ("oxygen.min_o2_flow_ml_min", "Minimum O2 flow", None),
        ("oxygen.fresh_gas_ml_min", "Fresh gas flow", None),
        ("oxygen.reservoir_bag_l", "Reservoir bag", None),
        ("metabolism.vco2_ml_min", "CO2 output (VCO2)", None),
    ))


def input_keys() -> tuple[str, ...]:
    """Every input a setup may change: the keys of the field table, as ``inputs_from_request`` gives them."""
    values, _ = inputs_from_request(Request(Patient("", 1.0)))
    return tuple(values)


def input_label(key: str) -> str:
    """What a spec key is called on screen."""
    return FIELDS[key].label if key in FIELDS else INPUT_LABELS.get(key, SPEC_KEYS.get(key, key))


def parse_spec(text: str, number: int = 1) -> SetupSpec:
    """Parse one setup spec; InputError keyed 'setup' naming the setup and the item that is wrong."""
    where = f"setup {number}"
    if not isinstance(text, str) or len(text) > MAX_SPEC_CHARS:
        raise InputError("setup", text, f"must be text of at most {MAX_SPEC_CHARS} characters", label=where)
    plain = text.strip()
    if plain.lower() in NONE_WORDS:
        return SetupSpec("none", ())
    known = (*input_keys(), *SPEC_KEYS)
    items: list[tuple[str, str]] = []
    for raw in plain.split(","):
        item = raw.strip()
        if not item:
            continue
        key, eq, value = item.partition("=")
        key = key.strip().lower().replace("_", "-")
        if not eq:
            raise InputError("setup", item, "needs KEY=VALUE, e.g. 'apparatus=hme_paediatric' or 'peep=5' "
                                            "(or 'none' for the base as it is)", label=where)
        if key not in known:
            near = difflib.get_close_matches(key, known, n=1)
            hint = f"; did you mean '{near[0]}'?" if near else f"; known: {', '.join(known)}"
            raise InputError("setup", item, f"'{visible(key, 30)}' is not an input{hint}", label=where)
        items.append((key, value.strip()))
    if not items:
        raise InputError("setup", text, "is empty: give KEY=VALUE items or 'none'", label=where)
    return SetupSpec(", ".join(f"{k}={v}" for k, v in items), tuple(items))


def _tube(value: str, values: dict[str, object], base: Request, lib: Library) -> str | None:
    """Put ``tube=ID[/LENGTH]`` into ``values``; returns a note when the length is the usual one."""
    if value.lower() in (*NONE_WORDS, *DEFAULT_WORDS):
        values["tube-id"] = values["tube-length"] = None
        return None
    tid, _, length = value.partition("/")
    values["tube-id"] = tid.strip()
    if length.strip():
        values["tube-length"] = length.strip()
        return None
    if values.get("tube-length") is not None:
        return None
    from ventset.stages.airway import usual_tube

    cm = usual_tube(base.patient.mass_kg, lib)[1]
    values["tube-length"] = cm
    return f"tube length beyond the incisors not given: the usual {fmt(cm)} cm for {fmt(base.patient.mass_kg)} kg"


def _part(value: str, lib: Library) -> ApparatusPart:
    from ventset.partslib import clinic_part, part_from_text

    return part_from_text(value, lib, clinic_part)


def apply_spec(base: Request, spec: SetupSpec, library: Library | None = None, number: int = 1) \
        -> tuple[Request, tuple[str, ...]]:
    """The base request with the spec's inputs changed, and notes on what was assumed; InputError naming the
    setup and the field."""
    lib = library or load_library()
    values, base_parts = inputs_from_request(base)
    parts = list(base_parts)
    replaced = False
    notes: list[str] = []
    where = f"setup {number}"
    try:
        for key, value in spec.items:
            if key in ("apparatus", "add"):
                if key == "apparatus" and not replaced:
                    parts, replaced = [], True
                if value.lower() not in NONE_WORDS:
                    parts.append(_part(value, lib))
            elif key == "tube":
                note = _tube(value, values, base, lib)
                notes += [note] if note else []
            else:
                values[key] = None if value.lower() in DEFAULT_WORDS else value
        request, errors = request_from_inputs(values, parts, library=lib)
    except InputError as err:
        raise _named(err, where) from None
    if request is None:
        raise _named(errors[0], where)
    return request, tuple(notes)


def _named(err: InputError, where: str) -> InputError:
    """``err`` under the setup's name and the field's label, keyed 'setup' (the option that was typed)."""
    label = input_label(err.key) if err.label == err.key else err.label
    return InputError("setup", err.value, err.reason, err.unit, label=f"{where}, {label}")


def plan_setups(base: Request, specs: Sequence[str | SetupSpec], library: Library | None = None) -> Comparison:
    """Plan each setup for the base patient and compare them; InputError naming the setup and field."""
    lib = library or load_library()
    if not MIN_SETUPS <= len(specs) <= MAX_SETUPS:
        raise InputError("setup", "", f"{len(specs)} given; compare {MIN_SETUPS} to {MAX_SETUPS} setups (one "
                                      "--setup each; 'none' is the patient as entered)")
    return compare_plans([plan_setup(base, raw, i, lib) for i, raw in enumerate(specs, start=1)])


def plan_setup(base: Request, spec: str | SetupSpec, number: int = 1, library: Library | None = None) -> Setup:
    """One setup planned; InputError keyed 'setup' naming the setup and the field."""
    from ventset.planner import plan

    lib = library or load_library()
    parsed = spec if isinstance(spec, SetupSpec) else parse_spec(spec, number)
    request, notes = apply_spec(base, parsed, lib, number)
    try:
        return Setup(parsed, request, plan(request, lib), notes)
    except InputError as err:
        raise _named(err, f"setup {number}") from None


def compare_plans(setups: Sequence[Setup]) -> Comparison:
    """The quantities, texts and caution changes of planned setups (the first is the reference)."""
    from ventset.cautions import limit_words

    plans = [s.plan for s in setups]
    quantities = tuple(Quantity(key, label, kind_of(key), tuple(get(p) for p in plans)) for key, label, get in COMPARED)
    texts = (("circuit", "Breathing system", tuple(p.oxygen.circuit_label for p in plans)),
             ("mode", "Mode", tuple(p.resolved.mode for p in plans)),
             ("parts", "Apparatus parts", tuple(", ".join(f"{x.name} {fmt(x.volume_ml)} mL" for x in p.dead_space.parts)
                                                 or "none" for p in plans)),
             ("limits", "Limits that moved the settings", tuple(limit_words(p.limits.binding) or "none"
                                                                for p in plans)))
    first = {c.code for c in plans[0].cautions}
    changes = []
    for i, p in enumerate(plans[1:], start=1):
        codes = {c.code for c in p.cautions}
        changes.append(CautionChange(i, tuple(c for c in p.cautions if c.code not in first),
                                     tuple(c for c in plans[0].cautions if c.code not in codes)))
    return Comparison(tuple(setups), quantities, texts, tuple(changes))


def comparison_to_dict(c: Comparison) -> dict:
    """JSON shape: {"setups": [plan as `ventset plan --json`], "specs", "notes", "differences": [...]}."""
    from ventset.report import cautions_to_json, json_number, plan_to_dict

    diffs: list[dict] = [{"kind": "quantity", "key": q.key, "label": q.label, "unit_kind": q.kind,
                          "values": [json_number(v) for v in q.values],
                          "change_from_first": [json_number(v) for v in q.change_from_first()]}
                         for q in c.changed()]
    diffs += [{"kind": "text", "key": key, "label": label, "values": list(vals)}
              for key, label, vals in c.texts if len(set(vals)) > 1]
    diffs += [{"kind": "cautions", "setup": ch.setup, "added": cautions_to_json(ch.added),
               "removed": cautions_to_json(ch.removed)} for ch in c.cautions if ch.added or ch.removed]
    return {"setups": [plan_to_dict(s.plan) for s in c.setups], "specs": [s.spec.text for s in c.setups],
            "labels": [s.label for s in c.setups], "notes": [list(s.notes) for s in c.setups],
            "differences": diffs, "standing_notice": c.setups[0].plan.standing_notice}


def spec_help() -> str:
    """One paragraph on what a setup spec may hold (for --help and the window)."""
    return ("'none' (the patient as entered), or KEY=VALUE items joined by commas: any input key "
            "(e.g. circuit=non_rebreathing, peep=5, fio2=0.5, mode=pressure), apparatus=PART (replaces the "
            "parts; a catalogue key, a clinic part or NAME=VOLUME), add=PART, tube=ID[/LENGTH] (mm/cm), "
            "KEY=default. Units as in the inputs, e.g. 'tube-length=12 cm'.")


__all__ = ["COMPARED", "Comparison", "Quantity", "Setup", "SetupSpec", "apply_spec", "compare_plans",
           "comparison_to_dict", "input_keys", "parse_spec", "plan_setup", "plan_setups", "spec_help"]
