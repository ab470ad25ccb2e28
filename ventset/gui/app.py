"""``ventset`` with no arguments: open the window, or print the demo plan when there is no display."""

from __future__ import annotations

import os
import sys
import time

DISPLAY_VARS = ("DISPLAY", "WAYLAND_DISPLAY", "QT_QPA_PLATFORM")
SMOKE_ENV = "VENTSET_GUI_SMOKE"  # "1": open, draw the demo plan once, print the start-up time and quit


def display_available() -> bool:
    """On Linux a window needs X11, Wayland or an explicit Qt platform; elsewhere assume a desktop."""
    if not sys.platform.startswith("linux"):
        return True
    return any(os.environ.get(v) for v in DISPLAY_VARS)


def run(argv: list[str] | None = None) -> int:
    """Open the window with the demo patient; returns the exit status."""
    t0 = time.perf_counter()
    if not display_available():
        print("ventset: no display available (DISPLAY, WAYLAND_DISPLAY and QT_QPA_PLATFORM are unset); "
              "printing the demo plan instead.")
        sys.stdout.flush()
        from ventset.demo import run_demo

        return run_demo()
    from PySide6.QtCore import QTimer
    from PySide6.QtWidgets import QApplication, QDialog

    import ventset.gui  # noqa: F401  (binding choice for pyqtgraph)
    from ventset.gui import settings as prefs

    app = QApplication.instance() or QApplication([sys.argv[0] if sys.argv else "ventset", *(argv or [])])
    app.setApplicationName("ventset")
    app.setOrganizationName(prefs.ORGANISATION)
    app.setStyle("Fusion")
    settings = prefs.open_settings()
    smoke = os.environ.get(SMOKE_ENV) == "1"
    if not smoke and not prefs.is_acknowledged(settings):
        from ventset.gui.ack import AcknowledgementDialog

        if AcknowledgementDialog().exec() != QDialog.DialogCode.Accepted:
            return 0
        prefs.set_acknowledged(settings)
    from ventset.gui.window import MainWindow, install_extensions

    window = MainWindow(settings)
    install_extensions(window)
    window.show()
    if smoke:
        def ready() -> None:
            window.repaint()  # the first frame is drawn before the clock stops
            print(f"ready {time.perf_counter() - t0:.3f} s after run()", flush=True)
            window.close()
            app.quit()

        QTimer.singleShot(0, ready)
    return app.exec()
