"""What is measured during the anaesthetic, declared once with the same FieldSpec machinery as the plan's
inputs (ventset.fields): one parser, one validator."""

from __future__ import annotations

from ventset.errors import InputError, register_labels
from ventset.fields import FieldSpec, check_value, parse_field

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
register_labels({"prefer": "Prefer", "accept": "Accept", "settings-set": "Settings set"})


def parse_measured(key: str, text: object) -> float:
    """Parse and range-check one measured value by its key; raises InputError naming the field."""
    return parse_field(MEASURED_FIELDS[key], text)


def check_measured(key: str, value: float | None) -> None:
    """Check a stored measured number against its hard limits (None = not measured)."""
    check_value(MEASURED_FIELDS[key], value)


def parse_time(text: str, earlier: tuple = ()) -> tuple[float, str]:
    """Read a time as minutes since the start ('35', '1.5 h') or a clock time 'HH:MM'.

    Returns (minutes since the start, clock text or ""). A clock time counts from the first entry that
    was timed by the clock (past midnight wraps); the first entry of a record timed by the clock is minute 0.
    ``earlier`` holds the record's Measurements.
    """
    raw = str(text).strip()
    if ":" not in raw:
        return parse_measured("time", raw), ""
    hh, _, mm = raw.partition(":")
    spec = MEASURED_FIELDS["time"]
    if not (hh.isdigit() and mm.isdigit() and len(mm) == 2 and int(hh) < 24 and int(mm) < 60):
        raise InputError(spec, raw, "enter minutes since the start (e.g. 35) or a clock time HH:MM (e.g. 10:35)")
    clock_min = int(hh) * 60 + int(mm)
    ref = next((m for m in earlier if m.clock), None)
    if ref is None:
        if earlier:
            raise InputError(spec, raw, "the first entry was timed in minutes since the start; enter minutes")
        return 0.0, f"{int(hh):02d}:{mm}"
    h0, _, m0 = ref.clock.partition(":")
    start = int(h0) * 60 + int(m0) - ref.time_min
    return float((clock_min - start) % 1440), f"{int(hh):02d}:{mm}"
