"""Speed of the window and the command line (not a test; numbers go in docs/performance.md).

    python benchmarks/run.py          # readable summary
    python benchmarks/run.py --json   # one JSON object

Every figure is measured beside a floor taken in the same run, and printed with its ratio to that floor
(``*_ratio``), so that a busy or slow machine moves both and the ratio stays comparable:

  edit_to_numbers_ms_p50/p95  one typed key in a field → replan → every number on screen (settings tiles, status
                              strip, cautions) painted; 200 edits at 1400 × 900.
                              Floor: the same key press in a bare window whose line edit sets a label.
  edit_to_views_ms_p50/p95    the same key → every plot painted as well.
                              Floor: the bare window's label and one pyqtgraph curve of 150 points, painted.
  edit_to_*_cpu_ms_*          the same two, counted in this thread's processor time instead of the wall clock
                              (a machine busy with other work moves them less; not a target, a check).
  rss_growth_mb_2000_edits    resident memory after 2000 more edits minus before them (the floor window beside it).
  settings_map_ms             computing a 200 × 200 tidal volume × rate map (median); floor: numpy filling a
                              200 × 200 array with the alveolar ventilation equation.
  sweep_10k_ms(_min)          the sweep over body mass (ventset.sweep) at 10,000 masses, dog 2-40 kg (median, fastest)
  plan_loop_10k_s             plan() called once per mass at the same 10,000 masses
  sweep_speedup               plan_loop_10k_s / sweep_10k_ms (how many times faster the sweep is)
  sweep_max_rel_diff          largest relative difference of tidal volume, rate and PaCO2 between the two
  cold_start_s                process start → first frame with the demo plan drawn (median of pairs).
                              Floor: PySide6 + pyqtgraph + numpy imported, one plot shown and painted.
  cli_plan_s                  one `ventset plan --species dog --mass "20 kg"` process; floor: `python -c pass`.
  cli_units_s                 `ventset plan --species dog --mass "44 lb" --target-paco2 "5.3 kPa"` against the same
                              plan typed in the internal units (kg, mmHg), as whole processes, pair by pair.
  library_import_s            a process that only imports PySide6.QtWidgets, pyqtgraph and numpy
  python_start_s              an empty Python process

Whole-process figures run A B A B … and the ratio is the median of the pairs' ratios.
"""

from __future__ import annotations

import argparse
import gc
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

# The bare-Qt floor for the cold start: the libraries the window needs, one plot, its first frame.
FLOOR_SCRIPT = """\
import os, sys, time
os.environ.setdefault("PYQTGRAPH_QT_LIB", "PySide6")
import numpy as np
from PySide6.QtCore import QTimer
from PySide6.QtWidgets import QApplication
import pyqtgraph as pg
app = QApplication([sys.argv[0]])
w = pg.PlotWidget()
w.plot(np.linspace(0, 3, 150), np.sin(np.linspace(0, 9, 150)))
w.resize(1400, 900)
w.show()
def ready():
    w.repaint()
    print("ready", flush=True)
    app.quit()
QTimer.singleShot(0, ready)
app.exec()
"""


# Qt's offscreen platform shows one 800 × 800 screen, and the window keeps to its screen, so a 1400 × 900 window
# would be shrunk (plots squeezed, whole plots out of view and never painted): the benchmark's screen is larger.
SCREEN = {"screens": [{"name": "bench", "x": 0, "y": 0, "width": 1920, "height": 1080,
                       "logicalDpi": 96, "logicalBaseDpi": 96, "dpr": 1}]}


def _env(tmp: str) -> dict:
    env = dict(os.environ)
    screen = os.path.join(tmp, "screen.json")
    with open(screen, "w") as f:
        json.dump(SCREEN, f)
    # Byte-code caches as an installed program has them (the warm-up run of each command writes them).
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    # The parsed-data cache in the run's own folder: a user has one copy of the data files, but the user cache
    # folder of a shared machine may be rewritten between runs by other checkouts with other data.
    env.update(QT_QPA_PLATFORM=f"offscreen:configfile={screen}",
               VENTSET_SETTINGS_DIR=os.path.join(tmp, "settings"),
               VENTSET_DATA_DIR=os.path.join(tmp, "data"), VENTSET_CACHE_DIR=os.path.join(tmp, "cache"),
               QT_LOGGING_RULES="qt.qpa.*=false", PYQTGRAPH_QT_LIB="PySide6")
    return env


def _wall(cmd: list[str], env: dict, until: str | None = None) -> float:
    """Seconds from process start to exit, or to the first stdout line starting with ``until``."""
    t0 = time.perf_counter()
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.DEVNULL, text=True, env=env, cwd=ROOT)
    if until:
        assert proc.stdout is not None
        for line in proc.stdout:
            if line.startswith(until):
                t = time.perf_counter() - t0
                proc.wait()
                return t
        raise RuntimeError(f"{cmd} never printed {until!r}")
    proc.communicate()
    if proc.returncode:
        raise RuntimeError(f"{cmd} exited {proc.returncode}")
    return time.perf_counter() - t0


def _pairs(a: tuple[list[str], dict, str | None], b: tuple[list[str], dict, str | None], n: int) -> dict:
    """Run A and B in turn n times (after one warm-up each); medians of A, B and of the pair ratios A/B."""
    _wall(*a)
    _wall(*b)
    ta, tb = [], []
    for _ in range(n):
        ta.append(_wall(*a))
        tb.append(_wall(*b))
    return {"a": statistics.median(ta), "b": statistics.median(tb),
            "ratio": statistics.median(x / y for x, y in zip(ta, tb, strict=True))}


# ------------------------------------------------------------------------------------------ edits
class PaintClock:
    """Which watched widgets painted in each pass of the window's backing store, and when that pass ended.

    ``kinds[widget]`` is 'numbers' or 'plots'; the window calls ``synced()`` after each UpdateRequest (the
    pass that paints every dirty widget of a top-level window and flushes it)."""

    def __init__(self) -> None:
        from PySide6.QtCore import QEvent, QObject

        clock = self

        class Filter(QObject):
            def eventFilter(self, obj, e):  # noqa: N802 - Qt override
                if e.type() == QEvent.Type.Paint:
                    kind = clock.kinds.get(id(obj))
                    if kind:
                        clock.painted.add(kind)
                return False

        self.filter = Filter()
        self.kinds: dict[int, str] = {}
        self.watched: set[int] = set()
        self.painted: set[str] = set()
        self.syncs: list[tuple[float, frozenset]] = []

    def watch(self, widgets, kind: str) -> None:
        for w in widgets:
            if id(w) not in self.watched:
                self.watched.add(id(w))
                w.installEventFilter(self.filter)
            self.kinds[id(w)] = kind

    def synced(self) -> None:
        self.syncs.append((time.perf_counter(), time.thread_time(), frozenset(self.painted)))
        self.painted.clear()


def _timed(cls):
    """A subclass of the window class ``cls`` that tells its PaintClock when each paint pass ends."""
    from PySide6.QtCore import QEvent

    class Timed(cls):
        clock: PaintClock | None = None

        def event(self, e):
            is_sync = e.type() == QEvent.Type.UpdateRequest
            result = super().event(e)
            if is_sync and self.clock is not None:
                self.clock.synced()
            return result

    return Timed


class FloorWindow:
    """The bare-Qt edit floor: a line edit whose every change sets a number label and one 150-point curve."""

    def __init__(self) -> None:
        import numpy as np
        import pyqtgraph as pg
        from PySide6.QtWidgets import QLabel, QLineEdit, QMainWindow, QVBoxLayout, QWidget

        self.win = _timed(QMainWindow)()
        body = QWidget(self.win)
        lay = QVBoxLayout(body)
        self.edit = QLineEdit("20", body)
        self.label = QLabel("—", body)
        self.plot = pg.PlotWidget(body)
        self.curve = self.plot.plot()
        self.plot.getPlotItem().vb.disableAutoRange()
        self.plot.setRange(xRange=(0, 3), yRange=(-2, 2), padding=0)
        for w in (self.edit, self.label, self.plot):
            lay.addWidget(w)
        self.win.setCentralWidget(body)
        self._t = np.linspace(0, 3, 150)
        self._np = np
        self.edit.textChanged.connect(self._changed)
        self.ready = [0]

    def _changed(self, text: str) -> None:
        x = float(len(text)) + 1.0
        self.label.setText(f"{x * 1.2345:.4g} mL")
        self.curve.setData(self._t, self._np.sin(self._t * x))
        self.ready[0] += 1

    def watch(self, clock: PaintClock) -> None:
        clock.watch([self.label], "numbers")
        clock.watch([self.plot.viewport()], "plots")


def _app():
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    from PySide6.QtWidgets import QApplication

    import ventset.gui  # noqa: F401  (binding choice for pyqtgraph)

    return QApplication.instance() or QApplication([])


def _watch_window(window, clock: PaintClock) -> None:
    from PySide6.QtWidgets import QWidget

    numbers = []
    for panel in (window.settings_panel, window.status, window.cautions):
        numbers += [panel, *panel.findChildren(QWidget)]
    clock.watch(numbers, "numbers")
    clock.watch([card.widget.viewport() for card in window.plot_cards], "plots")


def _ventset_window(panels: bool):
    from ventset.gui.settings import open_settings
    from ventset.gui.window import MainWindow

    window = _timed(MainWindow)(open_settings())
    if panels:
        from ventset.gui.window import install_extensions

        install_extensions(window)
    ready = [0]  # a count, not the plans: keeping them would count as the window's memory
    window.controller.plan_ready.connect(lambda _p: ready.__setitem__(0, ready[0] + 1))
    window.controller.plan_invalid.connect(lambda _e: ready.__setitem__(0, ready[0] + 1))
    return window, ready


def _one_edit(app, clock: PaintClock, edit, key, ready: list[int],
              replace: bool = False) -> tuple[float, float, float, float]:
    """Type ``key`` at the end of ``edit`` (over its whole text with ``replace``); milliseconds to the last pass
    that painted numbers, and plots (wall clock, then this thread's processor time, which a busy machine moves
    less)."""
    from PySide6.QtTest import QTest

    edit.setFocus()
    if replace:
        edit.selectAll()
    else:
        edit.end(False)
    for _ in range(3):
        app.processEvents()
    before = ready[0]
    clock.syncs.clear()
    t0, c0 = time.perf_counter(), time.thread_time()
    QTest.keyClick(edit, key)
    deadline = t0 + 5
    while ready[0] == before and time.perf_counter() < deadline:
        app.processEvents()
    if ready[0] == before:
        raise RuntimeError("an edit produced no plan")
    for _ in range(12):  # the passes the new data posted (repaints, deferred views); idle passes cost nothing
        app.processEvents()
    num = [(t, c) for t, c, kinds in clock.syncs if "numbers" in kinds]
    plots = [(t, c) for t, c, kinds in clock.syncs if "plots" in kinds]
    if not num or not plots:
        raise RuntimeError(f"an edit painted no {'numbers' if not num else 'plots'}")
    return ((num[-1][0] - t0) * 1000, (plots[-1][0] - t0) * 1000,
            (num[-1][1] - c0) * 1000, (plots[-1][1] - c0) * 1000)


def _rss_mb() -> float:
    with open("/proc/self/status") as f:
        for line in f:
            if line.startswith("VmRSS:"):
                return int(line.split()[1]) / 1024
    return float("nan")


def edit_runs(n: int = 200, panels: bool = False, rss_edits: int = 2000) -> dict:
    """Milliseconds per typed edit for ventset's window and the floor, interleaved; memory growth."""
    from PySide6.QtCore import Qt

    app = _app()
    window, ready = _ventset_window(panels)
    floor = FloorWindow()
    for w in (window, floor.win):
        w.resize(1400, 900)
        w.show()
    for _ in range(5):
        app.processEvents()
    from ventset.gui.app import after_first_frame

    after_first_frame()  # as the program does once its window is up (start-up's objects out of collections)
    clock = PaintClock()
    window.clock = clock
    floor.win.clock = clock
    floor.watch(clock)
    # Each edit below gives a valid plan that changes what every view draws: a digit added to or taken from the
    # body mass (4.2 ↔ 4.25 kg), or the PEEP typed over (4 ↔ 6 cmH2O).
    fields = ["mass", "peep", "mass", "peep"]
    window.form.rows["mass"].edit.setText("4.2")
    window.form.rows["peep"].edit.setText("4")
    for _ in range(5):
        app.processEvents()
    out: dict[str, list[float]] = {k: [] for k in ("numbers", "views", "numbers_cpu", "views_cpu")}
    out.update({"floor_" + k: [] for k in list(out)})

    def ventset_edit(i: int) -> tuple[float, float, float, float]:
        field = fields[i % len(fields)]
        edit = window.form.rows[field].edit
        grow = (i // len(fields)) % 2 == 0
        _watch_window(window, clock)  # caution rows made by the last plan
        if field == "peep":
            grow = (i // 2) % 2 == 0
            return _one_edit(app, clock, edit, Qt.Key.Key_6 if grow else Qt.Key.Key_4, ready, replace=True)
        return _one_edit(app, clock, edit, Qt.Key.Key_5 if grow else Qt.Key.Key_Backspace, ready)

    def floor_edit(i: int) -> tuple[float, float, float, float]:
        return _one_edit(app, clock, floor.edit, Qt.Key.Key_5 if i % 2 == 0 else Qt.Key.Key_Backspace, floor.ready)

    for i in range(n + 10):
        a = ventset_edit(i)
        b = floor_edit(i)
        if i >= 10:  # the first few warm caches
            for j, k in enumerate(("numbers", "views", "numbers_cpu", "views_cpu")):
                out[k].append(a[j])
                out["floor_" + k].append(b[j])
    if rss_edits:  # the edit index runs on, so that every field goes on growing and shrinking by turns
        gc.collect()
        r0 = _rss_mb()
        for i in range(n + 10, n + 10 + rss_edits):
            ventset_edit(i)
        gc.collect()
        out["rss_growth_mb"] = [_rss_mb() - r0]
        r0 = _rss_mb()
        for i in range(n + 10, n + 10 + rss_edits):
            floor_edit(i)
        gc.collect()
        out["rss_growth_floor_mb"] = [_rss_mb() - r0]
    out["undo_steps"] = [float(window.undo.count())]
    window.hide()  # not close(): the case panel would ask whether to save the edited patient
    floor.win.hide()
    return out


# ------------------------------------------------------------------------------------------ core
def settings_map_runs(n: int = 60) -> tuple[float, float]:
    """Median milliseconds of the 200 × 200 map, and of the numpy floor (the same grid, one equation)."""
    import numpy as np

    from ventset.demo import demo_request
    from ventset.library import load_library
    from ventset.planner import plan
    from ventset.plotdata import settings_map

    lib = load_library()
    p = plan(demo_request(lib), lib)
    out, floor = [], []
    for _ in range(n):
        t0 = time.perf_counter()
        settings_map(p, 200, 200, lib)
        out.append((time.perf_counter() - t0) * 1000)
        t0 = time.perf_counter()
        vt, f = np.meshgrid(np.linspace(1, 400, 200), np.linspace(4, 40, 200))
        va = f * (vt * 0.95 - 30.0)
        np.where(va > 0, 200.0 * 0.863 / np.maximum(va, 1e-9) * 1000, np.inf)
        floor.append((time.perf_counter() - t0) * 1000)
    return statistics.median(out), statistics.median(floor)


def sweep_vs_plan(n: int = 10_000, repeats: int = 15) -> dict:
    """The sweep over body mass against plan() in a loop, at the same n masses (dog, 2-40 kg)."""
    import numpy as np

    from ventset.library import load_library
    from ventset.model import Patient, Request
    from ventset.planner import plan
    from ventset.sweep import sweep_mass, with_mass

    lib = load_library()
    request = Request(Patient("dog", 20.0))
    masses = np.linspace(2.0, 40.0, n)
    sweep_mass(request, masses, lib)  # warm
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        sw = sweep_mass(request, masses, lib)
        times.append((time.perf_counter() - t0) * 1000)
    worst = 0.0
    t0 = time.perf_counter()
    for i, m in enumerate(masses):
        v = plan(with_mass(request, m), lib).ventilation
        for got, want in ((sw.tidal_volume_ml[i], v.tidal_volume_ml), (sw.rate_per_min[i], v.rate_per_min),
                          (sw.expected_paco2_mmhg[i], v.expected_paco2_mmhg)):
            worst = max(worst, abs(float(got) - want) / abs(want))
    loop_s = time.perf_counter() - t0
    sweep_ms = statistics.median(times)
    return {"sweep_10k_ms": round(sweep_ms, 3), "sweep_10k_ms_min": round(min(times), 3),
            "plan_loop_10k_s": round(loop_s, 3),
            "sweep_speedup": round(loop_s * 1000 / sweep_ms), "sweep_max_rel_diff": float(f"{worst:.2g}")}


def _pct(xs: list[float], q: float) -> float:
    s = sorted(xs)
    return s[min(len(s) - 1, int(round(q * (len(s) - 1))))]


def _ratio(a: float, b: float) -> float:
    return round(a / b, 2) if b > 0 else float("nan")


def edit_figures(ns: argparse.Namespace) -> dict:
    e = edit_runs(ns.edits, ns.with_panels, ns.rss_edits)
    r: dict = {}
    for name, key in (("edit_to_numbers_ms", "numbers"), ("edit_to_views_ms", "views"),
                      ("edit_to_numbers_cpu_ms", "numbers_cpu"), ("edit_to_views_cpu_ms", "views_cpu")):
        xs, fl = e[key], e["floor_" + key]
        for q, tag in ((0.5, "p50"), (0.95, "p95")):
            r[f"{name}_{tag}"] = round(_pct(xs, q), 2)
            r[f"{name}_{tag}_floor"] = round(_pct(fl, q), 2)
            r[f"{name}_{tag}_ratio"] = _ratio(_pct(xs, q), _pct(fl, q))
        r[f"{name}_max"] = round(max(xs), 2)
    r["edits"] = len(e["views"])
    r["with_panels"] = ns.with_panels
    if "rss_growth_mb" in e:
        r[f"rss_growth_mb_{ns.rss_edits}_edits"] = round(e["rss_growth_mb"][0], 2)
        r[f"rss_growth_mb_{ns.rss_edits}_edits_floor"] = round(e["rss_growth_floor_mb"][0], 2)
    r["undo_steps_kept"] = int(e["undo_steps"][0])
    return r


def process_figures(ns: argparse.Namespace, env: dict, tmp: str) -> dict:
    py = sys.executable
    # `python -m ventset` from the project folder: the checkout measured, not whichever one is installed.
    ventset_cmd = [py, "-m", "ventset"]
    floor_py = os.path.join(tmp, "floor.py")
    Path(floor_py).write_text(FLOOR_SCRIPT, encoding="utf-8")
    n = ns.runs
    r: dict = {}
    cold = _pairs(([py, "-m", "ventset"], dict(env, VENTSET_GUI_SMOKE="1"), "ready"), ([py, floor_py], env, "ready"), n)
    r.update(cold_start_s=round(cold["a"], 3), cold_start_s_floor=round(cold["b"], 3),
             cold_start_s_ratio=round(cold["ratio"], 2))
    plan = [*ventset_cmd, "plan", "--species", "dog"]
    cli = _pairs(([*plan, "--mass", "20 kg"], env, None), ([py, "-c", "pass"], env, None), n)
    r.update(cli_plan_s=round(cli["a"], 3), cli_plan_s_floor=round(cli["b"], 3),
             cli_plan_s_ratio=round(cli["ratio"], 2))
    # 44 lb = 19.958 kg; 5.3 kPa = 39.753 mmHg (ventset.units constants): the same plan in the internal units.
    units = _pairs(([*plan, "--mass", "44 lb", "--target-paco2", "5.3 kPa"], env, None),
                   ([*plan, "--mass", "19.958", "--target-paco2", "39.753"], env, None), n)
    r.update(cli_units_s=round(units["a"], 3), cli_units_s_floor=round(units["b"], 3),
             cli_units_s_ratio=round(units["ratio"], 2))
    lib = _pairs(([py, "-c", "import PySide6.QtWidgets, numpy, pyqtgraph"], env, None),
                 ([py, "-c", "pass"], env, None), n)
    r.update(library_import_s=round(lib["a"], 3), python_start_s=round(lib["b"], 3))
    return r


def main() -> int:
    ap = argparse.ArgumentParser(description=(__doc__ or "").splitlines()[0])
    ap.add_argument("--json", action="store_true", help="print one JSON object")
    ap.add_argument("--edits", type=int, default=200, help="timed edits (after 10 warm-up edits)")
    ap.add_argument("--rss-edits", type=int, default=2000, help="edits between the two memory readings (0: skip)")
    ap.add_argument("--runs", type=int, default=7, help="pairs of whole processes per figure")
    ap.add_argument("--only", choices=("edits", "processes", "map"), help="measure one group only")
    ap.add_argument("--with-panels", action="store_true",
                    help="also install the add-on panels (case files, anaesthetic record) before timing edits")
    ns = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        env = _env(tmp)
        os.environ.update({k: env[k] for k in ("VENTSET_SETTINGS_DIR", "VENTSET_DATA_DIR", "VENTSET_CACHE_DIR",
                                               "QT_QPA_PLATFORM", "QT_LOGGING_RULES", "PYQTGRAPH_QT_LIB")})
        result: dict = {}
        if ns.only in (None, "edits"):
            result.update(edit_figures(ns))
        if ns.only in (None, "map"):
            m, f = settings_map_runs()
            result.update(settings_map_ms=round(m, 3), settings_map_ms_floor=round(f, 3),
                          settings_map_ms_ratio=_ratio(m, f))
            result.update(sweep_vs_plan())
        if ns.only in (None, "processes"):
            result.update(process_figures(ns, env, tmp))
        result["cpus"] = os.cpu_count()
    if ns.json:
        print(json.dumps(result))
    else:
        for k, v in result.items():
            print(f"{k:36} {v}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
