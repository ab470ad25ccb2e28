"""One patient never leaks into the next: a species change starts the patient afresh (one undo step, with a
notice), Case ▸ New clears the form, and New, Open, the demo and Quit ask before unsaved work is lost."""

from __future__ import annotations

import pytest

from tests.gui.conftest import settle
from tests.gui.test_case_ui import Dialogs
from ventset import storage
from ventset.gui import case_ui
from ventset.gui import formstate as fs


@pytest.fixture
def cased(qtbot, tmp_path, monkeypatch):
    """A window with the case manager, its dialogs answered by a stand-in."""
    monkeypatch.setenv(storage.DATA_DIR_ENV, str(tmp_path / "data"))
    from ventset.gui.settings import open_settings
    from ventset.gui.window import MainWindow

    window = MainWindow(open_settings())
    qtbot.addWidget(window)
    window.resize(1366, 768)
    window.show()
    qtbot.waitExposed(window)
    manager = case_ui.install(window, offer_recovery=False)
    dialogs = Dialogs(manager)
    yield window, manager, dialogs
    dialogs.answers["save_discard_cancel"] = "discard"
    manager.close_session()


def test_species_change_resets_the_previous_patient_in_one_undo_step(qtbot, window):
    form = window.form
    form.set_text("body-temperature", "28")
    settle(window)
    before = dict(form.state)
    assert before[fs.TEXT + "tube-id"] == "4" and len(before["parts"]) == 2  # the demo cat's tube and parts
    form.species.picked.emit("hors")  # names no species: marked, nothing reset
    settle(window)
    assert form.state[fs.TEXT + "tube-id"] == "4" and len(form.state["parts"]) == 2
    window.undo.undo()
    settle(window)
    steps = window.undo.index()
    form.species.picked.emit("horse")
    form.set_text("mass", "450")
    settle(window)
    p = window.controller.plan
    assert window.undo.index() == steps + 2  # the species change is one step, the mass another
    assert form.state[fs.TEXT + "tube-id"] == form.state[fs.TEXT + "tube-length"] == ""
    assert form.state[fs.TEXT + "body-temperature"] == "" and form.state["parts"] == ()
    assert p.request.circuit.tube_id_mm is None and p.request.circuit.parts == ()
    assert p.resolved.body_temp_c == pytest.approx(window.library.species["horse"].body_temperature_c.start)
    assert p.request.patient.name == before["name"] and p.resolved.mass_kg == 450
    notice = form.species_notice.text()
    assert form.species_notice.isVisibleTo(window)
    assert "Horse" in notice and "Tube internal diameter" in notice and "apparatus (2 parts)" in notice
    assert "Body temperature" in notice and "\n" not in notice
    assert not [c for c in p.cautions if c.code.startswith("TUBE_TOO")]
    window.undo.undo()  # the mass
    window.undo.undo()  # the species change, whole
    settle(window)
    assert {k: form.state[k] for k in before} == before
    assert window.controller.plan.resolved.species == "cat" and not form.species_notice.isVisibleTo(window)
    window.undo.redo()
    settle(window)
    assert form.state["species"] == "horse" and form.state["parts"] == () and "Horse" in form.species_notice.text()


def test_a_cat_tube_in_a_horse_is_cautioned(qtbot, window):
    form = window.form
    form.species.picked.emit("horse")
    for key, text in (("mass", "450"), ("tube-id", "4"), ("tube-length", "5")):
        form.set_text(key, text)
    settle(window)
    codes = {c.code: c.severity for c in window.controller.plan.cautions}
    assert codes.get("TUBE_TOO_SMALL") == "danger"
    assert any("TUBE_TOO_SMALL" == code for _s, code, _m in window.cautions.shown())


def test_new_case_asks_then_clears_everything_of_the_last_patient(cased):
    window, manager, dialogs = cased
    window.form.set_text("mass", "5")
    settle(window)
    dialogs.answers["save_discard_cancel"] = "cancel"
    window.menu("Case").actions()[0].trigger()
    assert dialogs.kinds() == ["ask"] and window.form.state[fs.TEXT + "mass"] == "5"
    dialogs.answers["save_discard_cancel"] = "discard"
    manager.act_new.trigger()
    settle(window)
    form = window.form
    assert dialogs.kinds() == ["ask", "ask"]
    assert manager.act_new.shortcut().toString() == "Ctrl+N"
    assert form.state["species"] == "cat" and form.state["name"] == "" and form.state["parts"] == ()
    assert all(form.state[fs.TEXT + k] == "" for k in fs.FIELDS)
    assert window.controller.request is None and window.controller.plan is None
    assert window.undo.count() == 0 and manager.path is None
    assert {t.value.text() for t in window.settings_panel.tiles.values()} == {"—"}
    assert window.cautions.shown() == [] and window.assumptions.rowCount() == 0
    assert not any(c.isVisibleTo(window) for c in window.plot_cards)
    assert "Pickle" not in window.status.patient.text() and "Body mass" in window.status.problem.text()
    assert not manager.is_dirty()  # nothing entered yet: closing asks nothing
    form.set_text("mass", "30")
    form.species.picked.emit("dog")
    settle(window)
    assert window.controller.plan.resolved.mass_kg == 30 and all(c.isVisibleTo(window) for c in window.plot_cards)
    assert manager.is_dirty() and window.status.patient.text().startswith("Dog")


def test_demo_and_open_ask_before_losing_work(cased, tmp_path):
    window, manager, dialogs = cased
    window.form.set_text("mass", "6")
    settle(window)
    dialogs.answers["save_discard_cancel"] = "cancel"
    window.act_demo.trigger()
    assert dialogs.kinds() == ["ask"] and window.controller.request.patient.mass_kg == 6
    manager.open_dialog()
    assert dialogs.kinds() == ["ask", "ask"]
    dialogs.answers["save_discard_cancel"] = "discard"
    window.act_demo.trigger()
    settle(window)
    assert window.controller.request.patient.mass_kg == pytest.approx(4.2) and manager.path is None
    assert not manager.is_dirty() and window.undo.count() == 0


def test_quit_asks_and_nothing_to_save_after_new(cased):
    window, manager, dialogs = cased
    dialogs.answers["save_discard_cancel"] = "discard"
    manager.new_case()
    settle(window)
    assert dialogs.kinds() == []  # the demo patient was unchanged: nothing to ask
    assert manager.save() is False and dialogs.kinds() == ["warn"]
    window.form.set_text("mass", "3")
    settle(window)
    dialogs.answers["save_discard_cancel"] = "cancel"
    window.close()
    assert window.isVisible() and dialogs.kinds()[-1] == "ask"
