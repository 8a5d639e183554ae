"""Ranking several circuits, and the files written by --out."""

import json

from haarline import compare_reports
from haarline.report.ranking import compare_markdown, comparison_table
from haarline.service.cli import main as cli

FAST = ["--pairs", "400", "--samples", "100"]


def row(name, kl=None, interval=None, mw=None, bp=None, params=4):
    return {
        "circuit": {"name": name, "qubits": 2, "layers": 1, "parameters": params},
        "expressibility": None
        if kl is None
        else {"kl": kl + 0.005, "kl_corrected": kl, "interval": interval},
        "entanglement": None if mw is None else {"meyer_wallach": mw, "interval": [mw, mw]},
        "trainability": None if bp is None else {"barren_plateau": bp, "decay_per_qubit": 1.0},
    }


def test_ranking_rule_order_and_ties():
    reports = [
        row("plateau", kl=0.01, interval=[0.0, 0.02], bp=True),
        row("wide", kl=0.30, interval=[0.25, 0.35], mw=0.5),
        row("best", kl=0.10, interval=[0.08, 0.12], mw=0.4),
        row("close", kl=0.11, interval=[0.09, 0.13], mw=0.9),
        row("no-kl", mw=0.99),
    ]
    result = compare_reports(reports, [r["circuit"]["name"] for r in reports])
    names = [r["name"] for r in result["ranking"]]
    # barren plateau last; otherwise lower bias-corrected KL first; missing KL after present
    assert names == ["best", "close", "wide", "no-kl", "plateau"]
    ties = {r["name"]: r["tied_with_previous"] for r in result["ranking"]}
    assert ties == {"best": False, "close": True, "wide": False, "no-kl": False, "plateau": False}
    assert [r["rank"] for r in result["ranking"]] == [1, 2, 3, 4, 5]


def test_equal_kl_falls_back_to_meyer_wallach_then_parameters():
    reports = [
        row("a", 0.1, [0.1, 0.1], 0.2, params=3),
        row("b", 0.1, [0.1, 0.1], 0.8),
        row("c", 0.1, [0.1, 0.1], 0.2, params=2),
    ]
    result = compare_reports(reports, ["a", "b", "c"])
    assert [r["name"] for r in result["ranking"]] == ["b", "c", "a"]


def test_compare_cli_json_and_out(capsys, tmp_path):
    out = tmp_path / "cmp"
    code = cli.main(
        [
            "compare",
            "ref:sim2019-01",
            "ref:sim2019-09",
            *FAST,
            "--format",
            "json",
            "--out",
            str(out),
        ]
    )
    assert code == 0
    result = json.loads(capsys.readouterr().out)
    # sim2019-09 (H, CZ chain, RX) is far less expressive than sim2019-01 (RX RZ on all):
    # its states stay on a graph-state orbit (the structure, not a number from memory)
    assert [r["name"] for r in result["ranking"]] == ["sim2019-01", "sim2019-09"]
    assert (out / "comparison.json").exists() and (out / "comparison.md").exists()
    assert "| 1 | sim2019-01 |" in (out / "comparison.md").read_text()


def test_compare_needs_two(capsys):
    assert cli.main(["compare", "ref:sim2019-01", *FAST]) == 2
    assert "at least two" in capsys.readouterr().err


def test_analyze_out_writes_report_and_summary(capsys, tmp_path):
    out = tmp_path / "review"
    code = cli.main(["analyze", "ref:ry-cz-ring", *FAST, "--out", str(out), "--format", "json"])
    assert code == 0
    printed = json.loads(capsys.readouterr().out)
    assert json.loads((out / "report.json").read_text()) == printed
    summary = (out / "summary.md").read_text()
    assert f"{printed['expressibility']['kl']:.4f}" in summary
    for line in summary.splitlines():
        if line.startswith("!["):
            target = line[line.index("(") + 1 : -1]
            assert (out / target).exists(), target  # every image link resolves


def test_out_into_a_file_is_an_input_error(capsys, tmp_path):
    blocker = tmp_path / "file"
    blocker.write_text("x")
    assert cli.main(["analyze", "ref:ry-cz-ring", *FAST, "--out", str(blocker / "sub")]) == 2
    assert "--out" in capsys.readouterr().err


def test_compare_out_without_plottable_metrics_writes_no_plot(capsys, tmp_path):
    # capacity alone gives nothing to draw: the files are written, the plot is left out
    out = tmp_path / "cap"
    code = cli.main(
        ["compare", "ref:sim2019-01", "ref:sim2019-02", "--metrics", "capacity", "--out", str(out)]
    )
    assert code == 0
    assert sorted(p.name for p in out.iterdir()) == [
        "comparison.html",
        "comparison.json",
        "comparison.md",
    ]


def test_mixed_qubit_counts_get_a_caution_and_every_circuit_keeps_its_own():
    a, b = row("four", kl=0.1, interval=[0.05, 0.15]), row("five", kl=0.2, interval=[0.1, 0.3])
    b["circuit"]["qubits"] = 5
    a["cautions"] = ["only 300 pairs"]
    result = compare_reports([a, b], ["four.json", "five.json"])
    text = compare_markdown(result)
    assert "different qubit counts (2, 5)" in text
    assert "four: only 300 pairs" in text
    headers, rows = comparison_table(result)
    assert "Haar MW" in headers and all(len(r) == len(headers) for r in rows)


def test_compare_out_says_what_it_wrote(capsys, tmp_path):
    out = tmp_path / "cmp"
    code = cli.main(["compare", "ref:ry-cz-ring", "ref:rx-product", *FAST, "--out", str(out)])
    assert code == 0
    err = capsys.readouterr().err
    assert f"wrote comparison.json, comparison.md, comparison.html and 1 plot(s) to {out}" in err
