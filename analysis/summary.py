"""Human-readable renderings of a report: plain text for terminals, Markdown for reviews."""

from __future__ import annotations

from typing import Any

__all__ = ["to_markdown", "to_text"]


def _headline(report: dict[str, Any]) -> str:
    c = report["circuit"]
    return (
        f"{c['name']}: {c['qubits']} qubits, {c['layers']} layers, {c['parameters']} parameters, "
        f"{c['gates']} gates ({c['two_qubit_gates']} two-qubit), depth {c['depth']}"
    )


def _iv(pair: list[float], digits: int = 4) -> str:
    return f"{pair[0]:.{digits}f} .. {pair[1]:.{digits}f}"


def to_text(report: dict[str, Any]) -> str:
    """Plain-text summary of a report (what ``--format text`` prints)."""
    lines = [f"haarline {report['haarline_version']}  {_headline(report)}", ""]
    e = report.get("expressibility")
    if e:
        lines += [
            "Expressibility (KL divergence from Haar, nats; lower is more expressive)",
            f"  KL       {e['kl']:.4f}   95% interval {_iv(e['interval'])}   "
            f"bias of an exactly Haar circuit {e['bias']:.4f}",
            f"  E[F^2]   {e['second_moment']:.4g}   95% interval "
            f"{e['second_moment_interval'][0]:.4g} .. {e['second_moment_interval'][1]:.4g}   "
            f"Haar {e['haar_second_moment']:.4g}",
            f"  {e['pairs']} pairs, {e['bins']} bins",
            "",
        ]
    m = report.get("entanglement")
    if m:
        lines += [
            "Entangling capability (Meyer-Wallach, 0 = product states, 1 = maximal)",
            f"  mean     {m['meyer_wallach']:.4f}   95% interval {_iv(m['interval'])}   "
            f"std {m['std']:.4f}   Haar {m['haar_meyer_wallach']:.4f}",
            f"  {m['samples']} samples",
            "",
        ]
    sweep = report.get("sweep")
    if sweep:
        lines.append("Layer sweep")
        header = f"  {'layers':>6} {'params':>6} {'depth':>5}"
        has_kl = "kl" in sweep[0]
        has_mw = "meyer_wallach" in sweep[0]
        if has_kl:
            header += f" {'KL':>8} {'KL 95% interval':>18}"
        if has_mw:
            header += f" {'MW':>7} {'MW 95% interval':>16}"
        lines.append(header)
        for row in sweep:
            line = f"  {row['layers']:>6} {row['parameters']:>6} {row['depth']:>5}"
            if has_kl:
                line += f" {row['kl']:>8.4f} {_iv(row['kl_interval']):>18}"
            if has_mw:
                line += f" {row['meyer_wallach']:>7.4f} {_iv(row['meyer_wallach_interval'], 3):>16}"
            lines.append(line)
        lines.append("")
    if report.get("cautions"):
        lines.append("Cautions")
        lines += [f"  - {c}" for c in report["cautions"]]
        lines.append("")
    t = report.get("timings", {}).get("total")
    tail = f"seed {report['options']['seed']}"
    if t is not None:
        tail += f", {t:.2f} s"
    lines.append(tail)
    return "\n".join(lines)


def to_markdown(report: dict[str, Any]) -> str:
    """Markdown summary of a report: a headline, a metrics table and the cautions."""
    out = [f"## haarline: {report['circuit']['name']}", "", _headline(report) + ".", ""]
    rows = []
    e = report.get("expressibility")
    if e:
        rows.append(
            f"| Expressibility (KL, nats) | {e['kl']:.4f} | {_iv(e['interval'])} | "
            f"0 (bias at {e['pairs']} pairs: {e['bias']:.4f}) |"
        )
        rows.append(
            f"| Fidelity second moment E[F²] | {e['second_moment']:.4g} | "
            f"{e['second_moment_interval'][0]:.4g} .. {e['second_moment_interval'][1]:.4g} | "
            f"{e['haar_second_moment']:.4g} |"
        )
    m = report.get("entanglement")
    if m:
        rows.append(
            f"| Meyer-Wallach | {m['meyer_wallach']:.4f} | {_iv(m['interval'])} | "
            f"{m['haar_meyer_wallach']:.4f} |"
        )
    if rows:
        out += ["| metric | value | 95% interval | Haar |", "| --- | --- | --- | --- |", *rows, ""]
    if report.get("cautions"):
        out.append("**Cautions**")
        out.append("")
        out += [f"- {c}" for c in report["cautions"]]
        out.append("")
    out.append(f"Seed {report['options']['seed']}, haarline {report['haarline_version']}.")
    return "\n".join(out) + "\n"
