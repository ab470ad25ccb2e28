"""Speed of the window and the command line (not a test; numbers go in docs/performance.md).

    python benchmarks/run.py          # readable summary
    python benchmarks/run.py --json   # one JSON object

Measures, offscreen:
  edit_to_views_ms_p50/p95  one typed key in a field → replan → every read-out and plot updated and painted
                            (200 edits at 1400 × 900)
  settings_map_ms           computing a 200 × 200 tidal volume × rate map (median)
  sweep_10k_ms(_min)        the sweep over body mass (ventset.sweep) at 10,000 masses, dog 2-40 kg (median, fastest)
  plan_loop_10k_s           plan() called once per mass at the same 10,000 masses
  sweep_speedup             plan_loop_10k_s / sweep_10k_ms (how many times faster the sweep is)
  sweep_max_rel_diff        largest relative difference of tidal volume, rate and PaCO2 between the two
  cold_start_s              process start → window with the demo patient drawn (median of 5)
  cli_plan_s                one `ventset plan` process (median of 5)
  library_import_s          baseline: a process that only imports PySide6.QtWidgets, pyqtgraph and numpy
  python_start_s            baseline: an empty Python process
"""

from __future__ import annotations

import argparse
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


def _env(tmp: str) -> dict:
    env = dict(os.environ)
    env.update(QT_QPA_PLATFORM="offscreen", VENTSET_SETTINGS_DIR=os.path.join(tmp, "settings"),
               VENTSET_DATA_DIR=os.path.join(tmp, "data"), QT_LOGGING_RULES="qt.qpa.*=false")
    return env


def _wall(cmd: list[str], env: dict, until: str | None = None) -> float:
    """Seconds from process start to exit, or to the first stdout line starting with ``until``."""
    t0 = time.perf_counter()
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.DEVNULL, text=True, env=env)
    if until:
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


def _median_runs(cmd: list[str], env: dict, n: int = 5, until: str | None = None) -> float:
    _wall(cmd, env, until)  # warm the byte-code caches once
    return statistics.median(_wall(cmd, env, until) for _ in range(n))


def edit_to_views(n: int = 200, panels: bool = False) -> list[float]:
    """Milliseconds per typed edit, from the key press to the last view painted."""
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    from PySide6.QtCore import Qt
    from PySide6.QtTest import QTest
    from PySide6.QtWidgets import QApplication

    import ventset.gui  # noqa: F401
    from ventset.gui.settings import open_settings
    from ventset.gui.window import MainWindow

    app = QApplication.instance() or QApplication([])
    window = MainWindow(open_settings())
    if panels:
        from ventset.gui.window import install_extensions

        install_extensions(window)
    window.resize(1400, 900)
    window.show()
    for _ in range(5):
        app.processEvents()
    ready = []
    window.controller.plan_ready.connect(lambda p: ready.append(p))
    window.controller.plan_invalid.connect(lambda e: ready.append(e))
    times = []
    fields = ["mass", "peep", "mass", "gradient"]  # each edit below gives a valid, different plan
    for i in range(n + 10):
        key = fields[i % len(fields)]
        edit = window.form.rows[key].edit
        edit.setFocus()
        edit.end(False)
        before = len(ready)
        grow = (i // len(fields)) % 2 == 0
        t0 = time.perf_counter()
        if grow:
            QTest.keyClick(edit, Qt.Key.Key_5)
        else:
            QTest.keyClick(edit, Qt.Key.Key_Backspace)
        deadline = time.perf_counter() + 5
        while len(ready) == before and time.perf_counter() < deadline:
            app.processEvents()
        if len(ready) == before:
            raise RuntimeError(f"edit {i} in {key} produced no plan")
        app.processEvents()  # the repaint requests the new data posted
        dt = (time.perf_counter() - t0) * 1000
        if i >= 10:  # the first few warm caches
            times.append(dt)
    window.hide()  # not close(): the case panel would ask whether to save the edited patient
    return times


def settings_map_ms(n: int = 60) -> float:
    from ventset.demo import demo_request
    from ventset.library import load_library
    from ventset.planner import plan
    from ventset.plotdata import settings_map

    lib = load_library()
    p = plan(demo_request(lib), lib)
    out = []
    for _ in range(n):
        t0 = time.perf_counter()
        settings_map(p, 200, 200, lib)
        out.append((time.perf_counter() - t0) * 1000)
    return statistics.median(out)


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


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--json", action="store_true", help="print one JSON object")
    ap.add_argument("--edits", type=int, default=200)
    ap.add_argument("--with-panels", action="store_true",
                    help="also install the add-on panels (case files, anaesthetic record) before timing edits")
    ns = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        env = _env(tmp)
        os.environ.update(VENTSET_SETTINGS_DIR=env["VENTSET_SETTINGS_DIR"], VENTSET_DATA_DIR=env["VENTSET_DATA_DIR"],
                          QT_QPA_PLATFORM="offscreen", QT_LOGGING_RULES="qt.qpa.*=false")
        py = sys.executable
        ventset_cmd = [str(Path(py).with_name("ventset"))] if Path(py).with_name("ventset").exists() else \
            [py, "-m", "ventset"]
        result = {}
        edits = edit_to_views(ns.edits, ns.with_panels)
        result["edit_to_views_ms_p50"] = round(statistics.median(edits), 2)
        result["edit_to_views_ms_p95"] = round(_pct(edits, 0.95), 2)
        result["edit_to_views_ms_max"] = round(max(edits), 2)
        result["edits"] = len(edits)
        result["with_panels"] = ns.with_panels
        result["settings_map_ms"] = round(settings_map_ms(), 3)
        result.update(sweep_vs_plan())
        result["cold_start_s"] = round(_median_runs([py, "-m", "ventset"], dict(env, VENTSET_GUI_SMOKE="1"),
                                                    until="ready"), 3)
        result["cli_plan_s"] = round(_median_runs([*ventset_cmd, "plan", "--species", "dog", "--mass", "20 kg"],
                                                  env), 3)
        result["library_import_s"] = round(_median_runs(
            [py, "-c", "import PySide6.QtWidgets, numpy, pyqtgraph"], dict(env, PYQTGRAPH_QT_LIB="PySide6")), 3)
        result["python_start_s"] = round(_median_runs([py, "-c", "pass"], env), 3)
        result["cpus"] = os.cpu_count()
    if ns.json:
        print(json.dumps(result))
    else:
        for k, v in result.items():
            print(f"{k:24} {v}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
