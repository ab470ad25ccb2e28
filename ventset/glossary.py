"""Plain definitions of the terms the plan shows, each with where the number comes from.

Used for tooltips in the window (and available to any printout). Keys are the read-out keys.
"""

from __future__ import annotations

from html import escape

# key: (term, definition, source of the equation or value)
TERMS: dict[str, tuple[str, str, str]] = {
    "set_vt": ("Set tidal volume", "The volume to set on the ventilator: the tidal volume that must reach the "
               "patient plus the volume the circuit takes up by compression (compressible volume × pressure rise).",
               "equation of motion; circuit compression correction (common practice)"),
    "patient_vt": ("Tidal volume at the patient", "Volume of one breath entering the airway, including apparatus "
                   "and airway dead space.", "solved from the alveolar ventilation equation"),
    "vt_per_kg": ("Tidal volume per kg", "Tidal volume at the patient divided by lean (ideal) body mass.",
                  "common practice"),
    "rate": ("Rate", "Breaths per minute delivered by the ventilator.", "solved on the line of equal PaCO2"),
    "ti": ("Inspiratory time (Ti)", "Time from the start of inspiration to the start of expiration.",
           "about 1 s at 20 kg scaled by M^0.26 (Stahl 1967), or from I:E"),
    "te": ("Expiratory time (Te)", "Cycle time 60/rate minus the inspiratory time.", "derived"),
    "pause": ("Inspiratory pause", "A hold at the end of inspiration with no flow, part of Ti: the volume stays in "
              "the lung and the airway pressure falls to the plateau. With Ti or I:E entered it comes out of that "
              "Ti; otherwise it is added to the usual inspiratory time, so Te is shorter by it.",
              "entered (or a species value with its source); equation of motion with no flow (Bates 2009)"),
    "te_without_pause": ("Expiratory time without the pause", "The Te the same timing rule would give at this "
                         "rate with no pause, and both in time constants τ: what the pause costs expiration.",
                         "derived"),
    "flow": ("Inspiratory flow", "Constant flow that delivers the set tidal volume over Ti − pause. In a "
             "pressure-controlled mode this tile shows the inspiratory pressure above PEEP instead.",
             "derived"),
    "peep": ("PEEP", "Positive end-expiratory pressure: airway pressure held at the end of expiration.",
             "species default (see assumptions)"),
    "limit": ("Pressure limit", "Highest airway pressure the plan may use; tidal volumes whose predicted plateau "
              "or peak pressure exceed it are avoided.", "species default (see assumptions)"),
    "fio2": ("FiO2", "Fraction of oxygen in the inspired gas (1.0 = 100 %).", "common practice default 1.0"),
    "fresh_gas": ("Fresh gas flow", "Gas flow from the flowmeters into the breathing system: a multiple of minute "
                  "volume for non-rebreathing systems, mL/kg/min for circles, never below O2 consumption.",
                  "Robertson et al. 2018; common practice"),
    "metabolic_rate": ("Metabolic rate", "Energy turnover of the anaesthetised patient; sets O2 use and CO2 output.",
                       "Kleiber 1947 allometry (K·M^b) × anaesthesia factor, Q10 temperature correction"),
    "vo2": ("O2 consumption (VO2)", "Oxygen used per minute, STPD.", "Weir 1949 (energy per litre of O2)"),
    "vco2": ("CO2 output (VCO2)", "Carbon dioxide produced per minute, STPD: RQ × VO2.", "Weir 1949"),
    "rq": ("Respiratory quotient", "VCO2 / VO2; about 0.8 in a fasted patient.", "common practice"),
    "alveolar_ventilation": ("Alveolar ventilation", "Gas per minute that reaches perfused alveoli; sets PaCO2.",
                             "alveolar ventilation equation VA = VCO2·K(T)/PaCO2 (K = 0.863 at 37 °C)"),
    "minute_ventilation": ("Minute ventilation", "Tidal volume × rate, dead space included.", "derived"),
    "anatomical": ("Anatomical dead space", "Airway volume that does not exchange gas; intubation bypasses the "
                   "upper part of it.", "Stahl 1967 allometry (2.76·M^0.96 mL), intubated share from the species"),
    "tube": ("Tube beyond the incisors", "Volume of the endotracheal tube and connector outside the mouth: "
             "π·(ID/2)²·length.", "geometry"),
    "alveolar_ds": ("Alveolar dead space", "Part of each breath reaching alveoli without blood flow.",
                    "species fraction of VT (Bohr/Enghoff dead space under anaesthesia)"),
    "total_ds": ("Total dead space", "Apparatus + tube + anatomical + alveolar dead space.", "derived"),
    "plateau": ("Plateau pressure", "Airway pressure at end-inspiration with no flow: VT/C + PEEP.",
                "equation of motion (single compartment)"),
    "peak": ("Peak airway pressure", "Highest airway pressure in the breath: plateau + resistance × flow at "
             "constant flow.", "equation of motion (single compartment)"),
    "driving": ("Driving pressure", "Plateau − PEEP = VT/C; the stretch applied to the lung.",
                "Donati et al. 2019 threshold in the cautions"),
    "compliance": ("Respiratory-system compliance", "Volume change per cmH2O of lung and chest wall together.",
                   "species value per kg lean mass"),
    "resistance": ("Airway resistance", "Pressure drop per L/s of flow, tube included.",
                   "species coefficient scaled by mass (Stahl 1967)"),
    "tau": ("Time constant τ", "R × C: the time the lung takes to empty 63 % of a breath passively.",
            "single-compartment mechanics"),
    "te_tau": ("Expiration in time constants", "Te / τ. Below 3, more than 5 % of the breath stays in the lung "
               "(gas trapping, auto-PEEP).", "exponential emptying, e^(−Te/τ)"),
    "compressed": ("Circuit compression", "Volume the circuit takes up each breath: compressible volume × "
                   "(peak − PEEP). It never reaches the patient.", "common practice"),
    "target_paco2": ("Target PaCO2", "Arterial CO2 the settings aim for.", "species start value unless entered"),
    "paco2": ("Expected PaCO2", "Arterial CO2 these settings should give at steady state.",
              "alveolar ventilation equation"),
    "etco2": ("Expected EtCO2", "End-tidal CO2 the capnograph should read: expected PaCO2 − gradient.",
              "species PaCO2–EtCO2 gradient"),
    "gradient": ("PaCO2 − EtCO2 gradient", "Arterial minus end-tidal CO2; grows with alveolar dead space.",
                 "species value (see assumptions)"),
    "pao2": ("Alveolar PO2 (PAO2)", "Oxygen pressure in the alveoli; arterial PO2 is lower.",
             "alveolar gas equation, PAO2 = FiO2·(PB − PH2O) − PaCO2·[FiO2 + (1 − FiO2)/R]"),
    "pb": ("Barometric pressure", "Air pressure at the clinic.", "ISA standard atmosphere (ICAO Doc 7488) or "
           "entered"),
    "ph2o": ("Water vapour pressure", "Saturated water vapour at body temperature.", "IAPWS-IF97"),
    "reservoir_bag": ("Reservoir bag", "Smallest commonly stocked bag holding several set tidal volumes.",
                      "planning.toml multiple of set VT (see assumptions)"),
    "min_o2": ("Minimum O2 flow", "O2 the patient consumes plus any sampling loss: fresh gas must never be lower.",
               "Weir 1949; derived"),
}


def tooltip(key: str) -> str:
    """Rich-text tooltip for a read-out key: term, definition, source ('' if unknown)."""
    if key not in TERMS:
        return ""
    term, definition, source = TERMS[key]
    return f"<b>{escape(term)}</b><br>{escape(definition)}<br><i>Source:</i> {escape(source)}"
