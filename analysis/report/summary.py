"""Human-readable renderings of a report: plain text for terminals, Markdown for reviews."""

from __future__ import annotations

from typing import Any

__all__ = ["to_markdown", "to_text"]


def _headline(report: dict[str, Any]) -> str:
    c = report["circuit"]
    return (
        f"{c['name']}: {_count(c['qubits'], 'qubit')}, {_count(c['layers'], 'layer')}, "
        f"{_count(c['parameters'], 'parameter')}, "
        f"{c['gates']} gates ({c['two_qubit_gates']} two-qubit), depth {c['depth']}"
    )


def _count(k: int, word: str) -> str:
    return f"{k} {word}" + ("" if k == 1 else "s")


def _iv(pair: list[float], digits: int = 4) -> str:
    return f"{pair[0]:.{digits}f} .. {pair[1]:.{digits}f}"


def to_text(report: dict[str, Any]) -> str:
    """Plain-text summary of a report (what ``--format text`` prints)."""
    lines = [f"haarline {report['haarline_version']}  {_headline(report)}", ""]
    e = report.get("expressibility")
    if e:
        lines += [
            "Expressibility (KL divergence from Haar, nats; lower is more expressive)",
            f"  KL       {e['kl']:.4f}   bias-corrected {e['corrected']:.4f}, 95% interval "
            f"{_iv(e['interval'])}",
            f"           (an exactly Haar circuit would show {e['bias']:.4f} at this sample size)",
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
    t = report.get("trainability")
    if t:
        cost = t["cost"] if isinstance(t["cost"], str) else "Pauli sum"
        lines.append(
            f"Trainability (variance of dC/dtheta, {cost} cost, {t['samples']} samples per point,"
            f" {t['layers_rule']})"
        )
        lines.append(
            f"  {'qubits':>6} {'layers':>6} {'params':>6} {'variance':>10} "
            f"{'95% interval':>23} {'smallest':>10} {'largest':>10}"
        )
        rows = [("", p) for p in t["points"]]
        if t["layer_points"]:
            rows.append(("  depth scan", None))
            rows += [("", p) for p in t["layer_points"]]
        for label, p in rows:
            if p is None:
                lines.append(label)
                continue
            lines.append(
                f"  {p['qubits']:>6} {p['layers']:>6} {p['parameters']:>6} {p['variance']:>10.3e}"
                f" {p['interval'][0]:>10.3e} .. {p['interval'][1]:>9.3e} {p['smallest']:>10.3e}"
                f" {p['largest']:>10.3e}"
            )
        if t["fit"]:
            e, pw = t["fit"]["exponential"], t["fit"]["power"]
            lines.append(
                f"  fits: exponential decay {-e['slope']:.3g} ± {e['slope_stderr']:.2g} nats/qubit "
                f"(AIC {e['aic']:.3g}); power law exponent {pw['slope']:.3g} ± "
                f"{pw['slope_stderr']:.2g} (AIC {pw['aic']:.3g})"
            )
        lines.append(f"  verdict: {t['reason']}")
        lines.append("")
    c = report.get("capacity")
    if c:
        lines += [
            "Capacity (rank of the quantum Fisher information)",
            f"  rank {c['qfi_rank']} of {c['parameters']} parameters, {c['redundant']} redundant;"
            f" pure-state ceiling 2^(n+1)-2 = {c['max_rank']} (largest over {c['points']} "
            f"points, eigenvalues below {c['tolerance']:g} x largest count as zero)",
        ]
        if c["redundant_parameters"]:
            shown = ", ".join(
                f"{r['parameter']} ({r['step']}, {r['kind']})"
                for r in c["redundant_parameters"][:8]
            )
            more = len(c["redundant_parameters"]) - 8
            lines.append(f"  redundant: {shown}" + (f" and {more} more" if more > 0 else ""))
        lines.append("")
    lie = report.get("lie")
    if lie:
        lines.append("Dynamical Lie algebra (of the generators; predicts deep circuits at any n)")
        lines.append(
            f"  {'qubits':>6} {'dim':>8} {'of 4^n-1':>9}  {'predicted Var[C]':>16}  "
            f"{'sampled Var[C] (95% interval)':>30}"
        )
        for p in lie["points"]:
            dim = f"{p['dimension']}" + ("" if p["complete"] else "+")
            pred = p.get("prediction") or {}
            predicted = f"{pred['variance']:.4g}" if pred.get("applies") else "-"
            s = p.get("sampled")
            sampled = (
                f"{s['variance']:.4g} ({s['interval'][0]:.3g} .. {s['interval'][1]:.3g})"
                if s
                else "-"
            )
            lines.append(
                f"  {p['qubits']:>6} {dim:>8} {p['maximum']:>9}  {predicted:>16}  {sampled:>30}"
            )
        if lie.get("summary"):
            lines.append(f"  {lie['summary']}")
        lines.append("")
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
    rows = []
    e = report.get("expressibility")
    if e:
        rows.append(
            f"| Expressibility (KL, nats; bias-corrected {e['corrected']:.4f}) | {e['kl']:.4f} | "
            f"{_iv(e['interval'])} | "
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
    t = report.get("trainability")
    if t:
        last = t["points"][-1]
        cost = t["cost"] if isinstance(t["cost"], str) else "Pauli sum"
        rows.append(
            f"| Gradient variance at n = {last['qubits']} ({cost} cost) | "
            f"{last['variance']:.3e} | {last['interval'][0]:.3e} .. {last['interval'][1]:.3e} | |"
        )
        if t["fit"]:
            e = t["fit"]["exponential"]
            lo, hi = -e["slope"] - 1.96 * e["slope_stderr"], -e["slope"] + 1.96 * e["slope_stderr"]
            rows.append(
                f"| Variance decay per qubit (nats) | {-e['slope']:.3f} | {lo:.3f} .. {hi:.3f} | |"
            )
    lie = report.get("lie")
    if lie and lie["points"]:
        last = lie["points"][-1]
        rows.append(
            f"| DLA dimension at n = {last['qubits']} | {last['dimension']}"
            f"{'' if last['complete'] else ' (at least)'} | | 4^n - 1 = {last['maximum']} |"
        )
    c = report.get("capacity")
    if c:
        rows.append(
            f"| QFI rank / parameters | {c['qfi_rank']} / {c['parameters']} | | ceiling "
            f"{c['max_rank']} |"
        )
    if rows:
        out += ["| metric | value | 95% interval | Haar |", "| --- | --- | --- | --- |", *rows, ""]
    if t:
        out += [f"**Trainability verdict:** {t['reason'][0].upper()}{t['reason'][1:]}.", ""]
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
