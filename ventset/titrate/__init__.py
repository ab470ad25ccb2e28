"""During the anaesthetic: next settings from a measured PaCO2/EtCO2, measured dead space, oxygenation, and
the record of the anaesthetic.

- fields: the measured inputs (FieldSpec), their parser and validator
- data: titration.toml and oxygenation.toml
- record: Settings, Measurement, Proposal, TimelineEntry and their case-file form
- adjust: the adjustment (through ventset.evaluate and planner.plan_at); rules: its cautions and rationale
- deadspace: Bohr, Enghoff and the split of measured dead space; oxygenation: A–a gradient, P/F, SpO2
- timeline: adding measurements to the record and accepting proposals; output: text and JSON
"""

from ventset.titrate.adjust import PREFERENCE_LABELS, PREFERENCES, Adjustment, InUseDeadSpace, adjust
from ventset.titrate.data import Band, TitrationData, load_titration_data
from ventset.titrate.deadspace import DeadSpaceMeasurement, anatomical_estimate_ml, measured_dead_space
from ventset.titrate.fields import MEASURED_FIELDS, check_measured, parse_measured, parse_time
from ventset.titrate.output import adjustment_to_dict, adjustment_to_text, dead_space_to_dict, dead_space_to_text
from ventset.titrate.oxygenation import Oxygenation, oxygenation, spo2_cautions
from ventset.titrate.record import (
    ACCEPTED,
    TIMELINE_SCHEMA,
    TIMELINE_VERSION,
    Measurement,
    Proposal,
    Settings,
    TimelineEntry,
    settings_in_use,
    timeline_from_dict,
    timeline_to_dict,
    validate_measurement,
)
from ventset.titrate.rules import NOT_AS_CHOSEN, preference_kept, preference_reason
from ventset.titrate.timeline import accept, measurement_at_set, patient_tidal_volume, record_measurement

__all__ = [
    "ACCEPTED", "MEASURED_FIELDS", "NOT_AS_CHOSEN", "PREFERENCES", "PREFERENCE_LABELS", "TIMELINE_SCHEMA",
    "TIMELINE_VERSION",
    "Adjustment", "Band", "DeadSpaceMeasurement", "InUseDeadSpace", "Measurement", "Oxygenation", "Proposal",
    "Settings", "TimelineEntry", "TitrationData", "accept", "adjust", "adjustment_to_dict", "adjustment_to_text",
    "anatomical_estimate_ml", "check_measured", "dead_space_to_dict", "dead_space_to_text", "load_titration_data",
    "measured_dead_space", "measurement_at_set", "oxygenation", "parse_measured", "parse_time", "patient_tidal_volume",
    "preference_kept", "preference_reason", "record_measurement", "settings_in_use",
    "spo2_cautions", "timeline_from_dict", "timeline_to_dict", "validate_measurement",
]
