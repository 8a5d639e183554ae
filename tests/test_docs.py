"""The README's Python example runs, and its option table matches the CLI."""

import re
from pathlib import Path

from service.cli import build_parser

ROOT = Path(__file__).resolve().parents[1]


def test_readme_python_example_runs(monkeypatch):
    monkeypatch.chdir(ROOT)
    text = (ROOT / "README.md").read_text()
    blocks = re.findall(r"```python\n(.*?)```", text, flags=re.S)
    assert blocks
    for block in blocks:
        exec(compile(block.replace("print(", "(lambda *a: None)("), "README", "exec"), {})


def test_readme_lists_every_analyze_option():
    text = (ROOT / "README.md").read_text()
    parser = build_parser()
    sub = next(a for a in parser._actions if a.dest == "command")
    analyze = sub.choices["analyze"]
    for action in analyze._actions:
        for flag in action.option_strings:
            if flag.startswith("--") and flag != "--help":
                assert f"`{flag}" in text, flag
