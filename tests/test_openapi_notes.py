"""The endpoint notes in openapi-notes/: one per operation, indexed, and their curl examples run.

Conventions (also in openapi-notes/README.md): every fenced block marked ``sh`` in a note is
an example that runs with bash against a real server, in the order of the operations in
openapi.json. A plain block must exit 0 with curl failing on any HTTP error (a test-only
``.curlrc`` adds ``fail-with-body``). A block whose first line is ``# expect: NNN`` shows a
deliberate error: it must exit 0 and its last output line must be that status.
"""

import json
import os
import re
import shutil
import signal
import socket
import subprocess
import sys
import tempfile
import time
import urllib.error
import urllib.request
from pathlib import Path

import pytest
from haarline.service.api.keys import issue_key
from haarline.service.jobs.store import Store

REPO = Path(__file__).resolve().parent.parent
NOTES = REPO / "openapi-notes"
DOCUMENT = NOTES / "openapi.json"
INDEX = NOTES / "README.md"
HTTP_METHODS = ("get", "put", "post", "delete", "patch", "head", "options")
SH_BLOCK = re.compile(r"^```sh\n(.*?)^```\s*$", re.MULTILINE | re.DOTALL)
EXPECT = re.compile(r"# expect: (\d{3})")
LINK = re.compile(r"\[([^\]]+)\]\(([^)]+)\)")


def operations() -> list[tuple[str, str, str]]:
    """(METHOD, path, operationId) of every operation, in the document's order."""
    doc = json.loads(DOCUMENT.read_text(encoding="utf-8"))
    return [
        (method.upper(), path, op["operationId"])
        for path, methods in doc["paths"].items()
        for method, op in methods.items()
        if method in HTTP_METHODS
    ]


def note(operation_id: str) -> Path:
    return NOTES / f"{operation_id}.md"


def examples() -> list[tuple[str, str, int | None]]:
    """(test id, bash code, expected status or None) of every sh block, in run order."""
    out = []
    for _, _, operation_id in operations():
        path = note(operation_id)
        if not path.exists():
            continue  # reported by test_every_operation_has_a_note
        for i, code in enumerate(SH_BLOCK.findall(path.read_text(encoding="utf-8")), 1):
            first = code.splitlines()[0] if code.strip() else ""
            m = EXPECT.fullmatch(first.strip())
            out.append((f"{operation_id}-{i}", code, int(m.group(1)) if m else None))
    return out


EXAMPLES = examples()


# --- (a) the notes and the index match the document ------------------------------------------


@pytest.mark.parametrize("method,path,operation_id", operations(), ids=lambda v: str(v))
def test_every_operation_has_a_note(method, path, operation_id):
    file = note(operation_id)
    assert file.exists(), f"no note {file.relative_to(REPO)} for {method} {path}"
    text = file.read_text(encoding="utf-8")
    title = text.splitlines()[0]
    assert operation_id in title, f"{file.name}: the title should name {operation_id}"
    assert f"{method} {path}" in text, f"{file.name} does not mention '{method} {path}'"
    blocks = SH_BLOCK.findall(text)
    fences = sum(line == "```sh" for line in text.splitlines())
    assert fences == len(blocks), f"{file.name}: an sh block is not closed"
    assert any("curl" in b and EXPECT.match(b) is None for b in blocks), (
        f"{file.name} has no runnable curl example"
    )
    assert "## Errors" in text, f"{file.name} has no Errors section"
    assert 15 <= len(text.splitlines()) <= 60, f"{file.name} should stay short"


def test_no_note_without_an_operation():
    ids = {operation_id for _, _, operation_id in operations()}
    stray = {p.stem for p in NOTES.glob("*.md")} - ids - {"README"}
    assert not stray, f"notes for operations that do not exist: {sorted(stray)}"


def test_index_lists_every_operation():
    rows = set()
    for line in INDEX.read_text(encoding="utf-8").splitlines():
        cells = [c.strip() for c in line.strip().strip("|").split("|")]
        if not line.startswith("|") or len(cells) < 4:
            continue
        link = LINK.fullmatch(cells[2])
        if link is None:
            continue
        method, path = cells[0], cells[1].strip("`")
        assert link.group(2) == f"{link.group(1)}.md", f"index row links elsewhere: {line}"
        assert cells[3], f"index row without a description: {line}"
        rows.add((method, path, link.group(1)))
    assert rows == set(operations())


def test_index_explains_keys_errors_and_development_mode():
    text = INDEX.read_text(encoding="utf-8")
    for heading in ("## Authentication", "## Errors", "## Development mode"):
        assert heading in text
    assert "haarline keys add" in text and "Bearer" in text
    assert "application/problem+json" in text and "errors[].path" in text
    for status in (401, 404, 409, 413, 422, 429, 503):
        assert f"| {status} |" in text, f"the index's error table lacks {status}"


def test_error_examples_print_their_status():
    assert EXAMPLES, "no examples found"
    for test_id, code, expected in EXAMPLES:
        if expected is not None:
            assert "%{http_code}" in code, f"{test_id}: print the status with -w"
        assert "$HAARLINE_URL" in code and "127.0.0.1" not in code, test_id


# --- (b) the examples run against a real server ----------------------------------------------


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def ready(url: str) -> bool:
    try:
        with urllib.request.urlopen(f"{url}/readyz", timeout=1) as response:
            return bool(response.status == 200)
    except urllib.error.HTTPError as exc:
        exc.close()
        return False
    except OSError:
        return False


def stop(proc: subprocess.Popen) -> None:
    try:
        os.killpg(proc.pid, signal.SIGKILL)  # the server and its worker processes
    except ProcessLookupError:
        pass
    proc.wait(timeout=10)


@pytest.fixture(scope="module")
def server():
    root = Path(tempfile.mkdtemp(prefix="haarline-notes-"))
    proc = None
    try:
        data, work, curl_strict, curl_plain = (root / n for n in ("data", "work", "cs", "cp"))
        for d in (data, work, curl_strict, curl_plain):
            d.mkdir()
        (curl_strict / ".curlrc").write_text("fail-with-body\nmax-time = 120\n")
        (curl_plain / ".curlrc").write_text("max-time = 120\n")
        store = Store(data / "haarline.sqlite3")
        store.initialize()
        _, key = issue_key(store, "openapi-notes")
        port = free_port()
        url = f"http://127.0.0.1:{port}"
        # the documented defaults, whatever the caller's environment sets
        env = {k: v for k, v in os.environ.items() if not k.startswith("HAARLINE_")}
        env["HAARLINE_WORKERS"] = "1"
        log = root / "server.log"
        with open(log, "wb") as err:
            proc = subprocess.Popen(
                [sys.executable, "-m", "haarline.service.cli.main", "serve", "--port", str(port)]
                + ["--data-dir", str(data), "--log-level", "warning"],
                cwd=REPO,
                env=env,
                stdin=subprocess.DEVNULL,
                stdout=subprocess.DEVNULL,
                stderr=err,
                start_new_session=True,  # its own process group, workers included
            )
        deadline = time.monotonic() + 60
        while not ready(url):
            if proc.poll() is not None or time.monotonic() > deadline:
                raise AssertionError(f"server did not start:\n{log.read_text()[-3000:]}")
            time.sleep(0.1)
        yield {
            "url": url,
            "key": key,
            "work": work,
            "log": log,
            "curl": {True: curl_strict, False: curl_plain},
        }
    finally:
        if proc is not None:
            stop(proc)
        shutil.rmtree(root, ignore_errors=True)


@pytest.mark.parametrize("code,expected", [e[1:] for e in EXAMPLES], ids=[e[0] for e in EXAMPLES])
def test_curl_example_runs(server, code, expected):
    env = {
        "PATH": os.environ.get("PATH", "/usr/bin:/bin"),
        "HOME": str(server["work"]),
        "LANG": "C.UTF-8",
        "HAARLINE_URL": server["url"],
        "HAARLINE_KEY": server["key"],
        "CURL_HOME": str(server["curl"][expected is None]),
    }
    done = subprocess.run(
        ["bash", "--noprofile", "--norc", "-c", "set -euo pipefail\n" + code],
        cwd=server["work"],
        env=env,
        stdin=subprocess.DEVNULL,
        capture_output=True,
        text=True,
        timeout=180,
    )
    lines = [line for line in done.stdout.splitlines() if line.strip()]
    why = (
        f"exit {done.returncode}\n--- stdout\n{done.stdout[-2000:]}\n--- stderr\n"
        f"{done.stderr[-2000:]}\n--- server log\n{server['log'].read_text()[-2000:]}"
    )
    assert done.returncode == 0, why
    if expected is not None:
        assert lines and lines[-1].strip() == str(expected), f"expected {expected}; {why}"
