"""The ``haarline`` command line.

Exit codes (one place, here): 0 success, 1 a policy rule failed, 2 bad input (usage,
description, options or limits). ``--format json`` writes exactly the report JSON to
stdout; messages and the progress bar go to stderr.

This module owns the commands and the parser; the analysis flags shared by ``analyze``
and ``compare`` and their value parsers are in :mod:`haarline.service.cli.options`, and
``serve`` and ``keys`` in :mod:`haarline.service.cli.serve`.
"""

from __future__ import annotations

import argparse
import json
import sys
from collections.abc import Sequence
from typing import Any, NoReturn

import haarline
from haarline.circuit.model import MAX_DESCRIPTION_BYTES, MAX_LAYERS
from haarline.circuit.references import REFERENCE_PREFIX
from haarline.errors import ClusterError
from haarline.report.policy import check_metrics
from haarline.service.cli.options import add_analysis_flags, options_from_args
from haarline.service.cli.outputs import write_analysis, write_comparison
from haarline.service.cli.progress import TerminalProgress
from haarline.service.cli.serve import add_commands
from haarline.service.errors import SettingsError, UsageError

__all__ = ["EXIT_INPUT", "EXIT_OK", "EXIT_POLICY", "build_parser", "main"]

EXIT_OK = 0
EXIT_POLICY = 1
EXIT_INPUT = 2


def load(spec: str) -> haarline.Circuit:
    """Load a description from a path, ``ref:NAME``, or ``-`` (JSON on stdin)."""
    if spec.startswith(REFERENCE_PREFIX):
        return haarline.load_reference(spec)
    if spec == "-":
        limit = MAX_DESCRIPTION_BYTES
        data = sys.stdin.buffer.read(limit + 1)
        if len(data) > limit:
            raise haarline.CircuitError(
                [haarline.Problem("(root)", f"input is larger than the limit of {limit} bytes")],
                source="<stdin>",
            )
        return haarline.parse_circuit_text(data, source="<stdin>")
    return haarline.load_circuit(spec)


def _source_name(spec: str) -> str:
    """How error lines name the description given as ``spec``."""
    return "<stdin>" if spec == "-" else spec


def _emit(text: str) -> None:
    sys.stdout.write(text if text.endswith("\n") else text + "\n")


def _policy(args: argparse.Namespace, options: haarline.AnalysisOptions) -> haarline.Policy | None:
    if not args.policy:
        return None
    policy = haarline.load_policy(args.policy)
    check_metrics(policy, list(options.metrics), source=args.policy)
    return policy


def _data(args: argparse.Namespace) -> haarline.Dataset | None:
    """The data set of ``--data``, read once per command."""
    if not args.data:
        return None
    cached: haarline.Dataset | None = getattr(args, "_dataset", None)
    if cached is None:
        cached = args._dataset = haarline.load_data(args.data)
    return cached


_CONTEXT_FLAGS = {"memory_budget": "--memory-budget", "workers": "--workers"}


def _scheduler(args: argparse.Namespace) -> tuple[str | None, str]:
    """The Dask scheduler of ``--dask`` or ``HAARLINE_DASK_SCHEDULER``, and its name."""
    from haarline.service.settings import ENV_PREFIX, dask_scheduler_from_env

    if args.dask:
        return args.dask, "--dask"
    return dask_scheduler_from_env(), ENV_PREFIX + "DASK_SCHEDULER"


def _context(args: argparse.Namespace, progress: haarline.Progress | None) -> haarline.Context:
    """The execution context of the flags; its problems (the cluster's too) name the flags.

    With a Dask scheduler the cluster is checked here, before any work starts.
    """
    scheduler, named = _scheduler(args)
    names = {**_CONTEXT_FLAGS, "scheduler": named}
    try:
        context = haarline.Context(
            memory_budget=args.memory_budget,
            workers=args.workers,
            progress=progress,
            scheduler=scheduler,
        )
        if scheduler is not None:
            from haarline.engine import cluster

            cluster.connect(scheduler)
        return context
    except haarline.OptionError as exc:
        raise _renamed(exc, names) from None


def _renamed(exc: haarline.OptionError, names: dict[str, str]) -> haarline.OptionError:
    """The same error with its paths named as the user gave them (flags, variables)."""
    return type(exc)([haarline.Problem(names.get(p.path, p.path), p.message) for p in exc.problems])


def _workers(args: argparse.Namespace) -> int:
    """Workers that share the sampling: ``--workers``, or the Dask cluster's threads."""
    context = _context(args, None)
    if context.scheduler is None:
        return context.workers
    from haarline.engine import cluster

    return cluster.threads(context.scheduler)


ANNOUNCE_SECONDS = 5.0
"""Work estimated above this many seconds is announced on stderr before it starts."""


def _announce(estimate: haarline.Estimate, seconds: float, args: argparse.Namespace) -> None:
    """Refuse work over ``--max-seconds``; say how long large work will take."""
    top = estimate.largest()
    share = (
        f"; {top} {estimate.parts[top] / estimate.work:.0%} of it" if top and estimate.work else ""
    )
    what = f"about {seconds:.0f} s of work ({estimate.work:.2g} amplitude-gate updates{share})"
    if args.max_seconds is not None and seconds > args.max_seconds:
        raise UsageError(
            [
                haarline.Problem(
                    "--max-seconds",
                    f"the analysis is estimated at {what}, above the limit of "
                    f"{args.max_seconds:g} s; lower the sample counts or the scan",
                )
            ]
        )
    if seconds > ANNOUNCE_SECONDS:
        sys.stderr.write(f"haarline: estimated {what}; estimates are rough (a factor of a few)\n")
        sys.stderr.flush()


def _run_analysis(
    circuit: haarline.Circuit,
    options: haarline.AnalysisOptions,
    policy: haarline.Policy | None,
    args: argparse.Namespace,
) -> dict[str, Any]:
    data = _data(args)
    estimate = haarline.estimate(circuit, options, memory_budget=args.memory_budget)
    seconds = estimate.seconds(_workers(args))
    _announce(estimate, seconds, args)
    progress = TerminalProgress(stages=haarline.progress_stages(circuit, options), estimate=seconds)
    try:
        report = haarline.analyze(circuit, options, data=data, context=_context(args, progress))
    except ClusterError as exc:  # the cluster failed during the run
        raise _renamed(exc, {"scheduler": _scheduler(args)[1]}) from None
    finally:
        progress.close()
    if policy is not None:
        try:
            report["policy"] = haarline.evaluate_policy(policy, report)
        except haarline.PolicyError as exc:
            raise haarline.PolicyError(exc.problems, source=args.policy) from None
    return report


def _cmd_analyze(args: argparse.Namespace) -> int:
    circuit = load(args.file)
    options = options_from_args(args)
    policy = _policy(args, options)
    report = _run_analysis(circuit, options, policy, args)
    images: list[str] = []
    if args.out:
        source = args.file if args.file not in ("-",) else "circuit.json"
        images = write_analysis(
            args.out,
            report,
            haarline.expand(circuit),
            circuit=circuit,
            source=source,
        )
    if args.format == "json":
        _emit(json.dumps(report, indent=2, allow_nan=False))
    elif args.format == "markdown":
        _emit(haarline.to_markdown(report, images=images))
    else:
        _emit(haarline.to_text(report))
        if args.out:
            sys.stderr.write(
                f"haarline: wrote report.json, summary.md and {len(images)} plot(s) to {args.out}\n"
            )
    failed = report["policy"] is not None and report["policy"]["status"] == "fail"
    return EXIT_POLICY if failed else EXIT_OK


def _cmd_compare(args: argparse.Namespace) -> int:
    if len(args.files) < 2:
        raise UsageError([haarline.Problem("FILE", "compare needs at least two circuits")])
    circuits = [load(spec) for spec in args.files]
    options = options_from_args(args)
    policy = _policy(args, options)
    reports = [_run_analysis(c, options, policy, args) for c in circuits]
    result = haarline.compare_reports(reports, list(args.files))
    images: list[str] = []
    if args.out:
        images = write_comparison(args.out, result)
    if args.format == "json":
        _emit(json.dumps(result, indent=2, allow_nan=False))
    else:
        _emit(haarline.compare_markdown(result, images=images))
    if args.out:
        sys.stderr.write(
            f"haarline: wrote comparison.json, comparison.md, comparison.html and "
            f"{len(images)} plot(s) to {args.out}\n"
        )
    failed = any(r["policy"] == "fail" for r in result["ranking"])
    return EXIT_POLICY if failed else EXIT_OK


def _cmd_check(args: argparse.Namespace) -> int:
    circuit = load(args.file)
    for flag, value, top in (
        ("--qubits", args.qubits, haarline.MAX_QUBITS),
        ("--layers", args.layers, MAX_LAYERS),
    ):
        if value is not None and not 1 <= value <= top:
            raise UsageError([haarline.Problem(flag, f"got {value}; allowed range is 1..{top}")])
    program = haarline.expand(circuit, qubits=args.qubits, layers=args.layers)
    f = haarline.facts(program)
    if args.diagram:  # drawn from the program alone: nothing is simulated
        try:
            with open(args.diagram, "wb") as fh:
                fh.write(haarline.circuit_diagram_png(program))
        except OSError as exc:
            raise UsageError(
                [haarline.Problem("--diagram", f"cannot write {args.diagram!r}: {exc.strerror}")]
            ) from None
        sys.stderr.write(f"haarline: wrote the circuit diagram to {args.diagram}\n")
    if args.format == "json":
        _emit(json.dumps(f, indent=2))
        return EXIT_OK
    counts = ", ".join(f"{k} {v}" for k, v in f["gate_counts"].items())
    _emit(
        "\n".join(
            [
                f"{f['name']}: valid",
                f"  qubits           {f['qubits']}",
                f"  layers           {f['layers']}",
                f"  parameters       {f['parameters']}",
                f"  gates            {f['gates']} ({counts})",
                f"  two-qubit gates  {f['two_qubit_gates']}",
                f"  depth            {f['depth']}",
            ]
        )
    )
    return EXIT_OK


def _cmd_references(args: argparse.Namespace) -> int:
    rows: list[dict[str, Any]] = []
    for name in haarline.reference_names():
        c = haarline.load_reference(name)
        p = haarline.expand(c)
        rows.append(
            {
                "name": name,
                "qubits": c.qubits,
                "layers": c.layers,
                "parameters": p.parameters,
                "description": c.description or "",
            }
        )
    if args.format == "json":
        _emit(json.dumps(rows, indent=2))
        return EXIT_OK
    width = max(len(r["name"]) for r in rows)
    lines = [f"{'name':<{width}}  qubits  layers  params  description"]
    for r in rows:
        desc = r["description"]
        if len(desc) > 70:
            desc = desc[:67] + "..."
        lines.append(
            f"{r['name']:<{width}}  {r['qubits']:>6}  {r['layers']:>6}  "
            f"{r['parameters']:>6}  {desc}"
        )
    lines.append("")
    lines.append(f"Use any of them as {REFERENCE_PREFIX}NAME wherever a file is accepted.")
    _emit("\n".join(lines))
    return EXIT_OK


def _cmd_export(args: argparse.Namespace) -> int:
    circuit = load(args.file)
    program = haarline.expand(circuit, qubits=args.qubits, layers=args.layers)
    text = haarline.to_qasm(program)
    if args.output:
        try:
            with open(args.output, "w", encoding="utf-8") as fh:
                fh.write(text)
        except OSError as exc:
            raise UsageError(
                [haarline.Problem("--output", f"cannot write {args.output!r}: {exc.strerror}")]
            ) from None
    else:
        sys.stdout.write(text)
    return EXIT_OK


def _cmd_schema(args: argparse.Namespace) -> int:
    _emit(json.dumps(haarline.circuit_schema(), indent=2))
    return EXIT_OK


class _Parser(argparse.ArgumentParser):
    """argparse with usage errors in one line plus a hint, instead of the whole usage."""

    def error(self, message: str) -> NoReturn:
        """Print ``haarline: error: …`` and where to read more; exit with code 2."""
        sys.stderr.write(f"haarline: error: {message} (see '{self.prog} --help')\n")
        raise SystemExit(EXIT_INPUT)


def build_parser() -> argparse.ArgumentParser:
    """The argument parser (exposed for tests and the docs)."""
    parser = _Parser(
        prog="haarline",
        description="Score parameterized quantum circuits against the Haar baseline. Metrics: "
        + "; ".join(f"{name}: {row.about}" for name, row in haarline.REGISTRY.items())
        + ".",
        epilog="FILE is a .json/.yaml description, ref:NAME for a bundled circuit "
        "(see 'haarline references'), or - for JSON on stdin. "
        "Exit codes: 0 ok, 1 policy failed, 2 bad input.",
    )
    parser.add_argument("--version", action="version", version=f"haarline {haarline.__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)

    p = sub.add_parser("analyze", help="compute the metrics of a circuit and print a report")
    p.add_argument("file", metavar="FILE")
    add_analysis_flags(p)
    p.add_argument("--format", choices=["text", "json", "markdown"], default="text")
    p.set_defaults(func=_cmd_analyze)

    p = sub.add_parser(
        "compare", help="analyze several circuits with the same options and rank them"
    )
    p.add_argument("files", metavar="FILE", nargs="+")
    add_analysis_flags(p)
    p.add_argument("--format", choices=["markdown", "json"], default="markdown")
    p.set_defaults(func=_cmd_compare)

    p = sub.add_parser(
        "check", help="validate a description and print its static facts (and draw it)"
    )
    p.add_argument("file", metavar="FILE")
    p.add_argument("--qubits", type=int, help="check at another qubit count")
    p.add_argument("--layers", type=int, help="check at another layer count")
    p.add_argument(
        "--diagram",
        metavar="PNG",
        help="also write the circuit diagram to this PNG file (no analysis is run)",
    )
    p.add_argument("--format", choices=["text", "json"], default="text")
    p.set_defaults(func=_cmd_check)

    p = sub.add_parser("references", help="list the bundled reference circuits")
    p.add_argument("--format", choices=["text", "json"], default="text")
    p.set_defaults(func=_cmd_references)

    p = sub.add_parser("export", help="write a description as an equivalent OpenQASM 3 program")
    p.add_argument("file", metavar="FILE")
    p.add_argument("--to", choices=["qasm"], default="qasm", help="output format (qasm)")
    p.add_argument("--qubits", type=int, help="export at another qubit count")
    p.add_argument("--layers", type=int, help="export at another layer count")
    p.add_argument("--output", "-o", metavar="PATH", help="write here instead of stdout")
    p.set_defaults(func=_cmd_export)

    p = sub.add_parser("schema", help="print the JSON Schema of the description format")
    p.set_defaults(func=_cmd_schema)

    add_commands(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run the CLI; returns the exit code (also used as the console-script entry point)."""
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # usage errors (argparse printed them), --help, --version
        return exc.code if isinstance(exc.code, int) else EXIT_INPUT if exc.code else EXIT_OK
    try:
        return int(args.func(args))
    except (haarline.InputError, haarline.LimitError) as exc:
        if isinstance(exc, haarline.CircuitError) and exc.source is None and "file" in args:
            # expansion errors (qubit indices, patterns) do not know where the text came from
            exc.source = _source_name(args.file)
        for line in str(exc).splitlines():
            sys.stderr.write(f"haarline: error: {line}\n")
        return EXIT_INPUT
    except SettingsError as exc:
        sys.stderr.write(f"haarline: error: {exc}\n")
        return EXIT_INPUT
    except KeyboardInterrupt:
        sys.stderr.write("haarline: interrupted\n")
        return 130
    except BrokenPipeError:
        return EXIT_OK
    finally:
        if "distributed" in sys.modules:  # a --dask run: close its client before exiting
            from haarline.engine import cluster

            cluster.disconnect()


if __name__ == "__main__":
    sys.exit(main())
