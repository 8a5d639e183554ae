"""The import graph is the architecture: lower layers never import higher ones.

Reads every module of the package with :mod:`ast` (imports inside functions and under
``TYPE_CHECKING`` count too: they are dependencies all the same) and checks

- the layers of the numerical core, lowest first: foundation (``errors``, ``_version``) →
  ``circuit`` → ``engine`` → ``metrics`` → ``lie`` → ``report`` → ``plots`` → the package's
  public face (``haarline/__init__.py``);
- the core never imports ``haarline.service``;
- the layers of the service, lowest first: ``errors`` and ``settings`` → ``jobs`` → ``api``
  → ``cli``;
- no import cycles between modules;
- the packages the tests use as independent references (the OpenQASM reference SDK of
  ``tests/reference_sdk.py``, QuTiP, scikit-learn) are never imported by the package.

The same rule as import-linter's layers contract, in an AST walk of our own.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest
from conftest import bench_module
from reference_sdk import PACKAGES

ROOT = Path(__file__).parents[1]
FOLDERS = {"haarline": ROOT / "analysis", "haarline.service": ROOT / "service"}

CORE_LAYERS = [
    ["haarline.errors", "haarline._version"],
    ["haarline.circuit"],
    ["haarline.engine"],
    ["haarline.metrics"],
    ["haarline.lie"],
    ["haarline.report"],
    ["haarline.plots"],
    ["haarline.client"],  # the REST client: standard library only, beside the core
]
SERVICE_LAYERS = [
    ["haarline.service.errors", "haarline.service.settings", "haarline.service.webhooks"],
    ["haarline.service.jobs"],
    ["haarline.service.api"],
    ["haarline.service.cli"],
]


def _modules() -> dict[str, Path]:
    found: dict[str, Path] = {}
    for package, folder in FOLDERS.items():
        for path in folder.rglob("*.py"):
            parts = list(path.relative_to(folder).with_suffix("").parts)
            if parts[-1] == "__init__":
                parts = parts[:-1]
            found[".".join([package, *parts])] = path
    return found


MODULES = _modules()


def _is_package(name: str) -> bool:
    return MODULES[name].name == "__init__.py"


def _imports(name: str) -> set[str]:
    """Every project module that ``name`` imports, resolved to module names."""
    tree = ast.parse(MODULES[name].read_text(), filename=str(MODULES[name]))
    package = name if _is_package(name) else name.rpartition(".")[0]
    out: set[str] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            targets = [alias.name for alias in node.names]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")
                base = base[: len(base) - node.level + 1]
                origin = ".".join(base + ([node.module] if node.module else []))
            else:
                origin = node.module or ""
            targets = [origin]
            # `from pkg import submodule` depends on the submodule itself
            targets += [f"{origin}.{a.name}" for a in node.names if f"{origin}.{a.name}" in MODULES]
        else:
            continue
        for target in targets:
            while target and target not in MODULES:
                target = target.rpartition(".")[0]
            if target and target != name:
                out.add(target)
    return out


GRAPH = {name: _imports(name) for name in MODULES}


def _layer(name: str, layers: list[list[str]]) -> int | None:
    for index, members in enumerate(layers):
        if any(name == m or name.startswith(m + ".") for m in members):
            return index
    return None


def _violations(layers: list[list[str]]) -> list[str]:
    out = []
    for name, deps in GRAPH.items():
        mine = _layer(name, layers)
        if mine is None:
            continue
        for dep in deps:
            theirs = _layer(dep, layers)
            if theirs is not None and theirs > mine:
                out.append(f"{name} imports {dep} (a higher layer)")
    return sorted(out)


def test_every_module_has_a_layer():
    facades = {"haarline", "haarline.service"}
    loose = [
        name
        for name in MODULES
        if name not in facades
        and _layer(name, CORE_LAYERS) is None
        and _layer(name, SERVICE_LAYERS) is None
    ]
    assert loose == []


def test_core_layers():
    assert _violations(CORE_LAYERS) == []


def test_service_layers():
    assert _violations(SERVICE_LAYERS) == []


def test_the_core_never_imports_the_service():
    bad = [
        f"{name} imports {dep}"
        for name, deps in GRAPH.items()
        if not name.startswith("haarline.service")
        for dep in deps
        if dep.startswith("haarline.service")
    ]
    assert bad == []


def test_the_core_modules_never_import_the_public_face():
    # `haarline/__init__.py` imports everything; a module that imports it back is a cycle
    bad = sorted(name for name, deps in GRAPH.items() if "haarline" in deps)
    assert [b for b in bad if not b.startswith("haarline.service")] == []


def test_no_import_cycles():
    # Tarjan's strongly connected components over the module graph
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    cycles: list[list[str]] = []
    counter = [0]

    def visit(v: str) -> None:
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on_stack.add(v)
        for w in GRAPH[v]:
            if _is_package(w) and v.startswith(w + "."):
                continue  # a module's own package __init__ is loaded first anyway
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on_stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            component = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                component.append(w)
                if w == v:
                    break
            if len(component) > 1:
                cycles.append(sorted(component))

    for name in sorted(GRAPH):
        if name not in index:
            visit(name)
    assert cycles == []


@pytest.mark.parametrize("folder", ["analysis", "service", "tests", "bench"])
def test_the_source_folder_names_are_never_imported(folder: str):
    # one copy of every module: only the installed name `haarline` is ever imported
    bad = []
    for path in (ROOT / folder).rglob("*.py"):
        for node in ast.walk(ast.parse(path.read_text())):
            if isinstance(node, ast.Import):
                roots = [a.name.split(".")[0] for a in node.names]
            elif isinstance(node, ast.ImportFrom) and not node.level and node.module:
                roots = [node.module.split(".")[0]]
            else:
                continue
            if {"analysis", "service"} & set(roots):
                bad.append(f"{path.relative_to(ROOT)}:{node.lineno}")
    assert bad == []


# packages of the `test` extra that serve only as independent references in tests
COMPILED = bench_module("compiled_peer").PACKAGE
TEST_ONLY = {*PACKAGES, "qutip", "sklearn", COMPILED}  # COMPILED: the bench baseline


def test_reference_packages_of_the_tests_are_never_imported_by_the_package():
    bad = []
    for name, path in MODULES.items():
        for node in ast.walk(ast.parse(path.read_text())):
            if isinstance(node, ast.Import):
                roots = [a.name.split(".")[0] for a in node.names]
            elif isinstance(node, ast.ImportFrom) and not node.level and node.module:
                roots = [node.module.split(".")[0]]
            else:
                continue
            if TEST_ONLY & set(roots):
                bad.append(f"{name}:{node.lineno}")
    assert bad == []
