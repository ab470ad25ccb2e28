"""The record of an anaesthetic as it grows: each measurement with the proposal made from it, and what the
clinician set."""

from __future__ import annotations

from dataclasses import replace

from ventset.cautions import caution, sort_cautions
from ventset.errors import InputError
from ventset.fields import FIELDS
from ventset.library import Library, load_library
from ventset.model import Caution, Request
from ventset.planner import plan
from ventset.present.phrases import Phrase
from ventset.titrate.adjust import adjust
from ventset.titrate.data import load_titration_data
from ventset.titrate.fields import check_measured
from ventset.titrate.oxygenation import oxygenation, spo2_cautions
from ventset.titrate.record import ACCEPTED, Measurement, Settings, TimelineEntry, validate_measurement
from ventset.units import fmt


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
    return [caution("caution", "GRADIENT_WIDENING",
                    "The PaCO2 − EtCO2 gradient has widened from {first_mmhg} (at {at_min}) to {now_mmhg}: alveolar "
                    "dead space is growing (Mosing et al. 2018). Check blood pressure and cardiac output, position and "
                    "fluid balance; EtCO2 now under-reads PaCO2 more, so titrate to blood gases.",
                    first_mmhg=g0, at_min=t0, now_mmhg=g1, widening_mmhg=g1 - g0)]


def patient_tidal_volume(request: Request, set_vt_ml: float, rate_per_min: float,
                         library: Library | None = None) -> float:
    """The volume (mL) this patient receives when ``set_vt_ml`` is set on the ventilator (or measured exhaled at the
    machine) at ``rate_per_min``: the set volume less the circuit's compression (ventset.evaluate.vt_at_patient)."""
    from ventset.evaluate import vt_at_patient

    subject = plan(request, library or load_library()).subject
    assert subject is not None
    return vt_at_patient(subject, set_vt_ml, rate_per_min)


def measurement_at_set(request: Request, measurement: Measurement, library: Library | None = None) -> Measurement:
    """``measurement`` whose tidal volume was entered as the set volume (``set_tidal_volume_ml``), with the
    patient's volume filled in from it."""
    if measurement.set_tidal_volume_ml is None:
        return measurement
    vt = patient_tidal_volume(request, measurement.set_tidal_volume_ml, measurement.rate_per_min, library)
    return replace(measurement, tidal_volume_ml=vt)


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
        why: tuple[Phrase, ...] = ()
        if measurement.pao2_mmhg is not None:
            base = plan(request, lib)
            fio2 = measurement.fio2 if measurement.fio2 is not None else base.oxygen.fio2
            oxy = oxygenation(measurement.pao2_mmhg, fio2, base.oxygen.barometric_mmhg,
                              base.ventilation.target_paco2_mmhg, base.resolved.body_temp_c, base.metabolism.rq)
            extra += oxy.cautions
            said = oxy.sentence()
            why = (replace(said, template=said.template + " (alveolar PO2 at the target PaCO2: no CO2 measured)"),)
        entry = TimelineEntry(measurement, rationale=why, cautions=sort_cautions(extra),
                              error="No CO2 measured: record only, no proposal.")
        return (*entries, entry)
    source = ""
    if measurement.paco2_mmhg is None and request.targets.gradient_mmhg is None:
        # EtCO2 alone: calibrate it with the gradient of the latest blood gas in the record, if there is one.
        paired = [(m.paco2_mmhg - m.etco2_mmhg, m) for m in (e.measurement for e in entries)
                  if m.paco2_mmhg is not None and m.etco2_mmhg is not None]
        if paired:
            g, last = max(paired, key=lambda pair: pair[1].time_min)
            if FIELDS["gradient"].within(g):
                request = replace(request, targets=replace(request.targets, gradient_mmhg=g))
                clock = f"{last.clock}, " if last.clock else ""
                source = f"measured at {clock}{fmt(last.time_min)} min"
    a = adjust(request, measurement, prefer, lib, gradient_source=source)
    cautions = sort_cautions([*a.cautions, *_gradient_trend(entries, measurement, lib)])
    entry = TimelineEntry(measurement, a.target_paco2_mmhg, a.proposal, a.partial_step if a.large_step else None,
                          a.rationale, cautions, vco2_ml_min=a.vco2_ml_min)
    return (*entries, entry)


def accept(entries: tuple[TimelineEntry, ...], index: int, which: str,
           own: Settings | None = None) -> tuple[TimelineEntry, ...]:
    """Mark entry ``index`` as set to its 'proposal', its 'partial_step', or the clinician's 'own' settings."""
    if which not in ACCEPTED[1:]:
        raise InputError("accept", which, f"must be one of {', '.join(ACCEPTED[1:])}")
    e = entries[index]
    if which == "own":
        if own is None:
            raise InputError("settings-set", "", "give the tidal volume and rate that were set")
        check_measured("tidal-volume", own.tidal_volume_ml)
        check_measured("rate", own.rate_per_min)
        chosen = own
    else:
        p = e.proposal if which == "proposal" else e.partial_step
        if p is None:
            raise InputError("accept", which, "this entry has no such proposal")
        chosen = p.settings
    return (*entries[:index], replace(e, accepted=which, settings_set=chosen), *entries[index + 1:])
