"""Ranking several circuits analyzed with the same options.

Ordering rule (lexicographic; also in the README):

1. circuits whose trainability verdict is a barren plateau (``true``) come last;
2. then circuits whose kernel concentrates (``true``) after those whose kernel does not;
3. then lower expressibility KL first (more expressive);
4. then higher Meyer-Wallach first;
5. then fewer parameters first; then the name.

Missing metrics sort after present ones at their step. Neighbours whose KL intervals
overlap are flagged ``tied_with_previous``: at this sample size the data do not order them.
"""

from __future__ import annotations

import math
from typing import Any

__all__ = ["COMPARE_FORMAT", "RANKING_RULE", "compare_markdown", "compare_reports"]

COMPARE_FORMAT = 1
RANKING_RULE = (
    "barren plateau last; then a concentrating kernel later; then lower KL; then higher "
    "Meyer-Wallach; then fewer parameters; then name"
)


def _row(report: dict[str, Any], source: str) -> dict[str, Any]:
    e = report.get("expressibility") or {}
    m = report.get("entanglement") or {}
    t = report.get("trainability") or {}
    c = report.get("capacity") or {}
    k = report.get("kernel") or {}
    pol = report.get("policy") or {}
    return {
        "name": report["circuit"]["name"],
        "source": source,
        "qubits": report["circuit"]["qubits"],
        "layers": report["circuit"]["layers"],
        "parameters": report["circuit"]["parameters"],
        "kl": e.get("kl"),
        "kl_interval": e.get("interval"),
        "meyer_wallach": m.get("meyer_wallach"),
        "meyer_wallach_interval": m.get("interval"),
        "barren_plateau": t.get("barren_plateau"),
        "decay_per_qubit": t.get("decay_per_qubit"),
        "qfi_rank": c.get("qfi_rank"),
        "redundant": c.get("redundant"),
        "kernel_variance": k.get("variance"),
        "concentrated": k.get("concentrated"),
        "policy": pol.get("status"),
    }


def _key(row: dict[str, Any]) -> tuple[Any, ...]:
    inf = math.inf
    return (
        row["barren_plateau"] is True,
        row["concentrated"] is True,
        row["kl"] if row["kl"] is not None else inf,
        -row["meyer_wallach"] if row["meyer_wallach"] is not None else inf,
        row["parameters"],
        row["name"],
    )


def compare_reports(reports: list[dict[str, Any]], sources: list[str]) -> dict[str, Any]:
    """Rank reports by :data:`RANKING_RULE`.

    Returns
    -------
    dict
        ``{"compare_format", "ranking_rule", "ranking": [rows…], "reports": [...]}`` with
        the rows in rank order (``rank`` from 1).

    Examples
    --------
    >>> a = {"circuit": {"name": "a", "qubits": 2, "layers": 1, "parameters": 4},
    ...      "expressibility": {"kl": 0.3, "interval": [0.2, 0.4]}}
    >>> b = {"circuit": {"name": "b", "qubits": 2, "layers": 1, "parameters": 4},
    ...      "expressibility": {"kl": 0.1, "interval": [0.05, 0.15]}}
    >>> [r["name"] for r in compare_reports([a, b], ["a.json", "b.json"])["ranking"]]
    ['b', 'a']
    """
    rows = sorted((_row(r, s) for r, s in zip(reports, sources, strict=True)), key=_key)
    for i, row in enumerate(rows):
        row["rank"] = i + 1
        prev = rows[i - 1] if i else None
        row["tied_with_previous"] = bool(
            prev
            and prev["kl_interval"]
            and row["kl_interval"]
            and row["kl_interval"][0] <= prev["kl_interval"][1]
            and prev["barren_plateau"] is row["barren_plateau"]
        )
    return {
        "compare_format": COMPARE_FORMAT,
        "ranking_rule": RANKING_RULE,
        "ranking": rows,
        "reports": reports,
    }


def _fmt(value: Any, spec: str) -> str:
    return "-" if value is None else format(value, spec)


def compare_markdown(result: dict[str, Any], images: list[str] | None = None) -> str:
    """A Markdown table of the ranking, with the rule and the ties spelled out."""
    kernels = any(r["kernel_variance"] is not None for r in result["ranking"])
    out = [
        "## haarline comparison",
        "",
        f"Ranking rule: {result['ranking_rule']}.",
        "",
        "| rank | circuit | qubits | params | KL (95% interval) | Meyer-Wallach (95% interval) |"
        " barren plateau | QFI rank | policy |"
        + (" kernel variance | concentrated |" if kernels else ""),
        "| --- | --- | --- | --- | --- | --- | --- | --- | --- |"
        + (" --- | --- |" if kernels else ""),
    ]
    for r in result["ranking"]:
        kl = (
            "-"
            if r["kl"] is None
            else (f"{r['kl']:.4f} ({r['kl_interval'][0]:.4f} .. {r['kl_interval'][1]:.4f})")
        )
        mw = (
            "-"
            if r["meyer_wallach"] is None
            else (
                f"{r['meyer_wallach']:.3f} ({r['meyer_wallach_interval'][0]:.3f} .. "
                f"{r['meyer_wallach_interval'][1]:.3f})"
            )
        )
        bp = {True: "yes", False: "no", None: "-"}[r["barren_plateau"]]
        if r["barren_plateau"] is None and r["decay_per_qubit"] is not None:
            bp = "undecided"
        rank = f"{r['rank']}" + (" (tie)" if r["tied_with_previous"] else "")
        line = (
            f"| {rank} | {r['name']} | {r['qubits']} | {r['parameters']} | {kl} | {mw} | {bp} | "
            f"{_fmt(r['qfi_rank'], 'd')} | {r['policy'] or '-'} |"
        )
        if kernels:
            concentrated = {True: "yes", False: "no", None: "-"}[r["concentrated"]]
            line += f" {_fmt(r['kernel_variance'], '.3e')} | {concentrated} |"
        out.append(line)
    out.append("")
    if any(r["tied_with_previous"] for r in result["ranking"]):
        out += [
            "(tie): the KL interval overlaps the one above; at this sample size the two are "
            "not ordered by the data. Raise --pairs to separate them.",
            "",
        ]
    for name in images or []:
        out.append(f"![{name}]({name})")
    if images:
        out.append("")
    return "\n".join(out)
