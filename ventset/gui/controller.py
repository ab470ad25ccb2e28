"""PlanController: owns the current Request, replans on every change and tells the views.

Other panels (case files, titration) talk to the window through this object:
``set_request(request)`` replaces the whole request in one batch (one replan), ``plan_ready(Plan)``
and ``plan_invalid(list[InputError])`` report the outcome. Bursts of edits are coalesced by a
zero-delay single-shot timer, so typing fast replans once per event-loop pass.
"""

from __future__ import annotations

import sys

from PySide6.QtCore import QObject, QTimer, Signal

from ventset.errors import InputError
from ventset.library import Library, load_library
from ventset.model import Plan, Request
from ventset.planner import plan as make_plan


class PlanController(QObject):
    """The one place a plan is made for the window."""

    plan_ready = Signal(object)        # Plan
    plan_invalid = Signal(list)        # list[InputError]; the last valid plan stays on screen (stale)
    request_changed = Signal(object)   # Request set from outside the form: the form shows it

    def __init__(self, library: Library | None = None, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self.library = library or load_library()
        self.request: Request | None = None
        self.plan: Plan | None = None          # the last valid plan
        self.errors: list[InputError] = []
        self._pending_errors: list[InputError] | None = None
        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(0)
        self._timer.timeout.connect(self.replan_now)
        self._flush_hooks: list = []  # input held back while typing (the form's debounce): handed over by flush()

    @property
    def stale(self) -> bool:
        """True when the plan on screen no longer matches what was entered."""
        return bool(self.errors)

    def set_request(self, request: Request, *, from_form: bool = False) -> None:
        """Replace the current request (one replan, on the next event-loop pass)."""
        self.request = request
        self._pending_errors = None
        if not from_form:
            self.request_changed.emit(request)
        self._timer.start()

    def clear(self) -> None:
        """Forget the patient (a new case): no request and no plan until the form describes a new one."""
        self._timer.stop()
        self.request = None
        self.plan = None
        self.errors = []
        self._pending_errors = None

    def set_invalid(self, errors: list[InputError]) -> None:
        """The form has input that does not parse: keep the last plan, flag it stale."""
        self._pending_errors = list(errors)
        self._timer.start()

    def add_flush_hook(self, hook) -> None:
        """``hook()`` runs first in every ``flush``: a view that holds back half-typed input submits it."""
        self._flush_hooks.append(hook)

    def flush(self) -> None:
        """Run a pending replan now (tests, and before reading ``plan`` synchronously)."""
        for hook in self._flush_hooks:
            hook()
        if self._timer.isActive():
            self._timer.stop()
            self.replan_now()

    def replan_now(self) -> None:
        if self._pending_errors is not None:
            self.errors = self._pending_errors
            self._pending_errors = None
            self.plan_invalid.emit(self.errors)
            return
        if self.request is None:
            return
        try:
            result = make_plan(self.request, self.library)
        except InputError as err:
            self.errors = [err]
            self.plan_invalid.emit(self.errors)
            return
        except Exception as exc:  # a core bug must not take the window down; it is still reported
            sys.excepthook(type(exc), exc, exc.__traceback__)
            self.errors = [InputError("plan", "", f"could not be computed (internal error: {exc}); "
                                                  "please report this with the inputs")]
            self.plan_invalid.emit(self.errors)
            return
        self.errors = []
        self.plan = result
        self.plan_ready.emit(result)
