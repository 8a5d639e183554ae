"""Package discovery for the one import name ``haarline``.

The repository keeps two top-level folders, ``analysis/`` (the numerical core) and
``service/`` (the REST service and the CLI); they install as ``haarline`` and
``haarline.service``. Every folder with an ``__init__.py`` below them is found here, so a
new subpackage cannot be left out of the wheel (``tests/test_install.py`` checks the
wheel's file list against the source tree). Everything else is in ``pyproject.toml``.
"""

from setuptools import find_packages, setup

ROOTS = {"haarline": "analysis", "haarline.service": "service"}


def _discover() -> list[str]:
    found: list[str] = []
    for name, folder in ROOTS.items():
        found.append(name)
        found.extend(f"{name}.{sub}" for sub in find_packages(folder))
    return found


setup(packages=_discover(), package_dir=ROOTS)
