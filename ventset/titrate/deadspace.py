"""Dead space from measured CO2: Bohr, Enghoff, the gradient fraction, and the split into apparatus,
anatomical and alveolar parts."""

from __future__ import annotations

from dataclasses import dataclass

from ventset.cautions import caution, sort_cautions
from ventset.errors import InputError
from ventset.library import Library
from ventset.model import STANDING_NOTICE, Caution, Request
from ventset.physiology import deadspace
from ventset.titrate.fields import MEASURED_FIELDS, check_measured
from ventset.units import fmt


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


def _check_inputs(paco2: float, mixed: float, alveolar: float | None, etco2: float | None) -> None:
    spec = MEASURED_FIELDS["mixed-expired-co2"]
    if mixed >= paco2:
        raise InputError(spec, f"{fmt(mixed)} mmHg",
                         f"must be below the PaCO2 ({fmt(paco2)} mmHg): expired gas is diluted by dead space")
    if alveolar is not None and mixed >= alveolar:
        raise InputError(spec, f"{fmt(mixed)} mmHg", f"must be below the mean alveolar PCO2 ({fmt(alveolar)} mmHg)")
    if etco2 is not None and mixed >= etco2:
        raise InputError(spec, f"{fmt(mixed)} mmHg",
                         f"must be below the EtCO2 ({fmt(etco2)} mmHg): mixed-expired gas includes dead-space gas")


def _fraction_cautions(paco2: float, enghoff: float, bohr: float | None, alveolar: float | None,
                       etco2: float | None, alv_frac: float | None) -> list[Caution]:
    out = []
    if bohr is not None and enghoff - bohr > 0.05:
        out.append(caution("info", "ENGHOFF_ABOVE_BOHR",
                           "Enghoff VD/VT {enghoff} is above Bohr {bohr}: venous admixture and ventilation–perfusion "
                           "mismatch raise the Enghoff value, so it measures overall gas-exchange inefficiency rather "
                           "than dead space alone (Mosing et al. 2018).", enghoff=enghoff, bohr=bohr))
    if alveolar is not None and alveolar > paco2:
        out.append(caution("info", "ALVEOLAR_ABOVE_ARTERIAL",
                           "Mean alveolar PCO2 {alveolar_mmhg} is above PaCO2 {paco2_mmhg}: expected in birds "
                           "(cross-current exchange); in mammals check the capnogram and the sample.",
                           alveolar_mmhg=alveolar, paco2_mmhg=paco2))
    if alv_frac is not None and alv_frac < 0 and etco2 is not None:
        out.append(caution("info", "ETCO2_ABOVE_PACO2",
                           "EtCO2 {etco2_mmhg} is above PaCO2 {paco2_mmhg}, so the gradient gives no alveolar dead "
                           "space; expected in birds, otherwise check calibration and the sample timing.",
                           etco2_mmhg=etco2, paco2_mmhg=paco2))
    return out


@dataclass(frozen=True)
class _Split:
    airway_ml: float | None = None
    alveolar_ml: float | None = None
    alveolar_fraction: float | None = None
    alveolar_from_gradient_ml: float | None = None


def _split(phys: float, vt: float, apparatus: float | None, anatomical: float | None, alv_frac: float | None,
           out: list[Caution], method: str) -> _Split:
    """Physiological dead space minus apparatus and the anatomical estimate leaves the alveolar part."""
    if apparatus is None or anatomical is None:
        return _Split()
    airway = apparatus + anatomical
    alveolar = phys - airway
    if alveolar < 0:
        out.append(caution("caution", "AIRWAY_ESTIMATE_ABOVE_MEASURED",
                           "Apparatus {apparatus_ml} plus the anatomical estimate {anatomical_ml} is more than the "
                           "measured dead space {measured_ml} ({method}), leaving {alveolar_ml} for alveolar dead "
                           "space. The species estimate may be too high for this patient, or the expired gas was "
                           "sampled upstream of some apparatus.", {"method": method}, apparatus_ml=apparatus,
                           anatomical_ml=anatomical, measured_ml=phys, alveolar_ml=alveolar))
    if airway >= vt:
        out.append(caution("danger", "VT_NOT_ABOVE_DEAD_SPACE",
                           "Apparatus and anatomical dead space {airway_ml} is not below the tidal volume {vt_ml}: "
                           "little or no alveolar ventilation.", airway_ml=airway, vt_ml=vt))
    from_gradient = alv_frac * (vt - airway) if alv_frac is not None and vt > airway else None
    return _Split(airway, alveolar, alveolar / vt, from_gradient)


def measured_dead_space(paco2_mmhg: float, mixed_expired_mmhg: float, alveolar_pco2_mmhg: float | None = None,
                        etco2_mmhg: float | None = None, tidal_volume_ml: float | None = None,
                        apparatus_ml: float | None = None, anatomical_ml: float | None = None,
                        anatomical_source: str = "") -> DeadSpaceMeasurement:
    """Enghoff VD/VT = (PaCO2 − PĒCO2)/PaCO2 (Enghoff 1938); Bohr VD/VT = (PACO2 − PĒCO2)/PACO2 (Bohr 1891).

    Pressures in any one unit (mmHg here). With a tidal volume: physiological dead space (Bohr if given, else
    Enghoff) × VT; minus the apparatus volume and the anatomical estimate it leaves the alveolar dead space.
    Mixed-expired gas is taken as sampled downstream of the Y-piece, so apparatus dead space is inside it.
    """
    for key, value in (("paco2", paco2_mmhg), ("mixed-expired-co2", mixed_expired_mmhg),
                       ("alveolar-co2", alveolar_pco2_mmhg), ("etco2", etco2_mmhg),
                       ("tidal-volume", tidal_volume_ml), ("apparatus-volume", apparatus_ml)):
        check_measured(key, value)
    _check_inputs(paco2_mmhg, mixed_expired_mmhg, alveolar_pco2_mmhg, etco2_mmhg)
    enghoff = deadspace.enghoff_vd_vt(paco2_mmhg, mixed_expired_mmhg)
    bohr = None if alveolar_pco2_mmhg is None else deadspace.bohr_vd_vt(alveolar_pco2_mmhg, mixed_expired_mmhg)
    alv_frac = (None if etco2_mmhg is None
                else deadspace.alveolar_dead_space_fraction_from_gradient(paco2_mmhg, etco2_mmhg))
    out = _fraction_cautions(paco2_mmhg, enghoff, bohr, alveolar_pco2_mmhg, etco2_mmhg, alv_frac)
    method = "Bohr" if bohr is not None else "Enghoff"
    enghoff_ml = bohr_ml = phys = None
    split = _Split()
    if tidal_volume_ml is not None:
        enghoff_ml = enghoff * tidal_volume_ml
        bohr_ml = None if bohr is None else bohr * tidal_volume_ml
        phys = bohr_ml if bohr_ml is not None else enghoff_ml
        split = _split(phys, tidal_volume_ml, apparatus_ml, anatomical_ml, alv_frac, out, method)
    return DeadSpaceMeasurement(paco2_mmhg, mixed_expired_mmhg, alveolar_pco2_mmhg, etco2_mmhg, enghoff, bohr,
                                alv_frac, tidal_volume_ml, enghoff_ml, bohr_ml, phys, method, apparatus_ml,
                                anatomical_ml, anatomical_source, split.airway_ml, split.alveolar_ml,
                                split.alveolar_fraction, split.alveolar_from_gradient_ml, sort_cautions(out),
                                STANDING_NOTICE)


def anatomical_estimate_ml(request: Request, library: Library | None = None) -> tuple[float, str]:
    """The planner's intubated anatomical dead space (mL) for the patient in ``request``, and its source."""
    from ventset.planner import plan

    p = plan(request, library)
    note = p.assumption("anatomical_dead_space")
    return p.dead_space.anatomical_ml, "intubated; " + (note.source if note else "species estimate")
