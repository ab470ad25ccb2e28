"""The patient's situations (resources/situations.toml) as frozen records, and their effects in words.

A Situation holds only data; the planner applies it in ``ventset.stages.situation`` and its cautions are in
``ventset.situation_cautions``. ``effect_words`` describes each effect on one line for the list of situations
(``ventset situations``), the window's chooser and the plan's report.
"""

from __future__ import annotations

from dataclasses import dataclass, fields
from typing import TYPE_CHECKING, Any

from ventset.units import fmt

if TYPE_CHECKING:  # the records only hold them; importing the schema here would slow every command's start
    from ventset.schema import Sourced, Span

MAX_SITUATIONS = 30  # situations on one request (there are fewer in the file; a guard for case files)


@dataclass(frozen=True)
class SituationNote:
    """A caution shown whenever the situation is chosen."""

    severity: str
    code: str
    text: str
    source: str


@dataclass(frozen=True)
class Co2Output:
    """A factor on the CO2 output: 'metabolic' (the body makes more) or 'absorbed' (taken up from outside)."""

    factor: float
    origin: str
    plateau_min: float | None
    source: str


@dataclass(frozen=True)
class Co2Bolus:
    """A CO2 load given at once: mL released per mmol, the dose assumed (mmol/kg) and how long it shows (s)."""

    ml_per_mmol: float
    dose_mmol_kg: float
    duration_s: float
    source: str


@dataclass(frozen=True)
class Situation:
    key: str
    label: str
    category: str
    species: tuple[str, ...] = ()
    excludes: tuple[str, ...] = ()
    asks_for: tuple[str, ...] = ()
    age: str | None = None
    co2_output: Co2Output | None = None
    co2_per_degree_above_normal: Sourced | None = None
    co2_bolus: Co2Bolus | None = None
    compliance_factor: Sourced | None = None
    paco2_band_mmhg: Span | None = None
    paco2_ceiling_mmhg: Sourced | None = None
    paco2_shift_mmhg: Sourced | None = None
    tidal_volume_ml_kg: Span | None = None
    rate_max_factor: Sourced | None = None
    peep_min_cmh2o: Sourced | None = None
    peep_max_cmh2o: Sourced | None = None
    pressure_limit_cmh2o: Sourced | None = None
    plateau_limit_cmh2o: Sourced | None = None
    driving_limit_cmh2o: Sourced | None = None
    gradient_mmhg: Sourced | None = None
    shunt_fraction: Span | None = None
    low_flow: bool = False
    cautions: tuple[SituationNote, ...] = ()


@dataclass(frozen=True)
class Applied:
    """The situations a plan was made for and the combined limits they set (None: no such limit).

    ``co2_factor`` is the factor the plan applied to the CO2 output (``vco2_before_ml_min`` before it);
    ``co2_stores`` the half-times and re-check times of resources/situations.toml [co2_stores] (minutes).
    """

    situations: tuple[Situation, ...]
    co2_factor: float
    vco2_before_ml_min: float
    paco2_band_mmhg: tuple[float, float] | None
    paco2_ceiling_mmhg: float | None
    peep_min_cmh2o: float | None
    peep_max_cmh2o: float | None
    pressure_limit_cmh2o: float | None
    plateau_limit_cmh2o: float | None
    driving_limit_cmh2o: float | None
    co2_stores: dict[str, float]

    @property
    def keys(self) -> tuple[str, ...]:
        return tuple(s.key for s in self.situations)

    def labels(self, which: tuple[Situation, ...] | None = None) -> str:
        """The labels of ``which`` (default: all), joined for a sentence."""
        return " and ".join(s.label for s in (self.situations if which is None else which))


def build_situation(key: str, v: dict[str, Any]) -> Situation:
    """A Situation from the checked values of one [situations.<key>] table."""
    same = {f.name: v[f.name] for f in fields(Situation) if f.name in v}
    co2, bolus = v.get("co2_output"), v.get("co2_bolus")
    same.update(
        key=key, cautions=tuple(SituationNote(**n) for n in v.get("cautions", ())),
        co2_output=None if co2 is None else Co2Output(co2["factor"], co2["origin"], co2["plateau_min"],
                                                      co2["source"]),
        co2_bolus=None if bolus is None else Co2Bolus(bolus["ml_per_mmol"], bolus["dose_mmol_kg"],
                                                      bolus["duration_s"], bolus["source"]))
    return Situation(**same)


def normal_key(text: str) -> str:
    """A situation key as typed ('Raised_ICP ' → 'raised-icp')."""
    return text.strip().lower().replace("_", "-").replace(" ", "-")


def _x(value: float) -> str:
    return f"×{fmt(value)}"


def effect_words(s: Situation) -> list[str]:
    """Each effect of ``s`` in a few words, in the order the planner applies them (empty: cautions only)."""
    out: list[str] = []
    if s.age:
        out.append(f"planned as a {s.age}")
    if s.co2_output:
        c = s.co2_output
        kind = "absorbed CO2" if c.origin == "absorbed" else "CO2 output"
        plateau = f", plateau in {fmt(c.plateau_min)} min" if c.plateau_min else ""
        out.append(f"{kind} {_x(c.factor)}{plateau}")
    if s.co2_per_degree_above_normal:
        out.append(f"CO2 output +{fmt(s.co2_per_degree_above_normal.value * 100)} % per °C above normal")
    if s.co2_bolus:
        b = s.co2_bolus
        out.append(f"CO2 load up to {fmt(b.ml_per_mmol)} mL/mmol over about {fmt(b.duration_s / 60)} min")
    if s.compliance_factor:
        out.append(f"compliance {_x(s.compliance_factor.value)}")
    if s.paco2_band_mmhg:
        out.append(f"target PaCO2 {fmt(s.paco2_band_mmhg.min)}–{fmt(s.paco2_band_mmhg.max)} mmHg")
    if s.paco2_shift_mmhg:
        out.append(f"target PaCO2 {fmt(s.paco2_shift_mmhg.value)} mmHg")
    if s.paco2_ceiling_mmhg:
        out.append(f"accept PaCO2 ≤ {fmt(s.paco2_ceiling_mmhg.value)} mmHg")
    if s.tidal_volume_ml_kg:
        t = s.tidal_volume_ml_kg
        out.append(f"VT {fmt(t.min)}–{fmt(t.max)} mL/kg (start {fmt(t.start)})")
    if s.rate_max_factor:
        out.append(f"highest rate {_x(s.rate_max_factor.value)}")
    for name, value in (("PEEP ≥", s.peep_min_cmh2o), ("PEEP ≤", s.peep_max_cmh2o),
                        ("pressure ≤", s.pressure_limit_cmh2o), ("plateau ≤", s.plateau_limit_cmh2o),
                        ("driving pressure ≤", s.driving_limit_cmh2o)):
        if value is not None:
            out.append(f"{name} {fmt(value.value)} cmH2O")
    if s.gradient_mmhg:
        out.append(f"PaCO2 − EtCO2 gradient ≥ {fmt(s.gradient_mmhg.value)} mmHg")
    if s.shunt_fraction:
        out.append(f"shunt {fmt(s.shunt_fraction.min * 100)}–{fmt(s.shunt_fraction.max * 100)} %")
    if s.low_flow:
        out.append("oxygen flow checked against O2 use")
    return out


def summary(s: Situation) -> str:
    """One line: the effects, then how many cautions it brings."""
    words = effect_words(s)
    n = len(s.cautions)
    tail = f"{n} caution{'s' if n != 1 else ''}" if n else ""
    return "; ".join([*words, tail] if tail else words) or "cautions only"
