"""The choice of tidal volume and rate on the line of equal PaCO2 inside the limits.

The target line is f·(VT(1 − f_alv) − VD_fixed) = VA (alveolar ventilation equation). The preferred
point (a tidal volume, or a rate) is moved along the line only as far as a limit requires, and every
limit that moved it is named; nothing is clamped silently.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from ventset.physiology.deadspace import exchange_per_breath_ml, rate_for_alveolar_per_min, vt_for_alveolar_ml


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


# The limits a choice can name, in the order a binding lists them.
BINDING_ORDER = ("pressure_limit_below_vt_min", "vt_min", "rate_min", "pressure_limit", "vt_max", "rate_max")


class _ScalarOps:
    """The few operations the choice needs, on floats (no numpy: ``ventset plan`` never imports it)."""

    @staticmethod
    def where(cond: Any, a: Any, b: Any) -> Any:
        return a if cond else b

    minimum = staticmethod(min)

    @staticmethod
    def both(a: Any, b: Any) -> Any:
        return a and b

    @staticmethod
    def no(a: Any) -> Any:
        return not a

    rate_for = staticmethod(rate_for_alveolar_per_min)


class _ArrayOps:
    """The same operations element-wise on numpy arrays."""

    def __init__(self) -> None:
        import numpy as np

        self.np = np
        self.where, self.minimum, self.both, self.no = np.where, np.minimum, np.logical_and, np.logical_not

    def rate_for(self, va: Any, vt: Any, vd: Any, f_alv: Any) -> Any:
        eff = exchange_per_breath_ml(vt, vd, f_alv)
        with self.np.errstate(divide="ignore", invalid="ignore"):
            return self.np.where(eff > 0, va / eff, self.np.inf)


def _choose(va: Any, vd: Any, f_alv: Any, vt_lo: Any, vt_hi: Any, rate_lo: Any, rate_hi: Any, vt_p: Any,
            pref_vt: Any, pref_rate: Any, ops: Any) -> tuple[Any, Any, Any, dict[str, Any], Any, Any]:
    """The choice on floats or arrays: (vt, rate, reached, {limit: bound?}, preferred vt, preferred rate)."""
    where, both, no = ops.where, ops.both, ops.no
    rate_given = pref_rate is not None
    if rate_given:
        pref_vt = vt_for_alveolar_ml(va, pref_rate, vd, f_alv)
    else:
        pref_vt = vt_lo if pref_vt is None else pref_vt
        pref_rate = ops.rate_for(va, pref_vt, vd, f_alv)
    box_hi = ops.minimum(vt_hi, vt_p)
    by_pressure = vt_p < vt_hi           # the top of the box is the pressure limit, not the largest usual VT
    squeezed = box_hi < vt_lo            # the pressure limit allows less than the smallest usual VT
    vt_lo = where(squeezed, box_hi, vt_lo)
    vt_at_rate_hi, vt_at_rate_lo = (vt_for_alveolar_ml(va, r, vd, f_alv) for r in (rate_hi, rate_lo))
    lo_by_rate, hi_by_rate = vt_at_rate_hi > vt_lo, vt_at_rate_lo < box_hi
    lo, hi = where(lo_by_rate, vt_at_rate_hi, vt_lo), where(hi_by_rate, vt_at_rate_lo, box_hi)
    ok = lo <= hi
    at_lo = both(ok, pref_vt < lo)
    at_hi = both(both(ok, no(at_lo)), pref_vt > hi)
    moved = where(at_lo, True, at_hi)
    short = both(no(ok), vt_at_rate_hi > box_hi)   # too little ventilation even at the top of the box
    over = both(no(ok), no(short))                 # too much even at the bottom
    vt = where(ok, where(at_lo, lo, where(at_hi, hi, pref_vt)), where(short, box_hi, vt_lo))
    rate = where(ok, where(both(rate_given, no(moved)), pref_rate, ops.rate_for(va, vt, vd, f_alv)),
                 where(short, rate_hi, rate_lo))
    top = where(short, True, both(at_hi, no(hi_by_rate)))
    flags = {"pressure_limit_below_vt_min": squeezed,
             "vt_min": where(over, True, both(at_lo, no(lo_by_rate))),
             "rate_min": where(over, True, both(at_hi, hi_by_rate)),
             "pressure_limit": both(top, by_pressure), "vt_max": both(top, no(by_pressure)),
             "rate_max": where(short, True, both(at_lo, lo_by_rate))}
    return vt, rate, ok, flags, pref_vt, pref_rate


def choose_settings(va_ml_min: float, vd_fixed_ml: float, f_alv: float, vt_lo: float, vt_hi: float,
                    rate_lo: float, rate_hi: float, vt_pressure_max: float, preferred_vt: float | None,
                    preferred_rate: float | None) -> Choice:
    """Pick (VT, f) on the target line inside [vt_lo, min(vt_hi, vt_pressure_max)] × [rate_lo, rate_hi].

    If no point inside the limits reaches VA, the closest corner is returned with ``reached`` False and the
    limits that bind are named.
    """
    pref = None if preferred_vt is None else float(preferred_vt)
    vt, rate, ok, flags, pref_vt, pref_rate = _choose(va_ml_min, vd_fixed_ml, f_alv, vt_lo, vt_hi, rate_lo, rate_hi,
                                                      vt_pressure_max, pref, preferred_rate, _ScalarOps)
    return Choice(vt, rate, bool(ok), tuple(b for b in BINDING_ORDER if flags[b]), pref_vt, pref_rate)


@dataclass(frozen=True)
class Choices:
    """``choose_settings`` element-wise (numpy arrays); ``flags`` maps each limit to where it bound."""

    vt_ml: Any
    rate_per_min: Any
    reached: Any
    flags: dict[str, Any]
    preferred_vt_ml: Any
    preferred_rate_per_min: Any

    def binding_at(self, i: int) -> tuple[str, ...]:
        """The limits that moved element ``i``, named as ``Choice.binding`` names them."""
        return tuple(b for b in BINDING_ORDER if bool(self.flags[b].flat[i] if hasattr(self.flags[b], "flat")
                                                        else self.flags[b]))


def choose_settings_arrays(va_ml_min: Any, vd_fixed_ml: Any, f_alv: Any, vt_lo: Any, vt_hi: Any, rate_lo: Any,
                           rate_hi: Any, vt_pressure_max: Any, preferred_vt: Any, preferred_rate: Any) -> Choices:
    """``choose_settings`` for arrays of patients (the same rule, the same code, element by element)."""
    import numpy as np

    ops = _ArrayOps()
    with np.errstate(divide="ignore", invalid="ignore"):
        vt, rate, ok, flags, pref_vt, pref_rate = _choose(va_ml_min, vd_fixed_ml, f_alv, vt_lo, vt_hi, rate_lo,
                                                          rate_hi, vt_pressure_max, preferred_vt, preferred_rate, ops)
    shape = np.shape(vt)
    return Choices(vt, rate, np.broadcast_to(ok, shape),
                   {k: np.broadcast_to(v, shape) for k, v in flags.items()}, pref_vt, pref_rate)
