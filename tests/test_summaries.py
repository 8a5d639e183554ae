"""What a reader sees: every value shown beside an interval lies inside it, in every format.

A regression of trust (issue 18): the plug-in KL used to sit beside the interval of the
bias-corrected KL, outside it. The checks read the numbers back from the rendered text,
Markdown and HTML, as a reader would.
"""

from __future__ import annotations

import html
import re

import haarline
import pytest
from haarline.service.api.page import report_page

NUMBER = r"-?\d+(?:\.\d+)?(?:e[+-]?\d+)?"
TEXT_LINE = re.compile(rf"({NUMBER})\s+95% interval ({NUMBER}) \.\. ({NUMBER})")
TABLE_CELL = re.compile(rf"^({NUMBER})$")
INTERVAL_CELL = re.compile(rf"^({NUMBER}) \.\. ({NUMBER})$")


def _check_pair(value: str, interval: str, where: str) -> int:
    m, iv = TABLE_CELL.match(value.strip()), INTERVAL_CELL.match(interval.strip())
    if not (m and iv):
        return 0
    v, lo, hi = float(m.group(1)), float(iv.group(1)), float(iv.group(2))
    assert lo <= v <= hi, f"{where}: {value} outside {interval}"
    return 1


def shown_pairs(report: dict) -> int:
    """Check text, Markdown and HTML; return how many (value, interval) pairs were seen."""
    seen = 0
    for line in haarline.to_text(report).splitlines():
        for m in TEXT_LINE.finditer(line):
            v, lo, hi = (float(g) for g in m.groups())
            assert lo <= v <= hi, f"text: {line.strip()}"
            seen += 1
    for line in haarline.to_markdown(report).splitlines():
        cells = [c.strip() for c in line.strip().strip("|").split("|")]
        if line.startswith("|") and len(cells) == 4:
            seen += _check_pair(cells[1], cells[2], f"markdown: {line}")
    page = report_page(report, {})
    for row in re.findall(r"<tr><th scope=\"row\">.*?</tr>", page):
        cells = [html.unescape(c) for c in re.findall(r"<td[^>]*>(.*?)</td>", row)]
        if len(cells) >= 2:
            seen += _check_pair(cells[0], cells[1], f"html: {row}")
    return seen


@pytest.mark.parametrize("name", haarline.reference_names())
def test_every_reference_shows_each_value_inside_its_interval(name):
    report = haarline.analyze(haarline.load_reference(name))
    # expressibility, E[F^2] and Meyer-Wallach, each in three formats
    assert shown_pairs(report) >= 9


def test_a_model_with_every_metric_shows_each_value_inside_its_interval():
    circuit = haarline.parse_circuit(
        {
            "name": "summary-check",
            "qubits": 3,
            "inputs": 3,
            "layers": 2,
            "layer": [
                {"gate": "rx", "input": "qubit"},
                {"gate": "ry"},
                {"gate": "cz", "on": "ring"},
            ],
        }
    )
    options = haarline.AnalysisOptions(
        metrics=list(haarline.REGISTRY),
        pairs=600,
        samples=200,
        grad_samples=40,
        scan=[2, 3, 4, 5, 6],
        kernel_pairs=400,
        spectrum_samples=2,
        layers_sweep=[1, 2],
    )
    assert shown_pairs(haarline.analyze(circuit, options)) >= 15


def test_lie_and_scan_disagreeing_get_one_verdict_in_every_format():
    # zz-x-ring: the algebra grows polynomially, but neither the observable nor the input
    # state lies in it, so the sampled scan's barren-plateau verdict stands
    report = haarline.analyze(
        haarline.load_reference("zz-x-ring"),
        haarline.AnalysisOptions(metrics=["lie", "trainability"], scan=[2, 4, 6, 8], seed=2),
    )
    text, markdown = haarline.to_text(report), haarline.to_markdown(report)
    page = report_page(report, {})
    for rendered in (text, markdown, html.unescape(page)):
        assert "The sampled scan stands" in rendered
        assert "does not apply here" in rendered


@pytest.mark.parametrize(
    ("name", "level", "reason"),
    [
        ("rx-product", "warn", "no entanglement"),
        ("rx-product", "warn", "far from Haar"),
        ("sim2019-11", "pass", None),
    ],
)
def test_the_banner_colour_follows_the_stated_rule(name, level, reason):
    from haarline.report.verdict import banner

    flag = banner(haarline.analyze(haarline.load_reference(name)))
    assert flag.level == level
    if reason:
        assert any(reason in r for r in flag.reasons)


def test_a_failed_policy_makes_the_banner_red():
    from haarline.report.verdict import banner

    report = haarline.analyze(haarline.load_reference("ry-cz-ring"))
    report["policy"] = {"name": "strict", "status": "fail", "rules": []}
    assert banner(report).level == "fail"
    assert 'class="verdict fail"' in report_page(report, {})


def test_options_of_metrics_not_asked_for_are_named():
    report = haarline.analyze(
        haarline.load_reference("ry-cz-ring"),
        haarline.AnalysisOptions(pairs=300, samples=100, grad_samples=300, capacity_points=7),
    )
    ignored = [c for c in report["cautions"] if "changed nothing" in c]
    assert len(ignored) == 2
    assert any("grad_samples (--grad-samples)" in c and "trainability, lie" in c for c in ignored)
    assert any("capacity_points" in c for c in ignored)
