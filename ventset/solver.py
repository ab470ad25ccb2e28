"""The choice of tidal volume and rate on the line of equal PaCO2 inside the limits.

The target line is f·(VT(1 − f_alv) − VD_fixed) = VA (alveolar ventilation equation). The preferred
point (a tidal volume, or a rate) is moved along the line only as far as a limit requires, and every
limit that moved it is named; nothing is clamped silently.
"""

from __future__ import annotations

from dataclasses import dataclass

from ventset.physiology.deadspace import rate_for_alveolar_per_min, vt_for_alveolar_ml


@dataclass(frozen=True)
class Choice:
    """Solver output: the chosen point and why it sits there.

    ``binding`` names the limits that moved the preferred point ('vt_max', 'rate_min', 'pressure_limit', …),
    or 'fixed_by_user' when both were entered, or 'evaluated' when settings were only evaluated.
    """

    vt_ml: float
    rate_per_min: float
    reached: bool
    binding: tuple[str, ...]
    preferred_vt_ml: float
    preferred_rate_per_min: float


def choose_settings(va_ml_min: float, vd_fixed_ml: float, f_alv: float, vt_lo: float, vt_hi: float,
                    rate_lo: float, rate_hi: float, vt_pressure_max: float, preferred_vt: float | None,
                    preferred_rate: float | None) -> Choice:
    """Pick (VT, f) on the target line inside [vt_lo, min(vt_hi, vt_pressure_max)] × [rate_lo, rate_hi].

    If no point inside the limits reaches VA, the closest corner is returned with ``reached`` False and the
    limits that bind are named.
    """
    def vt_at(rate: float) -> float:
        return vt_for_alveolar_ml(va_ml_min, rate, vd_fixed_ml, f_alv)

    def rate_at(vt: float) -> float:
        return rate_for_alveolar_per_min(va_ml_min, vt, vd_fixed_ml, f_alv)

    if preferred_rate is not None:
        pref_rate, pref_vt = preferred_rate, vt_at(preferred_rate)
    else:
        pref_vt = float(preferred_vt) if preferred_vt is not None else vt_lo
        pref_rate = rate_at(pref_vt)
    box_hi = min(vt_hi, vt_pressure_max)
    hi_name = "pressure_limit" if vt_pressure_max < vt_hi else "vt_max"
    binding: list[str] = []
    if box_hi < vt_lo:
        binding.append("pressure_limit_below_vt_min")
        vt_lo = box_hi
    vt_at_rate_hi, vt_at_rate_lo = vt_at(rate_hi), vt_at(rate_lo)
    lo, lo_name = (vt_at_rate_hi, "rate_max") if vt_at_rate_hi > vt_lo else (vt_lo, "vt_min")
    hi, hi_name2 = (vt_at_rate_lo, "rate_min") if vt_at_rate_lo < box_hi else (box_hi, hi_name)
    if lo <= hi:
        vt, name = (lo, lo_name) if pref_vt < lo else (hi, hi_name2) if pref_vt > hi else (pref_vt, "")
        if name:
            binding.append(name)
        rate = pref_rate if preferred_rate is not None and not name else rate_at(vt)
        return Choice(vt, rate, True, tuple(binding), pref_vt, pref_rate)
    if vt_at_rate_hi > box_hi:  # too little ventilation even at the top of the box
        binding += [hi_name, "rate_max"]
        return Choice(box_hi, rate_hi, False, tuple(binding), pref_vt, pref_rate)
    binding += ["vt_min", "rate_min"]  # too much even at the bottom
    return Choice(vt_lo, rate_lo, False, tuple(binding), pref_vt, pref_rate)
