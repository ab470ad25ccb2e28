"""The cautions list: always in the plan's order, and a caution keeps its row when others come and go above it
(so that the rest are not restyled and re-laid out on every edit)."""

from __future__ import annotations

from types import SimpleNamespace

from ventset.gui.readouts import CautionsPanel


def _plan(*cautions: tuple[str, str, str]) -> SimpleNamespace:
    return SimpleNamespace(cautions=[SimpleNamespace(severity=s, code=c, message=m, text=lambda _units, m=m: m)
                                     for s, c, m in cautions])


def test_rows_follow_the_plan_and_keep_their_caution(qtbot):
    panel = CautionsPanel()
    qtbot.addWidget(panel)
    panel.resize(400, 600)
    panel.show()
    a, b = ("caution", "FIRST", "a first message"), ("info", "SECOND", "a second message")
    panel.show_plan(_plan(a, b))
    rows = {r.code.text(): r for r in panel.rows if not r.isHidden()}
    new = ("danger", "NEW", "a danger now at the top")
    panel.show_plan(_plan(new, a, b))
    assert panel.shown() == [new, a, b]  # in the plan's order: danger first
    after = {r.code.text(): r for r in panel.rows if not r.isHidden()}
    assert after["FIRST"] is rows["FIRST"] and after["SECOND"] is rows["SECOND"]  # the same rows, moved down
    assert [panel.list.indexOf(r) for r in panel.rows[:3]] == [0, 1, 2]  # and placed in that order
    panel.show_plan(_plan(b))
    assert panel.shown() == [b]
    panel.show_plan(_plan(b, ("caution", "FIRST", "a changed message")))
    assert panel.shown() == [b, ("caution", "FIRST", "a changed message")]
