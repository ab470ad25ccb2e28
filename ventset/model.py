"""Frozen records: what a plan is asked for (Request) and what it returns (Plan).

All fields are plain floats in the unit their name carries. ``None`` means "use the
species default", which the plan then lists in its assumptions with the source.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field
from typing import TYPE_CHECKING

from ventset.present.phrases import render

if TYPE_CHECKING:
    from ventset.evaluate import Evaluation, Subject
    from ventset.machines.result import MachineSettings
    from ventset.present.quantities import Units
    from ventset.stages.basis import Basis

STANDING_NOTICE = (
    "A calculated starting point from population averages, not a prescription. "
    "Titrate to capnography, pulse oximetry, blood gas, airway pressures and the patient in front of you; "
    "the attending licensed veterinarian decides the settings, under local rules."
)

MODES = ("volume", "pressure")
AGES = ("adult", "juvenile", "neonate")
STATES = ("fasted", "fed", "gravid")
STRATEGIES = ("volume_first", "least_work")
STRATEGY_LABELS = {
    "volume_first": "Tidal volume per kg first, then rate",
    "least_work": "Rate of least work of breathing (Otis 1950), then tidal volume",
}


@dataclass(frozen=True)
class Patient:
    """The animal. Masses in kg, temperature in °C, metabolic rate in W."""

    species: str
    mass_kg: float
    lean_mass_kg: float | None = None
    body_temp_c: float | None = None
    metabolic_rate_w: float | None = None
    rq: float | None = None
    alveolar_dead_space_fraction: float | None = None
    compliance_ml_cmh2o: float | None = None
    resistance_cmh2o_l_s: float | None = None
    name: str = ""
    # A species not in the library, planned with the values of ``species`` (its base) unless entered.
    custom_species: str = ""
    age: str | None = None    # "neonate", "juvenile" or "adult" (AGES); None: by the species' mass thresholds
    state: str = "fasted"     # ectotherms: "fasted", "fed" or "gravid" (STATES)
    # The patient's situations (keys of resources/situations.toml: surgery, disease, physiology), applied in order.
    situations: tuple[str, ...] = ()
    # A species not listed, planned by its metabolic group alone (species.toml [taxa.<group>]); species is then "".
    taxon: str = ""


@dataclass(frozen=True)
class ApparatusPart:
    """A named part between the Y-piece and the incisors, with its internal volume (mL)."""

    name: str
    volume_ml: float
    source: str = "entered by the user"


@dataclass(frozen=True)
class Circuit:
    """The breathing system: parts, tube beyond the incisors, compressible volume, mode."""

    parts: tuple[ApparatusPart, ...] = ()
    tube_id_mm: float | None = None
    tube_length_cm: float | None = None
    circuit_type: str | None = None
    compressible_ml_cmh2o: float | None = None
    mode: str | None = None
    sampling_ml_min: float = 0.0
    machine: str | None = None  # a ventilator class key (resources/machines.toml); None: ideal settings only
    oxygen_supply_l: float | None = None  # free oxygen left in the supply (L); None: a full usual cylinder


@dataclass(frozen=True)
class Targets:
    """What the settings should reach. Gas pressures in mmHg, airway pressures in cmH2O."""

    paco2_mmhg: float | None = None
    etco2_mmhg: float | None = None
    gradient_mmhg: float | None = None
    peep_cmh2o: float | None = None
    ie_expiratory_part: float | None = None
    pressure_limit_cmh2o: float | None = None
    fio2: float | None = None
    altitude_m: float = 0.0
    barometric_mmhg: float | None = None
    ti_s: float | None = None
    duration_min: float | None = None  # planned duration, for the oxygen supply check (machines.toml default)
    inspiratory_pause_s: float | None = None  # no-flow hold at end-inspiration, inside Ti


@dataclass(frozen=True)
class Strategy:
    """How to pick tidal volume and rate on the line of equal PaCO2."""

    name: str = "volume_first"
    vt_ml_kg: float | None = None
    rate_per_min: float | None = None


@dataclass(frozen=True)
class Request:
    """Everything a plan needs."""

    patient: Patient
    circuit: Circuit = field(default_factory=Circuit)
    targets: Targets = field(default_factory=Targets)
    strategy: Strategy = field(default_factory=Strategy)


@dataclass(frozen=True)
class Caution:
    """A finding about a plan: severity info/caution/danger, a stable code, and its sentence.

    ``template`` names its numbers by unit suffix (``{pao2_mmhg}``); ``values`` holds them in the core's
    units and ``texts`` the words, so the sentence is shown in any unit (``text(units)``).
    """

    severity: str
    code: str
    template: str
    values: tuple[tuple[str, float], ...] = ()
    texts: tuple[tuple[str, str], ...] = ()

    @property
    def message(self) -> str:
        """The sentence with gas pressures in mmHg (the JSON and log form)."""
        return render(self.template, self.values, self.texts)

    def text(self, units: Units | None = None) -> str:
        """The sentence in the reader's units."""
        return render(self.template, self.values, self.texts) if units is None else render(
            self.template, self.values, self.texts, units)


@dataclass(frozen=True)
class Assumption:
    """A default used in a plan, with its value, unit and source; ``key`` says what it is."""

    name: str
    value: float | str
    unit: str
    source: str
    key: str = ""


@dataclass(frozen=True)
class Metabolism:
    metabolic_rate_w: float
    allometric_rate_w: float
    vo2_ml_min: float
    vco2_ml_min: float
    rq: float
    entered: bool


@dataclass(frozen=True)
class DeadSpace:
    anatomical_ml: float
    apparatus_ml: float
    tube_ml: float
    alveolar_ml: float
    total_ml: float
    parts: tuple[ApparatusPart, ...]


@dataclass(frozen=True)
class Ventilation:
    alveolar_ml_min: float
    minute_ml_min: float
    tidal_volume_ml: float
    set_tidal_volume_ml: float
    rate_per_min: float
    ti_s: float
    te_s: float
    inspiratory_flow_l_min: float
    target_paco2_mmhg: float
    expected_paco2_mmhg: float
    expected_etco2_mmhg: float
    target_reached: bool
    delivered_alveolar_ml_min: float
    pause_s: float = 0.0                # inspiratory pause inside Ti (no flow)
    te_without_pause_s: float = math.nan  # Te the same timing rule gives at this rate with no pause


@dataclass(frozen=True)
class Pressures:
    peep_cmh2o: float
    plateau_cmh2o: float
    peak_cmh2o: float
    driving_cmh2o: float
    inspiratory_pressure_cmh2o: float
    pressure_limit_cmh2o: float
    compliance_ml_cmh2o: float
    resistance_cmh2o_l_s: float
    time_constant_s: float
    compressible_ml_cmh2o: float
    compressed_ml: float


@dataclass(frozen=True)
class Oxygen:
    fio2: float
    barometric_mmhg: float
    water_vapour_mmhg: float
    pao2_alveolar_mmhg: float
    min_o2_flow_ml_min: float
    fresh_gas_ml_min: float
    fresh_gas_induction_ml_min: float
    circuit_type: str
    circuit_label: str
    reservoir_bag_l: float = 0.0


@dataclass(frozen=True)
class Limits:
    """The ranges the settings were held inside (absolute units, for the settings map)."""

    vt_min_ml: float
    vt_max_ml: float
    rate_min_per_min: float
    rate_max_per_min: float
    vt_pressure_max_ml: float
    binding: tuple[str, ...]
    preferred_vt_ml: float = float("nan")
    preferred_rate_per_min: float = float("nan")


@dataclass(frozen=True)
class Resolved:
    """The inputs as the plan used them, after defaults were filled in."""

    species: str
    species_label: str
    mass_kg: float
    lean_mass_kg: float
    body_temp_c: float
    mode: str
    strategy: str
    ie_expiratory_part: float
    alveolar_dead_space_fraction: float
    gradient_mmhg: float
    gradient_reliable: bool
    mechanics_reliable: bool


@dataclass(frozen=True)
class Plan:
    """The result of ``plan(request)``: settings, derived values, cautions and assumptions."""

    request: Request
    resolved: Resolved
    metabolism: Metabolism
    dead_space: DeadSpace
    ventilation: Ventilation
    pressures: Pressures
    oxygen: Oxygen
    limits: Limits
    cautions: tuple[Caution, ...]
    assumptions: tuple[Assumption, ...]
    standing_notice: str = STANDING_NOTICE
    # What later stages and every view need without recomputing: the stage results before the choice of
    # settings (``basis``), the resolved patient the settings were evaluated on, and that evaluation.
    basis: Basis | None = None
    subject: Subject | None = None
    evaluation: Evaluation | None = None
    # The plan dialled on the chosen machine class (ventset.machines), None when no machine was chosen.
    machine: MachineSettings | None = None

    def assumption(self, key: str) -> Assumption | None:
        """The assumption recorded under ``key`` (e.g. 'anatomical_dead_space'), or None."""
        return next((a for a in self.assumptions if a.key == key), None)

    def worst_severity(self) -> str:
        order = {"info": 0, "caution": 1, "danger": 2}
        return max((c.severity for c in self.cautions), key=order.__getitem__, default="info")


# Keys added after case schema 1 that are written only when set, so a case without them keeps that layout.
_WRITTEN_WHEN_SET = {"circuit": ("machine", "oxygen_supply_l"), "targets": ("duration_min",)}


def request_to_dict(request: Request) -> dict:
    """Plain dict of a request (for case files and JSON); the ventilator keys only when set."""
    data = asdict(request)
    for section, keys in _WRITTEN_WHEN_SET.items():
        for key in keys:
            if data[section].get(key) is None:
                data[section].pop(key, None)
    return data


def request_from_dict(data: dict) -> Request:
    """Rebuild a Request from ``request_to_dict`` output (raises TypeError/KeyError on bad shape)."""
    circuit = dict(data.get("circuit") or {})
    circuit["parts"] = tuple(ApparatusPart(**p) for p in circuit.get("parts", ()))
    patient = dict(data["patient"])
    if "situations" in patient:
        patient["situations"] = tuple(patient["situations"])
    return Request(
        patient=Patient(**patient),
        circuit=Circuit(**circuit),
        targets=Targets(**(data.get("targets") or {})),
        strategy=Strategy(**(data.get("strategy") or {})),
    )
