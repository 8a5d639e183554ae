"""Long work is announced, bounded on request, and shows a bar with the time left."""

import io
import time

from haarline.service.cli import main as cli
from haarline.service.cli.progress import TerminalProgress


class FakeTerminal(io.StringIO):
    def isatty(self):
        return True


def test_max_seconds_refuses_work_estimated_above_it(capsys):
    code = cli.main(["analyze", "ref:ry-cz-ring", "--pairs", "9000000", "--max-seconds", "1"])
    err = capsys.readouterr().err
    assert code == 2
    assert err.startswith("haarline: error: --max-seconds: the analysis is estimated at about")
    assert "expressibility" in err and err.count("\n") == 1


def test_large_work_is_announced_before_it_starts(capsys, monkeypatch):
    # the announcement threshold, lowered so that a small run crosses it
    monkeypatch.setattr(cli, "ANNOUNCE_SECONDS", 0.0)
    assert cli.main(["analyze", "ref:ry-cz-ring", "--pairs", "200", "--samples", "50"]) == 0
    assert "haarline: estimated about" in capsys.readouterr().err


def test_the_bar_appears_after_the_delay_and_shows_the_time_left():
    stream = FakeTerminal()
    bar = TerminalProgress(stream, delay=0.0, stages=2, estimate=10.0, tick=0.05)
    try:
        time.sleep(0.15)  # the ticker draws before any report, from the estimate
        assert "left" in stream.getvalue()
        bar("expressibility", 50, 100)
        line = bar.line(elapsed=10.0)
        # half of the first of two stages: 25% overall; 10 s elapsed -> 30 s left
        assert "25.0%" in line and "0:10 elapsed, 0:30 left" in line
    finally:
        bar.close()
    assert stream.getvalue().endswith("\n")


def test_nothing_is_drawn_when_stderr_is_not_a_terminal():
    stream = io.StringIO()
    bar = TerminalProgress(stream, delay=0.0, tick=0.01)
    bar("entanglement", 1, 2)
    time.sleep(0.05)
    bar.close()
    assert stream.getvalue() == ""


def test_a_description_with_three_mistakes_yields_three_lines(tmp_path, capsys):
    bad = tmp_path / "three.json"
    bad.write_text(
        '{"qubits": 3, "inputs": 1, "layer": [{"gate": "h", "angle": 1.0},'
        ' {"gate": "cz", "on": [[0, 5]]}, {"gate": "rx", "input": 4}, {"gate": "ry"}]}'
    )
    assert cli.main(["check", str(bad)]) == 2
    lines = capsys.readouterr().err.splitlines()
    assert len(lines) == 3
    assert lines[0].endswith("layer[0].angle: the gate 'h' has no angle; only rx ry rz crx cry "
                             "crz rxx ryy rzz cphase take 'angle'")  # fmt: skip
    assert "layer[1].on[0][1]: qubit 5 is out of range" in lines[1]
    assert "layer[2].input: feature 4 is out of range for 1 inputs" in lines[2]


def test_a_policy_with_several_mistakes_names_each(tmp_path, capsys):
    policy = tmp_path / "p.yaml"
    policy.write_text(
        "rules:\n  - metric: expressibility.kl\n    fail_above: x\n"
        "  - metric: nothing.here\n    fail_below: 1\n"
        "  - metric: entanglement.meyer_wallach\n"
    )
    assert cli.main(["analyze", "ref:ry-cz-ring", "--policy", str(policy)]) == 2
    lines = capsys.readouterr().err.splitlines()
    assert [line.split(": ")[3] for line in lines] == ["rules[0].fail_above", "rules[2]"], lines


def test_usage_mistakes_are_one_line_with_a_hint(capsys):
    assert cli.main(["analyze", "ref:ry-cz-ring", "--workers", "0"]) == 2
    err = capsys.readouterr().err
    assert err == (
        "haarline: error: argument --workers: expected 1..64, got 0 "
        "(see 'haarline analyze --help')\n"
    )
