"""docs/user-guide.md explains every caution code the plan can raise, and every picture it shows exists."""

from __future__ import annotations

import re
from pathlib import Path

from ventset.library import load_library

ROOT = Path(__file__).resolve().parents[2]
GUIDE = ROOT / "docs" / "user-guide.md"


def _rule_codes() -> set[str]:
    src = (ROOT / "ventset" / "cautions.py").read_text(encoding="utf-8")
    return set(re.findall(r'"([A-Z][A-Z0-9_]{3,})"', src))  # codes are the only upper-case strings there


def test_every_plan_caution_code_is_explained():
    codes = _rule_codes()
    assert {"VT_NOT_ABOVE_DEAD_SPACE", "APPARATUS_DEAD_SPACE", "TARGET_UNREACHABLE"} <= codes  # the scan works
    text = GUIDE.read_text(encoding="utf-8")
    assert [c for c in sorted(codes) if f"| {c} |" not in text] == []


def test_every_species_note_code_is_explained():
    text = GUIDE.read_text(encoding="utf-8")
    codes = {n.code for sp in load_library().species.values() for n in sp.notes}
    assert [c for c in sorted(codes) if f"| {c} |" not in text] == []


def test_every_picture_in_the_guide_exists():
    text = GUIDE.read_text(encoding="utf-8")
    images = re.findall(r"\]\((images/[^)]+)\)", text)
    assert len(images) >= 15
    assert [i for i in images if not (GUIDE.parent / i).is_file()] == []


def test_the_guide_carries_the_standing_notice():
    from ventset.model import STANDING_NOTICE

    text = " ".join(GUIDE.read_text(encoding="utf-8").replace(">", " ").split())
    assert " ".join(STANDING_NOTICE.split()) in text
