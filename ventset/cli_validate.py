"""``ventset validate``: the model's predictions beside published anaesthetised animals."""

from __future__ import annotations

import argparse
from typing import TYPE_CHECKING

from ventset.model import STANDING_NOTICE

if TYPE_CHECKING:  # the model and its data are loaded by the command itself, not when the parser is built
    from ventset.validation import Result


def register(sub, add_request_options) -> dict:
    """Add ``validate`` to the ``ventset`` command line."""
    p = sub.add_parser("validate", help="compare the model with published observations (resources/validation.toml)",
                       description="For every published observation in the validation set, print what the model "
                                   "predicts beside what was published and whether it is within tolerance.")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--species", help="only this species key")
    p.add_argument("--kind", choices=("input", "outcome"), help="only inputs or only outcomes")
    return {"validate": _cmd_validate}


def _selected(ns: argparse.Namespace) -> tuple[Result, ...]:
    from ventset.errors import InputError
    from ventset.validation import run
    from ventset.validation_data import load_validation

    rows = load_validation()
    if ns.species:
        if ns.species not in {o.species for o in rows}:
            raise InputError("--species", ns.species, "has no rows in the validation set")
        rows = tuple(o for o in rows if o.species == ns.species)
    if ns.kind:
        rows = tuple(o for o in rows if o.kind == ns.kind)
    return run(rows)


def _line(r: Result) -> str:
    o = r.observation
    pred = "—" if r.predicted is None else f"{r.predicted:.3g}"
    mark = "yes" if r.within else ("known" if o.known_disagreement else "NO")
    return (f"{o.id:<34.34} {o.species:<12} {o.kind:<8} {o.quantity:<27} {o.published.text():>14} "
            f"{pred:>9} {mark:>6}  {r.detail}")


def results_text(results: tuple[Result, ...]) -> str:
    """The plain-text table and summary."""
    from ventset.validation import summarise

    s = summarise(results)
    head = (f"{'id':<34} {'species':<12} {'kind':<8} {'quantity':<27} {'published':>14} {'predicted':>9} "
            f"{'within':>6}  detail")
    lines = [head, "-" * len(head)]
    lines += [_line(r) for r in results]
    frac = s["outcome_fraction_within"]
    lines += [
        "",
        f"Tolerance: {s['tolerance']}.",
        f"Rows {s['rows']} from {s['sources']} sources over {s['species']} species.",
        f"Outcomes within tolerance: {s['outcomes_within']} of {s['outcomes']}"
        + (f" ({frac:.0%})" if frac is not None else "") + f" over {s['outcome_species']} species.",
        f"Inputs within tolerance: {s['inputs_within']} of {s['inputs']}; outside with a stated reason (known "
        f"disagreement): {s['inputs_known_disagreement']}; outside with no reason: {s['inputs_unexplained']}.",
        "Per species (outcomes within/total, inputs within/total):",
    ]
    for key, c in s["per_species"].items():
        lines.append(f"  {key:<22} outcomes {c['outcomes_within']}/{c['outcomes']}   "
                     f"inputs {c['inputs_within']}/{c['inputs']}")
    lines += ["", STANDING_NOTICE]
    return "\n".join(lines)


def _cmd_validate(ns: argparse.Namespace) -> int:
    from ventset.cli import print_json
    from ventset.validation import result_to_dict, summarise

    results = _selected(ns)
    if ns.json:
        print_json({"observations": [result_to_dict(r) for r in results], "summary": summarise(results),
                    "standing_notice": STANDING_NOTICE})
    else:
        print(results_text(results))
    return 0
