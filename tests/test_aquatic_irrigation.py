"""Irrigation plans: the reference sheet's worked examples, the flow invariant, cautions, data and files."""

from dataclasses import replace
from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st

from ventset.aquatic import plotdata
from ventset.aquatic.data import aquatic_data, load_aquatic_data
from ventset.aquatic.inputs import parse_aquatic, parse_supply_o2
from ventset.aquatic.irrigation import IrrigationRequest, diffusion_check, plan_irrigation
from ventset.aquatic.report import (
    irrigation_from_dict,
    irrigation_to_dict,
    irrigation_to_text,
    printout_lines,
    request_from_dict,
)
from ventset.errors import DataError, InputError
from ventset.model import STANDING_NOTICE
from ventset.resources import resource_path

KOI = IrrigationRequest("koi", 2.0, 20.0, 0.0, vo2_mg_kg_h=80.0, demand_factor=1.0)
SHARK = IrrigationRequest("shark", 10.0, 24.0, 35.0, vo2_mg_kg_h=100.0, demand_factor=1.0)


def _codes(plan):
    return {c.code for c in plan.cautions}


# ------------------------------------------------------------------ worked examples (reference sheet A5.3, A5.4)

def test_koi_worked_example_flow_and_sensitivity():
    # Oracle: sheet A5.3: CwO2 9.09 mg/L; 160 mg/h; E 0.3 → 0.98 L/min (0.49 L/kg/min); E 0.2 → 1.47; 0.5 → 0.59;
    # 0.67 → 0.44 L/min.
    p = plan_irrigation(KOI)
    assert p.water.o2_mg_l == pytest.approx(9.09, abs=0.005)
    assert p.metabolism.vo2_mg_h == pytest.approx(160)
    assert p.irrigation.flow_l_min == pytest.approx(0.98, abs=0.005)
    assert p.irrigation.flow_l_kg_min == pytest.approx(0.49, abs=0.005)
    assert p.irrigation.flow_range_l_min == pytest.approx((0.98, 1.47), abs=0.005)
    for e, flow in ((0.5, 0.59), (0.67, 0.44)):
        assert plan_irrigation(replace(KOI, extraction=e)).irrigation.flow_l_min == pytest.approx(flow, abs=0.005)


def test_koi_worked_example_stress_factor_and_outflow():
    # Oracle: sheet A5.3: stress factor 2 → ~2 L/min ≈ 1 L/kg/min; outflow ≈ 6.4 mg/L (~70 % saturation).
    p = plan_irrigation(replace(KOI, demand_factor=2.0))
    assert p.irrigation.flow_l_min == pytest.approx(2.0, abs=0.05)
    assert p.irrigation.outflow_mg_l == pytest.approx(6.4, abs=0.05)
    assert p.irrigation.outflow_saturation_percent == pytest.approx(70, abs=1)
    assert p.irrigation.clinical_flow_l_min == (2.0, 6.0)   # 1-3 L/kg/min beside it (common practice)


def test_koi_worked_example_fick_check():
    # Oracle: sheet A5.3: A 3000 cm², x 5 µm, K 1.4e-5 → Dm 0.111 mL/min/mmHg, ΔP ≈ 17 mmHg, with water ≈ 48 mmHg.
    d = diffusion_check(1.87, 3000, 5, 155.5, 0.04091, krogh_tissue_cm2_min_atm=1.4e-5,
                        o2_diffusivity_cm2_s=2.0e-5, membrane_to_water=1.84)
    assert d.membrane_ml_min_mmhg == pytest.approx(0.111, abs=0.001)
    assert d.membrane_gradient_mmhg == pytest.approx(17, abs=0.5)
    assert d.total_gradient_mmhg == pytest.approx(48, abs=0.5)
    # Oracle: sheet A5.2: K for water at 20 °C = 2.0e-5 × 60 × 0.0311 = 3.7e-5 cm²/min/atm.
    assert d.krogh_water_cm2_min_atm == pytest.approx(3.7e-5, rel=0.01)


def test_shark_worked_example():
    # Oracle: sheet A5.4: CwO2 6.89; 1000 mg/h = 16.7 mg/min (11.7 mL/min); E 0.3 → 8.1 L/min, 0.2 → 12.1, 0.5 → 4.8;
    # stress 1.5-2 → 12-16 L/min.
    p = plan_irrigation(SHARK)
    assert p.water.o2_mg_l == pytest.approx(6.89, abs=0.005)
    assert p.metabolism.vo2_mg_min == pytest.approx(16.7, abs=0.05)
    assert p.metabolism.vo2_ml_min == pytest.approx(11.7, abs=0.05)
    assert p.irrigation.flow_range_l_min == pytest.approx((8.1, 12.1), abs=0.05)
    assert plan_irrigation(replace(SHARK, extraction=0.5)).irrigation.flow_l_min == pytest.approx(4.8, abs=0.05)
    assert plan_irrigation(replace(SHARK, demand_factor=1.5)).irrigation.flow_l_min == pytest.approx(12.1, abs=0.1)
    assert plan_irrigation(replace(SHARK, demand_factor=2.0)).irrigation.flow_l_min == pytest.approx(16.1, abs=0.1)


def test_shark_worked_example_fick_check():
    # Oracle: sheet A5.4: A 12 500 cm², x 8 µm → Dm 0.288 mL/min/mmHg, ΔP ≈ 41, with water ≈ 115 mmHg.
    d = diffusion_check(11.66, 12500, 8, 155.0, 0.0312, krogh_tissue_cm2_min_atm=1.4e-5,
                        o2_diffusivity_cm2_s=2.0e-5, membrane_to_water=1.84)
    assert d.membrane_ml_min_mmhg == pytest.approx(0.288, abs=0.001)
    assert d.membrane_gradient_mmhg == pytest.approx(41, abs=1)
    assert d.total_gradient_mmhg == pytest.approx(115, abs=1.5)


def test_shark_is_flagged_as_ram_ventilator():
    p = plan_irrigation(SHARK)
    ram = [c for c in p.cautions if "RAM" in c.code]
    assert ram and ram[0].severity == "danger" and p.cautions[0] is ram[0]
    assert not any("RAM" in c for c in _codes(plan_irrigation(KOI)))
    assert not any("RAM" in c for c in _codes(plan_irrigation(IrrigationRequest("bamboo shark", 2.0))))


# ------------------------------------------------------------------ the invariant

GROUPS = sorted(aquatic_data().groups)


@given(key=st.sampled_from(GROUPS), frac=st.floats(0, 1), temp=st.floats(-2, 40), sal=st.floats(0, 42),
       alt=st.floats(-500, 6000), sat=st.floats(20, 300), e=st.one_of(st.none(), st.floats(0.05, 0.8)),
       demand=st.floats(1, 3))
def test_flow_times_content_times_extraction_meets_need(key, frac, temp, sal, alt, sat, e, demand):
    g = aquatic_data().groups[key]
    mass = g.mass_kg.min + frac * (g.mass_kg.max - g.mass_kg.min)
    p = plan_irrigation(IrrigationRequest(key, mass, temp, sal, alt, saturation_percent=sat, extraction=e,
                                          demand_factor=demand))
    i, c, need = p.irrigation, p.water.o2_mg_l, p.metabolism.vo2_mg_min
    assert i.flow_l_min * c * i.extraction >= need * (1 - 1e-12)
    lo, hi = i.flow_range_l_min
    assert lo * c * i.extraction_range[0] >= need * (1 - 1e-12)
    assert hi * c * i.extraction_range[1] >= need * (1 - 1e-12)
    assert lo <= i.flow_l_min <= hi
    assert i.outflow_mg_l == pytest.approx(c * (1 - i.extraction), rel=1e-9)
    assert p.standing_notice == STANDING_NOTICE


# ------------------------------------------------------------------ bad input, one line naming the field

@pytest.mark.parametrize(("key", "text", "label"), [("salinity", "60", "Salinity"),
                                                    ("water-temperature", "45", "Water temperature"),
                                                    ("water-temperature", "45 °C", "Water temperature"),
                                                    ("saturation", "-5 %", "Supply oxygen"),
                                                    ("saturation", "-5", "Supply oxygen"),
                                                    ("mass", "-2 kg", "Body mass"),
                                                    ("extraction", "1.5", "Gill O2 extraction")])
def test_bad_text_refused_naming_field(key, text, label):
    with pytest.raises(InputError) as err:
        parse_supply_o2(text) if key == "saturation" else parse_aquatic(key, text)
    assert err.value.field == label and "\n" not in str(err.value)


@pytest.mark.parametrize(("change", "label"), [({"salinity": 60.0}, "Salinity"),
                                               ({"water_temp_c": 45.0}, "Water temperature"),
                                               ({"saturation_percent": -5.0}, "Supply oxygen"),
                                               ({"measured_o2_mg_l": -1.0}, "Supply oxygen")])
def test_bad_request_refused_naming_field(change, label):
    with pytest.raises(InputError) as err:
        plan_irrigation(replace(KOI, **change))
    assert err.value.field == label


def test_units_and_spellings():
    assert parse_aquatic("salinity", "35 ppt") == 35.0
    assert parse_aquatic("salinity", "35 psu") == 35.0
    assert parse_aquatic("water-temperature", "68 °F") == pytest.approx(20.0)
    assert parse_supply_o2("8.2 mg/L") == (None, 8.2)
    assert parse_supply_o2("95 %") == (95.0, None)
    assert parse_aquatic("extraction", "30 %") == pytest.approx(0.3)
    assert parse_aquatic("vo2", "56 mL/kg/h") == pytest.approx(80.0, abs=0.1)  # × 1.429 mg/mL


def test_unknown_species_refused():
    with pytest.raises(InputError) as err:
        plan_irrigation(replace(KOI, species="nemo"))
    assert err.value.field == "Species"


# ------------------------------------------------------------------ cautions

def test_standing_cautions_on_every_plan():
    for key in GROUPS:
        codes = _codes(plan_irrigation(IrrigationRequest(key, aquatic_data().groups[key].mass_kg.min * 2)))
        assert {"IRRIGATE_MOUTH_TO_GILLS", "FLOW_GENTLE_NOT_TOO_HIGH", "WATER_MATCHES_TANK_AND_AERATED",
                "MONITOR_OPERCULA_AND_HEART"} <= codes


def test_amphibians_keep_skin_wet():
    assert "AMPHIBIAN_KEEP_SKIN_WET" in _codes(plan_irrigation(IrrigationRequest("axolotl", 0.1)))
    assert "AMPHIBIAN_KEEP_SKIN_WET" in _codes(plan_irrigation(IrrigationRequest("xenopus", 0.1)))
    assert "AMPHIBIAN_KEEP_SKIN_WET" not in _codes(plan_irrigation(KOI))


def test_supply_saturation_cautions():
    assert "SUPPLY_O2_LOW" in _codes(plan_irrigation(replace(KOI, saturation_percent=70)))
    assert "SUPPLY_O2_LOW" not in _codes(plan_irrigation(KOI))
    mild = plan_irrigation(replace(KOI, saturation_percent=120))
    assert [c.severity for c in mild.cautions if c.code == "SUPPLY_SUPERSATURATED"] == ["caution"]
    severe = plan_irrigation(replace(KOI, saturation_percent=140))  # ≥ 136 % (Machova et al. 2017)
    assert [c.severity for c in severe.cautions if c.code == "SUPPLY_SUPERSATURATED"] == ["danger"]


def test_reservoir_runs_out():
    # A 20 L unaerated reservoir for a koi using 2.67 mg/min holds 20 × (9.09 − 7.27) = 36 mg above the 80 % floor.
    p = plan_irrigation(replace(KOI, system_volume_l=20.0, duration_min=60.0))
    assert p.irrigation.reservoir_minutes == pytest.approx(20 * 9.0913 * 0.2 / (160 / 60), rel=1e-3)
    assert "RESERVOIR_O2_RUNS_OUT" in _codes(p)
    assert "RESERVOIR_O2_RUNS_OUT" not in _codes(plan_irrigation(replace(KOI, system_volume_l=200.0)))
    assert p.irrigation.single_pass_volume_l == pytest.approx(1.4667 * 60, rel=1e-3)


def test_fit_range_and_group_range_cautions():
    assert "OUTSIDE_SOLUBILITY_FIT" in _codes(plan_irrigation(replace(KOI, salinity=41.0)))
    assert "SALINITY_UNUSUAL" in _codes(plan_irrigation(replace(KOI, salinity=35.0)))
    assert "WATER_TEMPERATURE_UNUSUAL" in _codes(plan_irrigation(replace(KOI, water_temp_c=35.0)))
    assert "MASS_OUTSIDE_GROUP_RANGE" in _codes(plan_irrigation(replace(KOI, mass_kg=60.0)))
    assert not {"OUTSIDE_SOLUBILITY_FIT", "SALINITY_UNUSUAL", "WATER_TEMPERATURE_UNUSUAL"} & _codes(
        plan_irrigation(KOI))


def test_small_warm_fish_needs_more_than_practice():
    p = plan_irrigation(IrrigationRequest("tilapia", 0.02, 30.0, 0.0))
    assert {"FLOW_ABOVE_OBSERVED_RANGE", "NEED_ABOVE_PRACTICE_FLOW"} <= _codes(p)


def test_every_caution_names_a_source_or_practice():
    for req in (KOI, SHARK, IrrigationRequest("axolotl", 0.1), replace(KOI, saturation_percent=140)):
        for c in plan_irrigation(req).cautions:
            assert "(" in c.message, c.code  # every message carries its source in brackets


# ------------------------------------------------------------------ data file

def test_aliases_and_groups():
    data = aquatic_data()
    want = {"koi": "carp_koi", "shark": "shark", "trout": "salmonid", "zebrafish": "zebrafish",
            "axolotl": "salamander_aquatic", "goldfish": "goldfish", "tilapia": "tilapia", "ray": "ray",
            "reef fish": "marine_teleost", "salmon": "salmonid", "frog": "frog_aquatic"}
    assert {k: data.find_group(k).key for k in want} == want


def test_every_number_in_the_file_has_a_source():
    import tomllib

    doc = tomllib.loads(resource_path("aquatic.toml").read_text(encoding="utf-8"))

    def walk(node, where):
        if isinstance(node, dict):
            if any(isinstance(v, int | float) and not isinstance(v, bool) for v in node.values()):
                assert str(node.get("source", "")).strip(), where
            for k, v in node.items():
                walk(v, f"{where}.{k}")
        elif isinstance(node, list):
            for i, v in enumerate(node):
                walk(v, f"{where}[{i}]")

    walk(doc, "aquatic.toml")


@pytest.mark.parametrize(("old", "new", "needle"), [
    ('obligate_ram = false\nmass_kg', 'obligate_ram = false\ncolour = "gold"\nmass_kg', "unknown field 'colour'"),
    ('q10 = { value = 2.4, source = "Clarke & Johnston 1999 (abstract seen): median within-species acclimation Q10 '
     '= 2.40 (n = 14)" }', 'q10 = { value = 2.4 }', "field 'q10' has no source"),
    ('extraction = { conservative = 0.2, usual = 0.3, source = "derived from Davis & Cameron 1971, J Exp Biol 54:1 '
     '(abstract seen): spontaneously', 'extraction = { conservative = 0.2, usual = 0.3, best = 0.5, source = '
     '"derived from Davis & Cameron 1971, J Exp Biol 54:1 (abstract seen): spontaneously',
     "field 'extraction' has unknown key 'best'"),
    ('kind = "teleost"', 'kind = "fish"', "field 'kind' must be one of teleost, elasmobranch, amphibian (got text"),
    ('resting_vo2 = { model = "clarke_johnston_1999",', 'resting_vo2 = { model = "clarke_johnston_1999", ml_kg_h = 90,',
     "field 'resting_vo2' needs exactly one of"),
    ('mass_kg = { min = 0.01, max = 25,', 'mass_kg = { min = 0.01, max = "25",',
     "field 'mass_kg' max must be a number (got text '25')"),
])
def test_malformed_file_refused_naming_file_entry_field(tmp_path: Path, old, new, needle):
    text = resource_path("aquatic.toml").read_text(encoding="utf-8")
    assert old in text
    bad = tmp_path / "aquatic.toml"
    bad.write_text(text.replace(old, new, 1), encoding="utf-8")
    with pytest.raises(DataError) as err:
        load_aquatic_data(bad)
    msg = str(err.value)
    assert msg.startswith("aquatic.toml: group 'carp_koi': ") and needle in msg and "\n" not in msg


def test_the_schema_names_the_model_the_metabolism_module_computes():
    from ventset.aquatic.metabolism import CLARKE_JOHNSTON
    from ventset.datafiles_aquatic import VO2_MODELS

    assert VO2_MODELS == (CLARKE_JOHNSTON,)


# ------------------------------------------------------------------ files, text, plots

def test_dict_round_trip_and_strict_reading():
    p = plan_irrigation(replace(KOI, name="Goldie", system_volume_l=50.0))
    d = irrigation_to_dict(p)
    assert irrigation_from_dict(d) == p.request
    assert irrigation_to_dict(plan_irrigation(irrigation_from_dict(d))) == d
    bad = dict(d, request={**d["request"], "colour": "gold"})
    with pytest.raises(InputError, match="irrigation.request.colour"):
        irrigation_from_dict(bad)
    with pytest.raises(InputError, match="irrigation.request.salinity"):
        request_from_dict({**d["request"], "salinity": "salty"})
    with pytest.raises(InputError) as err:
        request_from_dict({**d["request"], "salinity": 60})
    assert err.value.field == "Salinity"


def test_text_and_printout_carry_notice_and_cautions():
    p = plan_irrigation(SHARK)
    text = irrigation_to_text(p)
    assert text.endswith(STANDING_NOTICE) and "RAM_VENTILATOR_NEEDS_CONTINUOUS_FLOW" in text
    assert "8.07 L/min" in text
    lines = printout_lines(p)
    assert lines[-1] == ("notice", STANDING_NOTICE)
    assert ("caution:danger" in {s for s, _ in lines})


def test_delivery_curve_meets_need_where_the_plan_says():
    p = plan_irrigation(KOI)
    d = plotdata.delivery_curve(p)
    import numpy as np

    at_usual = float(np.interp(d.flow_usual, d.flow, d.delivered_usual_mg_h))
    at_cons = float(np.interp(d.flow_conservative, d.flow, d.delivered_conservative_mg_h))
    assert at_usual == pytest.approx(d.need_mg_h, rel=1e-3) and at_cons == pytest.approx(d.need_mg_h, rel=1e-3)
    assert d.x_range[0] == 0 and d.x_range[1] > d.flow_conservative and d.y_range[1] > d.need_mg_h
    beyond = d.flow > d.flow_usual * 1.0001
    assert (d.required_extraction[beyond] < p.group.extraction.usual).all()


def test_delivery_curve_small_fish_in_ml_per_min():
    d = plotdata.delivery_curve(plan_irrigation(IrrigationRequest("zebrafish", 0.0005)))
    assert d.flow_unit == "mL/min" and 1 < d.flow_chosen < 10


def test_content_curve_passes_through_the_plan_water():
    import numpy as np

    p = plan_irrigation(replace(SHARK, altitude_m=1600.0))
    c = plotdata.content_curve(p)
    assert float(np.interp(24.0, c.temp_c, c.saturated_mg_l)) == pytest.approx(p.water.saturated_mg_l, rel=2e-3)
    assert c.point == (24.0, p.water.o2_mg_l)
    assert (np.diff(c.saturated_mg_l) < 0).all()          # warmer water holds less O2 (Garcia & Gordon 1992)
    assert (c.saturated_mg_l < c.fresh_sea_level_mg_l).all()  # salt and altitude both lower it
