"""Single-compartment respiratory mechanics: timing, pressures, time constant, waveforms, Otis rate."""

from __future__ import annotations

import math

from ventset.elementwise import square_root


def breath_timing_s(rate_per_min: float, ie_expiratory_part: float) -> tuple[float, float]:
    """Inspiratory and expiratory times (s) for a rate and I:E = 1:E. Ti = (60/f)/(1 + E)."""
    cycle_s = 60.0 / rate_per_min
    ti_s = cycle_s / (1.0 + ie_expiratory_part)
    return ti_s, cycle_s - ti_s


def time_constant_s(resistance_cmh2o_l_s: float, compliance_ml_cmh2o: float) -> float:
    """Time constant τ = R·C in s (R in cmH2O·s/L, C in mL/cmH2O)."""
    return resistance_cmh2o_l_s * compliance_ml_cmh2o / 1000.0


def plateau_cmh2o(vt_ml: float, compliance_ml_cmh2o: float, peep_cmh2o: float) -> float:
    """End-inspiratory plateau pressure VT/C + PEEP (equation of motion, no flow; Chatburn 2014)."""
    return vt_ml / compliance_ml_cmh2o + peep_cmh2o


def peak_cmh2o_constant_flow(vt_ml: float, ti_s: float, compliance_ml_cmh2o: float,
                             resistance_cmh2o_l_s: float, peep_cmh2o: float) -> float:
    """Peak pressure with constant inspiratory flow VT/Ti: Pplat + R·V̇ (Chatburn 2014)."""
    flow_l_s = vt_ml / 1000.0 / ti_s
    return plateau_cmh2o(vt_ml, compliance_ml_cmh2o, peep_cmh2o) + resistance_cmh2o_l_s * flow_l_s


def pressure_control_delta_cmh2o(vt_ml: float, ti_s: float, compliance_ml_cmh2o: float, tau_s: float) -> float:
    """Inspiratory pressure above PEEP that delivers VT in Ti with a square pressure: VT/(C·(1 − e^(−Ti/τ)))."""
    return vt_ml / vt_at_square_pressure(1.0, ti_s, compliance_ml_cmh2o, tau_s)  # float or numpy array


def vt_at_peak_constant_flow(peak_cmh2o, flow_time_s, compliance_ml_cmh2o: float, resistance_cmh2o_l_s: float,
                             peep_cmh2o: float):
    """Tidal volume (mL) whose constant-flow peak equals ``peak``: the inverse of peak_cmh2o_constant_flow."""
    return (peak_cmh2o - peep_cmh2o) / (1.0 / compliance_ml_cmh2o + resistance_cmh2o_l_s / 1000.0 / flow_time_s)


def vt_at_square_pressure(delta_cmh2o, ti_s, compliance_ml_cmh2o: float, tau_s: float):
    """Tidal volume (mL) a square pressure ΔP above PEEP delivers in Ti: C·ΔP·(1 − e^(−Ti/τ))."""
    return compliance_ml_cmh2o * delta_cmh2o * (1.0 - math.e ** (-ti_s / tau_s))


def otis_optimal_rate_per_min(va_l_min: float, vd_l: float, rc_s: float) -> float:
    """Rate of least work of breathing (Otis, Fenn & Rahn 1950, J Appl Physiol 2:592).

    f = [√(1 + 2a·RC·VA/VD) − 1]/(a·RC), a = 2π²/60, f in /min, VA L/min, VD L, RC s.
    """
    a = 2.0 * math.pi**2 / 60.0
    return (square_root(1.0 + 2.0 * a * rc_s * va_l_min / vd_l) - 1.0) / (a * rc_s)  # float or array


def _exponential_times(duration_s: float, tau_s: float, n: int):
    """About ``n`` times over [0, duration] (both ends) at which e^(−t/τ) is sampled: half evenly in time,
    half where the value falls by even steps (so a fast early fall is followed as closely as a slow tail)."""
    import numpy as np

    k = max(2, n // 2)
    even_t = np.linspace(0.0, duration_s, k)
    fall = -math.expm1(-duration_s / tau_s)  # 1 − e^(−T/τ)
    even_v = -tau_s * np.log1p(-np.linspace(0.0, fall, k)[:-1])  # the last is the end (which may be 1 − 1 = 0)
    t = np.sort(np.concatenate([even_t, even_v]))
    return t[np.concatenate(([True], np.diff(t) > 0))]  # (np.unique would import numpy.ma: 10 ms at start-up)


def _phase_times(t_flow_s: float, pause_s: float, te_s: float, tau_s: float, curved_flow: bool, n: int):
    """Sample times within inspiratory flow, the pause and expiration (each from 0, both ends): the straight
    phases by their ends, the exponential ones at about ``n`` × their share of the breath, at least n/2."""
    import numpy as np

    share = int(round(n * t_flow_s / (t_flow_s + pause_s + te_s)))
    flow = _exponential_times(t_flow_s, tau_s, max(n // 2, share)) if curved_flow else np.array([0.0, t_flow_s])
    pause = np.array([0.0, pause_s]) if pause_s > 0 else np.zeros(0)
    return flow, pause, _exponential_times(te_s, tau_s, max(n // 2, n - share))


def waveforms(vt_ml: float, rate_per_min: float, ti_s: float, compliance_ml_cmh2o: float,
              resistance_cmh2o_l_s: float, peep_cmh2o: float, mode: str, breaths: int = 3,
              points_per_breath: int = 50, pause_s: float = 0.0) -> dict:
    """Sample airway pressure (cmH2O), flow (L/min) and volume (mL) over ``breaths`` breaths.

    Passive single-compartment lung (P = V/C + R·V̇ + PEEP; Bates 2009). Volume mode: constant flow VT/(Ti − pause).
    Pressure mode: a square pressure that delivers VT in Ti − pause. Then, in either mode, the inspiratory pause
    (``pause_s``, part of Ti): no flow, volume held, so the airway pressure is the plateau V/C + PEEP. Expiration
    is passive: V = V_end·e^(−t/τ), so a short Te shows as volume not returning to zero (trapped gas). Breaths
    are simulated in sequence, so trapped volume carries over; ``end_expiratory_ml`` is the volume left at the
    end of the last breath.

    Every phase is sampled at both its ends (a step in flow or pressure is vertical: two samples at one
    time), straight phases (constant flow, the pause) by their ends alone, and exponential ones at about
    ``points_per_breath`` × their share of the breath (``_exponential_times``).
    """
    import numpy as np

    c = compliance_ml_cmh2o
    tau = time_constant_s(resistance_cmh2o_l_s, c)
    cycle = 60.0 / rate_per_min
    te = cycle - ti_s
    pause = pause_s
    t_flow = ti_s - pause
    ti_local, tp_local, te_local = _phase_times(t_flow, pause, te, tau, mode == "pressure", points_per_breath)
    t_all, p_all, q_all, v_all = [], [], [], []
    v0 = 0.0
    dp = pressure_control_delta_cmh2o(vt_ml, t_flow, c, tau) if mode == "pressure" else 0.0
    r_ml = resistance_cmh2o_l_s / 1000.0  # cmH2O per (mL/s)
    for k in range(breaths):
        t0 = k * cycle
        if mode == "pressure":
            v_target = c * dp
            v_i = v_target + (v0 - v_target) * np.exp(-ti_local / tau)
            q_i = (v_target - v_i) / tau  # mL/s
            p_i = np.full_like(ti_local, peep_cmh2o + dp)
            v_end = float(v_target + (v0 - v_target) * math.exp(-t_flow / tau))
        else:
            q_const = vt_ml / t_flow
            v_i = v0 + q_const * ti_local
            q_i = np.full_like(ti_local, q_const)
            p_i = v_i / c + r_ml * q_i + peep_cmh2o
            v_end = v0 + vt_ml
        v_p = np.full_like(tp_local, v_end)
        v_e = v_end * np.exp(-te_local / tau)
        t_all += [t0 + ti_local, t0 + t_flow + tp_local, t0 + ti_s + te_local]
        p_all += [p_i, v_p / c + peep_cmh2o, np.full_like(te_local, peep_cmh2o)]
        q_all += [q_i, np.zeros_like(tp_local), -v_e / tau]
        v_all += [v_i, v_p, v_e]
        v0 = v_end * math.exp(-te / tau)
    return {
        "time_s": np.concatenate(t_all),
        "pressure_cmh2o": np.concatenate(p_all),
        "flow_l_min": np.concatenate(q_all) * 60.0 / 1000.0,
        "volume_ml": np.concatenate(v_all),
        "end_expiratory_ml": v0,
    }
