"""The report page in a real headless Chromium, loaded from a real server on loopback.

Chromium is driven over the DevTools protocol (a WebSocket; the ``websocket-client``
package): the test reads the metric cells from the DOM, checks every image decoded
(``naturalWidth > 0``), collects console errors and writes a screenshot to
``out/screenshots/`` for people to look at. It skips, saying why, where Chromium is absent.
"""

import base64
import json
import shutil
import subprocess
import tempfile
import time
from pathlib import Path

import httpx2 as httpx
import pytest

websocket = pytest.importorskip("websocket", reason="websocket-client is not installed")

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
pytestmark = pytest.mark.skipif(
    CHROMIUM is None, reason="Chromium is not installed (Debian package 'chromium')"
)

REPO = Path(__file__).resolve().parent.parent
FLAGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--disable-extensions",
    "--window-size=1100,2400",
    "--remote-debugging-port=0",
]


class Browser:
    """The least of a DevTools client: one page, commands and collected events."""

    def __init__(self, *extra: str):
        self.profile = tempfile.mkdtemp(prefix="haarline-chromium-")
        self.proc = subprocess.Popen(
            [CHROMIUM, *FLAGS, *extra, f"--user-data-dir={self.profile}", "about:blank"],
            stdout=subprocess.DEVNULL,
            stderr=subprocess.DEVNULL,
        )
        port_file = Path(self.profile) / "DevToolsActivePort"
        deadline = time.time() + 30
        while not port_file.exists() or not port_file.read_text().strip():
            assert time.time() < deadline, "Chromium did not open its DevTools port"
            time.sleep(0.1)
        port = int(port_file.read_text().split()[0])
        targets = httpx.get(f"http://127.0.0.1:{port}/json/list", timeout=10).json()
        page = next(t for t in targets if t["type"] == "page")
        self.ws = websocket.create_connection(
            page["webSocketDebuggerUrl"], timeout=30, suppress_origin=True
        )
        self.next_id = 0
        self.events: list[dict] = []
        for domain in ("Page", "Runtime", "Log"):
            self.call(f"{domain}.enable")

    def call(self, method: str, **params):
        self.next_id += 1
        self.ws.send(json.dumps({"id": self.next_id, "method": method, "params": params}))
        while True:
            msg = json.loads(self.ws.recv())
            if msg.get("id") == self.next_id:
                if "error" in msg:
                    raise AssertionError(f"{method}: {msg['error']}")
                return msg.get("result", {})
            self.events.append(msg)

    def wait_event(self, method: str, timeout: float = 30):
        deadline = time.time() + timeout
        while time.time() < deadline:
            if any(e.get("method") == method for e in self.events):
                return
            self.ws.settimeout(max(0.1, deadline - time.time()))
            self.events.append(json.loads(self.ws.recv()))
        raise AssertionError(f"no {method} within {timeout} s")

    def evaluate(self, expression: str):
        result = self.call(
            "Runtime.evaluate", expression=expression, returnByValue=True, awaitPromise=True
        )
        return result["result"].get("value")

    def errors(self) -> list[str]:
        out = []
        for e in self.events:
            if e.get("method") == "Runtime.consoleAPICalled" and e["params"]["type"] == "error":
                out.append(str(e["params"]["args"]))
            if e.get("method") == "Runtime.exceptionThrown":
                out.append(str(e["params"]["exceptionDetails"]))
            if e.get("method") == "Log.entryAdded" and e["params"]["entry"]["level"] == "error":
                out.append(e["params"]["entry"]["text"])
        return out

    def close(self):
        try:
            self.ws.close()
        finally:
            self.proc.kill()
            self.proc.wait(timeout=10)
            shutil.rmtree(self.profile, ignore_errors=True)


@pytest.fixture
def browser():
    b = Browser()
    yield b
    b.close()


def test_report_page_in_headless_chromium(live_server, live_client, browser):
    c = live_client
    opts = {
        "pairs": 500,
        "samples": 200,
        "seed": 8,
        "metrics": ["expressibility", "entanglement", "trainability", "capacity"],
        "scan": [2, 3, 4, 6],
        "grad_samples": 60,
    }
    url = c.post("/v1/analyses", json={"reference": "ry-cz-ring", "options": opts}).headers[
        "location"
    ]
    deadline = time.time() + 120
    while c.get(url).json()["state"] != "succeeded":
        assert time.time() < deadline
        time.sleep(0.2)
    report = c.get(f"{url}/report").json()
    share = c.post(f"{url}/share", json={"ttl_seconds": 600}).json()
    base = live_server.url
    link = share["url"].replace("http://127.0.0.1:8000", base)

    browser.call("Page.navigate", url=link)
    browser.wait_event("Page.loadEventFired")
    cells = browser.evaluate(
        "JSON.stringify(Object.fromEntries([...document.querySelectorAll('[data-metric]')]"
        ".map(e => [e.dataset.metric, e.textContent])))"
    )
    cells = json.loads(cells)
    assert cells["expressibility.kl"] == f"{report['expressibility']['kl']:.4f}"
    assert cells["entanglement.meyer_wallach"] == f"{report['entanglement']['meyer_wallach']:.4f}"
    assert (
        cells["trainability.variance"] == f"{report['trainability']['points'][-1]['variance']:.3e}"
    )
    assert cells["capacity.qfi_rank"].startswith(f"{report['capacity']['qfi_rank']} /")
    images = json.loads(
        browser.evaluate(
            "JSON.stringify([...document.images].map(i => [i.dataset.name, i.complete, "
            "i.naturalWidth]))"
        )
    )
    assert len(images) == len(c.get(f"{url}/plots").json()) >= 4
    assert all(done and width > 0 for _, done, width in images), images
    assert browser.errors() == []
    shot = browser.call("Page.captureScreenshot", format="png", captureBeyondViewport=True)
    out = REPO / "out" / "screenshots"
    out.mkdir(parents=True, exist_ok=True)
    (out / "report-page.png").write_bytes(base64.b64decode(shot["data"]))

    # phone width: the page still has no horizontal overflow outside its scroll boxes
    browser.call(
        "Emulation.setDeviceMetricsOverride",
        width=390,
        height=844,
        deviceScaleFactor=2,
        mobile=True,
    )
    browser.call("Page.reload")
    time.sleep(1.0)
    overflow = browser.evaluate("document.documentElement.scrollWidth > window.innerWidth + 1")
    assert overflow is False
    shot = browser.call("Page.captureScreenshot", format="png")
    (out / "report-page-phone.png").write_bytes(base64.b64decode(shot["data"]))


def test_share_link_for_another_job_is_refused_in_the_browser(live_server, live_client, browser):
    c = live_client
    body = {"reference": "rx-product", "options": {"pairs": 200, "samples": 50}}
    first = c.post("/v1/analyses", json=body).headers["location"]
    second = c.post("/v1/analyses", json={**body, "options": {"pairs": 201, "samples": 50}})
    token = c.post(f"{first}/share").json()["url"].split("token=")[1]
    base = live_server.url
    r = httpx.get(f"{base}{second.headers['location']}/page", params={"token": token})
    assert r.status_code == 403
    assert httpx.get(f"{base}{first}/page").status_code == 401


# every host but loopback is unreachable: a proxy on a closed loopback port takes all
# other traffic (Chromium never proxies loopback), and no name but 127.0.0.1 resolves
OFFLINE = (
    "--proxy-server=http://127.0.0.1:9",
    "--host-resolver-rules=MAP * ~NOTFOUND, EXCLUDE 127.0.0.1",
)


def test_interactive_docs_work_with_the_network_blocked(live_server):
    offline = Browser(*OFFLINE)
    try:
        offline.call("Network.enable")
        offline.call("Page.navigate", url=f"{live_server.url}/docs")
        offline.wait_event("Page.loadEventFired")
        deadline = time.time() + 30
        count = 0
        while time.time() < deadline:
            count = offline.evaluate("document.querySelectorAll('.opblock').length")
            if count:
                break
            time.sleep(0.2)
        document = httpx.get(f"{live_server.url}/openapi.json").json()
        operations = [
            op["operationId"] for ops in document["paths"].values() for op in ops.values()
        ]
        # Swagger UI draws the webhooks (the job-end notification) as operations too
        hooks = [op["operationId"] for ops in document["webhooks"].values() for op in ops.values()]
        assert count == len(operations) + len(hooks) and len(operations) > 20
        shown = offline.evaluate(
            "JSON.stringify([...document.querySelectorAll('.opblock')].map(e => e.id))"
        )
        for operation in ("createAnalysis", "getAnalysisReport", "scoreCircuit"):
            assert operation in shown
        requested = [
            e["params"]["request"]["url"]
            for e in offline.events
            if e.get("method") == "Network.requestWillBeSent"
        ]
        elsewhere = [u for u in requested if not u.startswith((live_server.url, "data:"))]
        assert requested and elsewhere == []
        failed = [e["params"] for e in offline.events if e.get("method") == "Network.loadingFailed"]
        assert failed == []
        assert offline.errors() == []
    finally:
        offline.close()
