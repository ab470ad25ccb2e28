"""Fish and aquatic amphibians: gill irrigation planned from Henry's law (no Qt here).

``plan_irrigation(IrrigationRequest(...))`` → ``IrrigationPlan``: the water's O2 content (:mod:`.water`), the
fish's O2 need (:mod:`.metabolism`), the flow that meets it and the checks around it (:mod:`.irrigation`,
:mod:`.cautions`), plot arrays (:mod:`.plotdata`) and JSON / text / printout (:mod:`.report`). Data:
resources/aquatic.toml, read by :func:`.data.load_aquatic_data`. CLI: ``ventset irrigate`` (:mod:`.cli`).
"""

from ventset.aquatic.irrigation import IrrigationPlan, IrrigationRequest, plan_irrigation, request_from_texts
from ventset.aquatic.report import irrigation_from_dict, irrigation_to_dict, irrigation_to_text, printout_lines

__all__ = ["IrrigationPlan", "IrrigationRequest", "irrigation_from_dict", "irrigation_to_dict", "irrigation_to_text",
           "plan_irrigation", "printout_lines", "request_from_texts"]
