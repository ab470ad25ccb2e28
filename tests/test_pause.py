"""The inspiratory pause (issue 13): inside Ti, Te and time constants, waveforms, cautions and the rate limit.

The references outside the project are the single-compartment equation of motion P = V/C + R·V̇ + PEEP (Bates
2009, Lung Mechanics): with no flow the airway pressure is V/C + PEEP (the plateau), and with a constant flow
V̇ = VT/t the peak is that plus R·V̇; and the breath cycle 60/f = Ti + Te.
"""

from __future__ import annotations

import json
from dataclasses import replace

import numpy as np
import pytest

from ventset import plotdata
from ventset.cli import main
from ventset.errors import InputError
from ventset.model import Circuit, Patient, Request, Strategy, Targets
from ventset.planner import plan
from ventset.schema import Sourced


def _plan(species="dog", mass=20.0, library=None, rate=12.0, vt=10.0, mode=None, resistance=None, **targets):
    request = Request(Patient(species, mass, resistance_cmh2o_l_s=resistance),
                      Circuit(tube_id_mm=8.0, tube_length_cm=6.0, mode=mode), Targets(**targets),
                      Strategy(vt_ml_kg=vt, rate_per_min=rate))
    return plan(request, library)


def _zero_flow_span(w, ti_s: float) -> tuple[float, np.ndarray]:
    """Length (s) of the no-flow stretch of the first inspiration, and its sample indices."""
    t, q = w.time_s, w.flow_l_min
    first = np.flatnonzero((t < ti_s - 1e-12) & (np.abs(q) < 1e-12))
    assert first.size, "no zero-flow plateau in inspiration"
    expiration = np.flatnonzero(t >= ti_s - 1e-12)[0]
    return float(t[expiration] - t[first[0]]), first


@pytest.mark.parametrize("mode", ["volume", "pressure"])
def test_waveform_holds_a_zero_flow_plateau_as_long_as_the_pause(library, mode):
    pause = 0.6
    p = _plan(library=library, mode=mode, inspiratory_pause_s=pause)
    v, pr = p.ventilation, p.pressures
    w = plotdata.waveforms(p, breaths=1, points_per_breath=4000, library=library)
    length, idx = _zero_flow_span(w, v.ti_s)
    assert length == pytest.approx(pause, abs=1e-9)
    # Bates 2009: with V̇ = 0 the airway pressure is V/C + PEEP, held while the volume is held
    volume = w.volume_ml[idx]
    assert np.ptp(volume) == pytest.approx(0.0, abs=1e-9)
    assert w.pressure_cmh2o[idx] == pytest.approx(volume / pr.compliance_ml_cmh2o + pr.peep_cmh2o)
    if mode == "volume":
        # first breath from rest: V = VT, so the pause pressure is VT/C + PEEP, and the peak before it adds
        # R·VT/(Ti − pause) (constant flow over the shorter flow time)
        assert volume[0] == pytest.approx(v.tidal_volume_ml)
        flow_l_s = v.tidal_volume_ml / 1000 / (v.ti_s - pause)
        peak = v.tidal_volume_ml / pr.compliance_ml_cmh2o + pr.peep_cmh2o + pr.resistance_cmh2o_l_s * flow_l_s
        assert float(np.max(w.pressure_cmh2o)) == pytest.approx(peak, rel=1e-3)
        assert pr.peak_cmh2o == pytest.approx(peak)


def test_no_pause_no_plateau_in_the_flow(library):
    p = _plan(library=library)
    w = plotdata.waveforms(p, breaths=1, points_per_breath=4000, library=library)
    inspiring = w.time_s < p.ventilation.ti_s - 1e-12
    assert np.all(np.abs(w.flow_l_min[inspiring]) > 0)


def test_pause_is_added_to_the_usual_flow_time_and_shortens_te(library):
    rate, pause = 12.0, 0.8
    bare, held = _plan(library=library, rate=rate), _plan(library=library, rate=rate, inspiratory_pause_s=pause)
    assert held.ventilation.ti_s == pytest.approx(bare.ventilation.ti_s + pause)
    assert held.ventilation.te_s == pytest.approx(bare.ventilation.te_s - pause)
    # the breath cycle 60/f = Ti + Te
    assert held.ventilation.ti_s + held.ventilation.te_s == pytest.approx(60.0 / rate)
    assert held.ventilation.te_without_pause_s == pytest.approx(bare.ventilation.te_s)
    tau = held.pressures.time_constant_s
    assert tau == pytest.approx(bare.pressures.time_constant_s)
    te_tau = held.evaluation.te_tau
    assert te_tau == pytest.approx((60.0 / rate - bare.ventilation.ti_s - pause) / tau)
    assert te_tau < bare.evaluation.te_tau
    # the flow still goes in over the same flow time, so flow and peak do not change
    assert held.ventilation.inspiratory_flow_l_min == pytest.approx(bare.ventilation.inspiratory_flow_l_min)


def test_with_ti_entered_the_pause_comes_out_of_it(library):
    ti, pause = 1.5, 0.5
    bare = _plan(library=library, ti_s=ti)
    held = _plan(library=library, ti_s=ti, inspiratory_pause_s=pause)
    assert held.ventilation.ti_s == pytest.approx(ti)
    assert held.ventilation.te_s == pytest.approx(bare.ventilation.te_s)
    # constant flow VT/(Ti − pause): half again as fast with a third of Ti held
    set_vt = held.ventilation.set_tidal_volume_ml
    assert held.ventilation.inspiratory_flow_l_min == pytest.approx(set_vt / 1000 / (ti - pause) * 60)
    assert held.pressures.plateau_cmh2o == pytest.approx(bare.pressures.plateau_cmh2o)
    assert held.pressures.peak_cmh2o > bare.pressures.peak_cmh2o


def test_pause_as_long_as_ti_is_refused_naming_the_field(library):
    with pytest.raises(InputError) as err:
        _plan(library=library, ti_s=1.0, inspiratory_pause_s=1.0)
    assert err.value.key == "inspiratory-pause"


def test_a_pause_that_traps_gas_says_so(library):
    # dog 20 kg with 20 cmH2O/(L/s): τ = R·C ≈ 0.52 s; at 20/min (cycle 3 s) Ti 1 s + 1 s pause leaves Te 1 s
    p = _plan(library=library, rate=20.0, resistance=20.0, inspiratory_pause_s=1.0)
    codes = {c.code: c for c in p.cautions}
    assert "PAUSE_SHORTENS_EXPIRATION" in codes
    assert "PAUSE_LEAVES_LITTLE_FLOW_TIME" in codes  # 1 s of 2 s Ti is half
    v, tau = p.ventilation, p.pressures.time_constant_s
    values = dict(codes["PAUSE_SHORTENS_EXPIRATION"].values)
    assert values["te_s"] == pytest.approx(60 / 20 - v.ti_s)
    assert values["time_constants"] == pytest.approx(v.te_s / tau)
    assert values["te_without_s"] == pytest.approx(v.te_s + 1.0)
    short = _plan(library=library, rate=20.0, resistance=20.0, inspiratory_pause_s=0.2)
    assert not {"PAUSE_SHORTENS_EXPIRATION", "PAUSE_LEAVES_LITTLE_FLOW_TIME"} & {c.code for c in short.cautions}


def test_the_pause_lowers_the_highest_rate_the_planner_may_choose(library):
    # a 200 kg dolphin with an 8 s hold: at the species' 6/min (cycle 10 s) Ti would be ~1.8 + 8 s, over 80 %
    request = Request(Patient("dolphin", 200.0), targets=Targets(inspiratory_pause_s=8.0))
    p = plan(request, library)
    v = p.ventilation
    assert v.pause_s == pytest.approx(8.0)
    assert v.ti_s < 0.8 * 60.0 / v.rate_per_min
    assert p.limits.rate_max_per_min < 6.0
    assert p.assumption("pause_rate_max") is not None
    assert "rate_max" not in p.limits.binding  # the limit is the pause's, and is named as such
    rule = p.subject.timing
    assert rule.fits(rule.highest_rate_per_min() * 0.999) and not rule.fits(rule.highest_rate_per_min() * 1.01)


def test_species_default_pause_is_used_and_sourced(library):
    sp = replace(library.species["dog"], inspiratory_pause_s=Sourced(0.4, "test source"))
    lib = replace(library, species={**library.species, "dog": sp})
    p = _plan(library=lib)
    assert p.ventilation.pause_s == pytest.approx(0.4)
    a = p.assumption("inspiratory_pause")
    assert a is not None and a.source == "test source"
    assert _plan(library=lib, inspiratory_pause_s=0.0).ventilation.pause_s == 0.0  # an entered 0 wins


def test_pause_in_text_and_json(capsys):
    args = ["plan", "--species", "dog", "--mass", "20 kg", "--rate", "12", "--inspiratory-pause", "0.5"]
    assert main([*args, "--json"]) == 0
    v = json.loads(capsys.readouterr().out)["ventilation"]
    assert v["inspiratory_pause_s"] == pytest.approx(0.5)
    assert v["inspiratory_flow_time_s"] == pytest.approx(v["ti_s"] - 0.5)
    assert v["te_s"] == pytest.approx(60 / 12 - v["ti_s"], abs=1e-3)
    assert v["te_without_pause_s"] == pytest.approx(v["te_s"] + 0.5, abs=1e-3)
    assert main(args) == 0
    text = capsys.readouterr().out
    assert "pause 0.5 s inside Ti" in text and "Expiratory time without the pause" in text
    assert main([*args[:-1], "40"]) == 2
    assert "--inspiratory-pause" in capsys.readouterr().err
