"""The desktop window: a thin Qt view over the pure planning core.

pyqtgraph must find PySide6 (not another binding), so the environment variable is set and
PySide6 imported before any module here imports pyqtgraph; PySide6's per-import source check is
made quick first (ventset.gui.binding).
"""

import os

os.environ.setdefault("PYQTGRAPH_QT_LIB", "PySide6")

from ventset.gui.binding import quicken_source_check  # noqa: E402

quicken_source_check()

import PySide6  # noqa: E402,F401  (imported first on purpose)
