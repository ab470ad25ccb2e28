"""Copy resources/ (and docs/, for Help ▸ User guide) into the package at build time so a normal
(non-editable) install finds them."""

import shutil
from pathlib import Path

from setuptools import setup
from setuptools.command.build_py import build_py


class BuildWithResources(build_py):
    def run(self):
        super().run()
        target = Path(self.build_lib) / "ventset" / "_resources"
        target.mkdir(parents=True, exist_ok=True)
        for f in Path(__file__).parent.joinpath("resources").glob("*.toml"):
            shutil.copy2(f, target / f.name)
        docs = Path(self.build_lib) / "ventset" / "_docs"
        (docs / "images").mkdir(parents=True, exist_ok=True)
        source = Path(__file__).parent / "docs"
        for f in source.glob("*.md"):
            shutil.copy2(f, docs / f.name)
        for f in source.joinpath("images").glob("*.png"):
            shutil.copy2(f, docs / "images" / f.name)


setup(cmdclass={"build_py": BuildWithResources})
