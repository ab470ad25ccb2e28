"""`ventset irrigate`: JSON keys, readable text, one-line errors."""

import json

import pytest

from ventset.cli import main
from ventset.model import STANDING_NOTICE

KOI = ["irrigate", "--species", "koi", "--mass", "2 kg", "--water-temperature", "20", "--salinity", "0"]


def test_json_keys(capsys):
    assert main([*KOI, "--altitude", "1600", "--saturation", "95", "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["water"]["o2_mg_l"] == pytest.approx(7.457 * 0.95, abs=0.002)  # test-references §A3 altitude value
    for block, key in (("metabolism", "vo2_mg_h"), ("irrigation", "flow_l_min"), ("irrigation", "flow_range_l_min"),
                       ("irrigation", "extraction")):
        assert d[block][key] is not None
    assert len(d["irrigation"]["flow_range_l_min"]) == 2
    assert d["cautions"] and d["assumptions"] and d["standing_notice"] == STANDING_NOTICE


def test_text_output(capsys):
    assert main([*KOI, "--saturation", "8 mg/L"]) == 0
    out = capsys.readouterr().out
    assert "Irrigation flow:" in out and "(measured)" in out and STANDING_NOTICE in out


@pytest.mark.parametrize(("option", "value", "needle"), [("--salinity", "60", "--salinity (Salinity)"),
                                                        ("--water-temperature", "45", "--water-temperature"),
                                                        ("--saturation", "-5", "--saturation (Supply oxygen)")])
def test_bad_input_one_line(capsys, option, value, needle):
    args = list(KOI)
    if option in args:
        args[args.index(option) + 1] = value
    else:
        args += [option, value]
    assert main(args) == 2
    err = capsys.readouterr().err.strip()
    assert needle in err and "\n" not in err and "Traceback" not in err


def test_required_options_and_list(capsys):
    assert main(["irrigate", "--species", "koi", "--mass", "2 kg"]) == 2
    assert "--water-temperature" in capsys.readouterr().err
    assert main(["irrigate", "--list"]) == 0
    assert "obligate ram" in capsys.readouterr().out
