"""A chart of starting settings on the clinic's machine (issue 17 with issue 12): each row dialled."""

from __future__ import annotations

import json

import pytest

from ventset.chart import chart_to_csv, chart_to_dict, chart_to_text, make_chart
from ventset.errors import InputError
from ventset.model import Circuit, Patient, Request
from ventset.planner import plan


def test_each_row_is_dialled_as_a_single_plan_would_be(library):
    req = Request(Patient("dog", 20.0), Circuit(machine="bellows_ascending"))
    chart = make_chart(req, [5.0, 20.0, 40.0], library)
    rows = chart_to_dict(chart)["rows"]
    for row, mass in zip(rows, (5.0, 20.0, 40.0), strict=True):
        p = plan(Request(Patient("dog", mass), Circuit(machine="bellows_ascending")), library)
        assert row["machine"]["expected_paco2_mmhg"] == pytest.approx(p.machine.evaluation.paco2_mmhg, abs=1e-4)
        assert [c["value"] for c in row["machine"]["controls"]][0].endswith("mL")
    # machines.toml: the adult bellows' smallest volume is 200 mL, far above a 5 kg dog's 50 mL breath.
    assert "MACHINE_PATIENT_TOO_SMALL" in rows[0]["machine"]["cautions"]
    assert "MACHINE_PATIENT_TOO_SMALL" not in rows[1]["machine"]["cautions"]
    text = chart_to_text(chart)
    assert "ON THE MACHINE: ASCENDING BELLOWS" in text and "PaCO2 as dialled" in text
    assert chart_to_csv(chart).splitlines()[3].endswith(",machine")
    json.dumps(chart_to_dict(chart), allow_nan=False)


def test_without_a_machine_the_chart_is_unchanged_and_too_many_rows_are_refused(library):
    plain = make_chart(Request(Patient("dog", 20.0)), [5.0, 20.0], library)
    assert plain.dials == () and "machine" not in chart_to_dict(plain)["rows"][0]
    with pytest.raises(InputError) as err:
        make_chart(Request(Patient("dog", 20.0), Circuit(machine="bellows_ascending")),
                   [5 + i * 0.5 for i in range(70)], library)
    assert err.value.key == "machine"
