"""A client generated from openapi-notes/openapi.json works against a real server.

openapi-python-client (a test extra) generates a package from the committed document,
once per session, and must print no warning (``--fail-on-warning``: a response it cannot
read, such as a media type it does not know, is a warning and the operation would be
left out). The generated package is imported and, against ``haarline serve`` on
loopback, creates a small analysis, waits for it, reads the report as typed objects and
downloads a plot as PNG bytes.
"""

import importlib
import os
import subprocess
import sys
import time
from pathlib import Path

import pytest

DOCUMENT = Path(__file__).parents[1] / "openapi-notes" / "openapi.json"
PACKAGE = "haarline_client"  # the generator's name for the document's title, "haarline"


@pytest.fixture(scope="session")
def generated(tmp_path_factory):
    """The generated package, imported from a temporary directory."""
    root = tmp_path_factory.mktemp("generated")
    # the generator formats its output with ruff, which it installs beside itself
    bin_dir = str(Path(sys.executable).parent)
    env = {**os.environ, "PATH": bin_dir + os.pathsep + os.environ.get("PATH", "")}
    done = subprocess.run(
        [
            os.path.join(bin_dir, "openapi-python-client"),
            "generate",
            "--path",
            str(DOCUMENT),
            "--meta",
            "none",
            "--output-path",
            str(root / PACKAGE),
            "--fail-on-warning",
        ],
        cwd=root,
        env=env,
        capture_output=True,
        text=True,
        timeout=120,
    )
    printed = (done.stdout + done.stderr).strip()
    assert done.returncode == 0, printed
    # it prints only where it wrote the package: no warning, no skipped step
    assert printed == f"Generating {root / PACKAGE}", printed
    sys.path.insert(0, str(root))
    try:
        yield importlib.import_module(PACKAGE)
    finally:
        sys.path.remove(str(root))
        for name in [m for m in sys.modules if m == PACKAGE or m.startswith(PACKAGE + ".")]:
            del sys.modules[name]


def test_the_generated_client_analyzes_reads_the_typed_report_and_downloads_a_plot(
    generated, live_server
):
    api = importlib.import_module(f"{PACKAGE}.api.analyses")
    models = importlib.import_module(f"{PACKAGE}.models")
    for name in ("create_analysis", "get_analysis", "get_analysis_report", "get_analysis_plot"):
        importlib.import_module(f"{api.__name__}.{name}")
    client = generated.AuthenticatedClient(base_url=live_server.url, token=live_server.key())
    with client:
        body = models.AnalysisCreate.from_dict(
            {"reference": "ry-cz-ring", "options": {"pairs": 60, "bins": 6, "samples": 20}}
        )
        job = api.create_analysis.sync(client=client, body=body)
        assert isinstance(job, models.JobPublic), job
        deadline = time.monotonic() + 60
        while job.state.value in ("queued", "running") and time.monotonic() < deadline:
            time.sleep(0.1)
            job = api.get_analysis.sync(job.id, client=client)
        assert job.state.value == "succeeded", job

        report = api.get_analysis_report.sync(job.id, client=client)
        assert isinstance(report, models.Report), report
        assert isinstance(report.expressibility, models.ExpressibilityResult)
        assert report.expressibility.pairs == 60 and len(report.expressibility.histogram) == 6
        assert report.circuit.name == "ry-cz-ring" and report.options.seed == 1
        assert report.trainability is None  # not asked for: null, typed as such

        plot = api.get_analysis_plot.sync(job.id, "fidelity.png", client=client)
        assert isinstance(plot, generated.types.File), plot
        png = plot.payload.read()
        assert png[:8] == b"\x89PNG\r\n\x1a\n"
        # the same bytes as a plain request for image/png
        with live_server.client(client.token) as plain:
            direct = plain.get(f"/v1/analyses/{job.id}/plots/fidelity.png")
        assert direct.headers["content-type"] == "image/png" and direct.content == png
