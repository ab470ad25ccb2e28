"""The unit table (ventset.units) against pint, the reference, and the parser's refusals.

ventset converts with exact constants of its own; pint (a general-purpose units library from PyPI) is the
outside reference every conversion is checked against here. pint is not used at run time.
"""

from __future__ import annotations

import itertools
import subprocess
import sys

import pint
import pytest

from ventset.errors import InputError
from ventset.fields import parse_field
from ventset.units import UNITS, convert, parse_quantity

UREG = pint.UnitRegistry()
PAIRS = [(a, b) for a, b in itertools.permutations(UNITS, 2) if UNITS[a].kind == UNITS[b].kind]


@pytest.mark.parametrize(("a", "b"), PAIRS)
def test_every_conversion_matches_pint(a, b):
    # Reference: pint 0.25 (its definitions: international pound and foot, conventional mmHg 133.322387415 Pa,
    # cmH2O with standard gravity, torr = 101325/760 Pa, thermochemical kcal).
    for value in (0.37, 12.5, 98.6):
        expected = UREG.Quantity(value, a).m_as(b)
        assert convert(value, a, b) == pytest.approx(expected, rel=1e-12, abs=1e-12)


@pytest.mark.parametrize(("text", "unit", "pint_text"), [
    ("44 lb", "kg", "44 lb"), ("44 lbs", "kg", "44 lb"), ("3 cc", "mL", "3 cc"), ("0.6 tonne", "kg", "0.6 t"),
    ("40 mm Hg", "mmHg", "40 mmHg"), ("5 cm H2O", "cmH2O", "5 cmH2O"), ("20 bpm", "1/min", "20 1/min"),
    ("20 breaths/min", "1/min", "20 1/min"), ("1200 kcal/d", "W", "1200 kcal/day"), ("7 µL", "mL", "7 uL"),
    ("8 cmH2O/(L/s)", "cmH2O*s/L", "8 cmH2O*s/L"), ("101 °F", "degC", "101 degF"), ("38 ℃", "degC", "38 degC"),
    ("1.5 h", "min", "1.5 h"), ("250 ms", "s", "250 ms"), ("2 L/min", "mL/min", "2 L/min"),
])
def test_spellings_people_type(text, unit, pint_text):
    # Reference: pint reads the same quantity written in its own spelling.
    number, pint_unit = pint_text.split(" ", 1)
    expected = UREG.Quantity(float(number), pint_unit).m_as(unit)
    assert parse_quantity(text, unit, "x") == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("text", ["1 9**99999999", "1 10**10**7", "2**1000 kg", "1 kg*kg", "1 exp(9)",
                                  "1 kg; import os", "1 (kg)", "1 __import__", "1 kg/kg/kg/kg"])
def test_expressions_are_refused_not_evaluated(text):
    # issue 10 item 5: the text is parsed (number + one unit name), never evaluated.
    with pytest.raises(InputError) as err:
        parse_field("mass", text)
    assert err.value.key == "mass" and "\n" not in str(err.value)


def test_a_long_entry_is_refused_before_parsing():
    with pytest.raises(InputError, match="characters long"):
        parse_field("mass", "5 " + "k" * 5000)


@pytest.mark.parametrize("text", ["38.5 F", "38.5 f", "101 F", "38.5 C", "38.5 c"])
def test_bare_f_or_c_is_refused_as_ambiguous_with_what_to_type(text):
    # 38.5 F was once read as °F and planned at 3.6 °C (issue 10 item 4).
    with pytest.raises(InputError) as err:
        parse_field("body-temperature", text)
    assert "ambiguous" in err.value.reason and "degF" in err.value.reason and "degC" in err.value.reason


@pytest.mark.parametrize(("text", "c"), [("101.3 degF", (101.3 - 32) * 5 / 9), ("101.3 °F", (101.3 - 32) * 5 / 9),
                                         ("38.5 degC", 38.5), ("38.5 °C", 38.5)])
def test_fahrenheit_only_with_its_degree_sign_or_deg(text, c):
    # °C = (°F − 32) × 5/9 (definition of the Fahrenheit scale).
    assert parse_field("body-temperature", text) == pytest.approx(c, rel=1e-12)


def test_the_field_help_states_the_fahrenheit_rule():
    from ventset.fields import FIELDS

    assert "degF" in FIELDS["body-temperature"].help and "bare F" in FIELDS["body-temperature"].help


def test_messages_show_per_minute_not_1_per_minute():
    with pytest.raises(InputError) as err:
        parse_field("rate", "900")
    assert "/min" in str(err.value) and "1/min" not in str(err.value)
    with pytest.raises(InputError) as err:
        parse_field("rate", "5 kg")
    assert "1/min" not in str(err.value)


def test_compressible_volume_range_says_ml_per_cmh2o():
    with pytest.raises(InputError) as err:
        parse_field("compressible-volume", "900")
    assert "mL/cmH2O" in str(err.value)


def test_a_plan_with_units_does_not_import_pint():
    # issue 16: the hot path must stay light; pint is the tests' reference only.
    code = ("import sys, io, contextlib\nfrom ventset.cli import main\n"
            "with contextlib.redirect_stdout(io.StringIO()):\n"
            "    rc = main(['plan', '--species', 'dog', '--mass', '44 lb', '--target-paco2', '5.3 kPa'])\n"
            "print(rc, 'pint' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.split()
    assert out == ["0", "False"]
