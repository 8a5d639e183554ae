"""The README's Python example runs, its option table matches the CLI, and DEVELOPERS.md's
layout names every module."""

import re
from pathlib import Path

from haarline.service.cli.main import build_parser

ROOT = Path(__file__).resolve().parents[1]


SERVER_NEEDED = "# needs a running service"


def test_readme_python_example_runs(monkeypatch):
    monkeypatch.chdir(ROOT)
    text = (ROOT / "README.md").read_text()
    blocks = re.findall(r"```python\n(.*?)```", text, flags=re.S)
    assert blocks
    for block in blocks:
        if block.startswith(SERVER_NEEDED):
            continue  # the client example needs a running service: tests/test_client.py
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


def _layout_tree() -> set[str]:
    """Paths the layout block of DEVELOPERS.md names, from its indentation (2 per level)."""
    text = (ROOT / "DEVELOPERS.md").read_text()
    block = text.split("## Layout", 1)[1].split("```")[1]
    named: set[str] = set()
    stack: list[str] = []
    for line in block.splitlines():
        if not line.strip():
            continue
        depth = (len(line) - len(line.lstrip(" "))) // 2
        first = re.split(r"\s{2,}", line.strip())[0]
        items = [item.strip() for item in first.split(",")]
        for item in items:
            if re.fullmatch(r"\w+/", item):
                stack = [*stack[:depth], item.rstrip("/")]
                named.add("/".join(stack))
            elif re.fullmatch(r"\w+\.py", item):
                named.add("/".join([*stack[:depth], item]))
    return named


def test_developers_layout_names_every_module_in_its_folder():
    named = _layout_tree()
    missing = []
    for folder in ("analysis", "service"):
        for path in sorted((ROOT / folder).rglob("*.py")):
            rel = path.relative_to(ROOT).as_posix()
            if path.name == "__init__.py" and path.parent.name != "analysis":
                rel = path.parent.relative_to(ROOT).as_posix()  # a package: its folder
            if rel not in named:
                missing.append(rel)
    assert missing == []
    stale = sorted(n for n in named if n.split("/")[0] in ("analysis", "service"))
    assert [n for n in stale if not (ROOT / n).exists()] == []
