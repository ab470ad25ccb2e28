"""Stage 4: the breathing system (circuit type, compressible volume), the atmosphere (FiO2, barometric and
water-vapour pressure) and, once the settings are known, fresh gas and the reservoir bag."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from ventset.elementwise import is_scalar, larger
from ventset.errors import InputError
from ventset.library import CircuitType, Library
from ventset.model import Assumption, Circuit, Targets
from ventset.physiology import gas
from ventset.stages.trail import note
from ventset.units import fmt

BAG_SIZES_L = (0.25, 0.5, 1.0, 2.0, 3.0, 4.0, 5.0, 15.0, 30.0)  # commonly stocked reservoir bags (common practice)


def reservoir_bag_l(set_vt_ml: Any, multiple: float) -> Any:
    """Smallest stocked bag holding ``multiple`` × the set tidal volume (L); the largest if none does (float or
    array)."""
    need = set_vt_ml * multiple / 1000.0
    if is_scalar(need):
        return next((b for b in BAG_SIZES_L if b >= need), BAG_SIZES_L[-1])
    import numpy as np

    sizes = np.asarray(BAG_SIZES_L)
    return sizes[np.minimum(np.searchsorted(sizes, need, side="left"), len(sizes) - 1)]


@dataclass(frozen=True)
class BreathingSystem:
    key: str
    circuit: CircuitType
    compressible_ml_cmh2o: float
    assumptions: tuple[Assumption, ...]


def _circuit_rules(mass_kg: Any, lib: Library) -> tuple[tuple[Any, str], ...]:
    """(mass test, key) in the order they are tried; a mass passing none gets the small-animal circle."""
    fg = lib.fresh_gas
    return ((mass_kg < fg["direct_small_patient_below_kg"].value, "direct_small_patient"),
            (mass_kg < fg["non_rebreathing_below_kg"].value, "non_rebreathing"),
            (mass_kg > fg["large_animal_circle_above_kg"].value, "rebreathing_large_animal"))


def usual_circuit(mass_kg: float, lib: Library) -> str:
    """The breathing system usually chosen for a body mass (its key)."""
    return next((key for below, key in _circuit_rules(mass_kg, lib) if below), "rebreathing_small_animal")


def usual_circuit_codes(mass_kg: Any, lib: Library) -> tuple[tuple[str, ...], Any]:
    """``usual_circuit`` for an array of masses: the keys and, per mass, the index of its key."""
    import numpy as np

    rules = _circuit_rules(np.asarray(mass_kg, dtype=float), lib)
    return (*(k for _, k in rules), "rebreathing_small_animal"), np.select([r for r, _ in rules],
                                                                            list(range(len(rules))), len(rules))


def circuit_stage(c: Circuit, mass_kg: float, lib: Library) -> BreathingSystem:
    """The circuit entered, or the usual one for the body mass; its compressible volume (mL/cmH2O)."""
    fg = lib.fresh_gas
    notes: list[Assumption] = []
    if c.circuit_type is not None:
        if c.circuit_type not in lib.circuits:
            raise InputError("circuit", c.circuit_type, f"must be one of {', '.join(lib.circuits)}")
        key = c.circuit_type
    else:
        key = usual_circuit(mass_kg, lib)
    circuit = lib.circuits[key]
    if c.circuit_type is None:
        rule = fg["direct_small_patient_below_kg" if key == "direct_small_patient" else "non_rebreathing_below_kg"]
        notes.append(note("circuit", "Breathing system", circuit.label, "", f"{rule.source}; chosen by body mass"))
    comp = c.compressible_ml_cmh2o if c.compressible_ml_cmh2o is not None else circuit.compressible_ml_cmh2o.value
    if c.compressible_ml_cmh2o is None:
        notes.append(note("compressible_volume", "Circuit compressible volume", comp, "mL/cmH2O",
                          circuit.compressible_ml_cmh2o.source))
    return BreathingSystem(key, circuit, comp, tuple(notes))


@dataclass(frozen=True)
class Atmosphere:
    fio2: float
    barometric_mmhg: float
    water_vapour_mmhg: float
    assumptions: tuple[Assumption, ...]


def atmosphere_stage(t: Targets, body_temp_c: float, lib: Library) -> Atmosphere:
    """FiO2, barometric pressure (measured, or ISA at the altitude) and saturated water vapour at body temperature."""
    notes: list[Assumption] = []
    fio2 = t.fio2 if t.fio2 is not None else lib.planning["fio2"].value
    if t.fio2 is None:
        notes.append(note("fio2", "FiO2", fio2, "", lib.planning["fio2"].source))
    if t.barometric_mmhg is not None:
        pb = t.barometric_mmhg
    else:
        pb = gas.barometric_pressure_mmhg(t.altitude_m)
        notes.append(note("barometric", "Barometric pressure", pb, "mmHg",
                          f"ISA standard atmosphere at {fmt(t.altitude_m)} m (ICAO Doc 7488)"))
    ph2o = gas.water_vapour_pressure_mmhg(body_temp_c)
    notes.append(note("water_vapour", "Water vapour pressure", ph2o, "mmHg",
                      f"saturated at {fmt(body_temp_c)} °C (IAPWS-IF97)"))
    return Atmosphere(fio2, pb, ph2o, tuple(notes))


@dataclass(frozen=True)
class FreshGas:
    min_o2_flow_ml_min: float
    fresh_gas_ml_min: float
    induction_ml_min: float
    reservoir_bag_l: float
    assumptions: tuple[Assumption, ...]


def fresh_gas_stage(system: BreathingSystem, mass_kg: float, vo2_ml_min: float, minute_ml_min: float,
                    set_vt_ml: float, sampling_ml_min: float, lib: Library) -> FreshGas:
    """Minimum O2 flow (VO2 + sampling not returned), fresh gas for the circuit, and the reservoir bag."""
    fg = lib.fresh_gas
    rebreathing = system.circuit.rebreathing
    min_o2 = vo2_ml_min + (sampling_ml_min if rebreathing else 0.0)
    if rebreathing:
        size = "large_animal" if system.key == "rebreathing_large_animal" else "rebreathing"
        maint, induct = fg[f"{size}_maintenance_ml_kg_min"], fg[f"{size}_induction_ml_kg_min"]
        fresh = larger(larger(maint.value * mass_kg, fg["rebreathing_floor_ml_min"].value), min_o2)
        induction = larger(induct.value * mass_kg, fresh)
        notes = [note("fresh_gas_maintenance", "Fresh gas, maintenance", maint.value, "mL/kg/min", maint.source),
                 note("fresh_gas_induction", "Fresh gas, induction and changes", induct.value, "mL/kg/min",
                      induct.source)]
    else:
        multiple = fg["non_rebreathing_minute_volume_multiple"]
        fresh = larger(larger(multiple.value * minute_ml_min, fg["non_rebreathing_floor_ml_min"].value), min_o2)
        induction = fresh
        notes = [note("fresh_gas_multiple", "Fresh gas, non-rebreathing multiple of minute volume", multiple.value,
                      "× VE", multiple.source)]
    bag = lib.planning["reservoir_bag_vt_multiple"]
    notes.append(note("reservoir_bag", "Reservoir bag", bag.value, "× set VT", bag.source))
    return FreshGas(min_o2, fresh, induction, reservoir_bag_l(set_vt_ml, bag.value), tuple(notes))
