"""ventset.gui.binding: PySide6's per-import source check answered from the file's bytes gives the answers
PySide6's own check (inspect.getsource, the outside reference) gives."""

import json
import sys

import numpy
import pyqtgraph
import pyqtgraph.graphicsItems.PlotCurveItem

import ventset.gui.binding as binding
import ventset.gui.plots
import ventset.planner


def _own_check():
    feature = sys.modules["shibokensupport.feature"]
    check = feature._mod_uses_pyside
    assert getattr(check, "quick", False), "ventset.gui made PySide6's check quick when it was imported"
    return next(c.cell_contents for c in check.__closure__ if callable(c.cell_contents))


def test_the_quick_check_is_installed_in_the_pinned_pyside6():
    assert binding.quicken_source_check() is True  # a second call keeps the one installed
    _own_check()


def test_the_quick_check_agrees_with_pyside6s_own():
    own = _own_check()
    compiled = sys.modules["numpy._core._multiarray_umath"]  # an extension module: PySide6's own check answers
    modules = [ventset.gui.plots, ventset.planner, pyqtgraph, pyqtgraph.graphicsItems.PlotCurveItem, numpy, json,
               sys, compiled]
    answers = {m.__name__: binding.source_mentions(m, own) for m in modules}
    assert answers == {m.__name__: own(m) for m in modules}
    assert answers["ventset.gui.plots"] is True  # it imports PySide6
    assert answers["ventset.planner"] is False   # the pure core never does
    assert answers["sys"] is False               # built in: PySide6's own check answers


def test_a_file_that_cannot_be_read_is_left_to_pyside6s_check(tmp_path):
    class Gone:
        __file__ = str(tmp_path / "gone.py")

    asked = []
    assert binding.source_mentions(Gone(), lambda m: asked.append(m) or True) is True
    assert len(asked) == 1
