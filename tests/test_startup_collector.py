"""Start-up runs without Python's cyclic garbage collector (it would walk the hundred thousand objects
start-up makes some 180 times, none of them garbage) and turns it on again once the window is up, or when the
command is not the window, whatever happens (the gc module's own switches, checked as Python reports them)."""

from __future__ import annotations

import gc
import sys

import pytest

from ventset import cli
from ventset.errors import InputError


def test_the_window_starts_without_the_collector_and_it_is_on_again_after(monkeypatch):
    seen = []

    def window(_ns):
        seen.append(gc.isenabled())
        raise InputError("mass", "x", "is not a number")

    monkeypatch.setattr(cli, "_cmd_gui", window)
    assert gc.isenabled()
    assert cli.main([]) == 2  # the refusal is said, not raised
    assert seen == [False] and gc.isenabled()


def test_a_command_other_than_the_window_runs_with_the_collector(capsys):
    gc.disable()  # as `python -m ventset` starts
    try:
        assert cli.main(["plan", "--species", "dog", "--mass", "20"]) == 0
        assert gc.isenabled()
    finally:
        gc.enable()
    assert "tidal volume" in capsys.readouterr().out.lower()


def test_after_the_first_frame_start_up_objects_leave_the_collections():
    pytest.importorskip("PySide6")
    from ventset.gui.app import after_first_frame

    gc.disable()
    try:
        after_first_frame()
        assert gc.isenabled() and gc.get_freeze_count() > 0
    finally:
        gc.unfreeze()
        gc.enable()



def _window_threads(tmp_path, given: str | None) -> tuple[str, int]:
    import os
    import subprocess
    import sys

    env = {k: v for k, v in os.environ.items() if k != "OPENBLAS_NUM_THREADS"}
    env.update(QT_QPA_PLATFORM="offscreen", VENTSET_GUI_SMOKE="1", VENTSET_SETTINGS_DIR=str(tmp_path))
    if given is not None:
        env["OPENBLAS_NUM_THREADS"] = given
    code = ("import os, sys\nfrom ventset.gui import app\nassert 'numpy' not in sys.modules\napp.run()\n"
            "print(os.environ['OPENBLAS_NUM_THREADS'], len(os.listdir('/proc/self/task')))")
    out = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True, timeout=120)
    value, threads = out.stdout.splitlines()[-1].split()
    return value, int(threads)


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="counts the process's threads in /proc")
def test_the_window_process_keeps_numpys_thread_pool_to_one_thread_unless_the_user_chose(tmp_path):
    """OpenBLAS (numpy's linear algebra) reads OPENBLAS_NUM_THREADS when numpy is first imported (OpenBLAS's
    documented variable) and starts that many threads; the process's threads are counted as Linux lists them."""
    pytest.importorskip("PySide6")
    default = _window_threads(tmp_path, None)
    assert default == _window_threads(tmp_path, "1")
    assert default[0] == "1"
    chosen = _window_threads(tmp_path, "3")
    assert chosen[0] == "3" and chosen[1] > default[1]  # the user's number is kept, and obeyed
