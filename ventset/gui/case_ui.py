"""Case files, autosave and recovery, the clinic parts library and the printed plan, in the window.

``install(window)`` adds to the window's Case menu (``window.menu("Case")``): Open, Open recent,
Save, Save as, Print plan (preview, PDF, printer), Copy summary and Clinic parts library. It
autosaves the edited case every few seconds (ventset.autosave), asks before closing with unsaved
changes (an event filter on the window, so MainWindow.closeEvent is untouched), and offers to
restore what a crash left behind. It talks to the planning only through ``window.controller``
(``set_request``, ``request``, ``plan``, ``stale``, ``errors``, ``plan_ready``, ``plan_invalid``).

The anaesthetic record: the panel that has ``entries``, ``set_entries(entries)`` and a
``record_changed`` signal (ventset.gui.timeline.TimelinePanel) is found among the window's children
after start-up and its record is stored in the case; ``manager.register_timeline(get, put)`` does
the same for any other provider.
"""

from __future__ import annotations

import os
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING

from PySide6.QtCore import QEvent, QObject, Qt, QTimer, Signal
from PySide6.QtGui import QAction, QGuiApplication, QKeySequence
from PySide6.QtWidgets import (
    QDialog,
    QFileDialog,
    QInputDialog,
    QLabel,
    QMenu,
    QMessageBox,
    QWidget,
)

from ventset import autosave, cases
from ventset.errors import InputError, VentsetError, one_line
from ventset.gui.text import esc, plain, plain_tip

if TYPE_CHECKING:
    from ventset.gui.parts_dialog import ClinicPartsDialog

CASE_FILTER = f"ventset case (*{cases.SUFFIX});;JSON (*.json);;All files (*)"


def _first_error(errors) -> str:
    if not errors:
        return ""
    e = errors[0]
    return one_line(f"{e.field} — {e.reason}")


class CaseManager(QObject):
    """Keeps the window's case: its file, what was last saved, autosave and recovery."""

    saved = Signal(object)    # Path
    opened = Signal(object)   # cases.OpenedCase

    def __init__(self, window, *, autosave_folder: Path | None = None,
                 interval_s: float = autosave.AUTOSAVE_INTERVAL_S,
                 debounce_s: float = autosave.AUTOSAVE_DEBOUNCE_S) -> None:
        super().__init__(window)
        self.window = window
        self.controller = window.controller
        self.library = window.library
        self.path: Path | None = None
        self.case: cases.Case | None = None
        self._baseline = self.controller.request
        self._timeline_get: Callable[[], object] | None = None
        self._timeline_put: Callable[[object], None] | None = None
        self._changed_outside = False
        self._fresh: dict | None = None  # the form state of a new, empty case (not dirty while unchanged)
        try:
            self.session: autosave.AutosaveSession | None = autosave.AutosaveSession(autosave_folder)
        except (OSError, VentsetError) as exc:  # no autosave is bad, but not a reason to refuse to start
            self.session = None
            self._status(f"Autosave is off: {exc}")
        self.timer = QTimer(self)
        self.timer.setInterval(int(interval_s * 1000))
        self.timer.timeout.connect(self.autosave_now)
        self.timer.start()
        # Soon after each change as well (restarted by every edit), so a kill loses at most the last moments.
        self.debounce = QTimer(self)
        self.debounce.setSingleShot(True)
        self.debounce.setInterval(int(debounce_s * 1000))
        self.debounce.timeout.connect(self.autosave_now)
        self.controller.plan_ready.connect(self._refresh_title)
        self.controller.plan_invalid.connect(self._refresh_title)
        self.controller.plan_ready.connect(self._changed)
        self.controller.plan_invalid.connect(self._changed)
        window.installEventFilter(self)

    # ------------------------------------------------------------------ state
    def register_timeline(self, get: Callable[[], object], put: Callable[[object], None]) -> None:
        """The titration panel's record: ``get()`` for saving, ``put(entries)`` when a case is opened."""
        self._timeline_get, self._timeline_put = get, put

    def attach_timeline_panel(self) -> bool:
        """Find the anaesthetic-record panel among the window's children (it has ``entries``, ``set_entries``
        and ``record_changed``) and keep its record in the case. True if one was found."""
        if self._timeline_get is not None:
            return True
        for child in self.window.findChildren(QWidget):
            if all(hasattr(child, a) for a in ("entries", "set_entries", "record_changed")):
                self.register_timeline(lambda c=child: c.entries, child.set_entries)
                child.record_changed.connect(self._refresh_title)
                child.record_changed.connect(self._changed)
                if self.case is not None and self.case.timeline is not None:
                    self._put_timeline(self.case)
                return True
        return False

    def mark_changed(self) -> None:
        """Something outside the form (e.g. the anaesthetic record) changed: the case is unsaved."""
        self._changed_outside = True
        self._refresh_title()
        self._changed()

    def _changed(self, *_: object) -> None:
        """An edit: autosave once the edits pause (the debounce timer restarts on each one)."""
        if self.session is not None:
            self.debounce.start()

    def _timeline(self) -> object:
        if self._timeline_get is None:
            return None
        return cases.timeline_data(self._timeline_get())

    def unparsed(self) -> dict[str, str]:
        """Text typed in fields that do not parse yet (kept by autosave)."""
        form = getattr(self.window, "form", None)
        if form is None or not self.controller.stale:
            return {}
        state = getattr(form, "state", {})
        return {k: state.get(f"text:{k}", "") for k in sorted(form.invalid_keys()) if f"text:{k}" in state}

    def is_dirty(self) -> bool:
        """True when what is in the window differs from the case file (or, unsaved, from the start)."""
        form = getattr(self.window, "form", None)
        # An empty record is told without loading the record's model (this is asked at start-up).
        no_record = self._timeline_get is not None and self._timeline_get() == ()
        current = [] if no_record else self._timeline()
        if self._fresh is not None and form is not None and form.state == self._fresh and \
                not self._changed_outside and (current is None or _empty_timeline(current)):
            return False  # a new case nothing was entered in
        if self._changed_outside or self.controller.stale:
            return True
        if self.controller.request != (self.case.request if self.case else self._baseline):
            return True
        stored = self.case.timeline if self.case else None
        if no_record:
            return stored is not None and not _empty_timeline(stored)
        return current is not None and current != stored and not (stored is None and _empty_timeline(current))

    def snapshot(self) -> cases.Case:
        """The case as it is in the window now."""
        request = self.controller.request
        plan = self.controller.plan
        if plan is not None and plan.request != request:
            plan = None
        error = "" if plan is not None else (_first_error(self.controller.errors) or "no plan")
        return cases.make_case(request, plan, library=self.library, plan_error=error, previous=self.case,
                               timeline=self._timeline())

    # ------------------------------------------------------------------ autosave and recovery
    def autosave_now(self) -> bool:
        """Write the autosave if there are unsaved changes; clear it if there are none."""
        if self.session is None or self.controller.request is None:
            return False
        try:
            if self.is_dirty():
                return self.session.save(self.snapshot(), self.path, self.unparsed())
            self.session.clear()
        except VentsetError as exc:
            self._status(f"Autosave failed: {exc}")
        return False

    def offer_recovery(self) -> bool:
        """After a crash: ask to restore each left-behind case (newest first); True if one was restored."""
        if self.session is None:
            return False
        self.attach_timeline_panel()
        for rec in autosave.find_recoverable(exclude=self.session):
            if rec.case is None:
                self.inform("An autosaved case could not be read",
                            f"{rec.title}\n\nIt has been moved to {rec.path.parent / 'dismissed'}.")
                autosave.dismiss(rec)
                continue
            answer = self.ask_restore(rec)
            if answer == "restore":
                case = autosave.restore(rec, self.session)
                self._load(case, rec.source_path, dirty=True)
                form = getattr(self.window, "form", None)
                for key, text in rec.unparsed.items():
                    if form is not None and hasattr(form, "set_text"):
                        try:
                            form.set_text(key, text)
                        except (KeyError, InputError):
                            pass
                self._status("Restored the case that was being edited when ventset stopped. Save it to keep it.")
                return True
            if answer == "dismiss":
                autosave.dismiss(rec)
        return False

    # ------------------------------------------------------------------ open / save
    def open_path(self, path: Path) -> bool:
        """Open a case file; on failure the case in the window is left as it is."""
        try:
            opened = cases.open_case(path, self.library)
        except VentsetError as exc:
            self.warn("The case could not be opened", f"{exc}\n\nThe case in the window is unchanged.")
            return False
        self._load(opened.case, opened.path, dirty=False)
        warning = cases.add_recent(opened.path)
        if opened.messages:
            self.inform("Opened with notes", "\n".join(opened.messages))
        self._status(f"Opened {opened.path}" + (f" ({warning})" if warning else ""))
        self.opened.emit(opened)
        return True

    def new_case(self, request=None) -> bool:
        """Start a new case after asking to keep unsaved work: an empty form (the species kept), or ``request``
        (the demo patient). No file, an empty anaesthetic record, a fresh undo history. True if started."""
        if not self.ask_to_keep_changes():
            return False
        self.attach_timeline_panel()
        self.case, self.path = None, None
        if self._timeline_put is not None:
            self._timeline_put(())
        form = getattr(self.window, "form", None)
        if request is None and form is not None and hasattr(form, "new_patient"):
            form.new_patient()
        elif request is not None:
            self.controller.set_request(request)
        self.controller.flush()
        self._baseline = self.controller.request
        self._fresh = dict(form.state) if form is not None and request is None else None
        self._changed_outside = False
        undo = getattr(self.window, "undo", None)
        if undo is not None:
            undo.clear()
        self._refresh_title()
        self._status("New case: the demo patient (not saved)" if request is not None else
                     "New case: enter the patient (the species is kept; every other value is cleared)")
        return True

    def _load(self, case: cases.Case, path: Path | None, *, dirty: bool) -> None:
        """Show ``case``; ``dirty`` for a restored autosave (unsaved until the user saves it)."""
        self._fresh = None
        self.case = case
        self.path = Path(path) if path else None
        self._put_timeline(case)
        self.controller.set_request(case.request)
        self.controller.flush()
        self.reset_history()
        self._changed_outside = dirty
        self._refresh_title()

    def reset_history(self) -> None:
        """A case replaced the one in the window (Open, a restored autosave, New): undo never reaches back into
        the previous patient."""
        undo = getattr(self.window, "undo", None)
        if undo is not None:
            undo.clear()

    def _put_timeline(self, case: cases.Case) -> None:
        if self._timeline_put is None:
            return
        try:
            self._timeline_put(cases.case_timeline(case))
        except (VentsetError, ValueError, TypeError, KeyError, AttributeError, OverflowError) as exc:
            self.warn("Anaesthetic record not shown", f"The record in this case cannot be read ({exc}); "
                      "it is kept in the file unchanged.")

    def save(self) -> bool:
        """Save to the case's file (asks for one if it has none)."""
        if self.path is None:
            return self.save_as()
        return self._save_to(self.path, replace_any=False)

    def save_as(self) -> bool:
        """Ask for a file and save there (the dialog has confirmed any replacement)."""
        if self.controller.request is None:
            return self._save_to(Path(), replace_any=False)  # says there is nothing to save
        suggested = self.path or Path.home() / f"{_slug(self.controller.request)}{cases.SUFFIX}"
        chosen = self.pick_save_path("Save case", str(suggested), CASE_FILTER)
        if not chosen:
            return False
        path = Path(chosen)
        if not path.suffix:
            path = path.with_suffix(cases.SUFFIX)
        return self._save_to(path, replace_any=True)

    def _save_to(self, path: Path, *, replace_any: bool) -> bool:
        self.controller.flush()
        if self.controller.request is None:
            self.warn("Nothing to save yet", f"{_first_error(self.controller.errors) or 'No patient entered'}."
                      "\n\nEnter the patient first; nothing was written.")
            return False
        if self.controller.stale:
            if not self.confirm("Some entries are not valid",
                                f"{_first_error(self.controller.errors)}.\n\nSave the last valid inputs? "
                                "What is typed in the invalid fields is not saved in the case."):
                return False
        case = self.snapshot()
        try:
            saved = cases.save_case(path, case, replace_any=replace_any)
        except VentsetError as exc:
            self.warn("The case was not saved", f"{exc}\n\nNothing was changed. Try 'Save as'.")
            return False
        self.case, self.path = saved, path
        self._changed_outside = False
        warning = cases.add_recent(path)
        if self.session is not None and not self.is_dirty():
            try:
                self.session.clear()
            except VentsetError as exc:
                warning = warning or str(exc)
        self._status(f"Saved {path}" + (f" ({warning})" if warning else ""))
        self._refresh_title()
        self.saved.emit(path)
        return True

    def ask_to_keep_changes(self) -> bool:
        """Before replacing or closing the case: True to go on (saved or discarded), False to stop."""
        if not self.is_dirty():
            return True
        answer = self.ask_save_discard_cancel()
        if answer == "save":
            return self.save()
        return answer == "discard"

    def open_dialog(self) -> bool:
        if not self.ask_to_keep_changes():
            return False
        start = str(self.path.parent) if self.path else str(Path.home())
        chosen = self.pick_open_path("Open case", start, CASE_FILTER)
        return bool(chosen) and self.open_path(Path(chosen))

    def open_recent(self, path: Path) -> bool:
        if not self.ask_to_keep_changes():
            return False
        if not self.open_path(path):
            cases.remove_recent(path)
            return False
        return True

    # ------------------------------------------------------------------ printed plan and summary
    def current_plan(self):
        """The plan on screen if it is current, else None (after telling the user why)."""
        plan = self.controller.plan
        if plan is None or self.controller.stale or plan.request != self.controller.request:
            self.warn("No current plan", "The plan on screen does not match the inputs "
                      f"({_first_error(self.controller.errors) or 'no plan yet'}). Fix the input first; "
                      "an out-of-date plan is never printed.")
            return None
        return plan

    def _gas_unit(self) -> str:
        form = getattr(self.window, "form", None)
        return form.gas_unit() if form is not None and hasattr(form, "gas_unit") else "mmHg"

    def slug(self) -> str:
        return _slug(self.controller.request)

    def write_pdf(self, path: Path | None = None) -> Path | None:
        """Save the printed plan as PDF (every page, the anaesthetic record included)."""
        from ventset.gui import print_ui

        return print_ui.write_pdf(self, path)

    def print_to_printer(self) -> bool:
        from ventset.gui import print_ui

        return print_ui.print_to_printer(self)

    def preview(self):
        """Qt's print preview of the printed plan (a QPrintPreviewDialog), or None without a current plan."""
        from ventset.gui import print_ui

        return print_ui.preview(self)

    def copy_summary(self) -> str:
        from ventset.summary import plan_summary

        plan = self.controller.plan
        if plan is None:
            return ""
        text = plan_summary(plan, self._gas_unit())
        if self.controller.stale or plan.request != self.controller.request:
            text = "NOT CURRENT (inputs changed; fix them first) — " + _first_error(self.controller.errors) + \
                "\n" + text
        QGuiApplication.clipboard().setText(text)
        self._status("Summary copied for the clinical record")
        return text

    def parts_dialog(self) -> ClinicPartsDialog:
        from ventset.gui.parts_dialog import ClinicPartsDialog

        dialog = ClinicPartsDialog(self)
        dialog.open()
        return dialog

    # ------------------------------------------------------------------ the window
    def eventFilter(self, obj, event) -> bool:  # noqa: N802 - Qt override
        if obj is self.window and event.type() == QEvent.Type.Close:
            if not self.ask_to_keep_changes():
                event.ignore()
                return True
            self.close_session()
        return False

    def close_session(self) -> None:
        if self.session is not None:
            try:
                self.session.close(keep_unsaved=True)
            except VentsetError as exc:
                self._status(f"Autosave not closed cleanly: {exc}")
            self.session = None
        self.timer.stop()
        self.debounce.stop()

    def _refresh_title(self, *_: object) -> None:
        req = self.controller.request
        who = (req.patient.name or req.patient.species) if req is not None else "new patient"
        where = self.path.name if self.path else "not saved"
        self.window.setWindowTitle(f"ventset — {who} — {where}[*]")
        self.window.setWindowModified(self.is_dirty())

    def _status(self, text: str) -> None:
        bar = self.window.statusBar() if hasattr(self.window, "statusBar") else None
        if bar is not None:
            bar.showMessage(text, 8000)

    # ------------------------------------------------------------------ dialogs (replaced in tests)
    def ask_save_discard_cancel(self) -> str:
        box = QMessageBox(QMessageBox.Icon.Question, "Unsaved changes",
                          "The case has changes that are not saved in a case file.", parent=self.window)
        box.setInformativeText("Save them, discard them (a copy stays in the autosave folder), or go back?")
        _plain_box(box)
        save = box.addButton("Save…", QMessageBox.ButtonRole.AcceptRole)
        discard = box.addButton("Discard", QMessageBox.ButtonRole.DestructiveRole)
        box.addButton("Cancel", QMessageBox.ButtonRole.RejectRole)
        box.exec()
        clicked = box.clickedButton()
        return "save" if clicked is save else "discard" if clicked is discard else "cancel"

    def ask_restore(self, rec: autosave.Recovery) -> str:
        box = QMessageBox(QMessageBox.Icon.Question, "Restore unsaved case?",
                          "ventset did not close normally last time. A case was being edited:", parent=self.window)
        box.setTextFormat(Qt.TextFormat.RichText)
        box.setInformativeText(f"<p>{esc(rec.title)}</p>")  # built as HTML: the patient's name escaped
        restore = box.addButton("Restore", QMessageBox.ButtonRole.AcceptRole)
        aside = box.addButton("Set aside", QMessageBox.ButtonRole.DestructiveRole)
        box.addButton("Ask next time", QMessageBox.ButtonRole.RejectRole)
        box.exec()
        clicked = box.clickedButton()
        return "restore" if clicked is restore else "dismiss" if clicked is aside else "later"

    def pick_open_path(self, title: str, start: str, filters: str) -> str:
        return QFileDialog.getOpenFileName(self.window, title, start, filters)[0]

    def pick_save_path(self, title: str, start: str, filters: str) -> str:
        return QFileDialog.getSaveFileName(self.window, title, start, filters)[0]

    def _message(self, icon: QMessageBox.Icon, title: str, text: str,
                 buttons: QMessageBox.StandardButton = QMessageBox.StandardButton.Ok) -> QMessageBox.StandardButton:
        box = QMessageBox(icon, title, text, buttons, self.window)
        _plain_box(box)
        return QMessageBox.StandardButton(box.exec())

    def warn(self, title: str, text: str) -> None:
        self._message(QMessageBox.Icon.Warning, title, text)

    def inform(self, title: str, text: str) -> None:
        self._message(QMessageBox.Icon.Information, title, text)

    def confirm(self, title: str, text: str) -> bool:
        yes_no = QMessageBox.StandardButton.Yes | QMessageBox.StandardButton.No
        return self._message(QMessageBox.Icon.Question, title, text, yes_no) == QMessageBox.StandardButton.Yes

    def ask_text(self, title: str, label: str, text: str = "") -> str:
        dialog = QInputDialog(self.window)
        dialog.setWindowTitle(title)
        dialog.setLabelText(label)
        dialog.setTextValue(text)
        for lab in dialog.findChildren(QLabel):
            plain(lab)
        ok = dialog.exec() == QDialog.DialogCode.Accepted
        return dialog.textValue() if ok else ""


def _plain_box(box: QMessageBox) -> None:
    """Every text of ``box`` shown as plain text (messages hold file names, patient and part names)."""
    box.setTextFormat(Qt.TextFormat.PlainText)
    for lab in box.findChildren(QLabel):
        plain(lab)


def _empty_timeline(data: object) -> bool:
    return data in ([], {}) or (isinstance(data, dict) and not data.get("entries"))


def _slug(request) -> str:
    if request is None:
        return "case"
    name = request.patient.name or request.patient.species or "case"
    keep = "".join(ch if ch.isalnum() or ch in "-_" else "-" for ch in name.strip().lower())
    return "-".join(filter(None, keep.split("-")))[:40] or "case"


def install(window, *, offer_recovery: bool = True, autosave_folder: Path | None = None) -> CaseManager:
    """Add case files, autosave, the clinic library and printing to ``window``; returns the manager."""
    manager = CaseManager(window, autosave_folder=autosave_folder)
    window.case_manager = manager
    menu = window.menu("Case")
    first = menu.actions()[0] if menu.actions() else None

    def act(text: str, slot, shortcut=None, name: str = "") -> QAction:
        a = QAction(text, window)
        if shortcut is not None:
            a.setShortcut(QKeySequence(shortcut))
        a.triggered.connect(lambda _=False: slot())
        if name:
            a.setObjectName(name)
        menu.insertAction(first, a)
        return a

    manager.act_new = act("New case", manager.new_case, QKeySequence.StandardKey.New, "act-new")
    manager.act_open = act("Open case…", manager.open_dialog, QKeySequence.StandardKey.Open, "act-open")
    recent = QMenu("Open recent", window)
    recent.setObjectName("menu-recent")
    menu.insertMenu(first, recent)
    manager.recent_menu = recent

    recent.setToolTipsVisible(True)

    def fill_recent() -> None:
        recent.clear()
        paths = cases.recent_files()
        for i, (p, label) in enumerate(zip(paths, cases.recent_labels(paths), strict=True)):
            a = recent.addAction(f"&{i + 1} {label}" if i < 9 else label)
            a.setToolTip(plain_tip(str(p)))
            a.setStatusTip(str(p))
            a.setData(str(p))
            a.triggered.connect(lambda _=False, p=p: manager.open_recent(p))
        if not paths:
            recent.addAction("No recent cases").setEnabled(False)
            return
        recent.addSeparator()
        clear = recent.addAction("Clear the list")
        clear.setObjectName("act-clear-recent")
        clear.triggered.connect(lambda: manager._status(cases.clear_recent() or "The list of recent cases is empty "
                                                        "(the case files are untouched)."))

    recent.aboutToShow.connect(fill_recent)
    manager.fill_recent = fill_recent
    manager.act_save = act("Save case", manager.save, QKeySequence.StandardKey.Save, "act-save")
    manager.act_save_as = act("Save case as…", manager.save_as, QKeySequence("Ctrl+Shift+S"), "act-save-as")
    menu.insertSeparator(first)
    manager.act_print = act("Printed plan (preview, PDF, print)…", manager.preview, QKeySequence.StandardKey.Print,
                            "act-print")
    manager.act_pdf = act("Save printed plan as PDF…", manager.write_pdf, None, "act-pdf")
    from ventset.gui.paper import install_paper_menu

    manager.paper_menu = install_paper_menu(window, menu, first)
    manager.act_summary = act("Copy summary for the clinical record", manager.copy_summary,
                              QKeySequence("Ctrl+Alt+C"), "act-summary")
    menu.insertSeparator(first)
    manager.act_parts = act("Clinic parts library…", manager.parts_dialog, None, "act-parts")
    menu.insertSeparator(first)
    QTimer.singleShot(0, manager.attach_timeline_panel)  # the record panel may be installed after this one
    if offer_recovery and os.environ.get("VENTSET_GUI_SMOKE") != "1":  # the start-up timing run must not wait
        QTimer.singleShot(0, manager.offer_recovery)
    manager._refresh_title()
    return manager
