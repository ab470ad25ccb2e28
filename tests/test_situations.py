"""The patient's situations (resources/situations.toml, ventset/stages/situation.py): each effect against its
published number (named beside the check), the direction the plan moves, combinations, entered values, the
CO2 course, the trail, the cautions, the command line, and the user guide's table."""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ventset.cli import main
from ventset.errors import InputError
from ventset.library import load_library
from ventset.model import Patient, Request, Strategy, Targets
from ventset.physiology.co2stores import approach_mmhg, course_mmhg, time_to_fraction_min
from ventset.planner import plan, plan_at
from ventset.report import plan_to_dict, plan_to_text

LIB = load_library()
ROOT = Path(__file__).resolve().parent.parent
ISSUE_KEYS = ("laparoscopy", "raised-icp", "lung-protective", "open-chest", "one-lung", "dorsal-recumbency",
              "pregnancy", "malignant-hyperthermia")


def dog(*situations: str, mass: float = 20.0, **patient) -> Request:
    return Request(Patient("dog", mass, situations=situations, **patient))


def codes(p) -> set[str]:
    return {c.code for c in p.cautions}


# ---------------------------------------------------------------------------------------------------------
# The data
# ---------------------------------------------------------------------------------------------------------

def test_the_issue_keys_and_the_list_are_there():
    assert set(ISSUE_KEYS) <= set(LIB.situations)
    for key in ("diaphragmatic-hernia", "obesity", "brachycephalic", "neonate", "rumen-distension", "hypothermia",
                "hyperthermia", "sepsis", "sodium-bicarbonate", "low-flow", "altitude"):
        assert key in LIB.situations


def test_species_limits_name_library_species_and_codes_are_unique():
    seen: dict[str, str] = {}
    species_codes = {n.code for sp in LIB.species.values() for n in sp.notes}
    for s in LIB.situations.values():
        assert all(k in LIB.species for k in s.species), s.key
        for n in s.cautions:
            assert seen.setdefault(n.code, s.key) == s.key, n.code  # a code belongs to one situation
            assert n.code not in species_codes, n.code
            assert n.source.strip() and n.text.strip()


def test_open_chest_is_no_longer_a_standing_dog_note():
    assert "OPEN_CHEST" not in {n.code for n in LIB.species["dog"].notes}


# ---------------------------------------------------------------------------------------------------------
# No situation, and the open-chest caution
# ---------------------------------------------------------------------------------------------------------

def test_without_a_situation_nothing_is_applied_and_no_open_chest_caution():
    p = plan(dog())
    assert p.basis.situations is None and "OPEN_CHEST" not in codes(p)
    assert not any(a.key.startswith("situation") for a in p.assumptions)
    assert plan_to_dict(p)["situations"] == {"applied": [], "combined": None, "co2_course": None}
    assert "SITUATIONS" not in plan_to_text(p)


@pytest.mark.parametrize("species", ["dog", "cat", "horse"])
def test_open_chest_caution_only_with_the_open_chest_situation(species):
    mass = {"dog": 20.0, "cat": 4.0, "horse": 450.0}[species]
    assert "OPEN_CHEST" not in codes(plan(Request(Patient(species, mass))))
    p = plan(Request(Patient(species, mass, situations=("open-chest",))))
    assert "OPEN_CHEST" in codes(p) and "OPEN_CHEST_REEXPAND" in codes(p)
    assert p.pressures.peep_cmh2o >= 3.0  # common practice: PEEP 3-5 cmH2O with the chest open


# ---------------------------------------------------------------------------------------------------------
# Each effect against its published number
# ---------------------------------------------------------------------------------------------------------

def test_laparoscopy_raises_co2_output_and_minute_volume():
    base, lap = plan(dog()), plan(dog("laparoscopy"))
    ratio = lap.metabolism.vco2_ml_min / base.metabolism.vco2_ml_min
    # Mullett et al. 1993 (Anesth Analg 76:622): +25 ± 4 % (cholecystectomy); +15 ± 3 % gynaecological.
    assert 1.15 - 0.03 <= ratio <= 1.25 + 0.04
    assert lap.metabolism.vo2_ml_min == pytest.approx(base.metabolism.vo2_ml_min)  # absorbed, not made
    assert lap.ventilation.minute_ml_min > base.ventilation.minute_ml_min
    assert lap.ventilation.target_reached and lap.ventilation.expected_paco2_mmhg == pytest.approx(40, abs=1)
    # Di Bella et al. 2022 (Front Vet Sci 9:904673): static compliance 1.78 → 1.35 and 1.66 → 1.16 mL/cmH2O/kg.
    c = lap.pressures.compliance_ml_cmh2o / base.pressures.compliance_ml_cmh2o
    assert 1.16 / 1.66 - 0.01 <= c <= 1.35 / 1.78 + 0.01
    assert lap.pressures.peep_cmh2o >= 5  # Di Bella et al. 2022: PEEP 5 after recruitment


def test_laparoscopy_at_unchanged_ventilation_matches_the_pig_study():
    # Arch Surg 1992 127:928, pigs at IAP 15 mmHg with fixed minute volume: VCO2 115 → 149 mL/min,
    # PaCO2 35 → 49 mmHg. At unchanged alveolar ventilation the model's PaCO2 rises as VCO2 does
    # (alveolar ventilation equation); the published rise is within 10 % of it.
    base = plan(Request(Patient("pig", 40.0), targets=Targets(paco2_mmhg=35.0)))
    v = base.ventilation
    after = plan_at(base, v.tidal_volume_ml, v.rate_per_min, vco2_ml_min=base.metabolism.vco2_ml_min * 149 / 115)
    assert after.ventilation.expected_paco2_mmhg == pytest.approx(49.0, rel=0.10)


def test_laparoscopy_permits_paco2_up_to_60_as_a_caution_not_a_danger():
    # Small Animal Laparoscopy and Thoracoscopy (Wiley, 2nd ed.): PaCO2 ≤ 60 mmHg, EtCO2 < 55 mmHg.
    p = plan(dog("laparoscopy"))
    assert p.basis.inputs.species.paco2_target_mmhg.max == 60
    assert p.basis.situations.paco2_ceiling_mmhg == 60


@pytest.mark.parametrize("species,mass", [("dog", 20.0), ("horse", 450.0), ("cat", 4.0)])
def test_raised_icp_targets_35_to_40(species, mass):
    p = plan(Request(Patient(species, mass, situations=("raised-icp",))))
    # from memory, normocapnia 35-40 mmHg; Brain Trauma Foundation: no hyperventilation to ≤ 25 mmHg (Godoy 2021);
    # CENTER-TBI mean PaCO2 38.9 ± 5.2 mmHg (Citerio et al. 2021).
    assert 35 <= p.ventilation.target_paco2_mmhg <= 40
    assert p.ventilation.expected_paco2_mmhg >= 30
    assert p.pressures.peep_cmh2o <= 5 and "ICP_NO_HYPERVENTILATION" in codes(p)


def test_lung_protective_keeps_vt_and_plateau_even_with_a_stiff_lung():
    stiff = 0.4 * 20  # mL/cmH2O: a third of the healthy 1.3 mL/cmH2O/kg (Asorey et al. 2020)
    for req in (dog("lung-protective"), dog("lung-protective", compliance_ml_cmh2o=stiff),
                Request(Patient("horse", 450.0, situations=("lung-protective",)))):
        p = plan(req)
        vt_kg = p.ventilation.tidal_volume_ml / p.resolved.lean_mass_kg
        assert vt_kg <= 8 + 1e-6          # Hess 2011; Griffiths et al. 2019: 6 (to 8) mL/kg ideal weight
        assert p.pressures.plateau_cmh2o <= 30 + 1e-6  # Griffiths et al. 2019: plateau < 30 cmH2O
        assert p.pressures.driving_cmh2o <= 15 + 1e-6  # Amato et al. 2015; Crit Care 2016: ΔP 12.8-13.7
    healthy = plan(dog())
    p = plan(dog("lung-protective"))
    assert p.ventilation.rate_per_min > healthy.ventilation.rate_per_min  # smaller breaths, faster


def test_lung_protective_plateau_limit_binds_in_a_horse_with_a_high_species_limit():
    p = plan(Request(Patient("horse", 450.0, compliance_ml_cmh2o=120.0, situations=("lung-protective",)),
                     strategy=Strategy(vt_ml_kg=8.0)))
    assert p.pressures.plateau_cmh2o <= 28 + 1e-6  # Griffiths et al. 2019 (< 30); the lower end of 28-30
    assert LIB.species["horse"].pip_limit_cmh2o.value > 28


def test_pregnancy_raises_co2_output_and_targets_the_dams_low_normal():
    base, preg = plan(dog()), plan(dog("pregnancy", lean_mass_kg=17.0))
    # VO2 +20-50 % at human term (aneskey; PMC9174343), RQ unchanged: VCO2 ×1.2-1.5.
    vco2_ratio = preg.metabolism.vco2_ml_min / plan(dog(lean_mass_kg=17.0)).metabolism.vco2_ml_min
    assert 1.2 <= vco2_ratio <= 1.5
    assert 30 <= preg.ventilation.target_paco2_mmhg <= 35  # from memory: the dam's own low normal, 30-35 mmHg
    assert preg.ventilation.minute_ml_min > base.ventilation.minute_ml_min * 0.85 * 1.2
    assert "SITUATION_NEEDS_INPUT" not in codes(preg)
    assert "SITUATION_NEEDS_INPUT" in codes(plan(dog("pregnancy")))  # no lean (non-pregnant) mass entered


def test_hyperthermia_follows_the_published_14_percent_per_degree():
    normal = plan(dog())
    hot = plan(dog("hyperthermia", body_temp_c=41.0))
    # hypercapnic ventilatory failure review (PMC9525762): +14 % CO2 production per °C; 41 − 38.5 = 2.5 °C.
    assert hot.metabolism.vco2_ml_min / normal.metabolism.vco2_ml_min == pytest.approx(1 + 0.14 * 2.5, rel=1e-6)
    assert "SITUATION_NEEDS_INPUT" in codes(plan(dog("hyperthermia")))


def test_malignant_hyperthermia_is_a_danger_with_what_to_do():
    base, mh = plan(dog()), plan(dog("malignant-hyperthermia"))
    danger = [c for c in mh.cautions if c.code == "MALIGNANT_HYPERTHERMIA_CRISIS"]
    assert danger and danger[0].severity == "danger" and mh.cautions[0].severity == "danger"
    text = danger[0].message
    assert "stop every trigger" in text and "oxygen at 10 L/min" in text and "hyperventilate" in text
    # from memory: CO2 output rises several-fold, ×2-4.
    assert 2 <= mh.metabolism.vco2_ml_min / base.metabolism.vco2_ml_min <= 4
    assert mh.ventilation.minute_ml_min >= 2 * base.ventilation.minute_ml_min
    assert mh.ventilation.rate_per_min > LIB.species["dog"].rate_per_min.max  # the rate range widened, said so
    assert all(math.isfinite(x) for x in (mh.ventilation.tidal_volume_ml, mh.ventilation.rate_per_min))


def test_sodium_bicarbonate_gives_a_co2_load_and_its_duration():
    p = plan(dog("sodium-bicarbonate"))
    load = next(c for c in p.cautions if c.code == "BICARBONATE_CO2_LOAD")
    values = dict(load.values)
    # Ideal gas at STPD: V = nRT/P = 1 mmol × 8.314462618 J/(mol·K) × 273.15 K / 101325 Pa = 22.414 mL (CODATA R).
    molar_ml = 8.314462618 * 273.15 / 101325 * 1e6 / 1000
    assert values["load_ml"] == pytest.approx(20 * molar_ml, rel=0.002)
    assert values["minutes_min"] == pytest.approx(420 / 60)  # Roh et al. 2024: EtCO2 raised for a median 420 s
    # Roh et al. 2024: median EtCO2 doubled (21 → 41 mmHg) after a bolus; 1 mmol/kg in a 20 kg dog ≈ doubles VCO2.
    assert values["ratio"] == pytest.approx(41 / 21, rel=0.2)
    assert p.metabolism.vco2_ml_min == pytest.approx(plan(dog()).metabolism.vco2_ml_min)  # transient: not steady


def test_dorsal_recumbency_in_a_horse_raises_peep_and_the_gradient():
    p = plan(Request(Patient("horse", 500.0, situations=("dorsal-recumbency",))))
    assert p.pressures.peep_cmh2o >= 10  # Hopster et al. 2011: PEEP 10 after recruitment
    assert p.resolved.gradient_mmhg >= 12  # Moens 1989: 12 ± 6 mmHg
    assert 40 <= p.ventilation.target_paco2_mmhg <= 50  # J Vet Anesth Surg (Japan) 28:5; about 50 judged right
    assert {"DORSAL_RECRUITMENT", "DORSAL_GRADIENT"} <= codes(p)
    with pytest.raises(InputError) as err:
        plan(dog("dorsal-recumbency"))
    assert err.value.key == "situation" and "Horse" in str(err.value)


def test_one_lung_keeps_plateau_and_driving_pressure():
    p = plan(dog("one-lung"))
    assert p.pressures.driving_cmh2o <= 15 + 1e-6 and p.pressures.plateau_cmh2o <= 25 + 1e-6  # from memory
    assert p.pressures.peep_cmh2o >= 5  # Kudnig et al. 2006: PEEP 5 better than 2.5 during OLV in dogs
    assert p.basis.situations.paco2_ceiling_mmhg == 60 and "ONE_LUNG_SHUNT" in codes(p)


def test_diaphragmatic_hernia_limits_pressure_and_peep():
    p = plan(dog("diaphragmatic-hernia"))
    assert p.pressures.pressure_limit_cmh2o <= 20  # Clinician's Brief: do not exceed 15-20 cmH2O
    assert p.pressures.peep_cmh2o <= 3 and 6 <= p.ventilation.tidal_volume_ml / 20 <= 10


def test_altitude_lowers_the_target_and_asks_for_the_altitude():
    p = plan(Request(Patient("dog", 20.0, situations=("altitude",)), targets=Targets(altitude_m=2600.0)))
    # Trujillo Jurado et al. 2014: dogs at about 2,600 m had lower PCO2 than textbook values (size from memory).
    assert p.ventilation.target_paco2_mmhg == pytest.approx(40 - 3)
    assert "SITUATION_NEEDS_INPUT" not in codes(p)
    assert "SITUATION_NEEDS_INPUT" in codes(plan(dog("altitude")))


def test_neonate_plans_the_age_and_refuses_an_entered_adult():
    p = plan(dog("neonate", mass=0.8))
    assert p.basis.growth.age == "neonate" and p.request.patient.age is None
    with pytest.raises(InputError) as err:
        plan(dog("neonate", mass=0.8, age="adult"))
    assert err.value.key == "situation"


def test_low_flow_checks_the_oxygen_flow_against_o2_use():
    p = plan(dog("low-flow"))
    c = next(c for c in p.cautions if c.code == "LOW_FLOW_OXYGEN")
    assert dict(c.values)["vo2_ml_min"] == pytest.approx(p.metabolism.vo2_ml_min)
    assert "LOW_FLOW_CIRCUIT" in codes(plan(Request(Patient("cat", 2.0, situations=("low-flow",)))))


# ---------------------------------------------------------------------------------------------------------
# Combinations and entered values
# ---------------------------------------------------------------------------------------------------------

def test_combined_factors_multiply_and_limits_take_the_strictest():
    base = plan(dog())
    p = plan(dog("laparoscopy", "lung-protective"))
    lap, prot = LIB.situations["laparoscopy"], LIB.situations["lung-protective"]
    expected = base.pressures.compliance_ml_cmh2o * lap.compliance_factor.value * prot.compliance_factor.value
    assert p.pressures.compliance_ml_cmh2o == pytest.approx(expected)
    # laparoscopy accepts PaCO2 60, lung-protective 56 (pH 7.25, Henderson-Hasselbalch: 24/(0.03·10^(7.25−6.1))).
    assert p.basis.situations.paco2_ceiling_mmhg == pytest.approx(24 / (0.03 * 10 ** (7.25 - 6.1)), abs=1)
    icp = plan(dog("laparoscopy", "raised-icp"))
    assert icp.basis.situations.paco2_ceiling_mmhg == 45 and 35 <= icp.ventilation.target_paco2_mmhg <= 40
    assert icp.metabolism.vco2_ml_min == pytest.approx(base.metabolism.vco2_ml_min * 1.25)


def test_peep_floor_is_held_at_the_strictest_ceiling_with_a_note():
    p = plan(Request(Patient("horse", 450.0, situations=("dorsal-recumbency", "diaphragmatic-hernia"))))
    assert p.pressures.peep_cmh2o == 3
    peep = p.assumption("peep")
    assert "Diaphragmatic hernia" in peep.source and "Dorsal recumbency" in peep.source


def test_conflicts_are_refused_naming_the_situations():
    with pytest.raises(InputError) as err:
        plan(dog("laparoscopy", "extraperitoneal-insufflation"))
    assert err.value.key == "situation"
    with pytest.raises(InputError) as err:
        plan(Request(Patient("cattle", 500.0, situations=("pregnancy", "dorsal-recumbency"))))
    assert err.value.key == "situation" and "30–35" in str(err.value) and "40–50" in str(err.value)
    # an entered target settles it, and a caution says it is outside one band
    p = plan(Request(Patient("cattle", 500.0, lean_mass_kg=450.0, situations=("pregnancy", "dorsal-recumbency")),
                     targets=Targets(paco2_mmhg=40.0)))
    assert p.ventilation.target_paco2_mmhg == 40.0


def test_entered_values_are_kept_and_a_caution_says_so():
    p = plan(Request(Patient("dog", 20.0, situations=("raised-icp",)), targets=Targets(peep_cmh2o=8.0,
                                                                                      paco2_mmhg=30.0)))
    assert p.pressures.peep_cmh2o == 8.0 and p.ventilation.target_paco2_mmhg == 30.0
    assert {"SITUATION_PEEP", "SITUATION_TARGET"} <= codes(p)
    measured = plan(dog("lung-protective", compliance_ml_cmh2o=30.0))
    assert measured.pressures.compliance_ml_cmh2o == 30.0
    rate = plan(dog(metabolic_rate_w=30.0))
    both = plan(dog("pregnancy", "laparoscopy", metabolic_rate_w=30.0, lean_mass_kg=17.0))
    # a measured rate includes the body's own rise (pregnancy not applied); absorbed CO2 (×1.25) still adds.
    assert both.metabolism.vco2_ml_min == pytest.approx(rate.metabolism.vco2_ml_min * 1.25)
    assert both.assumption("situation_co2_not_applied") is not None


def test_every_change_is_in_the_trail_with_its_source():
    for key, s in LIB.situations.items():
        species, mass = (s.species[0], LIB.species[s.species[0]].mass_kg.max / 2) if s.species else ("dog", 20.0)
        extra = {"mass": 0.8} if s.age else {}
        p = plan(Request(Patient(species, extra.get("mass", mass), situations=(key,))))
        assert p.assumption(f"situation:{key}") is not None, key
        sources = " ".join(a.source for a in p.assumptions)
        for effect in (s.compliance_factor, s.peep_min_cmh2o, s.plateau_limit_cmh2o, s.driving_limit_cmh2o,
                       s.co2_output, s.tidal_volume_ml_kg):
            if effect is not None and (effect is not s.peep_min_cmh2o or
                                       effect.value > LIB.species[species].peep_cmh2o.value):
                assert effect.source in sources, (key, effect)


# ---------------------------------------------------------------------------------------------------------
# CO2 over time (body CO2 stores)
# ---------------------------------------------------------------------------------------------------------

def test_co2_course_half_time_and_95_percent():
    # Farhi & Rahn 1955: half of the CO2-store adjustment in about 4 min (dogs); the reference sheet's
    # derived τ = 4/ln 2 ≈ 5.8 min gives 95 % at 3τ ≈ 17 min.
    half = LIB.co2_stores["fall_half_time_min"].value
    assert half == 4.0
    assert approach_mmhg(40.0, 30.0, 4.0, half) == pytest.approx(35.0)
    assert time_to_fraction_min(0.95, half) == pytest.approx(3 * 4 / math.log(2), rel=0.01)
    points = course_mmhg(40.0, 50.0, LIB.co2_stores["rise_half_time_min"].value)
    assert [p for _, p in points] == sorted(p for _, p in points) and points[0][1] == 40.0


def test_plan_json_has_the_applied_situations_and_the_course():
    d = plan_to_dict(plan(dog("laparoscopy")))
    s = d["situations"]
    assert [a["key"] for a in s["applied"]] == ["laparoscopy"]
    assert s["combined"]["co2_factor"] == pytest.approx(1.25)
    c = s["co2_course"]
    assert c["unchanged_ventilation_to_mmhg"] == pytest.approx(c["unchanged_ventilation_from_mmhg"] * 1.25)
    json.dumps(d, allow_nan=False)


# ---------------------------------------------------------------------------------------------------------
# Any combination: a finite plan or a clear message, never a traceback
# ---------------------------------------------------------------------------------------------------------

SPECIES = ["dog", "cat", "horse", "cattle", "sheep", "pig", "rabbit", "rat", "psittacine", "chelonian"]


@settings(deadline=None)
@given(st.sampled_from(SPECIES), st.floats(0, 1), st.lists(st.sampled_from(sorted(LIB.situations)), max_size=5),
       st.booleans())
def test_any_combination_gives_a_finite_plan_or_a_clear_message(species, where, keys, temperature):
    sp = LIB.species[species]
    mass = sp.mass_kg.min + where * (sp.mass_kg.max - sp.mass_kg.min)
    temp = sp.body_temperature_c.max + 1.5 if temperature and not sp.group.ectotherm else None
    try:
        p = plan(Request(Patient(species, mass, body_temp_c=temp, situations=tuple(keys))))
    except InputError as err:
        assert err.key in ("situation", "age", "pressure-limit") and "\n" not in str(err)
        return
    v, pr = p.ventilation, p.pressures
    for x in (v.tidal_volume_ml, v.rate_per_min, v.ti_s, pr.peep_cmh2o, pr.plateau_cmh2o, pr.compliance_ml_cmh2o,
              p.metabolism.vco2_ml_min):
        assert math.isfinite(x) and x > 0 or x == pr.peep_cmh2o == 0
    assert math.isfinite(v.expected_paco2_mmhg) or any(c.severity == "danger" for c in p.cautions)
    if not v.target_reached:
        assert any(c.code in ("TARGET_UNREACHABLE", "TARGET_BELOW_LIMITS") for c in p.cautions)
    json.dumps(plan_to_dict(p), allow_nan=False)
    assert plan_to_text(p)


# ---------------------------------------------------------------------------------------------------------
# Command line and the user guide
# ---------------------------------------------------------------------------------------------------------

def test_cli_lists_situations_and_plans_with_them(capsys):
    assert main(["situations"]) == 0
    out = capsys.readouterr().out
    assert all(k in out for k in ISSUE_KEYS)
    assert main(["situations", "--json"]) == 0
    listed = json.loads(capsys.readouterr().out)
    assert {s["key"] for s in listed} == set(LIB.situations)
    assert main(["plan", "--species", "dog", "--mass", "20", "--situation", "laparoscopy", "--situation",
                 "raised-icp", "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert [a["key"] for a in d["situations"]["applied"]] == ["laparoscopy", "raised-icp"]
    assert main(["plan", "--species", "dog", "--mass", "20", "--situation", "unicorn-horn"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("ventset: --situation") and err.count("\n") == 1


def test_the_user_guide_explains_every_situation_and_its_codes():
    text = (ROOT / "docs" / "user-guide.md").read_text(encoding="utf-8")
    missing = [k for k in LIB.situations if f"| `{k}` |" not in text]
    assert missing == []
    data_codes = {n.code for s in LIB.situations.values() for n in s.cautions}
    import re
    src = (ROOT / "ventset" / "situation_cautions.py").read_text(encoding="utf-8")
    rule_codes = set(re.findall(r'"([A-Z][A-Z0-9_]{3,})"', src))
    assert "BICARBONATE_CO2_LOAD" in rule_codes  # the scan works
    assert [c for c in sorted(data_codes | rule_codes) if f"| {c} |" not in text] == []


def test_the_target_is_the_middle_of_the_band_and_bands_intersect():
    # raised-icp 35-40 mmHg (from memory; CENTER-TBI mean 38.9); pregnancy 30-35 (from memory; people 28-32).
    assert plan(dog("raised-icp")).ventilation.target_paco2_mmhg == pytest.approx(37.5)
    assert plan(dog("pregnancy")).ventilation.target_paco2_mmhg == pytest.approx(32.5)
    assert plan(dog("pregnancy", "raised-icp")).ventilation.target_paco2_mmhg == pytest.approx(35.0)
    assert "middle of 35–40" in plan(dog("raised-icp")).assumption("target_paco2").source


def test_case_files_keep_the_situations():
    from ventset import cases
    from ventset.model import request_to_dict

    stored = json.loads(json.dumps(request_to_dict(dog("laparoscopy", "raised-icp"))))
    assert cases.request_from_case_dict(stored).patient.situations == ("laparoscopy", "raised-icp")
    stored["patient"]["situations"] = ["a-later-situation"]
    request = cases.request_from_case_dict(stored)  # opens; planning it says what is wrong
    with pytest.raises(InputError) as err:
        plan(request)
    assert err.value.key == "situation"
    stored["patient"]["situations"] = "laparoscopy"  # text, not a list: refused naming the field
    with pytest.raises(Exception, match="request.patient.situations' must be a list"):
        cases.request_from_case_dict(stored)
