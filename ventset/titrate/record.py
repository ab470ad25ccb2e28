"""The record of an anaesthetic, as frozen dataclasses with to_dict/from_dict for case files: the settings
in use, each measurement, the proposal made from it, and what the clinician set."""

from __future__ import annotations

import math
from dataclasses import dataclass

from ventset.errors import DataError
from ventset.model import Caution
from ventset.present.phrases import Phrase
from ventset.titrate.fields import check_measured

ACCEPTED = ("", "proposal", "partial_step", "own")
TIMELINE_SCHEMA = "ventset.timeline"
TIMELINE_VERSION = 1


def _opt(x: float | None) -> float | None:
    return None if x is None else float(x)


def _finite_or_none(x: float) -> float | None:
    return float(x) if math.isfinite(x) else None


@dataclass(frozen=True)
class Dials:
    """Settings as the controls of a machine: the machine (a class key or the clinic machine's name) and each
    control's value in the control's own unit, in the machine's order, as (control kind, value); with what they
    give at the patient when evaluated (``tidal_volume_ml`` at the patient, ``rate_per_min``, expected PaCO2)
    and whether every control was inside its range."""

    machine: str
    values: tuple[tuple[str, float], ...]
    tidal_volume_ml: float | None = None
    rate_per_min: float | None = None
    expected_paco2_mmhg: float | None = None
    in_range: bool = True

    def value(self, kind: str) -> float | None:
        return next((v for k, v in self.values if k == kind), None)

    def to_dict(self) -> dict:
        return {"machine": self.machine, "values": [[k, v] for k, v in self.values],
                "tidal_volume_ml": self.tidal_volume_ml, "rate_per_min": self.rate_per_min,
                "expected_paco2_mmhg": self.expected_paco2_mmhg, "in_range": self.in_range}

    @classmethod
    def from_dict(cls, d: dict) -> Dials:
        values = tuple((str(k), float(v)) for k, v in d["values"])
        return cls(str(d["machine"]), values, _opt(d.get("tidal_volume_ml")), _opt(d.get("rate_per_min")),
                   _opt(d.get("expected_paco2_mmhg")), bool(d.get("in_range", True)))


def _dials_to(d: dict, dials: Dials | None) -> dict:
    """``d`` with its "dials" only when there are any (a record without dials keeps its earlier layout)."""
    if dials is not None:
        d["dials"] = dials.to_dict()
    return d


def _dials_from(d: dict) -> Dials | None:
    return Dials.from_dict(d["dials"]) if d.get("dials") else None


@dataclass(frozen=True)
class Settings:
    """Ventilator settings in use: tidal volume the patient receives (mL), rate (/min), the volume set on the
    ventilator (mL; the patient's volume plus what the circuit compresses; None in records from before it was
    kept), and ``dials``: the same settings as the controls of the machine in use, when they were given that way."""

    tidal_volume_ml: float
    rate_per_min: float
    set_tidal_volume_ml: float | None = None
    dials: Dials | None = None

    def to_dict(self) -> dict:
        d = {"tidal_volume_ml": self.tidal_volume_ml, "rate_per_min": self.rate_per_min}
        if self.set_tidal_volume_ml is not None:
            d["set_tidal_volume_ml"] = self.set_tidal_volume_ml
        return _dials_to(d, self.dials)

    @classmethod
    def from_dict(cls, d: dict) -> Settings:
        return cls(float(d["tidal_volume_ml"]), float(d["rate_per_min"]), _opt(d.get("set_tidal_volume_ml")),
                   _dials_from(d))


@dataclass(frozen=True)
class Measurement:
    """One row of the anaesthetic record: when, the settings in use, and what was measured.

    ``tidal_volume_ml`` is the volume the patient receives; ``set_tidal_volume_ml`` the volume set on the
    ventilator (or measured at the machine) it was converted from, None when not known.
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
    set_tidal_volume_ml: float | None = None
    dials: Dials | None = None  # the settings in use as the machine's controls, when given that way

    @property
    def settings(self) -> Settings:
        return Settings(self.tidal_volume_ml, self.rate_per_min, self.set_tidal_volume_ml, self.dials)

    def to_dict(self) -> dict:
        d = {"time_min": self.time_min, "clock": self.clock, "tidal_volume_ml": self.tidal_volume_ml,
             "rate_per_min": self.rate_per_min, "paco2_mmhg": self.paco2_mmhg, "etco2_mmhg": self.etco2_mmhg,
             "pao2_mmhg": self.pao2_mmhg, "spo2_percent": self.spo2_percent, "fio2": self.fio2,
             "note": self.note}
        if self.set_tidal_volume_ml is not None:
            d["set_tidal_volume_ml"] = self.set_tidal_volume_ml
        return _dials_to(d, self.dials)

    @classmethod
    def from_dict(cls, d: dict) -> Measurement:
        return cls(float(d["time_min"]), float(d["tidal_volume_ml"]), float(d["rate_per_min"]),
                   _opt(d.get("paco2_mmhg")), _opt(d.get("etco2_mmhg")), _opt(d.get("pao2_mmhg")),
                   _opt(d.get("spo2_percent")), _opt(d.get("fio2")), str(d.get("clock") or ""),
                   str(d.get("note") or ""), _opt(d.get("set_tidal_volume_ml")), _dials_from(d))


def validate_measurement(m: Measurement) -> None:
    """Check every number of a measurement against its hard limits; raises InputError naming the field."""
    for key, value in (("time", m.time_min), ("tidal-volume", m.tidal_volume_ml), ("rate", m.rate_per_min),
                       ("paco2", m.paco2_mmhg), ("etco2", m.etco2_mmhg), ("pao2", m.pao2_mmhg),
                       ("spo2", m.spo2_percent), ("fio2", m.fio2), ("tidal-volume", m.set_tidal_volume_ml)):
        check_measured(key, value)


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
    dials: Dials | None = None  # the proposal on the machine in use: its controls, re-evaluated as dialled

    @property
    def settings(self) -> Settings:
        """What is set when this proposal is accepted: on a machine, the breath as dialled, with its dials."""
        d = self.dials
        if d is not None and d.tidal_volume_ml is not None and d.rate_per_min is not None:
            return Settings(d.tidal_volume_ml, d.rate_per_min, dials=d)
        return Settings(self.tidal_volume_ml, self.rate_per_min, self.set_tidal_volume_ml)

    def to_dict(self) -> dict:
        d = {k: getattr(self, k) for k in self.__dataclass_fields__ if k != "dials"}
        d["binding"] = list(self.binding)
        for k in ("expected_paco2_mmhg", "expected_etco2_mmhg", "peak_cmh2o", "plateau_cmh2o"):
            d[k] = _finite_or_none(d[k])
        return _dials_to(d, self.dials)

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
                   num("ventilation_change"), _dials_from(d))


# --------------------------------------------------------------------------------------------------------


def caution_to_dict(c: Caution) -> dict:
    """A caution for a case file: the sentence as shown in mmHg, and its template, numbers and words."""
    return {"severity": c.severity, "code": c.code, "message": c.message, "template": c.template,
            "values": [[k, v] for k, v in c.values], "texts": [[k, t] for k, t in c.texts]}


def caution_from_dict(d: dict) -> Caution:
    """Rebuild a caution; a file from before templates keeps its sentence as written."""
    template = d.get("template")
    if template is None:
        return Caution(str(d["severity"]), str(d["code"]), str(d["message"]))
    return Caution(str(d["severity"]), str(d["code"]), str(template),
                   tuple((str(k), float(v)) for k, v in d.get("values") or ()),
                   tuple((str(k), str(t)) for k, t in d.get("texts") or ()))


def phrase_to_dict(p: Phrase) -> dict:
    return {"text": p.text(), "template": p.template, "values": [[k, v] for k, v in p.values],
            "texts": [[k, t] for k, t in p.texts]}


def phrase_from_dict(d: object) -> Phrase:
    """A sentence of the rationale; a plain string (files from before templates) stays as written."""
    if isinstance(d, str):
        return Phrase(d)
    if not isinstance(d, dict):
        raise TypeError("a rationale line must be text or an object")
    return Phrase(str(d["template"]), tuple((str(k), float(v)) for k, v in d.get("values") or ()),
                  tuple((str(k), str(t)) for k, t in d.get("texts") or ()))


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
    rationale: tuple[Phrase, ...] = ()
    cautions: tuple[Caution, ...] = ()
    accepted: str = ""
    settings_set: Settings | None = None
    error: str = ""
    vco2_ml_min: float | None = None

    def to_dict(self) -> dict:
        return {"measurement": self.measurement.to_dict(), "target_paco2_mmhg": self.target_paco2_mmhg,
                "proposal": self.proposal.to_dict() if self.proposal else None,
                "partial_step": self.partial_step.to_dict() if self.partial_step else None,
                "rationale": [phrase_to_dict(p) for p in self.rationale],
                "cautions": [caution_to_dict(c) for c in self.cautions],
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
                   tuple(phrase_from_dict(p) for p in d.get("rationale") or ()),
                   tuple(caution_from_dict(c) for c in d.get("cautions") or ()),
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
