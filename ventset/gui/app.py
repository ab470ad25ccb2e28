"""``ventset`` with no arguments: open the window, or print the demo plan when there is no display.

``ventset CASE.ventcase`` (or ``ventset gui CASE``) opens that case in the window (without a display: prints
its plan).
"""

from __future__ import annotations

import gc
import os
import sys
import time
from pathlib import Path

DISPLAY_VARS = ("DISPLAY", "WAYLAND_DISPLAY", "QT_QPA_PLATFORM")
SMOKE_ENV = "VENTSET_GUI_SMOKE"  # "1": open, draw the plan once, print the start-up time (and the case) and quit
DESKTOP_ID = "ventset"  # the desktop entry's name (ventset.desktop), so the desktop matches windows to it


def display_available() -> bool:
    """On Linux a window needs X11, Wayland or an explicit Qt platform; elsewhere assume a desktop."""
    if not sys.platform.startswith("linux"):
        return True
    return any(os.environ.get(v) for v in DISPLAY_VARS)


def _no_display(case_path: str | None) -> int:
    what = "the case's plan" if case_path else "the demo plan"
    print(f"ventset: no display available (DISPLAY, WAYLAND_DISPLAY and QT_QPA_PLATFORM are unset); "
          f"printing {what} instead.")
    sys.stdout.flush()
    if case_path:
        from ventset.cli_cases import print_case

        return print_case(case_path)
    from ventset.demo import run_demo

    return run_demo()


def _open_case(window, case_path: str, smoke: bool) -> str | None:
    """Open ``case_path`` in the window; the patient it names, or None when it could not be opened."""
    manager = getattr(window, "case_manager", None)
    if manager is None:
        print("ventset: case files are not available in this window (the case panel did not load)", file=sys.stderr)
        return None
    if smoke:  # nobody is there to answer a dialog: say it on stderr instead
        manager.warn = manager.inform = lambda title, text: print(f"ventset: {title}: {text}", file=sys.stderr)
    if not manager.open_path(Path(case_path)):
        return None
    from ventset.errors import visible

    req = window.controller.request
    return visible(req.patient.name or req.patient.species, 200) if req is not None else ""


def after_first_frame() -> None:
    """Once the window is on screen: what start-up made (modules, the window, the library) is kept out of
    every later collection (gc.freeze) and the cyclic garbage collector, off during start-up, runs again.
    Edits then never wait for a collection that walks the whole program's objects."""
    gc.freeze()
    gc.enable()


def run(argv: list[str] | None = None, case_path: str | None = None) -> int:
    """Open the window with the demo patient, or with the case at ``case_path``; returns the exit status."""
    t0 = time.perf_counter()
    if not display_available():
        return _no_display(case_path)
    # numpy's linear algebra library starts a pool of threads when numpy is imported. ventset's arrays are a few
    # thousand numbers, never a matrix product worth sharing: one thread, and the pool's start-up (about 15 ms)
    # and its threads competing with the window for the processors are saved. Only for the window's process
    # (not when ventset is imported as a library), and only if the user has not chosen a number.
    os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
    from PySide6.QtCore import QTimer
    from PySide6.QtWidgets import QApplication, QDialog

    import ventset.gui  # noqa: F401  (binding choice for pyqtgraph)
    from ventset.gui import settings as prefs

    app = QApplication.instance() or QApplication([sys.argv[0] if sys.argv else "ventset", *(argv or [])])
    app.setApplicationName("ventset")
    app.setOrganizationName(prefs.ORGANISATION)
    app.setDesktopFileName(DESKTOP_ID)
    from ventset.gui.theme import app_icon

    app.setWindowIcon(app_icon())
    app.setStyle("Fusion")
    settings = prefs.open_settings()
    smoke = os.environ.get(SMOKE_ENV) == "1"
    if not smoke and not prefs.is_acknowledged(settings):
        from ventset.gui.ack import AcknowledgementDialog

        if AcknowledgementDialog().exec() != QDialog.DialogCode.Accepted:
            return 0
        prefs.set_acknowledged(settings)
    from ventset.gui.window import MainWindow

    window = MainWindow(settings, extensions=True)
    window.show()
    QTimer.singleShot(0, after_first_frame)
    opened = _open_case(window, case_path, smoke) if case_path else None
    if smoke:
        if case_path and opened is None:
            window.close()
            return 2

        def ready() -> None:
            window.repaint()  # the first frame is drawn before the clock stops
            case = f"; case {Path(case_path).name}: {opened}" if case_path else ""
            print(f"ready {time.perf_counter() - t0:.3f} s after run(){case}", flush=True)
            window.close()
            app.quit()

        QTimer.singleShot(0, ready)
    return app.exec()
