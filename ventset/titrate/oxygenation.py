"""Oxygenation from a measured PaO2: alveolar–arterial gradient, PaO2/FiO2 and its bands, and SpO2."""

from __future__ import annotations

from dataclasses import dataclass

from ventset.cautions import caution, sort_cautions
from ventset.model import Caution
from ventset.physiology import gas
from ventset.present.phrases import Phrase, phrase
from ventset.titrate.data import Band, load_titration_data
from ventset.titrate.fields import check_measured


def _num(x: float | None) -> float | None:
    from ventset.report import json_number

    return json_number(x)


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
        keys = ("pao2_mmhg", "fio2", "barometric_mmhg", "paco2_mmhg", "rq", "water_vapour_mmhg",
                "alveolar_po2_mmhg", "aa_gradient_mmhg", "pf_ratio_mmhg", "expected_pao2_mmhg")
        out: dict = {k: _num(getattr(self, k)) for k in keys}
        out["bands"] = [{"scheme": b.scheme, "code": b.code, "label": b.label, "source": b.source} for b in self.bands]
        return out

    def sentence(self) -> Phrase:
        bands = "; ".join(f"{b.label} ({b.source})" for b in self.bands)
        return phrase("PaO2 {pao2_mmhg} at FiO2 {fio2}: alveolar PO2 {alveolar_mmhg}, A–a gradient {aa_mmhg}, "
                      "PaO2/FiO2 {pf_mmhg}" + (" — {bands}." if bands else "."), {"bands": bands},
                      pao2_mmhg=self.pao2_mmhg, fio2=self.fio2, alveolar_mmhg=self.alveolar_po2_mmhg,
                      aa_mmhg=self.aa_gradient_mmhg, pf_mmhg=self.pf_ratio_mmhg)


def _bands(ratio: float) -> tuple[Band, ...]:
    data = load_titration_data()
    out = []
    for scheme in dict.fromkeys(b.scheme for b in data.bands):
        hits = [b for b in data.bands if b.scheme == scheme and b.applies(ratio)]
        if hits:
            out.append(min(hits, key=lambda b: b.limit_mmhg))
    return tuple(out)


def _cautions(pao2: float, pao2_alv: float, fio2: float, pb: float, ratio: float, expected: float,
              bands: tuple[Band, ...]) -> list[Caution]:
    th = load_titration_data().oxygen
    out: list[Caution] = []
    severe, hypo = th["pao2_severe_hypoxaemia_mmhg"], th["pao2_hypoxaemia_mmhg"]
    if pao2 < hypo.value:
        sev = "danger" if pao2 < severe.value else "caution"
        out.append(caution(sev, "HYPOXAEMIA",
                           "PaO2 {pao2_mmhg} is below {limit_mmhg} ({what}hypoxaemia; {source}). Check the airway, "
                           "tube position and oxygen supply; raise FiO2; consider PEEP or recruitment (clinician's "
                           "call).", {"what": "severe " if sev == "danger" else "", "source": hypo.source},
                           pao2_mmhg=pao2, limit_mmhg=severe.value if sev == "danger" else hypo.value))
    if pao2 > pao2_alv + 1e-9:
        out.append(caution("caution", "PAO2_ABOVE_ALVEOLAR",
                           "Measured PaO2 {pao2_mmhg} is above the alveolar PO2 {alveolar_mmhg} calculated for FiO2 "
                           "{fio2} at {barometric_mmhg}, which cannot happen: check FiO2, the barometric pressure "
                           "and the sample.", pao2_mmhg=pao2, alveolar_mmhg=pao2_alv, fio2=fio2, barometric_mmhg=pb))
    vet = next((b for b in bands if b.scheme == "veterinary"), None)
    if vet is not None:
        out.append(caution("caution", "PF_RATIO_LOW",
                           "PaO2/FiO2 {pf_mmhg} is {band} ({source}). A ratio alone is not a diagnosis: under "
                           "anaesthesia atelectasis and ventilation–perfusion mismatch lower it too. Consider PEEP "
                           "or a recruitment manoeuvre if the clinician judges it safe.",
                           {"band": vet.label, "source": vet.source}, pf_mmhg=ratio))
    elif pao2 < expected:
        out.append(caution("info", "PAO2_BELOW_EXPECTED",
                           "PaO2 {pao2_mmhg} is below the ≈{expected_mmhg} expected at FiO2 {fio2} ({source}): some "
                           "venous admixture or ventilation–perfusion mismatch.",
                           {"source": th["expected_pao2_per_fio2_percent"].source}, pao2_mmhg=pao2,
                           expected_mmhg=expected, fio2=fio2))
    return out


def oxygenation(pao2_mmhg: float, fio2: float, barometric_mmhg: float, paco2_mmhg: float, body_temp_c: float,
                rq: float) -> Oxygenation:
    """A–a gradient = PAO2 − PaO2 (PAO2 by the alveolar gas equation) and P/F = PaO2/FiO2, with bands.

    Bands: VetALI < 300, VetARDS < 200 mmHg (Wilkins et al. 2007); human Berlin ≤ 300/200/100 mmHg (ARDS
    Definition Task Force 2012); expected PaO2 ≈ 5 × FiO2 in % (common practice). From resources/oxygenation.toml.
    """
    check_measured("pao2", pao2_mmhg)
    check_measured("fio2", fio2)
    ph2o = gas.water_vapour_pressure_mmhg(body_temp_c)
    pao2_alv = gas.alveolar_po2_mmhg(fio2, barometric_mmhg, ph2o, paco2_mmhg, rq)
    ratio = pao2_mmhg / fio2
    expected = load_titration_data().oxygen["expected_pao2_per_fio2_percent"].value * fio2 * 100
    bands = _bands(ratio)
    found = _cautions(pao2_mmhg, pao2_alv, fio2, barometric_mmhg, ratio, expected, bands)
    return Oxygenation(pao2_mmhg, fio2, barometric_mmhg, paco2_mmhg, rq, ph2o, pao2_alv, pao2_alv - pao2_mmhg, ratio,
                       expected, bands, sort_cautions(found))


def spo2_cautions(spo2_percent: float) -> list[Caution]:
    """Low pulse-oximeter saturation (thresholds in resources/oxygenation.toml)."""
    th = load_titration_data().oxygen
    lo, very = th["spo2_caution_percent"], th["spo2_danger_percent"]
    if spo2_percent >= lo.value:
        return []
    sev = "danger" if spo2_percent < very.value else "caution"
    limit = very if sev == "danger" else lo
    return [caution(sev, "SPO2_LOW",
                    "SpO2 {spo2_percent} is below {limit_percent} ({source}). Check probe placement and perfusion, "
                    "the airway and the oxygen supply; confirm with a blood gas.", {"source": limit.source},
                    spo2_percent=spo2_percent, limit_percent=limit.value)]
