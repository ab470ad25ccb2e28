"""The anaesthetic record's proposal card and its settings, as text: what to dial first (the set volume), then
what the patient receives; every number from the presentation layer in the reader's units, every value
escaped for the card's HTML."""

from __future__ import annotations

import math

from ventset.gui.text import esc
from ventset.gui.theme import SEVERITY_WORD, Theme, severity_colours
from ventset.present.quantities import Units, show
from ventset.titrate import Settings, TimelineEntry, preference_reason
from ventset.titrate.dials import dials_text


def gas_text(mmhg: float | None, unit: str) -> str:
    """A gas pressure held in mmHg in the reader's unit, '—' when not measured or not finite."""
    if mmhg is None or not math.isfinite(mmhg):
        return "—"
    return show(mmhg, "gas", Units(gas=unit))


def settings_text(s: Settings) -> str:
    """'set 48.4 mL (42 mL at the patient) at 20/min': what is dialled first, then what the patient receives."""
    if s.set_tidal_volume_ml is None:  # a record from before the set volume was kept
        return f"{show(s.tidal_volume_ml, 'volume')} at the patient at {show(s.rate_per_min, 'rate')}"
    return (f"set {show(s.set_tidal_volume_ml, 'volume')} ({show(s.tidal_volume_ml, 'volume')} at the patient) at "
            f"{show(s.rate_per_min, 'rate')}")


def card_parts(e: TimelineEntry, units: Units, t: Theme, notes: set[str]) -> list[str]:
    """The card as HTML paragraphs (every value escaped): why a chosen change was not kept first, then the
    volumes to set (and what the patient receives), the rationale, the cautions, the species notes once."""
    parts: list[str] = []
    reason = preference_reason(e.rationale)
    if reason is not None:
        parts.append(f"<b>{esc(reason.text(units))}</b>")
    if e.proposal is None:
        parts.append(esc(e.error or "No proposal."))
    else:
        p = e.proposal
        parts.append(f"<b>Next: {esc(settings_text(p.settings))}</b> → PaCO2 "
                     f"{gas_text(p.expected_paco2_mmhg, units.gas)}, "
                     f"EtCO2 {gas_text(p.expected_etco2_mmhg, units.gas)}; "
                     f"plateau {show(p.plateau_cmh2o, 'cmh2o')}, peak {show(p.peak_cmh2o, 'cmh2o')}"
                     + ("" if p.reached else " — <b>target not reached</b>"))
        if p.dials is not None:
            parts.append(f"<b>On the machine:</b> {esc(dials_text(p.dials))} → PaCO2 as dialled "
                         f"{gas_text(p.dials.expected_paco2_mmhg, units.gas)}")
        if e.partial_step:
            q = e.partial_step
            parts.append(f"<b>Part-way: {esc(settings_text(q.settings))}</b> "
                         f"({show(q.fraction_of_change * 100, 'percent')} of the change) → PaCO2 "
                         f"{gas_text(q.expected_paco2_mmhg, units.gas)}; then re-measure.")
        if e.vco2_ml_min:
            parts.append(f"CO2 output from the measurement: {show(e.vco2_ml_min, 'flow_ml')}.")
    lines = [line for line in e.rationale if line is not reason]
    if lines:
        parts.append("<br>".join(esc(line.text(units)) for line in lines))
    seen: set[str] = set()
    for c in e.cautions:
        if c.code in notes or c.code in seen or (reason is not None and c.code == "PROPOSAL_LIMITED"):
            continue
        seen.add(c.code)
        fg, _bg = severity_colours(t, c.severity)
        parts.append(f"<span style='color:{esc(fg)}'><b>{esc(SEVERITY_WORD[c.severity])}</b></span> "
                     f"{esc(c.text(units))}")
    said = sorted({c.code for c in e.cautions} & notes)
    if said:
        parts.append(f"Species notes, as in the Cautions panel: {esc(', '.join(said))}.")
    if e.settings_set:
        dialled = f"; on the machine {dials_text(e.settings_set.dials)}" if e.settings_set.dials else ""
        parts.append(f"<b>Set:</b> {esc(settings_text(e.settings_set) + dialled)} ({e.accepted.replace('_', '-')}).")
    return parts
