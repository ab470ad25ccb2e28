"""Mechanics against published relations and worked examples."""

import math

import numpy as np
import pytest

from ventset.physiology import deadspace, mechanics


def test_otis_dog_worked_example():
    # Physiology sheet §4.6 worked example (Otis, Fenn & Rahn 1950 closed form): dog VA 1.31 L/min,
    # VD 69 mL, RC 0.21 s → 13.1 /min.
    assert mechanics.otis_optimal_rate_per_min(1.31, 0.069, 0.21) == pytest.approx(13.1, abs=0.05)


def test_otis_horse_worked_example():
    # Same source: horse VA 12.4 L/min, VD 3.45 L, RC 0.7 s → 2.7 /min.
    assert mechanics.otis_optimal_rate_per_min(12.4, 3.45, 0.7) == pytest.approx(2.7, abs=0.05)


def test_otis_is_a_minimum_of_work_rate():
    # Independent check: numerically minimise the Otis work-rate expression
    # W(f) = a1·VT²·f/C + a2·VT²·f²·R with VT = VD + VA/f (sinusoidal flow); a2/a1 = π²/(4·60)·RC·... using the
    # published form W ∝ (1/(2C))·VT²·f + (π²/4)·R·VT²·f²/60.
    va, vd, rc = 1.31, 0.069, 0.21
    f = np.linspace(2, 60, 200001)
    vt = vd + va / f
    work = 0.5 * vt**2 * f + (math.pi**2 / 4) * rc * vt**2 * f**2 / 60
    assert f[np.argmin(work)] == pytest.approx(mechanics.otis_optimal_rate_per_min(va, vd, rc), abs=0.01)


def test_timing():
    ti, te = mechanics.breath_timing_s(12, 2)
    assert (ti, te) == pytest.approx((5 / 3, 10 / 3))


def test_pressures_equation_of_motion():
    # Chatburn 2014: Pplat = VT/C + PEEP; PIP = Pplat + R·flow. 200 mL, C 26 mL/cmH2O, R 8, Ti 1 s, PEEP 5.
    assert mechanics.plateau_cmh2o(200, 26, 5) == pytest.approx(200 / 26 + 5)
    assert mechanics.peak_cmh2o_constant_flow(200, 1.0, 26, 8, 5) == pytest.approx(200 / 26 + 5 + 8 * 0.2)


def test_pressure_control_delivers_volume():
    tau = mechanics.time_constant_s(8, 26)
    dp = mechanics.pressure_control_delta_cmh2o(200, 1.0, 26, tau)
    assert 26 * dp * (1 - math.exp(-1.0 / tau)) == pytest.approx(200)


def test_time_constant_units():
    # 10 cmH2O/(L/s) × 50 mL/cmH2O = 0.5 s.
    assert mechanics.time_constant_s(10, 50) == pytest.approx(0.5)


@pytest.mark.parametrize(("idmm", "cm", "ml"), [(2.0, 3, 0.09), (3.0, 4, 0.28), (4.0, 5, 0.63), (8, 8, 4.0),
                                                (14, 12, 18.5), (26, 15, 80), (30, 20, 141)])
def test_tube_volume_table(idmm, cm, ml):
    # Physiology sheet §4.4 table of π(ID/2)²L values.
    assert deadspace.tube_volume_ml(idmm, cm) == pytest.approx(ml, rel=0.02, abs=0.005)


def test_bohr_enghoff():
    # Definitions (Bohr; Enghoff 1938): PACO2 36, PaCO2 40, PĒCO2 24 → 0.333, 0.40.
    assert deadspace.bohr_vd_vt(36, 24) == pytest.approx(1 / 3)
    assert deadspace.enghoff_vd_vt(40, 24) == pytest.approx(0.4)


def test_stahl_dead_space_table():
    # Stahl 1967 as quoted in the physiology sheet §2.1: 20 kg → 49 mL, 500 kg → 1076 mL.
    assert deadspace.anatomical_dead_space_ml(20, 2.76, 0.96) == pytest.approx(49, abs=0.5)
    assert deadspace.anatomical_dead_space_ml(500, 2.76, 0.96) == pytest.approx(1076, rel=0.005)


@pytest.mark.parametrize("mode", ["volume", "pressure"])
def test_waveform_volume_reaches_vt_and_empties_with_long_te(mode):
    w = mechanics.waveforms(200, 10, 1.0, 26, 8, 5, mode, breaths=3)
    assert w["volume_ml"].max() == pytest.approx(200, rel=0.02)
    assert w["volume_ml"][-1] < 1.0  # Te = 5 s ≫ τ = 0.21 s
    assert w["pressure_cmh2o"].min() == pytest.approx(5)


def test_waveform_shows_trapping_with_short_te():
    # τ = 1 s, Te = 0.5 s: volume does not return to zero and grows breath to breath.
    w = mechanics.waveforms(100, 40, 1.0, 100, 10, 0, "volume", breaths=3)
    ends = w["volume_ml"][np.diff(w["time_s"], prepend=-1) > 0]
    assert ends[-1] > 30


@pytest.mark.parametrize("mode", ["volume", "pressure"])
@pytest.mark.parametrize("rate, ti, c, r, pause", [(10, 1.0, 26, 8, 0.0), (40, 1.0, 100, 10, 0.0),
                                                   (60, 0.4, 3, 60, 0.1), (6, 2.25, 1500, 1.5, 0.3)])
def test_drawn_waveform_follows_the_equation_of_motion_between_its_samples(mode, rate, ti, c, r, pause):
    """The few samples drawn (about 50 a breath) joined by straight lines stay within 0.5 % of each trace's
    range of the single-compartment solution (Bates 2009, P = V/C + R·V̇ + PEEP; V = V_end·e^(−t/τ) out),
    written here independently for expiration of the first breath and compared at 2,000 instants."""
    vt, peep = 200.0, 5.0
    w = mechanics.waveforms(vt, rate, ti, c, r, peep, mode, breaths=1, pause_s=pause)
    t, v = w["time_s"], w["volume_ml"]
    assert len(t) <= 80
    tau = r * c / 1000.0
    te = 60.0 / rate - ti
    ts = np.linspace(ti, ti + te, 2000)[1:-1]  # expiration, away from the step at its start
    v_end = v[np.searchsorted(t, ti, side="left")]  # the volume held at the end of inspiration
    exact = v_end * np.exp(-(ts - ti) / tau)
    drawn = np.interp(ts, t + np.arange(len(t)) * 1e-12, v)  # a step is two samples at one time
    assert np.max(np.abs(drawn - exact)) <= 0.005 * v.max()


def test_drawn_waveform_keeps_the_peak_and_the_step_at_the_end_of_inspiration():
    """Constant flow: the drawn peak is the equation's peak, Pplat + R·V̇ (Chatburn 2014), not a sample
    short of it, and the flow steps from VT/Ti to the start of expiration at one instant."""
    vt, rate, ti, c, r, peep = 200.0, 10.0, 1.0, 26.0, 8.0, 5.0
    w = mechanics.waveforms(vt, rate, ti, c, r, peep, "volume", breaths=1)
    assert w["pressure_cmh2o"].max() == pytest.approx(vt / c + peep + r * vt / 1000.0 / ti, rel=1e-12)
    at_end = np.nonzero(np.isclose(w["time_s"], ti))[0]
    assert len(at_end) == 2
    q = w["flow_l_min"][at_end]
    assert q[0] == pytest.approx(vt / ti * 60 / 1000) and q[1] == pytest.approx(-vt / (r * c / 1000) * 60 / 1000)
