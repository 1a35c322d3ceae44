"""Packaging beyond pyproject.toml: ship the top-level sample folders with the package.

The example network (``examples/``) and the synthetic sample climates
(``climate_samples/``) live at the top of the repository, where people look for
them, and exist only there. The build installs them as ``trackplan/examples/``
and ``trackplan/climate_samples/`` (the same side-by-side layout, so the
network's ``../climate_samples/...`` paths still hold), and an editable install
maps the same two names onto the repository folders. Code reaches them through
``importlib.resources.files("trackplan.examples")`` and
``files("trackplan.climate_samples")``.

Every file under ``examples/`` (subfolders included) is shipped: a new example
file needs no change here. From ``climate_samples/`` the records (``*.csv.gz``)
and the README are shipped; scripts (``*.py``, the generators) are not.
"""

from setuptools import find_namespace_packages, setup
from setuptools.command.build_py import build_py

# installed package name -> folder in the repository
SHIPPED = {"trackplan.examples": "examples", "trackplan.climate_samples": "climate_samples"}


class BuildPy(build_py):
    """Copy the sample folders as data only: their generator scripts are not modules of trackplan."""

    def find_package_modules(self, package, package_dir):
        if package in SHIPPED or package.startswith(tuple(p + "." for p in SHIPPED)):
            return []
        return super().find_package_modules(package, package_dir)


setup(
    packages=find_namespace_packages(include=["trackplan", "trackplan.*"], exclude=["*__pycache__*"])
    + list(SHIPPED),
    package_dir=SHIPPED,
    package_data={
        "trackplan": ["data/*.csv", "data/*.toml"],
        "trackplan.examples": ["**/*"],
        "trackplan.climate_samples": ["*.csv.gz", "README.md"],
    },
    exclude_package_data={"trackplan.examples": ["**/__pycache__/*", "**/*.pyc"]},
    cmdclass={"build_py": BuildPy},
)
