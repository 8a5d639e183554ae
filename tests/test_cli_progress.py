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
