"""The benchmark script at tiny sizes, so that it never rots (CI times nothing)."""

import json

from conftest import bench_module

compiled_peer = bench_module("compiled_peer")


def test_bench_smoke_run_writes_every_figure(tmp_path, capsys):
    module = bench_module("run")
    out = tmp_path / "results.json"
    module.main(["--smoke", "--out", str(out)])
    results = json.loads(out.read_text())
    assert results["bench_format"] == 1 and results["mode"] == "smoke"
    figures = results["figures"]
    assert set(figures) == {
        "bandwidth",
        "naive",
        "adjoint",
        "references",
        "scan",
        "memory",
        "cluster",
        "compiled",
        "startup",
    }
    for name in ("bandwidth", "naive", "adjoint", "memory"):
        assert figures[name], name
        for row in figures[name]:
            assert row["ratio"] > 0 and "baseline" in row, name
    for row in figures["bandwidth"]:
        base = row["baseline"]
        assert base["bytes_per_second"] > 0 and base["array_bytes"] > 0
        assert row["ratio"] > 0 and len(row["ratio_samples"]) >= 3
    # the plain baseline computes the same fidelities, and both gradient methods agree
    assert all(r["baseline"]["max_fidelity_difference"] < 1e-10 for r in figures["naive"])
    assert all(r["baseline"]["max_gradient_difference"] < 1e-10 for r in figures["adjoint"])
    assert [r["workers"] for r in figures["references"]["runs"]] == [1]
    # a real Dask cluster ran the blocks: small messages, values only, never states
    cl = figures["cluster"]
    assert [r["workers"] for r in cl["runs"]] == [1, 2]
    for r in cl["runs"]:
        assert r["blocks"] == 2 and r["block_seconds"] > 0
        assert 0 < r["sent_bytes_per_block"] < min(1000, r["shared_bytes"])
        assert r["returned_bytes_per_block"] < 8 * r["block_pairs"] + 200
    assert [m["workers"] for m in cl["model"]["points"]] == [10, 100, 10, 100]
    assert all(0 < m["efficiency"] <= 1 for m in cl["model"]["points"])
    # the compiled figure runs where the bench extra installed its simulator, else says why not
    compiled = figures["compiled"]
    if not compiled_peer.installed():
        assert "not installed" in compiled["skipped"] and compiled["rows"] == []
    else:
        assert compiled["skipped"] is None and compiled["rows"]
        for row in compiled["rows"]:
            assert row["ratio"] > 0 and row["baseline"]["max_state_difference"] < 1e-12
    startup = figures["startup"]
    assert startup["version"]["seconds"] > 0 and startup["analyze_small"]["seconds"] > 0
    peer = startup["expressibility_whole"]
    assert peer["ratio"] > 0 and peer["baseline"]["max_fidelity_difference"] < 1e-10
    named = {t["figure"] for t in results["targets"]}
    assert {"bandwidth", "naive", "adjoint", "references", "scan", "memory"} <= named
    assert {"compiled_one_core", "compiled_two_cores", "startup_version", "peer"} <= named
    printed = capsys.readouterr().out
    assert "| bandwidth ratio |" in printed and "| target | value | met |" in printed
    assert "| Dask cluster |" in printed and "| Dask model |" in printed
