"""Ranking several circuits analyzed with the same options.

Ordering rule (lexicographic; also in the README):

1. circuits whose trainability verdict is a barren plateau (``true``) come last;
2. then circuits whose kernel concentrates (``true``) after those whose kernel does not;
3. then lower bias-corrected expressibility KL first (more expressive);
4. then higher Meyer-Wallach first;
5. then fewer parameters first; then the name.

Missing metrics sort after present ones at their step. Neighbours whose KL intervals
overlap are flagged ``tied_with_previous``: at this sample size the data do not order them.
"""

from __future__ import annotations

import math
from typing import Any

__all__ = [
    "COMPARE_FORMAT",
    "RANKING_RULE",
    "TIE_NOTE",
    "compare_markdown",
    "compare_reports",
    "comparison_cautions",
    "comparison_table",
]

COMPARE_FORMAT = 1
RANKING_RULE = (
    "barren plateau last; then a concentrating kernel later; then lower bias-corrected KL; "
    "then higher "
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
        "kl": e.get("kl_corrected"),
        "kl_plugin": e.get("kl"),
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
    ...      "expressibility": {"kl": 0.31, "kl_corrected": 0.3, "interval": [0.2, 0.4]}}
    >>> b = {"circuit": {"name": "b", "qubits": 2, "layers": 1, "parameters": 4},
    ...      "expressibility": {"kl": 0.12, "kl_corrected": 0.1, "interval": [0.05, 0.15]}}
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
        "sources": list(sources),
    }


def _fmt(value: Any, spec: str) -> str:
    return "-" if value is None else format(value, spec)


def comparison_cautions(result: dict[str, Any]) -> list[str]:
    """Warnings about the comparison itself, then every circuit's own cautions."""
    out: list[str] = []
    sizes = sorted({r["qubits"] for r in result["ranking"]})
    if len(sizes) > 1:
        out.append(
            f"The circuits have different qubit counts ({', '.join(map(str, sizes))}): each KL "
            "and Meyer-Wallach value is measured against the Haar reference of its own size "
            "(the 'Haar MW' column), so the ranking mixes scales; compare circuits of one size."
        )
    for row, report in zip(result["ranking"], _reports_in_rank_order(result), strict=True):
        out += [f"{row['name']}: {c}" for c in report.get("cautions") or []]
    return out


def _reports_in_rank_order(result: dict[str, Any]) -> list[dict[str, Any]]:
    by_source = {
        (r["circuit"]["name"], s): r
        for r, s in zip(result["reports"], result.get("sources") or [], strict=False)
    }
    out = []
    for row in result["ranking"]:
        report = by_source.get((row["name"], row["source"]))
        out.append(report if report is not None else {})
    return out


def comparison_table(result: dict[str, Any]) -> tuple[list[str], list[list[str]]]:
    """The ranking as a table: headers and rows of text, shared by Markdown and HTML."""
    kernels = any(r["kernel_variance"] is not None for r in result["ranking"])
    headers = [
        "rank",
        "circuit",
        "qubits",
        "params",
        "KL, bias-corrected (95% interval)",
        "Meyer-Wallach (95% interval)",
        "Haar MW",
        "barren plateau",
        "QFI rank",
        "policy",
    ]
    if kernels:
        headers += ["kernel variance", "concentrated"]
    rows = []
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
        n = 2 ** r["qubits"]
        haar = f"{(n - 2) / (n + 1):.3f}"
        bp = {True: "yes", False: "no", None: "-"}[r["barren_plateau"]]
        if r["barren_plateau"] is None and r["decay_per_qubit"] is not None:
            bp = "undecided"
        rank = f"{r['rank']}" + (" (tie)" if r["tied_with_previous"] else "")
        row = [
            rank,
            r["name"],
            str(r["qubits"]),
            str(r["parameters"]),
            kl,
            mw,
            haar,
            bp,
            _fmt(r["qfi_rank"], "d"),
            r["policy"] or "-",
        ]
        if kernels:
            concentrated = {True: "yes", False: "no", None: "-"}[r["concentrated"]]
            row += [_fmt(r["kernel_variance"], ".3e"), concentrated]
        rows.append(row)
    return headers, rows


TIE_NOTE = (
    "(tie): the KL interval overlaps the one above; at this sample size the two are not "
    "ordered by the data. Raise the pair count to separate them."
)


def compare_markdown(result: dict[str, Any], images: list[str] | None = None) -> str:
    """A Markdown table of the ranking, with the rule, the ties and the cautions spelled out."""
    headers, rows = comparison_table(result)
    out = [
        "## haarline comparison",
        "",
        f"Ranking rule: {result['ranking_rule']}.",
        "",
        "| " + " | ".join(headers) + " |",
        "|" + " --- |" * len(headers),
        *("| " + " | ".join(row) + " |" for row in rows),
        "",
    ]
    if any(r["tied_with_previous"] for r in result["ranking"]):
        out += [TIE_NOTE, ""]
    cautions = comparison_cautions(result)
    if cautions:
        out += ["**Cautions**", "", *(f"- {c}" for c in cautions), ""]
    for name in images or []:
        out.append(f"![{name}]({name})")
    if images:
        out.append("")
    return "\n".join(out)
