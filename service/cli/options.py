"""The analysis options on the command line, shared by ``analyze`` and ``compare``.

:func:`add_analysis_flags` defines the flags and their value parsers (argparse reports a
bad value as a usage error); :func:`options_from_args` turns the parsed flags into
:class:`haarline.AnalysisOptions`, with problems named by flag (``--pairs``, ...).
"""

from __future__ import annotations

import argparse
import json
import math
import re
from typing import Any

import haarline
from haarline.circuit.model import MAX_LAYERS
from haarline.engine.cluster import check_address
from haarline.engine.context import MAX_WORKERS
from haarline.report.options import DEFAULT_METRICS, DEFAULT_SEED
from haarline.service.errors import UsageError

__all__ = [
    "UsageError",
    "add_analysis_flags",
    "options_from_args",
    "parse_cost",
    "parse_size",
]

_FLAG_NAMES = {
    "metrics": "--metrics",
    "pairs": "--pairs",
    "bins": "--bins",
    "samples": "--samples",
    "seed": "--seed",
    "layers_sweep": "--layers-sweep",
    "cost": "--cost",
    "scan": "--scan",
    "scan_layers": "--scan-layers",
    "depth_scan": "--depth-scan",
    "grad_samples": "--grad-samples",
    "capacity_points": "--capacity-points",
    "gradients": "--gradients",
    "precision": "--precision",
    "vary": "--vary",
    "inputs_uniform": "--inputs-uniform",
    "inputs_normal": "--inputs-normal",
    "kernel_pairs": "--kernel-pairs",
    "kernel_rows": "--kernel-rows",
    "spectrum_samples": "--spectrum-samples",
}

_TERM = re.compile(r"\s*([+-])?\s*(?:((?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*\*?\s*)?([IXYZ]+)\s*")


def parse_cost(text: str) -> str | list[list[Any]]:
    """Parse ``--cost``: a named cost, a Pauli sum such as ``0.5*ZZII - XIII``, or JSON.

    Examples
    --------
    >>> parse_cost("zz")
    'zz'
    >>> parse_cost("0.5*ZZI - XIX + 2e-1 YYY")
    [[0.5, 'ZZI'], [-1.0, 'XIX'], [0.2, 'YYY']]
    """
    text = text.strip()
    if text in haarline.NAMED_COSTS:
        return text
    if text.startswith("["):
        try:
            value = json.loads(text)
        except json.JSONDecodeError as exc:
            raise argparse.ArgumentTypeError(f"invalid JSON Pauli sum: {exc.msg}") from None
        if not isinstance(value, list):
            raise argparse.ArgumentTypeError("a JSON Pauli sum must be a list")
        return value
    terms: list[list[Any]] = []
    pos = 0
    while pos < len(text):
        m = _TERM.match(text, pos)
        if not m or (terms and not m.group(1)) or m.end() == pos:
            raise argparse.ArgumentTypeError(
                f"expected one of {', '.join(haarline.NAMED_COSTS)} or a Pauli sum such as "
                f"'0.5*ZZII - XIII' (one letter I/X/Y/Z per qubit), got {text!r}"
            )
        sign = -1.0 if m.group(1) == "-" else 1.0
        coef = float(m.group(2)) if m.group(2) else 1.0
        terms.append([sign * coef, m.group(3)])
        pos = m.end()
    return terms


def _scan_layers(text: str) -> int | str:
    if text == "n":
        return "n"
    try:
        return int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"expected 'n' (layers = qubit count) or a layer count, got {text!r}"
        ) from None


def parse_size(text: str) -> int:
    """Parse a byte count such as ``1GiB``, ``512MiB``, ``2G`` or ``1000000``.

    Examples
    --------
    >>> parse_size("1GiB"), parse_size("512M"), parse_size("4096")
    (1073741824, 536870912, 4096)
    """
    m = re.fullmatch(r"\s*(\d+(?:\.\d+)?)\s*([KMGT]?)(i?B?)\s*", text, flags=re.IGNORECASE)
    if not m:
        raise argparse.ArgumentTypeError(
            f"expected a size such as 1GiB, 512MiB or a byte count, got {text!r}"
        )
    scale = {"": 1, "K": 2**10, "M": 2**20, "G": 2**30, "T": 2**40}[m.group(2).upper()]
    value = int(float(m.group(1)) * scale)
    if value < 1:
        raise argparse.ArgumentTypeError(f"expected a positive size, got {text!r}")
    return value


def _int_list(text: str) -> list[int]:
    try:
        values = [int(part) for part in text.split(",") if part.strip()]
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"expected comma-separated integers such as 1,2,3, got {text!r}"
        ) from None
    if not values:
        raise argparse.ArgumentTypeError("expected at least one integer")
    return values


def _float_pair(text: str) -> list[float]:
    parts = [t.strip() for t in text.split(",")]
    try:
        values = [float(eval_pi(t)) for t in parts]
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected two numbers a,b, got {text!r}") from None
    if len(values) != 2:
        raise argparse.ArgumentTypeError(f"expected two numbers a,b, got {text!r}")
    return values


def eval_pi(text: str) -> float:
    """A number, or a multiple of pi written ``2pi``, ``pi``, ``0.5pi``.

    Examples
    --------
    >>> eval_pi("2pi") == 2 * math.pi, eval_pi("-1.5")
    (True, -1.5)
    """
    t = text.strip().lower()
    if t.endswith("pi"):
        head = t[:-2].rstrip("*").strip()
        return (float(head) if head not in ("", "+", "-") else float(f"{head}1")) * math.pi
    return float(t)


def _worker_count(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a positive integer, got {text!r}") from None
    if not 1 <= value <= MAX_WORKERS:
        raise argparse.ArgumentTypeError(f"expected 1..{MAX_WORKERS}, got {value}")
    return value


def _scheduler_address(text: str) -> str:
    try:
        return check_address(text.strip(), "--dask")
    except haarline.OptionError as exc:
        raise argparse.ArgumentTypeError(exc.problems[0].message) from None


def _metric_list(text: str) -> list[str]:
    names = [part.strip() for part in text.split(",") if part.strip()]
    for name in names:
        if name not in haarline.REGISTRY:
            raise argparse.ArgumentTypeError(
                f"unknown metric {name!r}; expected a comma-separated list of: "
                f"{', '.join(haarline.REGISTRY)}"
            )
    if not names:
        raise argparse.ArgumentTypeError("expected at least one metric")
    return names


def options_from_args(args: argparse.Namespace) -> haarline.AnalysisOptions:
    """The options given by the flags (unset flags keep their defaults)."""
    raw: dict[str, Any] = {}
    for field in _FLAG_NAMES:
        if field == "layers_sweep":
            continue
        value = getattr(args, field)
        if value is not None:
            raw[field] = value
    if args.layers_sweep is not None:
        sweep = args.layers_sweep
        if len(sweep) == 1 and not 1 <= sweep[0] <= MAX_LAYERS:
            top = MAX_LAYERS
            raise UsageError(
                [haarline.Problem("--layers-sweep", f"got {sweep[0]}; allowed range is 1..{top}")]
            )
        raw["layers_sweep"] = list(range(1, sweep[0] + 1)) if len(sweep) == 1 else sweep
    return haarline.parse_options(raw, names=_FLAG_NAMES)


def add_analysis_flags(p: argparse.ArgumentParser) -> None:
    """The options shared by ``analyze`` and ``compare``."""
    p.add_argument(
        "--metrics",
        type=_metric_list,
        help=f"comma-separated subset of: {','.join(haarline.REGISTRY)} "
        f"(default: {','.join(DEFAULT_METRICS)}); 'haarline --help' says what each measures",
    )
    p.add_argument("--pairs", type=int, help="fidelity pairs for expressibility (default 5000)")
    p.add_argument("--bins", type=int, help="fidelity histogram bins (default 75)")
    p.add_argument("--samples", type=int, help="Meyer-Wallach samples (default 2000)")
    p.add_argument(
        "--layers-sweep",
        type=_int_list,
        metavar="L|L1,L2,...",
        help="repeat the metrics at these layer counts; a single number L means 1..L",
    )
    p.add_argument(
        "--cost",
        type=parse_cost,
        help="trainability cost: global (default), local, zz, or a Pauli sum such as "
        "'0.5*ZZII - XIII' (one letter per qubit, qubit 0 first)",
    )
    p.add_argument(
        "--scan",
        type=_int_list,
        metavar="N1,N2,...",
        help="qubit counts of the gradient-variance scan (default 2,4,6,8 for circuits "
        "written with placement patterns)",
    )
    p.add_argument(
        "--scan-layers",
        type=_scan_layers,
        metavar="N|n",
        help="layers at every scan point: a count, or n for layers = qubit count "
        "(default: as described)",
    )
    p.add_argument(
        "--depth-scan",
        type=_int_list,
        metavar="L1,L2,...",
        help="also scan the gradient variance over these layer counts at the circuit's size",
    )
    p.add_argument(
        "--grad-samples", type=int, help="parameter vectors per scan point (default 200)"
    )
    p.add_argument(
        "--precision",
        choices=["double", "single"],
        help="engine precision: double (complex128, default) or single (complex64, faster)",
    )
    p.add_argument(
        "--workers",
        type=_worker_count,
        default=1,
        help="processes sharing the sampling (default 1); the numbers do not depend on it",
    )
    p.add_argument(
        "--dask",
        type=_scheduler_address,
        metavar="tcp://HOST:PORT",
        help="send the sampled blocks to the Dask scheduler at this address (default: "
        "$HAARLINE_DASK_SCHEDULER; needs the 'dask' extra); the numbers do not depend on it",
    )
    p.add_argument(
        "--gradients",
        choices=["adjoint", "shift"],
        help="gradient method: adjoint differentiation (default) or parameter shift (slower)",
    )
    p.add_argument(
        "--capacity-points", type=int, help="random points behind the QFI rank (default 4)"
    )
    p.add_argument(
        "--data",
        metavar="FILE",
        help="for a circuit with inputs: feature rows to draw the inputs from (CSV with a "
        "header, an optional 'label' column; or .npy)",
    )
    p.add_argument(
        "--vary",
        choices=["parameters", "inputs", "both"],
        help="for a circuit with inputs: what is random in the expressibility and "
        "entanglement samples (default: parameters, or inputs for a pure feature map)",
    )
    p.add_argument(
        "--inputs-uniform",
        type=_float_pair,
        metavar="LOW,HIGH",
        help="draw inputs uniformly on [LOW, HIGH) (default 0,2pi)",
    )
    p.add_argument(
        "--inputs-normal",
        type=_float_pair,
        metavar="MEAN,STD",
        help="draw inputs from a normal law instead",
    )
    p.add_argument(
        "--kernel-pairs", type=int, help="random input pairs per kernel point (default 5000)"
    )
    p.add_argument(
        "--kernel-rows",
        type=int,
        help="labelled data rows in the kernel matrix, alignment and geometric difference "
        "(default 60)",
    )
    p.add_argument(
        "--spectrum-samples",
        type=int,
        help="parameter draws behind the Fourier weights (default 50)",
    )
    p.add_argument("--seed", type=int, help=f"random seed (default {DEFAULT_SEED})")
    p.add_argument(
        "--memory-budget",
        type=parse_size,
        default=haarline.DEFAULT_MEMORY_BUDGET,
        metavar="SIZE",
        help="memory for state batches, e.g. 512MiB (default 1GiB); changes speed, not results",
    )
    p.add_argument(
        "--max-seconds",
        type=float,
        metavar="S",
        help="refuse work estimated above S seconds (exit 2), before it starts",
    )
    p.add_argument(
        "--policy",
        metavar="FILE",
        help="JSON or YAML policy of thresholds; exit code 1 when a rule fails",
    )
    p.add_argument(
        "--out",
        metavar="DIR",
        help="also write report.json, summary.md and the PNG plots into DIR",
    )
