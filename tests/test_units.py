"""Parsing at the edges, against conventional constants (not against pint itself)."""

import pytest

from ventset.errors import InputError
from ventset.fields import parse_field
from ventset.units import fmt, kpa_to_mmhg, mmhg_to_kpa, parse_quantity


@pytest.mark.parametrize(("text", "kg"), [("20 kg", 20), ("44 lb", 44 * 0.45359237), ("300 g", 0.3), ("20", 20),
                                          ("1.5kg", 1.5), ("0.6 t", 600)])
def test_mass_units(text, kg):
    # Conventional constant: 1 lb = 0.45359237 kg exactly (international pound).
    assert parse_field("mass", text) == pytest.approx(kg, rel=1e-12)


@pytest.mark.parametrize(("text", "w"), [("60 W", 60), ("1200 kcal/day", 1200 * 4184 / 86400),
                                         ("250 kJ/h", 250000 / 3600)])
def test_power_units(text, w):
    # Thermochemical kcal = 4184 J; 1 day = 86400 s.
    assert parse_field("metabolic-rate", text) == pytest.approx(w, rel=1e-12)


@pytest.mark.parametrize(("text", "mmhg"), [("40 mmHg", 40), ("5.3 kPa", 5300 / 133.322387415), ("40 torr",
                                            40 * 101325 / 760 / 133.322387415)])
def test_pressure_units(text, mmhg):
    # Conventional mmHg = 133.322387415 Pa; torr = 101325/760 Pa.
    assert parse_field("target-paco2", text) == pytest.approx(mmhg, rel=1e-9)


def test_cmh2o_and_mbar():
    # 1 mbar = 100 Pa = 1.019716 cmH2O (98.0665 Pa per cmH2O).
    assert parse_field("peep", "5 mbar") == pytest.approx(500 / 98.0665, rel=1e-9)


@pytest.mark.parametrize(("text", "c"), [("24 degC", 24), ("75.2 degF", 24), ("38.5", 38.5), ("38.5 °C", 38.5)])
def test_temperature(text, c):
    assert parse_field("body-temperature", text) == pytest.approx(c, abs=1e-9)


def test_kpa_round_trip():
    assert mmhg_to_kpa(kpa_to_mmhg(5.3)) == pytest.approx(5.3, rel=1e-12)


@pytest.mark.parametrize("text", ["", " ", "abc", "1,5", "5.0.1", "١٢", "nan", "inf", "-inf", "5 mmHg", "5 furlongs"])
def test_bad_mass_text_names_the_field(text):
    with pytest.raises(InputError) as err:
        parse_field("mass", text)
    assert err.value.field == "Body mass"
    assert str(err.value).startswith("Body mass")


@pytest.mark.parametrize("text", ["-1 kg", "0 kg", "1e308 kg", "1e-320 kg", "50 t"])
def test_out_of_range_mass(text):
    with pytest.raises(InputError) as err:
        parse_field("mass", text)
    assert "must be" in err.value.reason


def test_760_typed_into_kpa_field_is_out_of_range():
    with pytest.raises(InputError):
        parse_field("barometric-pressure", "760 kPa")


def test_fio2_percent():
    assert parse_field("fio2", "50 %") == pytest.approx(0.5)
    assert parse_field("fio2", "0.4") == pytest.approx(0.4)


@pytest.mark.parametrize(("x", "s"), [(0.5, "0.5"), (5.0, "5"), (12.345, "12.3"), (1403.2, "1403"),
                                      (0.00123, "0.00123")])
def test_fmt_leading_zero_no_trailing_zero(x, s):
    assert fmt(x) == s


def test_parse_quantity_plain_number_rejects_unit():
    with pytest.raises(InputError):
        parse_quantity("3 kg", "", "I:E")


@pytest.mark.parametrize(("text", "expected"), [
    ("expected PaCO2 68.3 mmHg (hypercapnia)", "expected PaCO2 9.1 kPa (hypercapnia)"),
    ("inside the usual 35–45 mmHg.", "inside the usual 4.7–6 kPa."),
    ("EtCO2 reads 12-38 mmHg below PaCO2", "EtCO2 reads 1.6-5.1 kPa below PaCO2"),
    ("limit 20 cmH2O", "limit 20 cmH2O"),
    ("default -5 mmHg", "default -0.67 kPa"),
])
def test_gas_pressures_in_messages_follow_the_chosen_unit(text, expected):
    # 1 kPa = 7.500615758 mmHg (conventional mmHg, 133.322387415 Pa).
    from ventset.units import gas_units_in_text

    assert gas_units_in_text(text, "kPa") == expected
    assert gas_units_in_text(text, "mmHg") == text
