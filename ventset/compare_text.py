"""A comparison as plain text: the setups side by side, changed rows marked, every setup's cautions, the notice."""

from __future__ import annotations

from ventset import __version__
from ventset.compare import Comparison
from ventset.present.quantities import Units, show
from ventset.present.rows import one_line, patient_line
from ventset.report import caution_lines

MARK = "*"


def quantity_text(value: float, kind: str, units: Units) -> str:
    """A compared value in the reader's units ('—' when there is none)."""
    return show(value, kind, units)


def comparison_to_text(c: Comparison, gas_unit: str | Units = "mmHg") -> str:
    """Setups in columns; '*' marks a row that differs between them (as shown, three significant figures)."""
    units = Units(gas=gas_unit) if isinstance(gas_unit, str) else gas_unit
    n = len(c.setups)
    lines = [f"ventset {__version__} — {n} setups compared", patient_line(c.setups[0].plan, units), ""]
    lines += [f"  [{i}] {one_line(s.label)}" for i, s in enumerate(c.setups, start=1)]
    head = ["", *(f"[{i}]" for i in range(1, n + 1))]
    rows = [[f"{MARK if q.changed else ' '} {q.label}", *(quantity_text(v, q.kind, units) for v in q.values)]
            for q in c.quantities]
    rows += [[f"{MARK if len(set(vals)) > 1 else ' '} {label}", *(one_line(v) for v in vals)]
             for _, label, vals in c.texts]
    widths = [max(len(r[k]) for r in (head, *rows)) for k in range(n + 1)]
    widths = [widths[0], *(min(w, 40) for w in widths[1:])]
    lines += ["", "  ".join(h.ljust(w) for h, w in zip(head, widths, strict=True)).rstrip()]
    for r in rows:
        cells = [r[0].ljust(widths[0]), *(_cut(x, w).ljust(w) for x, w in zip(r[1:], widths[1:], strict=True))]
        lines.append("  ".join(cells).rstrip())
    lines += ["", f"{MARK} differs between the setups"]
    for ch in c.cautions:
        if ch.added or ch.removed:
            lines += ["", f"CAUTIONS OF [{ch.setup + 1}] THAT [1] DOES NOT HAVE" if ch.added else
                      f"CAUTIONS OF [1] THAT [{ch.setup + 1}] DOES NOT HAVE"]
            if ch.added:
                lines += caution_lines(ch.added, units)
            if ch.removed:
                if ch.added:
                    lines += [f"CAUTIONS OF [1] THAT [{ch.setup + 1}] DOES NOT HAVE"]
                lines += caution_lines(ch.removed, units)
    for i, s in enumerate(c.setups, start=1):
        lines += ["", f"ALL CAUTIONS OF [{i}] {one_line(s.label)}", *caution_lines(s.plan.cautions, units)]
        lines += [f"  note: {one_line(x)}" for x in s.notes]
    lines += ["", "NOTICE: " + c.setups[0].plan.standing_notice]
    return "\n".join(lines)


def _cut(text: str, width: int) -> str:
    return text if len(text) <= width else text[: width - 1] + "…"
