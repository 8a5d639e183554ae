"""The examples in the docstrings run, against the installed package only.

pytest's ``--doctest-modules`` would import the source folders under their folder names
(``analysis.…``, ``service.…``), a second copy of every module beside ``haarline``; this
module runs the same examples through :mod:`doctest` on the ``haarline`` modules instead.
"""

from __future__ import annotations

import doctest
import importlib
import pkgutil

import haarline
import haarline.service
import pytest


def _modules() -> list[str]:
    names = ["haarline"]
    for root in (haarline, haarline.service):
        prefix = root.__name__ + "."
        names += [m.name for m in pkgutil.walk_packages(root.__path__, prefix)]
    return sorted(set(names))


MODULES = _modules()


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name: str) -> None:
    module = importlib.import_module(name)
    finder = doctest.DocTestFinder(exclude_empty=True)
    runner = doctest.DocTestRunner(optionflags=doctest.ELLIPSIS)
    tests = finder.find(module, name)
    failures: list[str] = []
    for test in tests:
        out: list[str] = []
        result = runner.run(test, out=out.append)
        if result.failed:
            failures.append("".join(out))
    assert not failures, "\n".join(failures)


def test_the_examples_are_found() -> None:
    # a guard against a finder that silently collects nothing (common practice)
    count = 0
    for name in MODULES:
        module = importlib.import_module(name)
        count += sum(len(t.examples) for t in doctest.DocTestFinder().find(module, name))
    assert count > 100
