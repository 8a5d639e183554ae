"""The report page: one self-contained HTML document, rendered with the standard library.

No JavaScript, no external fonts, styles or scripts: the PNGs are inlined as ``data:``
URIs, so the page works offline, in strict intranets and when saved to a file. It reads
on a laptop and a phone (one fluid column, tables that scroll sideways) and prints
cleanly. While a job runs, the page shows its progress and refreshes itself with a
``<meta http-equiv="refresh">``; a failed job shows the error and the request that caused
it; a cancelled job says so.
"""

from __future__ import annotations

import base64
import html
import json
import shlex
from typing import Any

import haarline
from haarline.report.ranking import TIE_NOTE, comparison_cautions, comparison_table
from haarline.report.verdict import banner, joint_verdict

__all__ = ["comparison_page", "job_page", "report_page", "reproduce_command"]

_CSS = """
:root { --ink: #1d2430; --muted: #5b6473; --line: #d8dde6; --pass: #1b7f4b;
        --warn: #9a6200; --fail: #b3261e; --panel: #f5f7fa; }
* { box-sizing: border-box; }
body { margin: 0; font: 16px/1.5 system-ui, -apple-system, "Segoe UI", sans-serif;
       color: var(--ink); background: #fff; }
main { max-width: 960px; margin: 0 auto; padding: 1rem 1.25rem 3rem; }
h1 { font-size: 1.6rem; margin: 0.5rem 0 0.25rem; }
h2 { font-size: 1.2rem; margin: 2rem 0 0.5rem; border-bottom: 1px solid var(--line);
     padding-bottom: 0.25rem; }
.facts { color: var(--muted); margin: 0 0 1rem; }
.verdict { padding: 0.75rem 1rem; border-radius: 6px; background: var(--panel);
           border-left: 6px solid var(--muted); margin: 1rem 0; }
.verdict.pass { border-color: var(--pass); } .verdict.warn { border-color: var(--warn); }
.verdict.fail { border-color: var(--fail); }
.scroll { overflow-x: auto; -webkit-overflow-scrolling: touch; }
.scroll table { min-width: 38rem; }
td[data-metric], td:nth-child(3) { white-space: nowrap; }
#policy td:nth-child(3) { white-space: normal; }
table { border-collapse: collapse; width: 100%; font-variant-numeric: tabular-nums; }
th, td { text-align: left; padding: 0.35rem 0.6rem; border-bottom: 1px solid var(--line);
         vertical-align: top; }
th { background: var(--panel); font-weight: 600; }
.status-pass { color: var(--pass); font-weight: 600; }
.status-warn { color: var(--warn); font-weight: 600; }
.status-fail { color: var(--fail); font-weight: 600; }
figure { margin: 1rem 0; }
figure img { max-width: 100%; height: auto; border: 1px solid var(--line); }
figcaption { color: var(--muted); font-size: 0.9rem; }
pre { background: var(--panel); padding: 0.75rem; overflow-x: auto; font-size: 0.85rem;
      border-radius: 4px; }
ul.cautions li { margin: 0.25rem 0; }
progress { width: 100%; height: 1.25rem; }
footer { color: var(--muted); font-size: 0.85rem; margin-top: 2rem; }
@media print { main { max-width: none; } a { color: inherit; text-decoration: none; }
               figure { break-inside: avoid; } pre { white-space: pre-wrap; } }
"""


def _e(value: Any) -> str:
    return html.escape(str(value), quote=True)


def _doc(title: str, body: str, *, refresh: int | None = None) -> str:
    meta = f'<meta http-equiv="refresh" content="{refresh}">' if refresh else ""
    return (
        '<!DOCTYPE html>\n<html lang="en">\n<head>\n<meta charset="utf-8">\n'
        '<meta name="viewport" content="width=device-width, initial-scale=1">\n'
        f"{meta}<title>{_e(title)}</title>\n<style>{_CSS}</style>\n</head>\n"
        f"<body><main>\n{body}\n</main></body>\n</html>\n"
    )


def _iv(pair: list[float] | None, spec: str = ".4f") -> str:
    if not pair:
        return ""
    return f"{format(pair[0], spec)} .. {format(pair[1], spec)}"


def _cell(path: str, value: str) -> str:
    return f'<td data-metric="{path}">{_e(value)}</td>'


def _metrics_table(report: dict[str, Any]) -> str:
    """The headline table the Markdown summary shows too (one row list, from the registry)."""
    rows = []
    for row in haarline.headline_rows(report):
        value = _cell(row.key, row.value) if row.key else f"<td>{_e(row.value)}</td>"
        interval = (
            _cell(row.interval_key, row.interval)
            if row.interval_key
            else f"<td>{_e(row.interval)}</td>"
        )
        rows.append(
            f'<tr><th scope="row">{_e(row.label)}</th>{value}{interval}'
            f"<td>{_e(row.reference)}</td></tr>"
        )
    if not rows:
        return "<p>No metrics were computed.</p>"
    return (
        '<div class="scroll"><table id="metrics"><thead><tr><th>metric</th><th>value</th>'
        "<th>95% interval</th><th>Haar reference</th></tr></thead><tbody>"
        + "".join(rows)
        + "</tbody></table></div>"
    )


def _verdict(report: dict[str, Any]) -> str:
    """The banner: its colour by the rule of :func:`haarline.report.verdict.banner`."""
    pol = report.get("policy")
    flag = banner(report)
    parts = []
    if pol:
        status = _e(pol["status"])
        parts.append(
            f"Policy <strong>{_e(pol['name'])}</strong>: "
            f'<span class="status-{status}" id="policy-status">{status}</span>.'
        )
    for title, sentence in haarline.verdicts(report):
        anchor = f"{title.lower().split()[0]}-reason"
        parts.append(f'{_e(title)}: <span id="{anchor}">{_e(sentence.rstrip("."))}</span>.')
    joint = joint_verdict(report)
    if joint:
        parts.append(f'<span id="joint-verdict">{_e(joint)}</span>')
    if not parts:
        e, m = report.get("expressibility"), report.get("entanglement")
        if e:
            parts.append(
                f"Expressibility KL {e['kl_corrected']:.4f} (bias-corrected; 95% interval "
                f"{_iv(e['interval'])}; lower is more expressive)."
            )
        if m:
            parts.append(
                f"Meyer-Wallach {m['meyer_wallach']:.3f} (Haar {m['haar_meyer_wallach']:.3f})."
            )
    if flag.reasons:
        parts.append(f"Flagged: {_e('; '.join(flag.reasons))}.")
    return f'<div class="verdict {flag.level}" id="verdict">' + " ".join(parts) + "</div>"


def _policy_table(report: dict[str, Any]) -> str:
    pol = report.get("policy")
    if not pol:
        return ""
    rows = "".join(
        f"<tr><td><code>{_e(r['metric'])}</code></td>"
        f'<td class="status-{_e(r["status"])}">{_e(r["status"])}</td><td>{_e(r["message"])}</td>'
        "</tr>"
        for r in pol["rules"]
    )
    return (
        '<h2>Policy</h2><div class="scroll"><table id="policy"><thead><tr><th>rule</th>'
        f"<th>result</th><th>why</th></tr></thead><tbody>{rows}</tbody></table></div>"
    )


def _figures(images: dict[str, bytes], captions: dict[str, str] | None = None) -> str:
    captions = captions or {}
    order = [
        "circuit.png",
        "fidelity.png",
        "entanglement.png",
        "trainability.png",
        "sweep.png",
        "algebra.png",
        "kernel.png",
        "kernel_matrix.png",
        "spectrum.png",
        "comparison.png",
    ]
    names = sorted(images, key=lambda n: (order.index(n) if n in order else len(order), n))
    out = []
    for name in names:
        data = base64.b64encode(images[name]).decode("ascii")
        alt = captions.get(name, name.removesuffix(".png").replace("_", " "))
        out.append(
            f'<figure><img src="data:image/png;base64,{data}" alt="{_e(alt)}" '
            f'data-name="{_e(name)}" width="900"><figcaption>{_e(alt)}</figcaption></figure>'
        )
    return "<h2>Plots</h2>" + "".join(out) if out else ""


_CAPTIONS = {
    "circuit.png": "Circuit diagram",
    "fidelity.png": "Fidelity histogram against the exact Haar distribution",
    "entanglement.png": "Meyer-Wallach distribution over random parameters",
    "trainability.png": "Gradient variance against qubit count, with both fits",
    "sweep.png": "Metrics against layer count",
    "algebra.png": "Dynamical Lie algebra dimension against qubit count",
    "kernel.png": "Fidelity-kernel variance against qubit count, with both fits",
    "kernel_matrix.png": "Kernel matrix of the labelled rows, sorted by label",
    "spectrum.png": "Mean Fourier weight at every frequency the encoding can reach",
    "comparison.png": "Candidates compared",
}


def reproduce_command(report: dict[str, Any], source: str = "FILE") -> str:
    """The ``haarline analyze`` command that reproduces a report's numbers."""
    o = report["options"]
    args = [
        "haarline",
        "analyze",
        source,
        "--metrics",
        ",".join(o["metrics"]),
        "--pairs",
        str(o["pairs"]),
        "--bins",
        str(o["bins"]),
        "--samples",
        str(o["samples"]),
        "--seed",
        str(o["seed"]),
    ]
    if "trainability" in o["metrics"]:
        cost = (
            o["cost"]
            if isinstance(o["cost"], str)
            else " + ".join(f"{c:g}*{p}" for c, p in o["cost"])
        )
        args += ["--cost", cost, "--grad-samples", str(o["grad_samples"])]
        if o.get("scan"):
            args += ["--scan", ",".join(map(str, o["scan"]))]
        if o.get("scan_layers") is not None:
            args += ["--scan-layers", str(o["scan_layers"])]
        if o.get("depth_scan"):
            args += ["--depth-scan", ",".join(map(str, o["depth_scan"]))]
        if o.get("gradients", "adjoint") != "adjoint":
            args += ["--gradients", o["gradients"]]
    if "capacity" in o["metrics"]:
        args += ["--capacity-points", str(o["capacity_points"])]
    if "kernel" in o["metrics"]:
        args += ["--kernel-pairs", str(o["kernel_pairs"]), "--kernel-rows", str(o["kernel_rows"])]
        if o.get("scan") and "trainability" not in o["metrics"]:
            args += ["--scan", ",".join(map(str, o["scan"]))]
    if "spectrum" in o["metrics"]:
        args += ["--spectrum-samples", str(o["spectrum_samples"])]
    for option, flag in (("vary", "--vary"), ("inputs_uniform", "--inputs-uniform"),
                         ("inputs_normal", "--inputs-normal")):  # fmt: skip
        value = o.get(option)
        if value is not None:
            args += [flag, value if isinstance(value, str) else ",".join(f"{v:g}" for v in value)]
    if report.get("data"):
        args += ["--data", "DATA.csv"]
    if o.get("layers_sweep"):
        args += ["--layers-sweep", ",".join(map(str, o["layers_sweep"]))]
    return shlex.join(args)


def report_page(
    report: dict[str, Any],
    images: dict[str, bytes],
    *,
    description: dict[str, Any] | None = None,
    source: str = "circuit.json",
) -> str:
    """The page of a finished analysis."""
    c = report["circuit"]
    facts = (
        f"{c['qubits']} qubits, {c['layers']} layers, {c['parameters']} parameters, "
        f"{c['gates']} gates ({c['two_qubit_gates']} two-qubit), depth {c['depth']}"
    )
    cautions = "".join(f"<li>{_e(x)}</li>" for x in report.get("cautions", []))
    body = [
        f'<h1 id="circuit-name">{_e(c["name"])}</h1>',
        f'<p class="facts">{_e(facts)}</p>',
        _verdict(report),
        "<h2>Metrics</h2>",
        _metrics_table(report),
        _policy_table(report),
        f'<h2>Cautions</h2><ul class="cautions">{cautions}</ul>' if cautions else "",
        _figures(images, _CAPTIONS),
    ]
    if description is not None:
        body.append(
            '<h2>Description</h2><pre id="description">'
            + _e(json.dumps(description, indent=2))
            + "</pre>"
        )
    body.append(
        "<h2>Reproduce</h2><p>Save the description as "
        f'<code>{_e(source)}</code> and run:</p><pre id="reproduce">'
        + _e(reproduce_command(report, source))
        + "</pre>"
        + f"<p>Seed {report['options']['seed']}; haarline {_e(report['haarline_version'])}. "
        "The same seed, options and version give the same numbers.</p>"
    )
    body.append(
        "<footer>Generated by haarline. This page is self-contained: it needs no "
        "network access.</footer>"
    )
    return _doc(f"haarline: {c['name']}", "\n".join(body))


def comparison_page(result: dict[str, Any], images: dict[str, bytes]) -> str:
    """The page of a finished comparison."""
    headers, table = comparison_table(result)
    head = "".join(f"<th>{_e(h)}</th>" for h in headers)
    rows = "".join(
        "<tr>" + "".join(f"<td>{_e(cell)}</td>" for cell in row) + "</tr>" for row in table
    )
    cautions = comparison_cautions(result)
    body = [
        "<h1>Comparison</h1>",
        f'<p class="facts">Ranking rule: {_e(result["ranking_rule"])}.</p>',
        f'<div class="scroll"><table id="ranking"><thead><tr>{head}</tr></thead><tbody>'
        + rows
        + "</tbody></table></div>",
        f"<p>{_e(TIE_NOTE)}</p>" if any(r["tied_with_previous"] for r in result["ranking"]) else "",
        ("<h2>Cautions</h2><ul>" + "".join(f"<li>{_e(c)}</li>" for c in cautions) + "</ul>")
        if cautions
        else "",
        _figures(images, _CAPTIONS),
        "<footer>Generated by haarline. This page is self-contained.</footer>",
    ]
    return _doc("haarline: comparison", "\n".join(body))


def job_page(job: dict[str, Any]) -> str:
    """The page of a job that has no result: progress, error or cancellation."""
    state = job["state"]
    title = f"haarline job {job['id'][:8]}"
    if state in ("queued", "running"):
        pct = int(round(100 * job["fraction"]))
        body = (
            f'<h1>Job {state}</h1><p id="state" data-state="{state}">'
            f"{_e(job['stage'] or 'waiting for a worker')}: {pct}%</p>"
            f'<progress max="100" value="{pct}">{pct}%</progress>'
            "<p>This page refreshes itself every 2 seconds.</p>"
        )
        return _doc(title, body, refresh=2)
    if state == "failed":
        body = (
            '<h1>Job failed</h1><p id="state" data-state="failed">The analysis could not be '
            'completed:</p><pre id="error">' + _e(job.get("error") or "unknown error") + "</pre>"
            '<h2>The request</h2><pre id="request">'
            + _e(json.dumps(job.get("request", {}), indent=2))
            + "</pre>"
        )
        return _doc(title, body)
    body = (
        '<h1>Job cancelled</h1><p id="state" data-state="cancelled">This job was cancelled '
        "before it finished; it has no result.</p>"
    )
    return _doc(title, body)
