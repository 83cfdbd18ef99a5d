"""Build step: copy the top-level ``data/`` and ``examples/`` folders into the wheel.

They stay at the top of the repository (the demo link files refer to
``../data/demo/terrain.tif``) and ship inside the package as
``profiler/_demo/data`` and ``profiler/_demo/examples``, where
``profiler.demo_files`` finds them.  Everything else is in pyproject.toml.
"""

from pathlib import Path
import shutil

from setuptools import setup
from setuptools.command.build_py import build_py

HERE = Path(__file__).resolve().parent
DEMO_FOLDERS = ("data", "examples")
SKIP = shutil.ignore_patterns("__pycache__", "*.pyc")


class build_py_with_demo(build_py):
    """build_py that also copies the demo folders into ``profiler/_demo``."""

    def run(self):
        super().run()
        if getattr(self, "editable_mode", False):
            return  # an editable install reads them from the repository itself
        target = Path(self.build_lib) / "profiler" / "_demo"
        for folder in DEMO_FOLDERS:
            source = HERE / folder
            if not source.is_dir():
                raise SystemExit(f"setup.py: {source} is missing; build from a full clone or sdist")
            shutil.copytree(source, target / folder, ignore=SKIP, dirs_exist_ok=True)


setup(cmdclass={"build_py": build_py_with_demo})
