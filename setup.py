"""Copy resources/ into the package at build time so a normal (non-editable) install finds the data."""

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


setup(cmdclass={"build_py": BuildWithResources})
