"""Golden reports: restructuring the code must not change a single number.

A regression pin, not a correctness check: the files under ``tests/golden/`` were written
by this module from the code as it stood, and every later version must reproduce them.
They hold the JSON report (without ``timings`` and the version string) of every bundled
reference with the default metrics at seed 1, and of the demo description with every
metric at small sample sizes.

Numbers are compared to 1e-12 relative, not bit for bit, so that a numpy or BLAS update
that changes the last bit of a sum does not fail the suite; any change of the code that
moves a number by more than rounding does.

To rewrite the files after a deliberate change of the numbers (say why in the commit)::

    HAARLINE_WRITE_GOLDEN=1 .venv/bin/python -m pytest -q tests/test_golden.py
"""

from __future__ import annotations

import json
import math
import os
from pathlib import Path
from typing import Any

import haarline
import pytest

GOLDEN = Path(__file__).parent / "golden"
DEMO = Path(__file__).parents[1] / "examples" / "ring-classifier.json"
WRITE = os.environ.get("HAARLINE_WRITE_GOLDEN") == "1"

DEMO_OPTIONS = {
    "metrics": ["expressibility", "entanglement", "trainability", "capacity", "lie"],
    "pairs": 400,
    "bins": 20,
    "samples": 100,
    "grad_samples": 20,
    "scan": [2, 3, 4],
    "depth_scan": [1, 2],
    "layers_sweep": [1, 2],
    "capacity_points": 2,
    "seed": 1,
}


def _strip(report: dict[str, Any]) -> dict[str, Any]:
    out = dict(report)
    out.pop("timings")
    out.pop("haarline_version")
    return json.loads(json.dumps(out))


def _compare(got: Any, want: Any, path: str = "report") -> None:
    if isinstance(want, dict):
        assert isinstance(got, dict), path
        assert sorted(got) == sorted(want), f"{path}: keys differ"
        for key in want:
            _compare(got[key], want[key], f"{path}.{key}")
    elif isinstance(want, list):
        assert isinstance(got, list) and len(got) == len(want), f"{path}: lengths differ"
        for i, (g, w) in enumerate(zip(got, want, strict=True)):
            _compare(g, w, f"{path}[{i}]")
    elif isinstance(want, float) and not isinstance(want, bool):
        assert isinstance(got, int | float), path
        assert math.isclose(got, want, rel_tol=1e-12, abs_tol=1e-300), f"{path}: {got} != {want}"
    else:
        assert got == want, f"{path}: {got!r} != {want!r}"


def _check(name: str, report: dict[str, Any]) -> None:
    path = GOLDEN / f"{name}.json"
    got = _strip(report)
    if WRITE:
        GOLDEN.mkdir(exist_ok=True)
        path.write_text(json.dumps(got, indent=1, sort_keys=True) + "\n")
    want = json.loads(path.read_text())
    _compare(got, want)


@pytest.mark.parametrize("name", haarline.reference_names())
def test_every_reference_reproduces_its_golden_report(name: str) -> None:
    _check(f"ref-{name}", haarline.analyze(haarline.load_reference(name)))


@pytest.mark.slow
def test_the_demo_with_every_metric_reproduces_its_golden_report() -> None:
    circuit = haarline.load_circuit(DEMO)
    options = haarline.parse_options(DEMO_OPTIONS)
    _check("demo-all-metrics", haarline.analyze(circuit, options))


def test_every_reference_has_a_golden_file() -> None:
    expected = {f"ref-{n}.json" for n in haarline.reference_names()} | {"demo-all-metrics.json"}
    assert {p.name for p in GOLDEN.glob("*.json")} == expected
