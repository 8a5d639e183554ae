"""A small load run in the suite (``make load`` runs the large one; see tests/load.py).

Six clients share two keys whose queues hold two jobs each, so some submissions are
refused with 429; the clients honour ``Retry-After`` until every job is accepted. Every
accepted job must complete, no response may be a 5xx, every 429 carries ``Retry-After``,
and the server with its workers stays within a memory bound.
"""

from live_server import LiveServer
from load import run_load

MEMORY_BOUND_MB = 1500  # server + 2 workers run at ~500 MB


def test_small_load_every_accepted_job_completes(tmp_path):
    env = {"HAARLINE_QUEUE_PER_KEY": "2", "HAARLINE_RETRY_AFTER": "1"}
    with LiveServer(tmp_path, workers=2, env=env) as server:
        figures = run_load(server, clients=6, jobs=12, keys=2, deadline_seconds=120)
    assert figures["transport_errors"] == [], figures
    assert figures["accepted"] == 12 and figures["completed"] == 12 and figures["lost"] == 0
    assert figures["rejected_429"] > 0 and figures["rejected_without_retry_after"] == 0
    assert figures["server_errors_5xx"] == 0, figures["statuses"]
    assert set(figures["statuses"]) <= {"200", "202", "429"}, figures["statuses"]
    assert figures["peak_rss_mb"] < MEMORY_BOUND_MB, figures
