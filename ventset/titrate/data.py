"""The titration's data files: titration.toml (step size, re-measure times, PaCO2 bounds) and
oxygenation.toml (PaO2/FiO2 bands, oxygenation thresholds); schema in ventset/datafiles.py."""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

from ventset.library import Sourced, load_resource


@dataclass(frozen=True)
class Band:
    """A PaO2/FiO2 interpretation band: applies below (or at) limit_mmhg."""

    scheme: str
    code: str
    label: str
    limit_mmhg: float
    inclusive: bool
    source: str

    def applies(self, ratio_mmhg: float) -> bool:
        return ratio_mmhg <= self.limit_mmhg if self.inclusive else ratio_mmhg < self.limit_mmhg


@dataclass(frozen=True)
class TitrationData:
    defaults: dict[str, Sourced]
    oxygen: dict[str, Sourced]
    bands: tuple[Band, ...]


@lru_cache(maxsize=1)
def load_titration_data() -> TitrationData:
    """Load and validate resources/titration.toml and resources/oxygenation.toml (cached)."""
    t, o = load_resource("titration.toml"), load_resource("oxygenation.toml")
    return TitrationData(dict(t["defaults"]), dict(o["thresholds"]), tuple(Band(**b) for b in o["pf_bands"]))
