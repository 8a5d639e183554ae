"""What users install: the wheel, built from the sdist, in a fresh environment.

The rest of the suite runs against the editable source tree, which would hide a module
or data file that the package list forgot. Here ``python -m build`` makes the sdist and,
from it, the wheel (as the Dockerfile's ``pip install .`` does); the wheel's file list is
compared with the source tree; then the wheel is installed into a new virtual environment
in a temporary folder outside the repository, and the CLI and a live server are used from
there, as a user would (a wheel smoke test is common practice: tox, nox and httpx's CI
install the package before testing it).

The new environment gets the wheel with ``--no-deps``; its dependencies come from this
environment's site-packages through a plain path entry, which puts the libraries on the
path without running this environment's editable-install hook. So nothing is downloaded
and the only ``haarline`` the new environment can import is the one in the wheel.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import sysconfig
import tarfile
import time
import zipfile
from pathlib import Path

import httpx2 as httpx
import pytest
from live_server import free_port

REPO = Path(__file__).resolve().parents[1]
FOLDERS = {"analysis": "haarline", "service": "haarline/service"}
DATA_SUFFIXES = {".py", ".json", ".md", ".typed"}


@pytest.fixture(scope="module")
def dist(tmp_path_factory: pytest.TempPathFactory) -> Path:
    out = tmp_path_factory.mktemp("dist")
    run = subprocess.run(
        [sys.executable, "-m", "build", "--outdir", str(out), str(REPO)],
        capture_output=True,
        text=True,
        timeout=600,
    )
    assert run.returncode == 0, run.stdout[-3000:] + run.stderr[-3000:]
    return out


@pytest.fixture(scope="module")
def wheel(dist: Path) -> Path:
    (found,) = dist.glob("haarline-*.whl")
    return found


@pytest.fixture(scope="module")
def env(wheel: Path, tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A fresh virtual environment outside the repository with the wheel installed."""
    root = tmp_path_factory.mktemp("venv")
    venv = root / "v"
    subprocess.run([sys.executable, "-m", "venv", str(venv)], check=True, timeout=120)
    python = venv / "bin" / "python"
    purelib = subprocess.run(
        [str(python), "-c", "import sysconfig; print(sysconfig.get_paths()['purelib'])"],
        capture_output=True,
        text=True,
        check=True,
    ).stdout.strip()
    # the dependencies of this environment, as a path entry (its .pth hooks do not run)
    Path(purelib, "haarline-test-deps.pth").write_text(sysconfig.get_paths()["purelib"] + "\n")
    run = subprocess.run(
        [str(python), "-m", "pip", "install", "--no-deps", "--no-index", "-q", str(wheel)],
        capture_output=True,
        text=True,
        timeout=300,
    )
    assert run.returncode == 0, run.stderr[-3000:]
    return venv


def _source_files() -> set[str]:
    expected = set()
    for folder, package in FOLDERS.items():
        for path in (REPO / folder).rglob("*"):
            if path.is_file() and path.suffix in DATA_SUFFIXES and "__pycache__" not in path.parts:
                expected.add(f"{package}/{path.relative_to(REPO / folder).as_posix()}")
    return expected


def test_the_wheel_holds_every_module_and_data_file_of_the_source_tree(wheel: Path):
    with zipfile.ZipFile(wheel) as archive:
        names = {n for n in archive.namelist() if not n.startswith("haarline-")}
    missing = sorted(_source_files() - names)
    assert missing == [], f"missing from the wheel: {missing}"
    extra = sorted(n for n in names if not n.startswith("haarline/"))
    assert extra == [], f"installed outside haarline/: {extra}"


def test_the_sdist_holds_every_source_file(dist: Path):
    # the wheel above was built from this sdist; this names what a rebuild would miss
    (sdist,) = dist.glob("haarline-*.tar.gz")
    with tarfile.open(sdist) as archive:
        names = {n.split("/", 1)[1] for n in archive.getnames() if "/" in n}
    expected = {"pyproject.toml", "setup.py", "README.md"}
    for folder in FOLDERS:
        for path in (REPO / folder).rglob("*"):
            if path.is_file() and path.suffix in DATA_SUFFIXES and "__pycache__" not in path.parts:
                expected.add(path.relative_to(REPO).as_posix())
    assert sorted(expected - names) == []


def _run(env: Path, *args: str, cwd: Path, extra: dict[str, str] | None = None, **kw):
    return subprocess.run(
        [str(env / "bin" / args[0]), *args[1:]],
        cwd=cwd,
        capture_output=True,
        text=True,
        timeout=300,
        env={**os.environ, **(extra or {})},
        **kw,
    )


def test_one_import_name(env: Path, tmp_path: Path):
    ok = _run(
        env,
        "python",
        "-c",
        "import haarline, haarline.service; print(haarline.__file__)",
        cwd=tmp_path,
    )
    assert ok.returncode == 0, ok.stderr
    assert str(env) in ok.stdout  # the wheel's copy, not the source tree
    for name in ("analysis", "service"):
        bad = _run(env, "python", "-c", f"import {name}", cwd=tmp_path)
        assert bad.returncode != 0 and "ModuleNotFoundError" in bad.stderr, name


def test_the_installed_cli_analyzes_and_writes_every_file(env: Path, tmp_path: Path):
    version = _run(env, "haarline", "--version", cwd=tmp_path)
    assert version.returncode == 0 and version.stdout.strip(), version.stderr
    out = tmp_path / "out"
    done = _run(
        env,
        "haarline",
        "analyze",
        "ref:ry-cz-ring",
        "--pairs",
        "200",
        "--samples",
        "100",
        "--out",
        str(out),
        cwd=tmp_path,
    )
    assert done.returncode == 0, done.stderr
    for name in ("report.json", "summary.md", "report.html", "fidelity.png", "circuit.png"):
        assert (out / name).stat().st_size > 0, name
    assert json.loads((out / "report.json").read_text())["circuit"]["name"] == "ry-cz-ring"


def test_the_installed_service_serves_a_job_end_to_end(env: Path, tmp_path: Path):
    data = tmp_path / "data"
    settings = {"HAARLINE_DATA_DIR": str(data), "HAARLINE_WORKERS": "1"}
    made = _run(env, "haarline", "keys", "add", "wheel-check", cwd=tmp_path, extra=settings)
    assert made.returncode == 0, made.stderr
    key = made.stdout.strip().splitlines()[-1]
    port = free_port()
    log = (tmp_path / "server.log").open("wb")
    server = subprocess.Popen(
        [str(env / "bin" / "haarline"), "serve", "--port", str(port)],
        cwd=tmp_path,
        env={**os.environ, **settings},
        stdout=log,
        stderr=subprocess.STDOUT,
        start_new_session=True,
    )
    url = f"http://127.0.0.1:{port}"
    try:
        deadline = time.time() + 60
        ready = False
        while time.time() < deadline and server.poll() is None and not ready:
            try:
                ready = (
                    httpx.get(f"{url}/healthz", timeout=1).status_code == 200
                    and httpx.get(f"{url}/readyz", timeout=1).status_code == 200
                )
            except httpx.HTTPError:
                time.sleep(0.2)
        assert ready, (tmp_path / "server.log").read_text()[-3000:]
        with httpx.Client(
            base_url=url, headers={"Authorization": f"Bearer {key}"}, timeout=30
        ) as client:
            body = {"reference": "ry-cz-ring", "options": {"pairs": 200, "samples": 100}}
            made = client.post("/v1/analyses", json=body)
            assert made.status_code == 202, made.text
            job = made.json()["id"]
            state = None
            while time.time() < deadline + 120 and state not in ("succeeded", "failed"):
                state = client.get(f"/v1/analyses/{job}").json()["state"]
                time.sleep(0.2)
            assert state == "succeeded"
            report = client.get(f"/v1/analyses/{job}/report")
            assert report.status_code == 200 and report.json()["expressibility"]["kl"] > 0
            page = client.get(f"/v1/analyses/{job}/page")
            assert page.status_code == 200 and "<html" in page.text.lower()
            plot = client.get(f"/v1/analyses/{job}/plots/fidelity.png")
            assert plot.status_code == 200 and plot.content[:8] == b"\x89PNG\r\n\x1a\n"
    finally:
        os.killpg(server.pid, 9)
        server.wait(timeout=30)
        log.close()
