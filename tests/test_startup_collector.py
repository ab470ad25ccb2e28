"""Start-up runs without Python's cyclic garbage collector (it would walk the hundred thousand objects
start-up makes some 180 times, none of them garbage) and turns it on again once the window is up, or when the
command is not the window, whatever happens (the gc module's own switches, checked as Python reports them)."""

from __future__ import annotations

import gc

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
