"""PlanController: owns the current Request, replans on every change and tells the views.

Other panels (case files, titration) talk to the window through this object:
``set_request(request)`` replaces the whole request in one batch (one replan), ``plan_ready(Plan)``
and ``plan_invalid(list[InputError])`` report the outcome. Bursts of edits are coalesced by a
zero-delay single-shot timer, so typing fast replans once per event-loop pass.

The update comes in two phases. ``plan_ready`` is for the numbers (the settings, status and cautions):
they are set and painted in the pass that made the plan, the frame of the keystroke. ``plan_views``
follows with the same plan once that paint is done, for what is drawn (the plots, other tabs): it is
posted at the window's own paint priority, after the repaint the numbers asked for, so the numbers are
on screen before the plots start. Edits in between coalesce: the views draw the latest plan once.
``flush()`` runs both phases at once.
"""

from __future__ import annotations

import sys

from PySide6.QtCore import QCoreApplication, QEvent, QObject, Qt, QTimer, Signal

from ventset.errors import InputError
from ventset.library import Library, load_library
from ventset.model import Plan, Request
from ventset.planner import plan as make_plan

_VIEWS_DUE = QEvent.Type(QEvent.registerEventType())  # the posted event that starts the second phase
_LAYOUT_PASSES = 3  # a layout that resizes its parent asks the parent's layout in turn (row → list → scroll area)
# Passes the views wait after the numbers' repaint: a widget's first paint can ask for one more repaint,
# which Qt posts for the next pass and paints in the pass after that.
_VIEW_HOPS = 3


class _ViewsDue(QEvent):
    def __init__(self, hop: int) -> None:
        super().__init__(_VIEWS_DUE)
        self.hop = hop


class PlanController(QObject):
    """The one place a plan is made for the window."""

    plan_ready = Signal(object)        # Plan: the numbers, in this pass
    plan_views = Signal(object)        # the same Plan after this pass has painted: plots and other drawn views
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
        self._flush_hooks: list = []  # typing whose errors wait for the pause: handed over by flush()
        self._views_due = False
        self._fallback: Request | None = None  # planned instead when a request being typed cannot be planned

    @property
    def stale(self) -> bool:
        """True when the plan on screen no longer matches what was entered."""
        return bool(self.errors)

    @property
    def pending(self) -> bool:
        """True when a replan has been asked for and not yet run."""
        return self._timer.isActive()

    def set_request(self, request: Request, *, from_form: bool = False, fallback: Request | None = None,
                    now: bool = False) -> None:
        """Replace the current request (one replan, on the next event-loop pass; ``now``: at once, so that a
        keystroke's number is painted in the same pass as the character typed). With ``fallback`` (a number
        being typed) a request that cannot be planned says nothing yet: ``fallback`` is planned instead."""
        self.request = request
        self._fallback = fallback
        self._pending_errors = None
        if not from_form:
            self.request_changed.emit(request)
        if now:
            self._timer.stop()
            self.replan_now()
        else:
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
        """Run a pending replan and the views it is due now (tests, and before reading ``plan`` synchronously)."""
        for hook in self._flush_hooks:
            hook()
        if self._timer.isActive():
            self._timer.stop()
            self.replan_now()
        self.flush_views()

    def flush_views(self) -> None:
        """Emit ``plan_views`` now if it is due (the posted event that would have done it then does nothing)."""
        if self._views_due:
            self._views_due = False
            if self.plan is not None:
                self.plan_views.emit(self.plan)

    def _post_views(self, hop: int = 0) -> None:
        if hop == 0:
            if self._views_due:
                return
            self._views_due = True
        # Low priority, as Qt posts a window's repaint: delivered after the repaint posted before it.
        QCoreApplication.postEvent(self, _ViewsDue(hop), Qt.EventPriority.LowEventPriority.value)

    def event(self, e: QEvent) -> bool:
        if e.type() == _VIEWS_DUE:
            hop = e.hop if isinstance(e, _ViewsDue) else _VIEW_HOPS
            if hop + 1 < _VIEW_HOPS and self._views_due:
                self._post_views(hop + 1)  # behind the repaints the last pass posted
            else:
                self.flush_views()
            return True
        return super().event(e)

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
            if self._fallback is not None and self._fallback != self.request:
                self.request, self._fallback = self._fallback, None
                self.replan_now()
                return
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
        # The layouts the new numbers asked for (a caution row shown or hidden, a text that now wraps) and the
        # repaints Qt defers by one pass (a widget just shown) are done now, so that the coming repaint shows
        # them in this frame rather than after the views.
        for _ in range(_LAYOUT_PASSES):
            QCoreApplication.sendPostedEvents(None, QEvent.Type.LayoutRequest)
            QCoreApplication.sendPostedEvents(None, QEvent.Type.UpdateLater)
        self._post_views()
