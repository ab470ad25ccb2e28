"""A sweep over body mass: the planner's own stages run once on an array of masses.

``sweep_mass(request, masses)`` gives, for every mass, the numbers ``plan()`` gives for the same request at
that mass (tested row by row to 1e-9 relative in tests/test_sweep.py). Nothing here writes a formula: the
masses go through the same stage functions (``ventset.stages``), the same choice of settings
(``ventset.solver._choose``) and the same evaluation (``ventset.evaluate``) as a plan, as numpy arrays.
What changes with mass in steps (the usual breathing system, the age by mass thresholds) splits the masses
into groups, each run as one array.

Not produced here: cautions and assumptions (a chart names the limits that moved each row and shows the
standing notice; a single plan at any mass gives the full cautions).
"""

from __future__ import annotations

from dataclasses import dataclass, fields, replace
from typing import Any

import numpy as np

from ventset.errors import InputError
from ventset.evaluate import _spread, evaluate_points
from ventset.library import Library, load_library
from ventset.model import Request
from ventset.solver import BINDING_ORDER, choose_settings_arrays
from ventset.stages.airway import usual_tube
from ventset.stages.basis import basis_from_inputs
from ventset.stages.circuit import fresh_gas_stage, usual_circuit_codes
from ventset.stages.finish import choice_inputs, reached
from ventset.stages.inputs import Inputs, check_mass, resolve_inputs
from ventset.stages.metabolic import age_codes
from ventset.stages.timing import check_timing

# Inputs that describe one animal (its own lean mass, measured metabolism or mechanics): a sweep varies the
# animal's mass, so it refuses them rather than holding one animal's value for every mass.
PER_ANIMAL = {"lean-mass": "patient.lean_mass_kg", "metabolic-rate": "patient.metabolic_rate_w",
              "compliance": "patient.compliance_ml_cmh2o", "resistance": "patient.resistance_cmh2o_l_s"}
MAX_POINTS = 1_000_000


@dataclass(frozen=True)
class MassSweep:
    """One entry per mass (numpy arrays; units in the names, as in a Plan). ``flags`` maps each limit name of
    ``Choice.binding`` to where it moved the settings; ``fixed`` is True when tidal volume and rate were both
    entered (nothing chosen)."""

    mass_kg: Any
    circuit: Any
    age: Any
    tube_id_mm: Any
    tube_length_cm: Any
    metabolic_rate_w: Any
    vo2_ml_min: Any
    vco2_ml_min: Any
    anatomical_ml: Any
    apparatus_ml: Any
    tube_ml: Any
    alveolar_ml: Any
    total_dead_space_ml: Any
    tidal_volume_ml: Any
    set_tidal_volume_ml: Any
    rate_per_min: Any
    minute_ml_min: Any
    alveolar_ml_min: Any
    needed_alveolar_ml_min: Any
    ti_s: Any
    te_s: Any
    ie_expiratory_part: Any
    inspiratory_flow_l_min: Any
    target_paco2_mmhg: Any
    expected_paco2_mmhg: Any
    expected_etco2_mmhg: Any
    target_reached: Any
    peep_cmh2o: Any
    plateau_cmh2o: Any
    peak_cmh2o: Any
    driving_cmh2o: Any
    inspiratory_pressure_cmh2o: Any
    pressure_limit_cmh2o: Any
    compliance_ml_cmh2o: Any
    resistance_cmh2o_l_s: Any
    compressed_ml: Any
    pao2_alveolar_mmhg: Any
    min_o2_flow_ml_min: Any
    fresh_gas_ml_min: Any
    fresh_gas_induction_ml_min: Any
    reservoir_bag_l: Any
    vt_min_ml: Any
    vt_max_ml: Any
    rate_min_per_min: Any
    rate_max_per_min: Any
    vt_pressure_max_ml: Any
    flags: dict[str, Any]
    fixed: bool
    species: str
    mode: str

    def __len__(self) -> int:
        return int(self.mass_kg.shape[0])

    def binding_at(self, i: int) -> tuple[str, ...]:
        """The limits that moved the settings at element ``i`` (as ``plan().limits.binding`` names them)."""
        if self.fixed:
            return ("fixed_by_user",)
        return tuple(b for b in BINDING_ORDER if bool(self.flags[b][i]))


def masses_between(lo_kg: float, hi_kg: float, step_kg: float | None = None, count: int | None = None) -> Any:
    """Masses from ``lo`` to ``hi`` (kg): every ``step`` (the last one ``hi`` itself), or ``count`` evenly spaced
    on a log scale (small patients get as many rows as large ones). InputError naming 'from', 'to' or 'step'."""
    if not (np.isfinite(lo_kg) and lo_kg > 0):
        raise InputError("from", lo_kg, "must be a body mass above 0 kg")
    if not (np.isfinite(hi_kg) and hi_kg >= lo_kg):
        raise InputError("to", f"{hi_kg:g} kg", f"must not be below the lightest mass ({lo_kg:g} kg)")
    if step_kg is not None:
        if not (np.isfinite(step_kg) and step_kg > 0):
            raise InputError("step", step_kg, "must be a mass above 0 kg")
        n = int(np.floor((hi_kg - lo_kg) / step_kg * (1 + 1e-12))) + 1
        if n > MAX_POINTS:
            raise InputError("step", step_kg, f"gives {n} rows; at most {MAX_POINTS}")
        out = lo_kg + step_kg * np.arange(n)
        return out if np.isclose(out[-1], hi_kg, rtol=1e-9, atol=0) else np.append(out, hi_kg)
    n = count or 20
    if not 1 <= n <= MAX_POINTS:
        raise InputError("count", n, f"must be 1 to {MAX_POINTS}")
    return np.geomspace(lo_kg, hi_kg, n) if hi_kg > lo_kg else np.array([lo_kg])


def with_mass(request: Request, mass_kg: float) -> Request:
    """``request`` for a patient of another mass (everything else as entered)."""
    return replace(request, patient=replace(request.patient, mass_kg=float(mass_kg)))


def _refuse_per_animal(request: Request) -> None:
    from ventset.fields import get_path

    for key, path in PER_ANIMAL.items():
        if get_path(request, path) is not None:
            raise InputError(key, get_path(request, path), "belongs to one animal; a sweep over body mass takes "
                                                           "it from the species at each mass, so leave it empty")


def sweep_mass(request: Request, masses_kg: Any, library: Library | None = None) -> MassSweep:
    """The planner's numbers for ``request`` at every mass in ``masses_kg`` (kg), as arrays.

    The request's own mass is ignored. Raises InputError naming the field, as ``plan()`` would for the mass
    that fails (a mass outside the species' range names 'mass' and that mass).
    """
    lib = library or load_library()
    masses = np.asarray(masses_kg, dtype=float).ravel()
    if masses.size == 0 or masses.size > MAX_POINTS:
        raise InputError("mass", masses.size, f"a sweep takes 1 to {MAX_POINTS} masses")
    if not np.isfinite(masses).all():
        raise InputError("mass", "not a number", "every mass of a sweep must be a finite number of kg")
    _refuse_per_animal(request)
    base = resolve_inputs(with_mass(request, masses.min()), lib)   # the plan's own checks and messages
    check_mass(with_mass(request, masses.max()), base.species)
    sp, c, p = base.species, request.circuit, request.patient
    c_keys, c_code = ((c.circuit_type,), np.zeros(masses.shape, int)) if c.circuit_type is not None \
        else usual_circuit_codes(masses, lib)
    a_keys, a_code = ((p.age,), np.zeros(masses.shape, int)) if p.age is not None else age_codes(sp, masses)
    group_code = c_code * len(a_keys) + a_code
    parts: dict[str, Any] = {}
    fixed = False
    codes = np.unique(group_code)
    for code in codes:
        key, age = c_keys[code // len(a_keys)], a_keys[code % len(a_keys)]
        group = replace(request, circuit=replace(c, circuit_type=key), patient=replace(p, age=age))
        idx = _where(group_code == code)
        sub = masses[idx]
        values, fixed = _group(group, replace(base, mass_kg=sub, lean_mass_kg=sub), lib)
        for name, arr in values.items():
            parts.setdefault(name, np.empty(masses.shape, dtype=arr.dtype))[idx] = arr
    flags = {b: parts.pop(f"flag_{b}") for b in BINDING_ORDER}
    tube_id, tube_len = (usual_tube(masses, lib) if c.tube_id_mm is None or c.tube_length_cm is None
                         else (np.full(masses.shape, c.tube_id_mm), np.full(masses.shape, c.tube_length_cm)))
    return MassSweep(mass_kg=masses, circuit=np.array(c_keys, dtype=object)[c_code],
                     age=np.array(a_keys, dtype=object)[a_code], tube_id_mm=tube_id, tube_length_cm=tube_len,
                     flags=flags, fixed=fixed, species=sp.key, mode=base.mode, **parts)


def _group(request: Request, inputs: Inputs, lib: Library) -> tuple[dict[str, Any], bool]:
    """One breathing system and one age: the stages on ``inputs`` whose masses are an array."""
    masses: Any = inputs.mass_kg  # an array here (Inputs holds a float in a plan)
    basis = basis_from_inputs(request, inputs, lib)
    subject = basis.subject()
    ci = choice_inputs(basis, subject)
    n = masses.shape
    if ci.fixed:
        vt, rate = np.broadcast_to(ci.preferred_vt_ml, n), np.broadcast_to(float(ci.preferred_rate), n)
        chosen_ok, flags = np.zeros(n, bool), {b: np.zeros(n, bool) for b in BINDING_ORDER}
    else:
        ch = choose_settings_arrays(ci.va_ml_min, subject.vd_fixed_ml, subject.alveolar_fraction, ci.vt_lo_ml,
                                    ci.vt_hi_ml, ci.rate_lo, ci.rate_hi, ci.vt_pressure_max_ml, ci.preferred_vt_ml,
                                    ci.preferred_rate)
        vt, rate, chosen_ok, flags = ch.vt_ml, ch.rate_per_min, ch.reached, ch.flags
    _check_timing(subject, rate)
    ev = evaluate_points(subject, vt, rate)
    fresh = fresh_gas_stage(basis.system, masses, subject.vco2_ml_min / basis.metabolism.rq, ev.minute_ml_min,
                            ev.set_vt_ml, request.circuit.sampling_ml_min, lib)
    target = basis.target.paco2_mmhg
    with np.errstate(invalid="ignore"):
        near = reached(target, ev.paco2_mmhg)
    ok = (ev.alveolar_ml_min > 0) & near if ci.fixed else chosen_ok | near
    d, m, met = basis.dead_space, basis.mechanics, basis.metabolism
    values = {
        "metabolic_rate_w": met.metabolic_rate_w, "vo2_ml_min": met.vo2_ml_min, "vco2_ml_min": met.vco2_ml_min,
        "anatomical_ml": d.anatomical_ml, "apparatus_ml": d.apparatus_ml, "tube_ml": d.tube_ml,
        "alveolar_ml": d.alveolar_fraction * ev.vt_ml,
        "total_dead_space_ml": d.fixed_ml + d.alveolar_fraction * ev.vt_ml,
        "tidal_volume_ml": ev.vt_ml, "set_tidal_volume_ml": ev.set_vt_ml, "rate_per_min": ev.rate_per_min,
        "minute_ml_min": ev.minute_ml_min, "alveolar_ml_min": ev.alveolar_ml_min,
        "needed_alveolar_ml_min": ci.va_ml_min,
        "ti_s": ev.ti_s, "te_s": ev.te_s, "ie_expiratory_part": ev.ie_expiratory_part,
        "inspiratory_flow_l_min": ev.inspiratory_flow_l_min, "target_paco2_mmhg": target,
        "expected_paco2_mmhg": ev.paco2_mmhg, "expected_etco2_mmhg": ev.etco2_mmhg, "target_reached": ok,
        "peep_cmh2o": m.peep_cmh2o, "plateau_cmh2o": ev.plateau_cmh2o, "peak_cmh2o": ev.peak_cmh2o,
        "driving_cmh2o": ev.driving_cmh2o, "inspiratory_pressure_cmh2o": ev.inspiratory_pressure_cmh2o,
        "pressure_limit_cmh2o": m.pressure_limit_cmh2o, "compliance_ml_cmh2o": m.compliance_ml_cmh2o,
        "resistance_cmh2o_l_s": m.resistance_cmh2o_l_s, "compressed_ml": ev.compressed_ml,
        "pao2_alveolar_mmhg": ev.pao2_mmhg, "min_o2_flow_ml_min": fresh.min_o2_flow_ml_min,
        "fresh_gas_ml_min": fresh.fresh_gas_ml_min, "fresh_gas_induction_ml_min": fresh.induction_ml_min,
        "reservoir_bag_l": fresh.reservoir_bag_l, "vt_min_ml": ci.vt_lo_ml, "vt_max_ml": ci.vt_hi_ml,
        "rate_min_per_min": ci.rate_lo, "rate_max_per_min": ci.rate_hi, "vt_pressure_max_ml": ci.vt_pressure_max_ml,
        **{f"flag_{b}": flags[b] for b in BINDING_ORDER},
    }
    return {k: _spread(_numbers(v), n) for k, v in values.items()}, ci.fixed


def _numbers(x: Any) -> Any:
    """``x`` as a float array (a flag stays boolean; a whole number such as 0 mL of parts becomes a float)."""
    arr = np.asarray(x)
    return arr if arr.dtype == bool or arr.dtype == float else arr.astype(float)


def _where(mask: Any) -> Any:
    """The positions where ``mask`` holds: a slice when they are consecutive (masses in order), else indices."""
    idx = np.flatnonzero(mask)
    return slice(int(idx[0]), int(idx[-1]) + 1) if idx[-1] - idx[0] + 1 == idx.size else idx


def _check_timing(subject: Any, rate: Any) -> None:
    """An entered Ti that leaves no time to breathe out at some mass fails as the plan at that mass fails."""
    rule = subject.timing
    if rule.entered_ti_s is None:
        return
    from ventset.evaluate import MAX_TI_FRACTION

    bad = np.nonzero(rule.entered_ti_s >= MAX_TI_FRACTION * 60.0 / rate)[0]
    if bad.size:
        check_timing(rule, float(rate[bad[0]]))


def sweep_fields() -> tuple[str, ...]:
    """The names of a MassSweep's per-mass arrays (for tables and tests)."""
    return tuple(f.name for f in fields(MassSweep) if f.name not in ("flags", "fixed", "species", "mode"))
