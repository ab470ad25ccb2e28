"""The core stays free of Qt, and an ordinary (non-editable) install finds its data."""

import json
import os
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def test_core_never_imports_qt():
    code = ("import sys, ventset, ventset.cli, ventset.planner, ventset.report, ventset.cautions; "
            "from ventset.cli import main; main(['plan','--species','dog','--mass','20 kg','--json']); "
            "bad=[m for m in sys.modules if m.split('.')[0] in ('PySide6','pyqtgraph','PyQt5','PyQt6','shiboken6')];"
            "print('QT', bad, file=sys.stderr)")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT)
    assert r.returncode == 0, r.stderr
    assert "QT []" in r.stderr


def test_no_core_module_imports_qt_statically():
    for path in (ROOT / "ventset").rglob("*.py"):
        if "gui" in path.relative_to(ROOT / "ventset").parts:
            continue
        for line in path.read_text(encoding="utf-8").splitlines():
            s = line.strip()
            if s.startswith(("import ", "from ")) and any(q in s for q in ("PySide6", "pyqtgraph", "PyQt")):
                raise AssertionError(f"{path}: {s}")


def test_non_editable_install_finds_data(tmp_path):
    target = tmp_path / "site"
    r = subprocess.run([sys.executable, "-m", "pip", "install", "--no-deps", "--no-build-isolation", "-q",
                        "--target", str(target), str(ROOT)], capture_output=True, text=True)
    assert r.returncode == 0, r.stderr
    env = {**os.environ, "PYTHONPATH": str(target)}
    code = ("import json, ventset, ventset.resources as r; from ventset.library import load_library; "
            "from ventset.desktop import icon_path; "
            "lib = load_library(); print(json.dumps([ventset.__file__, str(r.resource_path('species.toml')), "
            "len(lib.species), str(r.docs_dir()), str(icon_path())]))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env, cwd=tmp_path)
    assert out.returncode == 0, out.stderr
    module_file, data_file, n, docs, icon = json.loads(out.stdout)
    assert module_file.startswith(str(target)) and data_file.startswith(str(target))
    assert n >= 25
    # Help ▸ User guide and the desktop icon work from an installed copy too (no checkout beside it)
    assert docs.startswith(str(target)) and (Path(docs) / "user-guide.md").is_file()
    assert all((Path(docs) / "images" / p.name).is_file() for p in (ROOT / "docs" / "images").glob("*.png"))
    assert icon.startswith(str(target)) and Path(icon).read_text().lstrip().startswith("<?xml")
