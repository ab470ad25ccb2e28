"""During the anaesthetic: next settings from a measured PaCO2/EtCO2, measured dead space, oxygenation.

Model (alveolar ventilation equation; reference sheet §3.4): at constant CO2 output and dead space,
PaCO2 ∝ 1/VA. The alveolar ventilation of the settings in use is VA = f·(VT(1 − f_alv) − VD_fixed), with
VD_fixed (anatomical + apparatus + tube) and f_alv taken from the plan of the same patient and circuit.
The measured PaCO2 then gives the patient's actual CO2 output, VCO2 = VA·PaCO2/K(T), and the ventilation
that reaches the target, VA_new = VA·PaCO2_measured/PaCO2_target. The settings on that line are chosen by
the planner's own solver (``ventset.planner.choose_settings``) inside the species ranges and the pressure
limit. Also here: Bohr and Enghoff dead space, the oxygenation check, and the record of an anaesthetic
(Measurement, Proposal, TimelineEntry) as frozen dataclasses with to_dict/from_dict for case files.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from functools import lru_cache

from ventset import __version__
from ventset.cautions import LIMIT_WORDS, SEVERITY_ORDER
from ventset.errors import DataError, InputError
from ventset.fields import FIELDS, FieldSpec
from ventset.library import Library, Sourced, load_library, load_resource
from ventset.model import STANDING_NOTICE, Caution, Limits, Plan, Request
from ventset.physiology import deadspace, gas, metabolism
from ventset.planner import Choice, breath_alveolar_ml, choose_settings, plan
from ventset.report import _num, caution_lines, patient_to_dict
from ventset.units import check_range, fmt, gas_units_in_text, parse_quantity

PREFERENCES = ("rate", "tidal_volume", "both")
_ONLY = {"rate": "Changing only the rate", "tidal_volume": "Changing only the tidal volume",
         "both": "Sharing the change between rate and tidal volume"}
PREFERENCE_LABELS = {
    "rate": "keep the tidal volume, change the rate",
    "tidal_volume": "keep the rate, change the tidal volume",
    "both": "share the change between rate and tidal volume",
}
ACCEPTED = ("", "proposal", "partial_step", "own")
TIMELINE_SCHEMA = "ventset.timeline"
TIMELINE_VERSION = 1

# Codes of plan cautions that depend on the plan's own CO2 estimate or on how its starting point was chosen;
# when a plan is used only to evaluate settings they are replaced by the titration's own cautions.
_PLAN_CODES_REPLACED = frozenset({"METABOLIC_RATE_UNUSUAL", "TARGET_UNREACHABLE", "TARGET_BELOW_LIMITS",
                                  "LIMIT_BINDING", "LOW_ALVEOLAR_O2", "VT_NOT_ABOVE_DEAD_SPACE"})


# --------------------------------------------------------------------------------------------------------
# Inputs measured during the anaesthetic: declared once (label, unit, hard limits), like ventset.fields.
# --------------------------------------------------------------------------------------------------------

MEASURED_FIELDS: dict[str, FieldSpec] = {f.key: f for f in (
    FieldSpec("time", "Time", "measurement.time_min", "min", ("min", "h"), 0.0, 10000.0,
              "Minutes since the start of the record (or a clock time HH:MM in the window).", lo_open=False,
              group="measurement"),
    FieldSpec("tidal-volume", "Tidal volume in use", "measurement.tidal_volume_ml", "mL", ("mL", "L"), 0.0,
              50000.0, "Tidal volume the patient receives now: exhaled volume by spirometry, or the set volume "
              "less what the circuit absorbs.", group="measurement"),
    FieldSpec("rate", "Rate in use", "measurement.rate_per_min", "1/min", ("1/min",), 0.0, 300.0,
              "Breath rate in use now.", group="measurement"),
    FieldSpec("paco2", "Measured PaCO2", "measurement.paco2_mmhg", "mmHg", ("mmHg", "kPa"), 5.0, 250.0,
              "Arterial PCO2 from a blood gas ('52 mmHg', '6.9 kPa').", group="measurement"),
    FieldSpec("etco2", "Measured EtCO2", "measurement.etco2_mmhg", "mmHg", ("mmHg", "kPa"), 0.0, 250.0,
              "End-tidal CO2 from the capnograph.", group="measurement"),
    FieldSpec("pao2", "Measured PaO2", "measurement.pao2_mmhg", "mmHg", ("mmHg", "kPa"), 0.0, 800.0,
              "Arterial PO2 from a blood gas.", group="measurement"),
    FieldSpec("spo2", "SpO2", "measurement.spo2_percent", "percent", ("percent",), 0.0, 100.0,
              "Pulse-oximeter saturation in % ('97' or '97 %').", lo_open=True, group="measurement"),
    FieldSpec("fio2", "FiO2", "measurement.fio2", "", ("", "percent"), 0.21, 1.0,
              "Inspired O2 fraction at the time of the measurement, 0.21-1 (or '50 %').", lo_open=False,
              group="measurement"),
    FieldSpec("mixed-expired-co2", "Mixed-expired PCO2", "deadspace.mixed_expired_mmhg", "mmHg", ("mmHg", "kPa"),
              0.0, 250.0, "Mean PCO2 of the expired gas (volumetric capnography, or gas collected from the "
              "expiratory limb).", group="deadspace"),
    FieldSpec("alveolar-co2", "Mean alveolar PCO2", "deadspace.alveolar_pco2_mmhg", "mmHg", ("mmHg", "kPa"),
              0.0, 250.0, "Mean alveolar PCO2 from the volumetric capnogram (phase III midpoint).",
              group="deadspace"),
    FieldSpec("apparatus-volume", "Apparatus volume", "deadspace.apparatus_ml", "mL", ("mL",), 0.0, 50000.0,
              "Volume of the parts between the Y-piece and the incisors, and the tube beyond the incisors.",
              lo_open=False, group="deadspace"),
)}


def parse_measured(key: str, text: object) -> float:
    """Parse and range-check one measured value by its key; raises InputError naming the field."""
    spec = MEASURED_FIELDS[key]
    if key == "fio2":
        plain = isinstance(text, int | float) or str(text).strip().replace(".", "", 1).lstrip("+").isdigit()
        value = parse_quantity(text, "", spec) if plain else parse_quantity(text, "percent", spec) / 100
    else:
        value = parse_quantity(text, spec.unit, spec)
    return check_range(value, spec.lo, spec.hi, spec, {"1/min": "/min", "percent": "%"}.get(spec.unit,
                                                                                                   spec.unit),
                       lo_open=spec.lo_open)


def _check(key: str, value: float | None) -> None:
    if value is None:
        return
    spec = MEASURED_FIELDS[key]
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise InputError(spec, value, "must be a number")
    check_range(float(value), spec.lo, spec.hi, spec, spec.unit, lo_open=spec.lo_open)


def parse_time(text: str, earlier: tuple[Measurement, ...] = ()) -> tuple[float, str]:
    """Read a time as minutes since the start ('35', '1.5 h') or a clock time 'HH:MM'.

    Returns (minutes since the start, clock text or ""). A clock time counts from the first entry that
    was timed by the clock (past midnight wraps); the first entry of a record timed by the clock is minute 0.
    """
    raw = str(text).strip()
    if ":" not in raw:
        return parse_measured("time", raw), ""
    hh, _, mm = raw.partition(":")
    if not (hh.isdigit() and mm.isdigit() and len(mm) == 2 and int(hh) < 24 and int(mm) < 60):
        raise InputError("Time", raw, "enter minutes since the start (e.g. 35) or a clock time HH:MM (e.g. 10:35)")
    clock_min = int(hh) * 60 + int(mm)
    ref = next((m for m in earlier if m.clock), None)
    if ref is None:
        if earlier:
            raise InputError("Time", raw, "the first entry was timed in minutes since the start; enter minutes")
        return 0.0, f"{int(hh):02d}:{mm}"
    h0, _, m0 = ref.clock.partition(":")
    start = int(h0) * 60 + int(m0) - ref.time_min
    return float((clock_min - start) % 1440), f"{int(hh):02d}:{mm}"


# --------------------------------------------------------------------------------------------------------
# Data files: titration.toml and oxygenation.toml
# --------------------------------------------------------------------------------------------------------

@dataclass(frozen=True)
class Band:
    """A PaO2/FiO2 interpretation band: applies below (or at) limit_mmhg."""

    scheme: str
    code: str
    label: str
    limit_mmhg: float
    inclusive: bool
    source: str

    def applies(self, ratio_mmhg: float) -> bool:
        return ratio_mmhg <= self.limit_mmhg if self.inclusive else ratio_mmhg < self.limit_mmhg


@dataclass(frozen=True)
class TitrationData:
    defaults: dict[str, Sourced]
    oxygen: dict[str, Sourced]
    bands: tuple[Band, ...]


@lru_cache(maxsize=1)
def load_titration_data() -> TitrationData:
    """Load and validate resources/titration.toml and resources/oxygenation.toml (cached; ventset/datafiles.py)."""
    t, o = load_resource("titration.toml"), load_resource("oxygenation.toml")
    return TitrationData(dict(t["defaults"]), dict(o["thresholds"]), tuple(Band(**b) for b in o["pf_bands"]))


def _c(severity: str, code: str, message: str, **values: float) -> Caution:
    return Caution(severity, code, message, tuple((k, round(float(v), 4)) for k, v in values.items()))


def _sorted(cautions: list[Caution]) -> tuple[Caution, ...]:
    return tuple(sorted(cautions, key=lambda c: SEVERITY_ORDER[c.severity]))


# --------------------------------------------------------------------------------------------------------
# Records of the anaesthetic (Qt-free, for the window and for case files)
# --------------------------------------------------------------------------------------------------------

def _opt(x: float | None) -> float | None:
    return None if x is None else float(x)


def _finite_or_none(x: float) -> float | None:
    return float(x) if math.isfinite(x) else None


@dataclass(frozen=True)
class Settings:
    """Ventilator settings in use: tidal volume the patient receives (mL) and rate (/min)."""

    tidal_volume_ml: float
    rate_per_min: float

    def to_dict(self) -> dict:
        return {"tidal_volume_ml": self.tidal_volume_ml, "rate_per_min": self.rate_per_min}

    @classmethod
    def from_dict(cls, d: dict) -> Settings:
        return cls(float(d["tidal_volume_ml"]), float(d["rate_per_min"]))


@dataclass(frozen=True)
class Measurement:
    """One row of the anaesthetic record: when, the settings in use, and what was measured.

    Gas pressures in mmHg, SpO2 in %, FiO2 as a fraction; ``None`` means not measured.
    """

    time_min: float
    tidal_volume_ml: float
    rate_per_min: float
    paco2_mmhg: float | None = None
    etco2_mmhg: float | None = None
    pao2_mmhg: float | None = None
    spo2_percent: float | None = None
    fio2: float | None = None
    clock: str = ""
    note: str = ""

    @property
    def settings(self) -> Settings:
        return Settings(self.tidal_volume_ml, self.rate_per_min)

    def to_dict(self) -> dict:
        return {"time_min": self.time_min, "clock": self.clock, "tidal_volume_ml": self.tidal_volume_ml,
                "rate_per_min": self.rate_per_min, "paco2_mmhg": self.paco2_mmhg, "etco2_mmhg": self.etco2_mmhg,
                "pao2_mmhg": self.pao2_mmhg, "spo2_percent": self.spo2_percent, "fio2": self.fio2,
                "note": self.note}

    @classmethod
    def from_dict(cls, d: dict) -> Measurement:
        return cls(float(d["time_min"]), float(d["tidal_volume_ml"]), float(d["rate_per_min"]),
                   _opt(d.get("paco2_mmhg")), _opt(d.get("etco2_mmhg")), _opt(d.get("pao2_mmhg")),
                   _opt(d.get("spo2_percent")), _opt(d.get("fio2")), str(d.get("clock") or ""),
                   str(d.get("note") or ""))


def validate_measurement(m: Measurement) -> None:
    """Check every number of a measurement against its hard limits; raises InputError naming the field."""
    for key, value in (("time", m.time_min), ("tidal-volume", m.tidal_volume_ml), ("rate", m.rate_per_min),
                       ("paco2", m.paco2_mmhg), ("etco2", m.etco2_mmhg), ("pao2", m.pao2_mmhg),
                       ("spo2", m.spo2_percent), ("fio2", m.fio2)):
        _check(key, value)


@dataclass(frozen=True)
class Proposal:
    """Settings proposed from a measurement, and what the model expects from them.

    ``changed`` is 'rate', 'tidal_volume', 'both' or 'none'. ``fraction_of_change`` is the share of the full
    change in alveolar ventilation this step makes (1 for the full proposal); ``ventilation_change`` is the
    relative change of alveolar ventilation against the settings in use (+0.25 = 25 % more).
    """

    tidal_volume_ml: float
    set_tidal_volume_ml: float
    rate_per_min: float
    ti_s: float
    te_s: float
    alveolar_ml_min: float
    minute_ml_min: float
    expected_paco2_mmhg: float
    expected_etco2_mmhg: float
    plateau_cmh2o: float
    peak_cmh2o: float
    reached: bool
    binding: tuple[str, ...]
    changed: str
    fraction_of_change: float
    ventilation_change: float

    @property
    def settings(self) -> Settings:
        return Settings(self.tidal_volume_ml, self.rate_per_min)

    def to_dict(self) -> dict:
        d = {k: getattr(self, k) for k in self.__dataclass_fields__}
        d["binding"] = list(self.binding)
        for k in ("expected_paco2_mmhg", "expected_etco2_mmhg", "peak_cmh2o", "plateau_cmh2o"):
            d[k] = _finite_or_none(d[k])
        return d

    @classmethod
    def from_dict(cls, d: dict) -> Proposal:
        def num(k: str) -> float:
            v = d.get(k)
            return math.nan if v is None else float(v)

        return cls(num("tidal_volume_ml"), num("set_tidal_volume_ml"), num("rate_per_min"), num("ti_s"),
                   num("te_s"), num("alveolar_ml_min"), num("minute_ml_min"),
                   math.inf if d.get("expected_paco2_mmhg") is None else float(d["expected_paco2_mmhg"]),
                   num("expected_etco2_mmhg"), num("plateau_cmh2o"), num("peak_cmh2o"), bool(d["reached"]),
                   tuple(d.get("binding") or ()), str(d["changed"]), num("fraction_of_change"),
                   num("ventilation_change"))


# --------------------------------------------------------------------------------------------------------
# Oxygenation: alveolar–arterial gradient, PaO2/FiO2 ratio and its bands
# --------------------------------------------------------------------------------------------------------

@dataclass(frozen=True)
class Oxygenation:
    """Oxygenation from a measured PaO2 (mmHg). ``bands`` holds the most severe band per scheme that applies."""

    pao2_mmhg: float
    fio2: float
    barometric_mmhg: float
    paco2_mmhg: float
    rq: float
    water_vapour_mmhg: float
    alveolar_po2_mmhg: float
    aa_gradient_mmhg: float
    pf_ratio_mmhg: float
    expected_pao2_mmhg: float
    bands: tuple[Band, ...]
    cautions: tuple[Caution, ...]

    def to_dict(self) -> dict:
        return {"pao2_mmhg": _num(self.pao2_mmhg), "fio2": _num(self.fio2),
                "barometric_mmhg": _num(self.barometric_mmhg), "paco2_mmhg": _num(self.paco2_mmhg),
                "rq": _num(self.rq), "water_vapour_mmhg": _num(self.water_vapour_mmhg),
                "alveolar_po2_mmhg": _num(self.alveolar_po2_mmhg), "aa_gradient_mmhg": _num(self.aa_gradient_mmhg),
                "pf_ratio_mmhg": _num(self.pf_ratio_mmhg), "expected_pao2_mmhg": _num(self.expected_pao2_mmhg),
                "bands": [{"scheme": b.scheme, "code": b.code, "label": b.label, "source": b.source}
                          for b in self.bands]}


def oxygenation(pao2_mmhg: float, fio2: float, barometric_mmhg: float, paco2_mmhg: float, body_temp_c: float,
                rq: float) -> Oxygenation:
    """A–a gradient = PAO2 − PaO2 (PAO2 by the alveolar gas equation) and P/F = PaO2/FiO2, with bands.

    Bands: VetALI < 300, VetARDS < 200 mmHg (Wilkins et al. 2007); human Berlin ≤ 300/200/100 mmHg (ARDS
    Definition Task Force 2012); expected PaO2 ≈ 5 × FiO2 in % (common practice). From resources/oxygenation.toml.
    """
    data = load_titration_data()
    th = data.oxygen
    _check("pao2", pao2_mmhg)
    _check("fio2", fio2)
    ph2o = gas.water_vapour_pressure_mmhg(body_temp_c)
    pao2_alv = gas.alveolar_po2_mmhg(fio2, barometric_mmhg, ph2o, paco2_mmhg, rq)
    ratio = pao2_mmhg / fio2
    expected = th["expected_pao2_per_fio2_percent"].value * fio2 * 100
    bands = []
    for scheme in dict.fromkeys(b.scheme for b in data.bands):
        hits = [b for b in data.bands if b.scheme == scheme and b.applies(ratio)]
        if hits:
            bands.append(min(hits, key=lambda b: b.limit_mmhg))
    out: list[Caution] = []
    severe, hypo = th["pao2_severe_hypoxaemia_mmhg"], th["pao2_hypoxaemia_mmhg"]
    if pao2_mmhg < hypo.value:
        sev = "danger" if pao2_mmhg < severe.value else "caution"
        out.append(_c(sev, "HYPOXAEMIA",
                      f"PaO2 {fmt(pao2_mmhg)} mmHg is below {fmt(severe.value if sev == 'danger' else hypo.value)} "
                      f"mmHg ({'severe ' if sev == 'danger' else ''}hypoxaemia; {hypo.source}). Check the airway, "
                      "tube position and oxygen supply; raise FiO2; consider PEEP or recruitment (clinician's call).",
                      pao2_mmhg=pao2_mmhg))
    if pao2_mmhg > pao2_alv + 1e-9:
        out.append(_c("caution", "PAO2_ABOVE_ALVEOLAR",
                      f"Measured PaO2 {fmt(pao2_mmhg)} mmHg is above the alveolar PO2 {fmt(pao2_alv)} mmHg calculated "
                      f"for FiO2 {fmt(fio2)} at {fmt(barometric_mmhg)} mmHg, which cannot happen: check FiO2, the "
                      "barometric pressure and the sample.", pao2_mmhg=pao2_mmhg, alveolar_po2_mmhg=pao2_alv))
    vet = next((b for b in bands if b.scheme == "veterinary"), None)
    if vet is not None:
        out.append(_c("caution", "PF_RATIO_LOW",
                      f"PaO2/FiO2 {fmt(ratio)} mmHg is {vet.label} ({vet.source}). A ratio alone is not a "
                      "diagnosis: under anaesthesia atelectasis and ventilation–perfusion mismatch lower it too. "
                      "Consider PEEP or a recruitment manoeuvre if the clinician judges it safe.", pf_ratio=ratio))
    elif pao2_mmhg < expected:
        out.append(_c("info", "PAO2_BELOW_EXPECTED",
                      f"PaO2 {fmt(pao2_mmhg)} mmHg is below the ≈{fmt(expected)} mmHg expected at FiO2 {fmt(fio2)} "
                      f"({th['expected_pao2_per_fio2_percent'].source}): some venous admixture or "
                      "ventilation–perfusion mismatch.", pao2_mmhg=pao2_mmhg, expected_mmhg=expected))
    return Oxygenation(pao2_mmhg, fio2, barometric_mmhg, paco2_mmhg, rq, ph2o, pao2_alv, pao2_alv - pao2_mmhg, ratio,
                       expected, tuple(bands), _sorted(out))


def _oxygenation_sentence(o: Oxygenation) -> str:
    bands = "; ".join(f"{b.label} ({b.source})" for b in o.bands)
    return (f"PaO2 {fmt(o.pao2_mmhg)} mmHg at FiO2 {fmt(o.fio2)}: alveolar PO2 {fmt(o.alveolar_po2_mmhg)} mmHg, "
            f"A–a gradient {fmt(o.aa_gradient_mmhg)} mmHg, PaO2/FiO2 {fmt(o.pf_ratio_mmhg)} mmHg"
            + (f" — {bands}." if bands else "."))


def spo2_cautions(spo2_percent: float) -> list[Caution]:
    """Low pulse-oximeter saturation (thresholds in resources/oxygenation.toml)."""
    th = load_titration_data().oxygen
    lo, very = th["spo2_caution_percent"], th["spo2_danger_percent"]
    if spo2_percent >= lo.value:
        return []
    sev = "danger" if spo2_percent < very.value else "caution"
    return [_c(sev, "SPO2_LOW",
               f"SpO2 {fmt(spo2_percent)} % is below {fmt(very.value if sev == 'danger' else lo.value)} % "
               f"({(very if sev == 'danger' else lo).source}). Check probe placement and perfusion, the airway and "
               "the oxygen supply; confirm with a blood gas.", spo2_percent=spo2_percent)]


# --------------------------------------------------------------------------------------------------------
# Dead space from measurements: Bohr, Enghoff, and the split into apparatus, anatomical and alveolar
# --------------------------------------------------------------------------------------------------------

@dataclass(frozen=True)
class DeadSpaceMeasurement:
    """Dead space from measured CO2. Fractions of VT; volumes in mL (``None`` where inputs do not allow).

    ``alveolar_fraction_of_alveolar_vt`` is (PaCO2 − PETCO2)/PaCO2 (Mosing et al. 2018);
    ``alveolar_fraction_of_vt`` is alveolar dead space / VT, the planner's alveolar dead-space fraction.
    """

    paco2_mmhg: float
    mixed_expired_mmhg: float
    alveolar_pco2_mmhg: float | None
    etco2_mmhg: float | None
    enghoff_vd_vt: float
    bohr_vd_vt: float | None
    alveolar_fraction_of_alveolar_vt: float | None
    tidal_volume_ml: float | None
    enghoff_ml: float | None
    bohr_ml: float | None
    physiological_ml: float | None
    physiological_method: str
    apparatus_ml: float | None
    anatomical_ml: float | None
    anatomical_source: str
    airway_ml: float | None
    alveolar_ml: float | None
    alveolar_fraction_of_vt: float | None
    alveolar_ml_from_gradient: float | None
    cautions: tuple[Caution, ...]
    standing_notice: str


def measured_dead_space(paco2_mmhg: float, mixed_expired_mmhg: float, alveolar_pco2_mmhg: float | None = None,
                        etco2_mmhg: float | None = None, tidal_volume_ml: float | None = None,
                        apparatus_ml: float | None = None, anatomical_ml: float | None = None,
                        anatomical_source: str = "") -> DeadSpaceMeasurement:
    """Enghoff VD/VT = (PaCO2 − PĒCO2)/PaCO2 (Enghoff 1938); Bohr VD/VT = (PACO2 − PĒCO2)/PACO2 (Bohr 1891).

    Pressures in any one unit (mmHg here). With a tidal volume: physiological dead space (Bohr if given, else
    Enghoff) × VT; minus the apparatus volume and the anatomical estimate it leaves the alveolar dead space.
    Mixed-expired gas is taken as sampled downstream of the Y-piece, so apparatus dead space is inside it.
    """
    _check("paco2", paco2_mmhg)
    _check("mixed-expired-co2", mixed_expired_mmhg)
    _check("alveolar-co2", alveolar_pco2_mmhg)
    _check("etco2", etco2_mmhg)
    _check("tidal-volume", tidal_volume_ml)
    _check("apparatus-volume", apparatus_ml)
    label = MEASURED_FIELDS["mixed-expired-co2"]
    if mixed_expired_mmhg >= paco2_mmhg:
        raise InputError(label, f"{fmt(mixed_expired_mmhg)} mmHg",
                         f"must be below the PaCO2 ({fmt(paco2_mmhg)} mmHg): expired gas is diluted by dead space")
    if alveolar_pco2_mmhg is not None and mixed_expired_mmhg >= alveolar_pco2_mmhg:
        raise InputError(label, f"{fmt(mixed_expired_mmhg)} mmHg",
                         f"must be below the mean alveolar PCO2 ({fmt(alveolar_pco2_mmhg)} mmHg)")
    if etco2_mmhg is not None and mixed_expired_mmhg >= etco2_mmhg:
        raise InputError(label, f"{fmt(mixed_expired_mmhg)} mmHg",
                         f"must be below the EtCO2 ({fmt(etco2_mmhg)} mmHg): mixed-expired gas includes dead-space gas")
    out: list[Caution] = []
    enghoff = deadspace.enghoff_vd_vt(paco2_mmhg, mixed_expired_mmhg)
    bohr = None if alveolar_pco2_mmhg is None else deadspace.bohr_vd_vt(alveolar_pco2_mmhg, mixed_expired_mmhg)
    alv_frac = (None if etco2_mmhg is None
                else deadspace.alveolar_dead_space_fraction_from_gradient(paco2_mmhg, etco2_mmhg))
    if bohr is not None and enghoff - bohr > 0.05:
        out.append(_c("info", "ENGHOFF_ABOVE_BOHR",
                      f"Enghoff VD/VT {fmt(enghoff, 2)} is above Bohr {fmt(bohr, 2)}: venous admixture and "
                      "ventilation–perfusion mismatch raise the Enghoff value, so it measures overall gas-exchange "
                      "inefficiency rather than dead space alone (Mosing et al. 2018).", difference=enghoff - bohr))
    if alveolar_pco2_mmhg is not None and alveolar_pco2_mmhg > paco2_mmhg:
        out.append(_c("info", "ALVEOLAR_ABOVE_ARTERIAL",
                      f"Mean alveolar PCO2 {fmt(alveolar_pco2_mmhg)} mmHg is above PaCO2 {fmt(paco2_mmhg)} mmHg: "
                      "expected in birds (cross-current exchange); in mammals check the capnogram and the sample."))
    if alv_frac is not None and alv_frac < 0:
        out.append(_c("info", "ETCO2_ABOVE_PACO2",
                      f"EtCO2 {fmt(etco2_mmhg)} mmHg is above PaCO2 {fmt(paco2_mmhg)} mmHg, so the gradient gives no "
                      "alveolar dead space; expected in birds, otherwise check calibration and the sample timing."))
    enghoff_ml = bohr_ml = phys = airway = alveolar = alveolar_f = alveolar_grad = None
    method = "Bohr" if bohr is not None else "Enghoff"
    if tidal_volume_ml is not None:
        enghoff_ml = enghoff * tidal_volume_ml
        bohr_ml = None if bohr is None else bohr * tidal_volume_ml
        phys = bohr_ml if bohr_ml is not None else enghoff_ml
        if apparatus_ml is not None and anatomical_ml is not None:
            airway = apparatus_ml + anatomical_ml
            alveolar = phys - airway
            alveolar_f = alveolar / tidal_volume_ml
            if alveolar < 0:
                out.append(_c("caution", "AIRWAY_ESTIMATE_ABOVE_MEASURED",
                              f"Apparatus {fmt(apparatus_ml)} mL plus the anatomical estimate {fmt(anatomical_ml)} mL "
                              f"is more than the measured dead space {fmt(phys)} mL ({method}), leaving "
                              f"{fmt(alveolar)} mL for alveolar dead space. The species estimate may be too high "
                              "for this patient, or the expired gas was sampled upstream of some apparatus.",
                              alveolar_ml=alveolar))
            if alv_frac is not None and tidal_volume_ml > airway:
                alveolar_grad = alv_frac * (tidal_volume_ml - airway)
            if airway >= tidal_volume_ml:
                out.append(_c("danger", "VT_NOT_ABOVE_DEAD_SPACE",
                              f"Apparatus and anatomical dead space {fmt(airway)} mL is not below the tidal volume "
                              f"{fmt(tidal_volume_ml)} mL: little or no alveolar ventilation."))
    return DeadSpaceMeasurement(paco2_mmhg, mixed_expired_mmhg, alveolar_pco2_mmhg, etco2_mmhg, enghoff, bohr,
                                alv_frac, tidal_volume_ml, enghoff_ml, bohr_ml, phys, method, apparatus_ml,
                                anatomical_ml, anatomical_source, airway, alveolar, alveolar_f, alveolar_grad,
                                _sorted(out), STANDING_NOTICE)


def anatomical_estimate_ml(request: Request, library: Library | None = None) -> tuple[float, str]:
    """The planner's intubated anatomical dead space (mL) for the patient in ``request``, and its source."""
    p = plan(request, library)
    note = next((a for a in p.assumptions if a.name.startswith("Anatomical dead space")), None)
    return p.dead_space.anatomical_ml, "intubated; " + (note.source if note else "species estimate")


def dead_space_to_dict(d: DeadSpaceMeasurement) -> dict:
    """JSON-ready dict of a dead-space measurement (units in the key names)."""
    return {
        "ventset_version": __version__,
        "standing_notice": d.standing_notice,
        "inputs": {"paco2_mmhg": _num(d.paco2_mmhg), "mixed_expired_mmhg": _num(d.mixed_expired_mmhg),
                   "alveolar_pco2_mmhg": _num(d.alveolar_pco2_mmhg), "etco2_mmhg": _num(d.etco2_mmhg),
                   "tidal_volume_ml": _num(d.tidal_volume_ml), "apparatus_ml": _num(d.apparatus_ml)},
        "enghoff_vd_vt": _num(d.enghoff_vd_vt),
        "bohr_vd_vt": _num(d.bohr_vd_vt),
        "alveolar_fraction_of_alveolar_vt": _num(d.alveolar_fraction_of_alveolar_vt),
        "volumes": None if d.tidal_volume_ml is None else {
            "tidal_volume_ml": _num(d.tidal_volume_ml), "enghoff_ml": _num(d.enghoff_ml), "bohr_ml": _num(d.bohr_ml),
            "physiological_ml": _num(d.physiological_ml), "physiological_method": d.physiological_method,
            "apparatus_ml": _num(d.apparatus_ml), "anatomical_ml": _num(d.anatomical_ml),
            "anatomical_source": d.anatomical_source or None, "airway_ml": _num(d.airway_ml),
            "alveolar_ml": _num(d.alveolar_ml), "alveolar_fraction_of_vt": _num(d.alveolar_fraction_of_vt),
            "alveolar_ml_from_gradient": _num(d.alveolar_ml_from_gradient)},
        "sources": {"enghoff": "Enghoff 1938", "bohr": "Bohr 1891",
                    "alveolar_fraction_of_alveolar_vt": "Mosing et al. 2018"},
        "cautions": [{"severity": c.severity, "code": c.code, "message": c.message} for c in d.cautions],
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


# --------------------------------------------------------------------------------------------------------
# Next settings from a measured PaCO2 / EtCO2
# --------------------------------------------------------------------------------------------------------

@dataclass(frozen=True)
class InUseDeadSpace:
    """Dead space at the tidal volume in use (mL): the plan's fixed parts plus f_alv·VT."""

    anatomical_ml: float
    apparatus_ml: float
    tube_ml: float
    alveolar_ml: float
    total_ml: float
    fixed_ml: float
    alveolar_fraction: float


@dataclass(frozen=True)
class Adjustment:
    """Everything ``adjust`` found: the measurement read through the model, the proposal and its cautions."""

    request: Request
    measurement: Measurement
    prefer: str
    plan: Plan
    dead_space: InUseDeadSpace
    limits: Limits
    in_use_alveolar_ml_min: float
    in_use_minute_ml_min: float
    in_use_plateau_cmh2o: float
    paco2_used_mmhg: float
    paco2_source: str
    gradient_mmhg: float
    gradient_measured: bool
    alveolar_fraction_from_gradient: float | None
    vco2_ml_min: float
    vco2_estimate_ml_min: float
    target_paco2_mmhg: float
    needed_alveolar_ml_min: float
    proposal: Proposal
    partial_step: Proposal
    large_step: bool
    max_step: Sourced
    oxygenation: Oxygenation | None
    cautions: tuple[Caution, ...]
    rationale: tuple[str, ...]
    standing_notice: str = STANDING_NOTICE

    @property
    def vco2_ratio(self) -> float:
        return self.vco2_ml_min / self.vco2_estimate_ml_min


def _box(base: Plan, vt0: float, f0: float) -> tuple[Limits, frozenset[str]]:
    """The species ranges of the plan widened to include the settings in use (the clinician's own choice, as the
    planner does for a chosen VT or rate), and the pressure limit as it is. Returns the limits and the names of
    the bounds that the settings in use moved."""
    lim = base.limits
    moved = {name for name, out in (("vt_min", vt0 < lim.vt_min_ml), ("vt_max", vt0 > lim.vt_max_ml),
                                    ("rate_min", f0 < lim.rate_min_per_min), ("rate_max", f0 > lim.rate_max_per_min))
             if out}
    return Limits(min(lim.vt_min_ml, vt0), max(lim.vt_max_ml, vt0), min(lim.rate_min_per_min, f0),
                  max(lim.rate_max_per_min, f0), lim.vt_pressure_max_ml, ()), frozenset(moved)


_IN_USE_WORDS = {"vt_min": "the tidal volume in use (below the species' usual range)",
                 "vt_max": "the tidal volume in use (above the species' usual range)",
                 "rate_min": "the rate in use (below the species' usual range)",
                 "rate_max": "the rate in use (above the species' usual range)"}


def _limit_words(binding: tuple[str, ...], moved: frozenset[str]) -> str:
    names = [b for b in dict.fromkeys(binding)
             if not (b == "pressure_limit" and "pressure_limit_below_vt_min" in binding)]
    return " and ".join(_IN_USE_WORDS[b] if b in moved else LIMIT_WORDS.get(b, b) for b in names)


def _solve(va_ml_min: float, prefer: str, vt0: float, f0: float, va0: float, vd_fixed: float, f_alv: float,
           lim: Limits) -> Choice:
    """Settings on the line of the needed alveolar ventilation, by the planner's solver, from the point in use."""
    if prefer == "rate":
        pref_vt, pref_rate = vt0, None
    elif prefer == "tidal_volume":
        pref_vt, pref_rate = None, f0
    else:  # equal relative change in rate and in the alveolar part of each breath
        pref_vt, pref_rate = None, f0 * math.sqrt(va_ml_min / va0)
    return choose_settings(va_ml_min, vd_fixed, f_alv, lim.vt_min_ml, lim.vt_max_ml, lim.rate_min_per_min,
                           lim.rate_max_per_min, lim.vt_pressure_max_ml, pref_vt, pref_rate)


def _evaluate(request: Request, base: Plan, vt_ml: float, rate: float, vd_fixed: float, f_alv: float,
              library: Library) -> Plan:
    """A plan of the same patient held at exactly (vt_ml, rate): timing, pressures, circuit and their cautions.

    The planner places its breath on the line of equal PaCO2 through the target; giving it the CO2 output that
    puts (vt_ml, rate) on that line, and the rate, makes it evaluate these settings with its own code.
    """
    va = rate * breath_alveolar_ml(vt_ml, vd_fixed, f_alv)
    # Rate and VT per kg both given: the planner holds the rate and widens its VT range to include this VT.
    strategy = replace(request.strategy, rate_per_min=rate, vt_ml_kg=vt_ml / base.resolved.lean_mass_kg)
    if va <= 0:  # nothing in the limits clears the dead space: the planner's own unreachable corner
        return plan(replace(request, strategy=strategy), library)
    target, temp, rq = base.ventilation.target_paco2_mmhg, base.resolved.body_temp_c, base.metabolism.rq
    vco2 = va * target / gas.alveolar_constant_mmhg(temp)
    power = metabolism.power_w_from_vo2(vco2 / rq, rq)
    patient = replace(request.patient, metabolic_rate_w=power)
    try:
        return plan(replace(request, patient=patient, strategy=strategy), library)
    except InputError as err:  # e.g. an entered Ti that does not fit the proposed rate
        raise InputError(err, err.value, f"{err.reason} (at the proposed {fmt(vt_ml)} mL and {fmt(rate)}/min)",
                         err.unit) from None


def _proposal(ev: Plan, choice: Choice, vt0: float, f0: float, va0: float, va_full: float, vco2: float,
              gradient: float, temp: float, vd_fixed: float, f_alv: float) -> Proposal:
    vt, rate = choice.vt_ml, choice.rate_per_min
    va = rate * breath_alveolar_ml(vt, vd_fixed, f_alv)
    expected = gas.paco2_mmhg_from_va(vco2, va, temp) if va > 0 else math.inf
    dvt, drate = not math.isclose(vt, vt0, rel_tol=1e-6), not math.isclose(rate, f0, rel_tol=1e-6)
    changed = "both" if dvt and drate else "tidal_volume" if dvt else "rate" if drate else "none"
    frac = 1.0 if math.isclose(va_full, va0, rel_tol=1e-12) else (va - va0) / (va_full - va0)
    v, pr = ev.ventilation, ev.pressures
    return Proposal(vt, v.set_tidal_volume_ml, rate, v.ti_s, v.te_s, va, vt * rate, expected, expected - gradient,
                    pr.plateau_cmh2o, pr.peak_cmh2o, choice.reached, choice.binding, changed, frac, va / va0 - 1)


def adjust(request: Request, measurement: Measurement, prefer: str = "rate",
           library: Library | None = None, gradient_source: str = "") -> Adjustment:
    """Read a measured PaCO2 (or EtCO2 + gradient) through the model and propose the next settings.

    ``measurement`` carries the settings in use (VT the patient receives, rate). ``prefer``: 'rate' keeps VT and
    changes the rate (exact at constant VCO2 and dead space), 'tidal_volume' keeps the rate, 'both' shares the
    change. Limits are the species ranges (widened to include the settings in use) and the pressure limit of the
    plan for ``request``; where the preferred change would leave them the solver moves along the line of equal
    PaCO2. ``gradient_source`` says where an entered gradient came from (e.g. an earlier blood gas). Raises
    InputError naming the field.
    """
    lib = library or load_library()
    data = load_titration_data()
    if prefer not in PREFERENCES:
        raise InputError("Prefer", prefer, f"must be one of {', '.join(PREFERENCES)}")
    validate_measurement(measurement)
    m = measurement
    if m.paco2_mmhg is None and m.etco2_mmhg is None:
        raise InputError(MEASURED_FIELDS["paco2"], "", "is needed (or a measured EtCO2)")
    if m.paco2_mmhg is None and m.etco2_mmhg == 0:
        raise InputError(MEASURED_FIELDS["etco2"], "0 mmHg",
                         "no CO2 detected: check for disconnection, oesophageal intubation or cardiac arrest first; "
                         "there is nothing to adjust from")
    out: list[Caution] = []
    th = data.defaults
    # The base plan: species ranges only (the clinician's strategy choices do not widen them here).
    strategy = replace(request.strategy, vt_ml_kg=None, rate_per_min=None)
    req = replace(request, strategy=strategy)
    measured_gradient = None
    if m.paco2_mmhg is not None and m.etco2_mmhg is not None:
        measured_gradient = m.paco2_mmhg - m.etco2_mmhg
    gspec = FIELDS["gradient"]
    use_measured = (measured_gradient is not None and request.targets.gradient_mmhg is None
                    and gspec.lo <= measured_gradient <= gspec.hi)
    if use_measured:
        req = replace(req, targets=replace(req.targets, gradient_mmhg=measured_gradient))
    base = plan(req, lib)
    species = lib.find_species(base.resolved.species)
    r, d = base.resolved, base.dead_space
    vd_fixed = d.anatomical_ml + d.apparatus_ml + d.tube_ml
    f_alv, temp = r.alveolar_dead_space_fraction, r.body_temp_c
    vt0, f0 = m.tidal_volume_ml, m.rate_per_min
    eff0 = breath_alveolar_ml(vt0, vd_fixed, f_alv)
    if eff0 <= 0:
        raise InputError(MEASURED_FIELDS["tidal-volume"], f"{fmt(vt0)} mL",
                         f"is not above the dead space the model has for this patient and circuit "
                         f"({fmt(vd_fixed + f_alv * vt0)} mL at this volume); check the tidal volume and the "
                         "apparatus list, or enter a measured alveolar dead-space fraction")
    va0 = f0 * eff0
    ds = InUseDeadSpace(d.anatomical_ml, d.apparatus_ml + d.tube_ml, d.tube_ml, f_alv * vt0,
                        vd_fixed + f_alv * vt0, vd_fixed, f_alv)

    gradient = r.gradient_mmhg
    if m.paco2_mmhg is not None:
        paco2, source = m.paco2_mmhg, "arterial blood gas"
    else:
        paco2 = m.etco2_mmhg + gradient
        source = f"EtCO2 {fmt(m.etco2_mmhg)} + gradient {fmt(gradient)} mmHg"
        if paco2 < MEASURED_FIELDS["paco2"].lo:
            raise InputError(MEASURED_FIELDS["etco2"], f"{fmt(m.etco2_mmhg)} mmHg",
                             f"plus the gradient ({fmt(gradient)} mmHg) gives PaCO2 {fmt(paco2)} mmHg, too low to "
                             "adjust from; check the capnograph and the gradient")
        where = gradient_source or ("entered" if request.targets.gradient_mmhg is not None else "species default")
        out.append(_c("info", "PACO2_FROM_ETCO2",
                      f"PaCO2 taken as EtCO2 {fmt(m.etco2_mmhg)} mmHg plus a gradient of {fmt(gradient)} mmHg "
                      f"({where}). "
                      "The gradient changes during anaesthesia; an arterial blood gas confirms it.",
                      gradient_mmhg=gradient))
    k = gas.alveolar_constant_mmhg(temp)
    vco2 = va0 * paco2 / k
    target = base.ventilation.target_paco2_mmhg
    va_need = va0 * paco2 / target

    # --- the full proposal and the part-way step ---------------------------------------------------------
    box, moved = _box(base, vt0, f0)
    full = _solve(va_need, prefer, vt0, f0, va0, vd_fixed, f_alv, box)
    va_full = full.rate_per_min * breath_alveolar_ml(full.vt_ml, vd_fixed, f_alv)
    ev_full = _evaluate(req, base, full.vt_ml, full.rate_per_min, vd_fixed, f_alv, lib)
    proposal = _proposal(ev_full, full, vt0, f0, va0, va_full, vco2, gradient, temp, vd_fixed, f_alv)
    max_step = th["max_step_fraction"]
    large = va_full > 0 and abs(va_full / va0 - 1) > max_step.value + 1e-9
    if large:
        va_part = va0 * (1 + math.copysign(max_step.value, va_full - va0))
        part = _solve(va_part, prefer, vt0, f0, va0, vd_fixed, f_alv, box)
        ev_part = _evaluate(req, base, part.vt_ml, part.rate_per_min, vd_fixed, f_alv, lib)
        partial = _proposal(ev_part, part, vt0, f0, va0, va_full, vco2, gradient, temp, vd_fixed, f_alv)
        large = abs(partial.ventilation_change) <= max_step.value + 1e-9  # else a limit forces the whole change
    if not large:
        ev_part, partial = ev_full, proposal

    # --- cautions -------------------------------------------------------------------------------------------
    lim = base.limits
    lean = r.lean_mass_kg
    if not lim.rate_min_per_min - 1e-9 <= f0 <= lim.rate_max_per_min + 1e-9 or not \
            lim.vt_min_ml - 1e-9 <= vt0 <= lim.vt_max_ml + 1e-9:
        out.append(_c("info", "IN_USE_OUTSIDE_RANGE",
                      f"The settings in use ({fmt(vt0 / lean)} mL/kg at {fmt(f0)}/min) are outside the usual "
                      f"{fmt(lim.vt_min_ml / lean)}–{fmt(lim.vt_max_ml / lean)} mL/kg and "
                      f"{fmt(lim.rate_min_per_min)}–{fmt(lim.rate_max_per_min)}/min for {r.species_label}; the "
                      "proposal goes no further outside them than the settings in use.", vt_ml=vt0, rate_per_min=f0))
    in_use_plateau = vt0 / base.pressures.compliance_ml_cmh2o + base.pressures.peep_cmh2o
    if vt0 > lim.vt_pressure_max_ml + 1e-9:
        out.append(_c("caution", "IN_USE_ABOVE_PRESSURE_LIMIT",
                      f"At {fmt(vt0)} mL the model predicts a plateau of {fmt(in_use_plateau)} cmH2O, above the "
                      f"pressure limit {fmt(base.pressures.pressure_limit_cmh2o)} cmH2O. Compare with the measured "
                      "plateau: if it is lower, enter the measured compliance.", plateau_cmh2o=in_use_plateau))
    ratio = vco2 / base.metabolism.vco2_ml_min
    lim_ratio = lib.cautions["metabolic_ratio_caution"]
    if not 1 / lim_ratio.value <= ratio <= lim_ratio.value:
        low = ratio < 1
        why = ("a leak, sampling dilution of EtCO2, falling cardiac output or deep hypothermia can make it look low; "
               "confirm with an arterial blood gas" if low else
               "check the settings entered and for rebreathing (exhausted absorbent, low fresh gas); rising CO2 "
               "output with rising temperature suggests malignant hyperthermia")
        out.append(_c("caution", "MEASURED_VCO2_UNUSUAL",
                      f"The measurement implies a CO2 output of {fmt(vco2)} mL/min, {fmt(ratio, 2)} × the plan's "
                      f"estimate of {fmt(base.metabolism.vco2_ml_min)} mL/min (threshold ×{fmt(lim_ratio.value)}, "
                      f"{lim_ratio.source}): {why}. The proposal uses the measured value.", ratio=ratio))
    hi_c, hi_d, lo_c = th["paco2_high_caution_mmhg"], th["paco2_high_danger_mmhg"], th["paco2_low_caution_mmhg"]
    if paco2 > hi_c.value:
        sev = "danger" if paco2 > hi_d.value else "caution"
        out.append(_c(sev, "MEASURED_HYPERCAPNIA",
                      f"PaCO2 {fmt(paco2)} mmHg is above {fmt((hi_d if sev == 'danger' else hi_c).value)} mmHg "
                      f"({(hi_d if sev == 'danger' else hi_c).source}). Check the airway, the circuit and the "
                      "absorbent; if urgent, the full change rather than a part-way step may be justified.",
                      paco2_mmhg=paco2))
    elif paco2 < lo_c.value and target > lo_c.value:
        out.append(_c("caution", "MEASURED_HYPOCAPNIA",
                      f"PaCO2 {fmt(paco2)} mmHg is below {fmt(lo_c.value)} mmHg ({lo_c.source}).", paco2_mmhg=paco2))
    alv_from_gradient = None
    if measured_gradient is not None:
        alv_from_gradient = deadspace.alveolar_dead_space_fraction_from_gradient(m.paco2_mmhg, m.etco2_mmhg)
        usual = species.gradient_mmhg.value
        wide = th["gradient_widening_mmhg"]
        if not use_measured and request.targets.gradient_mmhg is None:
            out.append(_c("caution", "GRADIENT_IMPLAUSIBLE",
                          f"Measured PaCO2 − EtCO2 gradient {fmt(measured_gradient)} mmHg is outside "
                          f"{fmt(gspec.lo)} to {fmt(gspec.hi)} mmHg: check the capnograph and the sample timing.",
                          gradient_mmhg=measured_gradient))
        if measured_gradient - usual >= wide.value:
            out.append(_c("caution", "GRADIENT_WIDE",
                          f"PaCO2 − EtCO2 gradient {fmt(measured_gradient)} mmHg is {fmt(measured_gradient - usual)} "
                          f"mmHg wider than usual for {r.species_label} ({fmt(usual)} mmHg): a sign of alveolar dead "
                          f"space, (PaCO2 − EtCO2)/PaCO2 = {fmt(alv_from_gradient, 2)} of alveolar tidal volume "
                          "(Mosing et al. 2018). Think of low cardiac output or blood pressure, lung position and "
                          "embolism; titrate to the blood gas, not to EtCO2.", gradient_mmhg=measured_gradient))
    if not proposal.reached:
        limits = _limit_words(full.binding, moved)
        if proposal.expected_paco2_mmhg > target:
            sev = "danger" if proposal.expected_paco2_mmhg > th["paco2_high_caution_mmhg"].value else "caution"
            out.append(_c(sev, "TARGET_UNREACHABLE",
                          f"No setting inside the limits reaches PaCO2 {fmt(target)} mmHg for the CO2 output measured; "
                          f"limited by {limits}. The proposal is expected to give PaCO2 "
                          f"{fmt(proposal.expected_paco2_mmhg)} mmHg. Reduce apparatus dead space, check for "
                          "rebreathing, or widen a limit only if the clinician judges it safe.",
                          target_mmhg=target, expected_mmhg=proposal.expected_paco2_mmhg))
        else:
            out.append(_c("caution", "TARGET_BELOW_LIMITS",
                          f"Even the smallest settings inside the limits are expected to give PaCO2 "
                          f"{fmt(proposal.expected_paco2_mmhg)} mmHg against a target of {fmt(target)} mmHg "
                          f"(limited by {limits}). Consider a lower rate or assisted spontaneous breathing.",
                          target_mmhg=target, expected_mmhg=proposal.expected_paco2_mmhg))
    elif full.binding:
        limits = _limit_words(full.binding, moved)
        out.append(_c("info", "PROPOSAL_LIMITED",
                      f"{_ONLY[prefer]} would go past {limits}; the proposal moves along the line of equal PaCO2 "
                      f"to {fmt(proposal.tidal_volume_ml)} mL at {fmt(proposal.rate_per_min)}/min."))
    e_min, e_max, bg = th["remeasure_etco2_min"], th["remeasure_etco2_max_min"], th["remeasure_blood_gas_min"]
    if large:
        out.append(_c("caution", "LARGE_STEP",
                      f"The full proposal changes alveolar ventilation by "
                      f"{fmt(proposal.ventilation_change * 100, 2)} %. "
                      f"When not urgent, change it by no more than about {fmt(max_step.value * 100, 2)} % per step "
                      f"({max_step.source}): the part-way step, {fmt(partial.tidal_volume_ml)} mL at "
                      f"{fmt(partial.rate_per_min)}/min, is expected to give PaCO2 "
                      f"{fmt(partial.expected_paco2_mmhg)} mmHg. Re-measure EtCO2 after {fmt(e_min.value)}–"
                      f"{fmt(e_max.value)} min, a blood gas after {fmt(bg.value)} min or more ({bg.source}).",
                      change=proposal.ventilation_change, step=max_step.value))
    if proposal.reached and not math.isclose(proposal.alveolar_ml_min, va0, rel_tol=1e-9):
        pao2_alv = gas.alveolar_po2_mmhg(base.oxygen.fio2, base.oxygen.barometric_mmhg, base.oxygen.water_vapour_mmhg,
                                         min(proposal.expected_paco2_mmhg, 200.0), base.metabolism.rq)
        if pao2_alv < lib.cautions["pao2_caution_mmhg"].value:
            sev = "danger" if pao2_alv < lib.cautions["pao2_danger_mmhg"].value else "caution"
            out.append(_c(sev, "LOW_ALVEOLAR_O2",
                          f"At the proposal the alveolar PO2 is only {fmt(pao2_alv)} mmHg at FiO2 "
                          f"{fmt(base.oxygen.fio2)}; arterial PO2 will be lower still. Raise FiO2.",
                          pao2_mmhg=pao2_alv))
    plan_cautions = [c for c in ev_full.cautions if c.code not in _PLAN_CODES_REPLACED]
    seen = {c.code for c in plan_cautions}
    if large:
        for c in ev_part.cautions:
            if c.code not in _PLAN_CODES_REPLACED and c.code not in seen:
                plan_cautions.append(replace(c, message="Part-way step: " + c.message))
    out += plan_cautions
    oxy = None
    if m.pao2_mmhg is not None:
        fio2 = m.fio2 if m.fio2 is not None else base.oxygen.fio2
        oxy = oxygenation(m.pao2_mmhg, fio2, base.oxygen.barometric_mmhg, paco2, temp, base.metabolism.rq)
        out += oxy.cautions
    if m.spo2_percent is not None:
        out += spo2_cautions(m.spo2_percent)

    # --- the rationale, in plain sentences ---------------------------------------------------------------
    why = [
        f"At {fmt(vt0)} mL and {fmt(f0)}/min the model's alveolar ventilation is {fmt(va0)} mL/min "
        f"(dead space {fmt(ds.total_ml)} mL of each breath: anatomical {fmt(ds.anatomical_ml)}, apparatus and tube "
        f"{fmt(ds.apparatus_ml)}, alveolar {fmt(ds.alveolar_ml)}).",
        f"PaCO2 {fmt(paco2)} mmHg ({source}) means a CO2 output of {fmt(vco2)} mL/min "
        f"(plan estimate {fmt(base.metabolism.vco2_ml_min)} mL/min).",
    ]
    if math.isclose(paco2, target, abs_tol=0.5):
        why.append(f"PaCO2 is at the target of {fmt(target)} mmHg: keep the settings.")
    else:
        why.append(f"To reach PaCO2 {fmt(target)} mmHg alveolar ventilation must go to {fmt(va_need)} mL/min "
                   f"({'+' if va_need > va0 else ''}{fmt((va_need / va0 - 1) * 100, 2)} %), since PaCO2 ∝ 1/VA at "
                   "constant CO2 output.")
        move = {"rate": f"rate {fmt(f0)} → {fmt(proposal.rate_per_min)}/min at the same tidal volume",
                "tidal_volume": f"tidal volume {fmt(vt0)} → {fmt(proposal.tidal_volume_ml)} mL at the same rate",
                "both": f"tidal volume {fmt(vt0)} → {fmt(proposal.tidal_volume_ml)} mL and rate {fmt(f0)} → "
                        f"{fmt(proposal.rate_per_min)}/min",
                "none": "the settings in use"}[proposal.changed]
        why.append(f"Proposal: {move}; expected PaCO2 {fmt(proposal.expected_paco2_mmhg)} mmHg, plateau "
                   f"{fmt(proposal.plateau_cmh2o)} cmH2O.")
        if large:
            why.append(f"Part-way ({fmt(partial.fraction_of_change * 100, 2)} % of the change): "
                       f"{fmt(partial.tidal_volume_ml)} mL at {fmt(partial.rate_per_min)}/min, expected PaCO2 "
                       f"{fmt(partial.expected_paco2_mmhg)} mmHg; then re-measure.")
    if oxy is not None:
        why.append(_oxygenation_sentence(oxy))
    return Adjustment(request, m, prefer, base, ds, replace(box, binding=full.binding), va0, vt0 * f0,
                      in_use_plateau, paco2, source, gradient, use_measured, alv_from_gradient, vco2,
                      base.metabolism.vco2_ml_min, target, va_need, proposal, partial, large, max_step, oxy,
                      _sorted(out), tuple(why), base.standing_notice)


def adjustment_to_dict(a: Adjustment) -> dict:
    """The JSON shape of ``ventset adjust --json`` (units in the key names; docs/titration.md)."""
    r, m, ds = a.plan.resolved, a.measurement, a.dead_space

    def prop(p: Proposal) -> dict:
        return {"tidal_volume_ml": _num(p.tidal_volume_ml), "set_tidal_volume_ml": _num(p.set_tidal_volume_ml),
                "tidal_volume_ml_kg": _num(p.tidal_volume_ml / r.lean_mass_kg), "rate_per_min": _num(p.rate_per_min),
                "ti_s": _num(p.ti_s), "te_s": _num(p.te_s), "alveolar_ml_min": _num(p.alveolar_ml_min),
                "minute_ml_min": _num(p.minute_ml_min), "expected_paco2_mmhg": _num(p.expected_paco2_mmhg),
                "expected_etco2_mmhg": _num(p.expected_etco2_mmhg), "plateau_cmh2o": _num(p.plateau_cmh2o),
                "peak_cmh2o": _num(p.peak_cmh2o), "reached": p.reached, "binding": list(p.binding),
                "changed": p.changed, "fraction_of_change": _num(p.fraction_of_change),
                "ventilation_change": _num(p.ventilation_change)}

    return {
        "ventset_version": __version__,
        "standing_notice": a.standing_notice,
        "patient": patient_to_dict(r, a.request.patient.name),
        "mode": r.mode,
        "prefer": a.prefer,
        "in_use": {"tidal_volume_ml": _num(m.tidal_volume_ml), "rate_per_min": _num(m.rate_per_min),
                   "minute_ml_min": _num(a.in_use_minute_ml_min), "alveolar_ml_min": _num(a.in_use_alveolar_ml_min),
                   "plateau_cmh2o": _num(a.in_use_plateau_cmh2o)},
        "dead_space": {"anatomical_ml": _num(ds.anatomical_ml), "apparatus_ml": _num(ds.apparatus_ml),
                       "tube_ml": _num(ds.tube_ml), "alveolar_ml": _num(ds.alveolar_ml), "total_ml": _num(ds.total_ml),
                       "fixed_ml": _num(ds.fixed_ml), "alveolar_fraction": _num(ds.alveolar_fraction),
                       "fraction_of_vt": _num(ds.total_ml / m.tidal_volume_ml)},
        "measured": {"paco2_mmhg": _num(m.paco2_mmhg), "etco2_mmhg": _num(m.etco2_mmhg),
                     "pao2_mmhg": _num(m.pao2_mmhg), "spo2_percent": _num(m.spo2_percent),
                     "paco2_used_mmhg": _num(a.paco2_used_mmhg), "paco2_source": a.paco2_source,
                     "gradient_mmhg": _num(a.gradient_mmhg), "gradient_measured": a.gradient_measured,
                     "alveolar_fraction_from_gradient": _num(a.alveolar_fraction_from_gradient),
                     "alveolar_ml_min": _num(a.in_use_alveolar_ml_min), "vco2_ml_min": _num(a.vco2_ml_min),
                     "vco2_estimate_ml_min": _num(a.vco2_estimate_ml_min), "vco2_ratio": _num(a.vco2_ratio)},
        "target": {"paco2_mmhg": _num(a.target_paco2_mmhg), "alveolar_ml_min": _num(a.needed_alveolar_ml_min)},
        "proposal": prop(a.proposal),
        "partial_step": prop(a.partial_step),
        "step": {"large": a.large_step, "max_change_fraction": _num(a.max_step.value), "source": a.max_step.source},
        "oxygenation": a.oxygenation.to_dict() if a.oxygenation else None,
        "rationale": list(a.rationale),
        "cautions": [{"severity": c.severity, "code": c.code, "message": c.message} for c in a.cautions],
    }


def adjustment_to_text(a: Adjustment, gas_unit: str = "mmHg") -> str:
    """Readable summary of an adjustment: settings in use, what the measurement says, the proposal."""
    from ventset.units import gas_pressure

    r, m, ds, p, q = a.plan.resolved, a.measurement, a.dead_space, a.proposal, a.partial_step
    g = lambda x: gas_pressure(x, gas_unit)  # noqa: E731
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
    lines += ["", "WHY"] + [f"  {gas_units_in_text(s, gas_unit)}" for s in a.rationale]
    lines += ["", "CAUTIONS"]
    lines += caution_lines(a.cautions, gas_unit)
    lines += ["", "NOTICE: " + a.standing_notice]
    return "\n".join(lines)


# --------------------------------------------------------------------------------------------------------
# The record of the anaesthetic
# --------------------------------------------------------------------------------------------------------

@dataclass(frozen=True)
class TimelineEntry:
    """A measurement, what ventset proposed from it, and what the clinician set.

    ``accepted`` is '' (nothing set yet), 'proposal', 'partial_step' or 'own' (the clinician's own settings);
    ``settings_set`` holds what was set. ``proposal``/``partial_step`` are None when no proposal could be made
    (``error`` then says why); ``partial_step`` is also None when the full change is small enough for one step.
    ``vco2_ml_min`` is the CO2 output the measurement implies.
    """

    measurement: Measurement
    target_paco2_mmhg: float | None = None
    proposal: Proposal | None = None
    partial_step: Proposal | None = None
    rationale: tuple[str, ...] = ()
    cautions: tuple[Caution, ...] = ()
    accepted: str = ""
    settings_set: Settings | None = None
    error: str = ""
    vco2_ml_min: float | None = None

    def to_dict(self) -> dict:
        return {"measurement": self.measurement.to_dict(), "target_paco2_mmhg": self.target_paco2_mmhg,
                "proposal": self.proposal.to_dict() if self.proposal else None,
                "partial_step": self.partial_step.to_dict() if self.partial_step else None,
                "rationale": list(self.rationale),
                "cautions": [{"severity": c.severity, "code": c.code, "message": c.message,
                              "values": [[k, v] for k, v in c.values]} for c in self.cautions],
                "accepted": self.accepted,
                "settings_set": self.settings_set.to_dict() if self.settings_set else None,
                "error": self.error, "vco2_ml_min": self.vco2_ml_min}

    @classmethod
    def from_dict(cls, d: dict) -> TimelineEntry:
        accepted = str(d.get("accepted") or "")
        if accepted not in ACCEPTED:
            raise ValueError(f"accepted must be one of {ACCEPTED}")
        return cls(Measurement.from_dict(d["measurement"]), _opt(d.get("target_paco2_mmhg")),
                   Proposal.from_dict(d["proposal"]) if d.get("proposal") else None,
                   Proposal.from_dict(d["partial_step"]) if d.get("partial_step") else None,
                   tuple(str(s) for s in d.get("rationale") or ()),
                   tuple(Caution(str(c["severity"]), str(c["code"]), str(c["message"]),
                                 tuple((str(k), float(v)) for k, v in c.get("values") or ()))
                         for c in d.get("cautions") or ()),
                   accepted, Settings.from_dict(d["settings_set"]) if d.get("settings_set") else None,
                   str(d.get("error") or ""), _opt(d.get("vco2_ml_min")))


def timeline_to_dict(entries: tuple[TimelineEntry, ...]) -> dict:
    """The record as a plain dict for a case file: {"schema", "version", "entries": [...]} (full precision)."""
    return {"schema": TIMELINE_SCHEMA, "version": TIMELINE_VERSION, "entries": [e.to_dict() for e in entries]}


def timeline_from_dict(data: dict) -> tuple[TimelineEntry, ...]:
    """Rebuild the record from ``timeline_to_dict`` output; raises DataError on a bad shape."""
    if not isinstance(data, dict) or data.get("schema") != TIMELINE_SCHEMA:
        raise DataError("anaesthetic record: not a ventset timeline")
    if data.get("version") != TIMELINE_VERSION:
        raise DataError(f"anaesthetic record: version {data.get('version')!r} is not supported")
    out = []
    for i, e in enumerate(data.get("entries") or []):
        try:
            out.append(TimelineEntry.from_dict(e))
        except (KeyError, TypeError, ValueError) as exc:
            raise DataError(f"anaesthetic record: entry {i + 1} is malformed ({exc})") from None
    return tuple(out)


def settings_in_use(entries: tuple[TimelineEntry, ...]) -> Settings | None:
    """What is set now: the last entry's accepted settings, else the settings it was measured at."""
    if not entries:
        return None
    last = entries[-1]
    return last.settings_set or last.measurement.settings


def _gradient_trend(entries: tuple[TimelineEntry, ...], new: Measurement, library: Library) -> list[Caution]:
    """GRADIENT_WIDENING when PaCO2 − EtCO2 has grown by the threshold since the first paired measurement."""
    pairs = [(e.measurement.time_min, e.measurement.paco2_mmhg - e.measurement.etco2_mmhg) for e in entries
             if e.measurement.paco2_mmhg is not None and e.measurement.etco2_mmhg is not None]
    if new.paco2_mmhg is None or new.etco2_mmhg is None or not pairs:
        return []
    t0, g0 = min(pairs)
    g1 = new.paco2_mmhg - new.etco2_mmhg
    wide = load_titration_data().defaults["gradient_widening_mmhg"]
    if g1 - g0 < wide.value:
        return []
    return [_c("caution", "GRADIENT_WIDENING",
               f"The PaCO2 − EtCO2 gradient has widened from {fmt(g0)} mmHg (at {fmt(t0)} min) to {fmt(g1)} mmHg: "
               "alveolar dead space is growing (Mosing et al. 2018). Check blood pressure and cardiac output, "
               "position and fluid balance; EtCO2 now under-reads PaCO2 more, so titrate to blood gases.",
               widening_mmhg=g1 - g0)]


def record_measurement(entries: tuple[TimelineEntry, ...], request: Request, measurement: Measurement,
                       prefer: str = "rate", library: Library | None = None) -> tuple[TimelineEntry, ...]:
    """Append a measurement with its proposal to the record (a new tuple; the old one is unchanged).

    When no proposal can be made (only PaO2 or SpO2 measured, or the model cannot read the values) the entry
    is still recorded, with ``error`` saying why; an invalid number raises InputError and nothing is added.
    """
    lib = library or load_library()
    validate_measurement(measurement)
    if measurement.paco2_mmhg is None and measurement.etco2_mmhg is None:
        extra: list[Caution] = []
        if measurement.spo2_percent is not None:
            extra += spo2_cautions(measurement.spo2_percent)
        why: tuple[str, ...] = ()
        if measurement.pao2_mmhg is not None:
            base = plan(request, lib)
            fio2 = measurement.fio2 if measurement.fio2 is not None else base.oxygen.fio2
            oxy = oxygenation(measurement.pao2_mmhg, fio2, base.oxygen.barometric_mmhg,
                              base.ventilation.target_paco2_mmhg, base.resolved.body_temp_c, base.metabolism.rq)
            extra += oxy.cautions
            why = (_oxygenation_sentence(oxy) + " (alveolar PO2 at the target PaCO2: no CO2 measured)",)
        entry = TimelineEntry(measurement, rationale=why, cautions=_sorted(extra),
                              error="No CO2 measured: record only, no proposal.")
        return (*entries, entry)
    source = ""
    if measurement.paco2_mmhg is None and request.targets.gradient_mmhg is None:
        # EtCO2 alone: calibrate it with the gradient of the latest blood gas in the record, if there is one.
        paired = [e.measurement for e in entries
                  if e.measurement.paco2_mmhg is not None and e.measurement.etco2_mmhg is not None]
        if paired:
            last = max(paired, key=lambda m: m.time_min)
            g = last.paco2_mmhg - last.etco2_mmhg
            spec = FIELDS["gradient"]
            if spec.lo <= g <= spec.hi:
                request = replace(request, targets=replace(request.targets, gradient_mmhg=g))
                clock = f"{last.clock}, " if last.clock else ""
                source = f"measured at {clock}{fmt(last.time_min)} min"
    a = adjust(request, measurement, prefer, lib, gradient_source=source)
    cautions = _sorted([*a.cautions, *_gradient_trend(entries, measurement, lib)])
    entry = TimelineEntry(measurement, a.target_paco2_mmhg, a.proposal, a.partial_step if a.large_step else None,
                          a.rationale, cautions, vco2_ml_min=a.vco2_ml_min)
    return (*entries, entry)


def accept(entries: tuple[TimelineEntry, ...], index: int, which: str,
           own: Settings | None = None) -> tuple[TimelineEntry, ...]:
    """Mark entry ``index`` as set to its 'proposal', its 'partial_step', or the clinician's 'own' settings."""
    if which not in ACCEPTED[1:]:
        raise InputError("Accept", which, f"must be one of {', '.join(ACCEPTED[1:])}")
    e = entries[index]
    if which == "own":
        if own is None:
            raise InputError("Settings set", "", "give the tidal volume and rate that were set")
        _check("tidal-volume", own.tidal_volume_ml)
        _check("rate", own.rate_per_min)
        chosen = own
    else:
        p = e.proposal if which == "proposal" else e.partial_step
        if p is None:
            raise InputError("Accept", which, "this entry has no such proposal")
        chosen = p.settings
    return (*entries[:index], replace(e, accepted=which, settings_set=chosen), *entries[index + 1:])
