"""``ventset situations [--json]``: the patient's situations (resources/situations.toml) with their effects.

``--situation KEY`` on ``plan`` and ``adjust`` comes with the request options (ventset.cli_support).
"""

from __future__ import annotations

import argparse

from ventset.cli_support import print_json

COMBINING = ("Several situations combine: CO2-output and compliance factors multiply; PaCO2 bands and tidal-volume "
             "ranges overlap (aim at the band's middle; the smallest starting volume); ceilings and limits take the "
             "lowest; PEEP at least takes the highest, held at the lowest PEEP ceiling; entered values are never "
             "changed.")


def register(sub, add_request_options) -> dict:
    p = sub.add_parser("situations", help="list the patient's situations (surgery, disease, physiology) and their "
                                          "effects")
    p.add_argument("--json", action="store_true", help="print one JSON list")
    return {"situations": _cmd_situations}


def _cmd_situations(ns: argparse.Namespace) -> int:
    from ventset.library import load_library
    from ventset.situations import effect_words, summary

    lib = load_library()
    if ns.json:
        print_json([{"key": s.key, "label": s.label, "category": s.category, "species": list(s.species),
                     "excludes": list(s.excludes), "asks_for": list(s.asks_for), "effects": effect_words(s),
                     "cautions": [{"severity": n.severity, "code": n.code, "text": n.text, "source": n.source}
                                  for n in s.cautions]} for s in lib.situations.values()])
        return 0
    width = max(len(k) for k in lib.situations)
    for s in lib.situations.values():
        only = f" [{', '.join(s.species)} only]" if s.species else ""
        print(f"{s.key:<{width}}  {s.label}{only}: {summary(s)}")
    print(f"{len(lib.situations)} situations; use --situation KEY on plan or adjust (repeat for several). {COMBINING}")
    return 0
