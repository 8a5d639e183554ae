"""Start-up: each command imports only what it needs (issue 15).

``haarline --version`` must not import scipy, matplotlib or the web stack, and a small
``analyze`` of one metric none of those nor the Lie algebra, the plots or the OpenQASM
parser. Each runs in a fresh interpreter with ``-X importtime``, whose report on stderr
names every module imported (the Python documentation, "-X importtime"). Times are not
checked here (benchmarks are not tests): ``bench/run.py`` measures them.
"""

from __future__ import annotations

import ast
import re
import subprocess
import sys
from pathlib import Path

import haarline
import pytest

ROOT = Path(__file__).parents[1]
HEAVY = ("scipy", "matplotlib", "fastapi", "starlette", "uvicorn")


def _imported(*args: str) -> set[str]:
    """Every module a fresh ``python -X importtime -m haarline.service.cli.main ARGS`` imports."""
    done = subprocess.run(
        [sys.executable, "-X", "importtime", "-m", "haarline.service.cli.main", *args],
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert done.returncode == 0, done.stderr[-2000:]
    names = re.findall(r"^import time:\s+\d+ \|\s+\d+ \|\s*(\S+)\s*$", done.stderr, re.M)
    assert names, "no import report on stderr"
    return set(names)


def _roots(modules: set[str], prefixes: tuple[str, ...]) -> list[str]:
    return sorted(m for m in modules if m.split(".")[0] in prefixes)


def test_version_imports_neither_scipy_nor_matplotlib_nor_fastapi():
    modules = _imported("--version")
    assert _roots(modules, HEAVY) == []
    assert "numpy" not in modules and "pydantic" not in modules  # nor the core


def test_a_small_analysis_imports_only_its_metric():
    modules = _imported("analyze", "ref:ry-cz-ring", "--metrics", "expressibility", "--pairs", "20")
    assert _roots(modules, (*HEAVY, "openqasm3", "yaml")) == []
    skipped = sorted(
        m
        for m in modules
        if m.startswith(("haarline.lie.", "haarline.plots.", "haarline.service.api"))
    )
    assert skipped == []


def test_lazy_names_of_the_public_face_match_its_type_checking_imports():
    # type checkers read the imports under TYPE_CHECKING; __getattr__ reads _LAZY
    tree = ast.parse((ROOT / "analysis" / "__init__.py").read_text())
    guarded = next(
        node
        for node in tree.body
        if isinstance(node, ast.If) and getattr(node.test, "id", None) == "TYPE_CHECKING"
    )
    declared = {
        alias.name: node.module
        for node in guarded.body
        if isinstance(node, ast.ImportFrom)
        for alias in node.names
    }
    lazy = {name: module for module, names in haarline._LAZY.items() for name in names}
    assert lazy == declared
    eager = {"__version__", "CircuitError", "DataError", "HaarlineError", "InputError"}
    eager |= {"LimitError", "OptionError", "Problem", "ClusterError"}
    assert set(haarline.__all__) == set(lazy) | eager


def test_lazy_names_resolve_once_and_unknown_names_fail():
    assert haarline.expand is haarline.expand  # kept in the module after the first use
    assert "expand" in vars(haarline) and "expand" in dir(haarline)
    with pytest.raises(AttributeError, match="no attribute 'not_a_name'"):
        _ = haarline.not_a_name
    from haarline import fidelities  # the from-import form goes through __getattr__ too

    assert callable(fidelities)
