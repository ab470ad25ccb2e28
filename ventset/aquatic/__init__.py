"""Fish and aquatic amphibians: gill irrigation planned from Henry's law (no Qt here).

``plan_irrigation(IrrigationRequest(...))`` → ``IrrigationPlan``: the water's O2 content (:mod:`.water`), the
fish's O2 need (:mod:`.metabolism`), the flow that meets it and the checks around it (:mod:`.irrigation`,
:mod:`.cautions`), plot arrays (:mod:`.plotdata`) and JSON / text / printout (:mod:`.report`). Data:
resources/aquatic.toml, read by :func:`.data.load_aquatic_data`. CLI: ``ventset irrigate`` (:mod:`.cli`).
"""

from __future__ import annotations

import importlib
from typing import Any

# Imported when first used (PEP 562), so that ``ventset plan``, which only registers ``ventset irrigate``, does not
# load the aquatic data and model.
_FROM = {"IrrigationPlan": "irrigation", "IrrigationRequest": "irrigation", "plan_irrigation": "irrigation",
         "request_from_texts": "irrigation", "irrigation_from_dict": "report", "irrigation_to_dict": "report",
         "irrigation_to_text": "report", "printout_lines": "report"}

__all__ = ["IrrigationPlan", "IrrigationRequest", "irrigation_from_dict", "irrigation_to_dict", "irrigation_to_text",
           "plan_irrigation", "printout_lines", "request_from_texts"]


def __getattr__(name: str) -> Any:
    module = _FROM.get(name)
    if module is None:
        raise AttributeError(f"module 'ventset.aquatic' has no attribute {name!r}")
    return getattr(importlib.import_module(f"ventset.aquatic.{module}"), name)
