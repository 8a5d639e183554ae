"""Human-readable renderings of a report: plain text for terminals, Markdown for reviews."""

from __future__ import annotations

from typing import Any

from haarline.report.metric_row import TableRow
from haarline.report.registry import REGISTRY
from haarline.report.text import count_text, interval_text
from haarline.report.verdict import joint_verdict

__all__ = ["headline_rows", "to_markdown", "to_text", "verdicts"]


def _headline(report: dict[str, Any]) -> str:
    c = report["circuit"]
    return (
        f"{c['name']}: {_count(c['qubits'], 'qubit')}, {_count(c['layers'], 'layer')}, "
        f"{_count(c['parameters'], 'parameter')}, "
        f"{c['gates']} gates ({c['two_qubit_gates']} two-qubit), depth {c['depth']}"
    )


def _count(k: int, word: str) -> str:
    return count_text(k, word)


def _iv(pair: list[float], digits: int = 4) -> str:
    return interval_text(pair, f".{digits}f")


def headline_rows(report: dict[str, Any]) -> list[TableRow]:
    """The headline table's rows (Markdown summary and HTML page), in registry order."""
    rows: list[TableRow] = []
    for name, row in REGISTRY.items():
        section = report.get(name)
        if section:
            rows += row.table(section, report)
    return rows


def verdicts(report: dict[str, Any]) -> list[tuple[str, str]]:
    """``(title, sentence)`` for every computed metric that gives a verdict."""
    out = []
    for name, row in REGISTRY.items():
        section = report.get(name)
        if section and row.verdict is not None:
            out.append((row.title, row.verdict(section)))
    return out


def to_text(report: dict[str, Any]) -> str:
    """Plain-text summary of a report (what ``--format text`` prints)."""
    lines = [f"haarline {report['haarline_version']}  {_headline(report)}", ""]
    joint = joint_verdict(report)
    if joint:
        lines += [f"Verdict: {joint}", ""]
    for name, row in REGISTRY.items():
        section = report.get(name)
        if section:
            lines += [*row.text(section, report), ""]
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
        for entry in sweep:
            line = f"  {entry['layers']:>6} {entry['parameters']:>6} {entry['depth']:>5}"
            if has_kl:
                line += f" {entry['kl_corrected']:>8.4f} {_iv(entry['kl_interval']):>18}"
            if has_mw:
                line += (
                    f" {entry['meyer_wallach']:>7.4f} {_iv(entry['meyer_wallach_interval'], 3):>16}"
                )
            lines.append(line)
        lines.append("")
    pol = report.get("policy")
    if pol:
        lines.append(f"Policy '{pol['name']}': {pol['status'].upper()}")
        for r in pol["rules"]:
            lines.append(f"  {r['status']:<4}  {r['metric']}: {r['message']}")
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


def to_markdown(
    report: dict[str, Any], *, images: list[str] | None = None, page: str | None = None
) -> str:
    """Markdown summary of a report: headline, metrics table, policy, cautions, plots.

    ``images`` are PNG file names written beside the summary; they are linked relatively.
    ``page`` is the address of the full report page, linked at the top when known.
    """
    out = [f"## haarline: {report['circuit']['name']}", "", _headline(report) + ".", ""]
    if page:
        out += [f"Full report page: [{page}]({page})", ""]
    rows = [
        f"| {r.label} | {r.value} | {r.interval} | {r.reference} |" for r in headline_rows(report)
    ]
    if rows:
        out += ["| metric | value | 95% interval | Haar |", "| --- | --- | --- | --- |", *rows, ""]
    for title, sentence in verdicts(report):
        out += [f"**{title} verdict:** {sentence}", ""]
    joint = joint_verdict(report)
    if joint:
        out += [f"**Verdict:** {joint}", ""]
    pol = report.get("policy")
    if pol:
        out += [
            f"**Policy '{pol['name']}': {pol['status']}**",
            "",
            "| rule | result | why |",
            "| --- | --- | --- |",
        ]
        out += [f"| `{r['metric']}` | {r['status']} | {r['message']} |" for r in pol["rules"]]
        out.append("")
    if report.get("cautions"):
        out.append("**Cautions**")
        out.append("")
        out += [f"- {c}" for c in report["cautions"]]
        out.append("")
    for name in images or []:
        out.append(f"![{name.rsplit('/', 1)[-1].removesuffix('.png')}]({name})")
    if images:
        out.append("")
    out.append(f"Seed {report['options']['seed']}, haarline {report['haarline_version']}.")
    return "\n".join(out) + "\n"
