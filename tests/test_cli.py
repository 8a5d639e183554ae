"""The ``haarline`` command line: output, exit codes and error lines.

Exit codes (DESIGN.md section 5): 0 ok, 1 policy failed, 2 bad input. Bad input gives
one ``haarline: error: SOURCE: PATH: message`` line per problem on stderr and never a
traceback; ``--format json`` prints exactly one JSON document on stdout.
"""

from __future__ import annotations

import io
import json
import subprocess
import sys
from pathlib import Path

import haarline
import pytest
from haarline.circuit.model import MAX_DESCRIPTION_BYTES
from haarline.service.cli import main as cli

REPO = Path(__file__).resolve().parent.parent
FAST = ["--pairs", "50", "--samples", "20"]

# A small circuit whose facts are worked out by hand below.
TINY = {
    "name": "tiny-ladder",
    "qubits": 3,
    "layers": 2,
    "prepare": [{"gate": "h"}],
    "layer": [{"gate": "ry"}, {"gate": "cx", "on": "chain"}],
    "finish": [{"gate": "rz", "on": [0]}],
}
# prepare: h x3. Each layer: ry x3, then cx(0,1), cx(1,2). finish: rz on qubit 0.
# gates 3 + 2*(3+2) + 1 = 14; parameters 2*3 + 1 = 7; two-qubit 4.
# Depth by the as-soon-as-possible schedule (common practice), levels of q0 q1 q2:
# h -> 1 1 1; ry -> 2 2 2; cx(0,1) -> 3 3 2; cx(1,2) -> 3 4 4;
# ry -> 4 5 5; cx(0,1) -> 6 6 5; cx(1,2) -> 6 7 7; rz(0) -> 7 7 7. Depth 7.
TINY_CHECK = [
    "tiny-ladder: valid",
    "  qubits           3",
    "  layers           2",
    "  parameters       7",
    "  gates            14 (cx 4, h 3, ry 6, rz 1)",
    "  two-qubit gates  4",
    "  depth            7",
]


def run(capsys, *argv: str) -> tuple[int, str, str]:
    code = cli.main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def run_process(*argv: str, stdin: bytes | None = None) -> subprocess.CompletedProcess:
    return subprocess.run(
        [sys.executable, "-m", "haarline.service.cli.main", *argv],
        input=stdin,
        capture_output=True,
        cwd=REPO,
        timeout=120,
    )


def write_json(tmp_path: Path, name: str, data) -> Path:
    path = tmp_path / name
    path.write_text(json.dumps(data), encoding="utf-8")
    return path


@pytest.fixture
def tiny(tmp_path) -> Path:
    return write_json(tmp_path, "tiny.json", TINY)


def assert_one_error_line(err: str, *words: str) -> str:
    lines = err.splitlines()
    assert len(lines) == 1, err
    line = lines[0]
    assert line.startswith("haarline: error: "), line
    assert "Traceback" not in err
    for word in words:
        assert word in line, f"{word!r} not in {line!r}"
    return line


# ------------------------------------------------------------------------- check


def test_check_prints_the_facts(capsys, tiny):
    code, out, err = run(capsys, "check", str(tiny))
    assert code == cli.EXIT_OK == 0
    assert out.splitlines() == TINY_CHECK
    assert err == ""


def test_check_json_facts(capsys, tiny):
    code, out, _ = run(capsys, "check", str(tiny), "--format", "json")
    assert code == 0
    f = json.loads(out)
    assert (f["qubits"], f["layers"], f["parameters"], f["gates"]) == (3, 2, 7, 14)
    assert f["gate_counts"] == {"cx": 4, "h": 3, "ry": 6, "rz": 1}
    assert (f["two_qubit_gates"], f["depth"]) == (4, 7)


def test_check_at_another_size(capsys, tiny):
    # 5 qubits, 1 layer: h x5, ry x5, cx chain x4, rz x1 -> 15 gates, 6 parameters
    code, out, _ = run(capsys, "check", str(tiny), "--qubits", "5", "--layers", "1")
    assert code == 0
    lines = out.splitlines()
    assert "  qubits           5" in lines
    assert "  parameters       6" in lines
    assert "  gates            15 (cx 4, h 5, ry 5, rz 1)" in lines


@pytest.mark.parametrize(
    ("flag", "value"), [("--qubits", "0"), ("--qubits", "99"), ("--layers", "0")]
)
def test_check_size_flags_out_of_range(capsys, tiny, flag, value):
    code, out, err = run(capsys, "check", str(tiny), flag, value)
    assert code == 2 and out == ""
    assert_one_error_line(err, flag, value, "allowed range")


def test_check_draws_the_diagram_without_analysing(capsys, tiny, tmp_path, monkeypatch):
    def no_analysis(*args, **kwargs):
        raise AssertionError("check --diagram must not analyse")

    monkeypatch.setattr(haarline, "analyze", no_analysis)
    target = tmp_path / "tiny.png"
    code, out, err = run(capsys, "check", str(tiny), "--layers", "3", "--diagram", str(target))
    assert code == 0 and out.splitlines()[0] == "tiny-ladder: valid"
    assert err == f"haarline: wrote the circuit diagram to {target}\n"
    program = haarline.expand(haarline.parse_circuit(TINY), layers=3)
    assert target.read_bytes() == haarline.circuit_diagram_png(program)


def test_check_json_with_a_diagram_prints_only_the_facts(capsys, tiny, tmp_path):
    target = tmp_path / "tiny.png"
    code, out, _ = run(capsys, "check", str(tiny), "--format", "json", "--diagram", str(target))
    assert code == 0 and json.loads(out)["gates"] == 14
    assert target.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_check_diagram_that_cannot_be_written(capsys, tiny, tmp_path):
    target = tmp_path / "missing" / "tiny.png"
    code, out, err = run(capsys, "check", str(tiny), "--diagram", str(target))
    assert code == 2 and out == ""
    assert_one_error_line(err, "--diagram", "cannot write", "No such file or directory")


def test_check_yaml_file(capsys, tmp_path):
    path = tmp_path / "tiny.yaml"
    path.write_text(
        "name: tiny-ladder\nqubits: 3\nlayers: 2\nprepare:\n  - gate: h\n    on: all\n"
        "layer:\n  - gate: ry\n  - gate: cx\n    on: chain\nfinish:\n  - {gate: rz, on: [0]}\n",
        encoding="utf-8",
    )
    code, out, _ = run(capsys, "check", str(path))
    assert code == 0 and out.splitlines() == TINY_CHECK


# --------------------------------------------------------------------- bad files

BAD_FILES = {
    "unknown-gate.json": (
        json.dumps({"qubits": 2, "layer": [{"gate": "toffoli"}]}),
        ["layer[0].gate", '"toffoli"', "cx"],
    ),
    "out-of-range.json": (
        json.dumps({"qubits": 4, "layer": [{"gate": "ry"}, {"gate": "rx", "on": [5]}]}),
        ["layer[1].on[0]", "qubit 5 is out of range for 4 qubits (0..3)"],
    ),
    "pair-range.json": (
        json.dumps({"qubits": 4, "layer": [{"gate": "cz", "on": [[0, 1], [1, 2], [2, 9]]}]}),
        ["layer[0].on[2][1]", "qubit 9"],
    ),
    "unknown-key.json": (
        json.dumps({"qubits": 2, "layer": [{"gate": "ry"}], "depth": 4}),
        ["depth: unknown key"],
    ),
    "no-gates.json": (json.dumps({"qubits": 2, "layer": []}), ["layer: ", "no gates"]),
    "missing-layer.json": (json.dumps({"qubits": 2}), ["layer: required key is missing"]),
    "nan-angle.json": (
        '{"qubits": 2, "layer": [{"gate": "rx", "angle": NaN}]}',
        ["layer[0].angle", "finite"],
    ),
    "broken.json": ('{"qubits": 2,\n "layer": [}', ["(root)", "line 2, column 12"]),
    "duplicate.json": (
        '{"qubits": 2, "qubits": 3, "layer": [{"gate": "h"}]}',
        ["(root)", "duplicate key 'qubits'"],
    ),
    "duplicate.yaml": ("qubits: 2\nqubits: 3\nlayer: [{gate: h}]\n", ["line 2", "duplicate"]),
    "array.json": ("[1, 2, 3]", ["(root)", "expected an object"]),
    "bad-bytes.json": (b'{"name": "\xff\xfe"}', ["(root)", "UTF-8"]),
    "too-big.json": (b" " * (MAX_DESCRIPTION_BYTES + 1), ["(root)", "bytes", "limit"]),
}


@pytest.fixture(params=sorted(BAD_FILES))
def bad_file(request, tmp_path) -> tuple[Path, list[str]]:
    content, words = BAD_FILES[request.param]
    path = tmp_path / request.param
    if isinstance(content, bytes):
        path.write_bytes(content)
    else:
        path.write_text(content, encoding="utf-8")
    return path, words


@pytest.mark.parametrize("command", [["check"], ["analyze", *FAST]])
def test_bad_files_exit_2_with_one_error_line(capsys, bad_file, command):
    path, words = bad_file
    code, out, err = run(capsys, command[0], str(path), *command[1:])
    assert code == cli.EXIT_INPUT == 2
    assert out == ""
    assert_one_error_line(err, f"haarline: error: {path}: ", *words)


@pytest.mark.parametrize("command", ["check", "analyze"])
def test_missing_file_and_directory(capsys, tmp_path, command):
    code, _, err = run(capsys, command, str(tmp_path / "nowhere.json"))
    assert code == 2
    assert_one_error_line(err, "nowhere.json", "no such file")
    code, _, err = run(capsys, command, str(tmp_path))
    assert code == 2
    assert_one_error_line(err, "directory")


def test_unusable_file_name(capsys):
    code, _, err = run(capsys, "check", "x" * 5000 + ".json")
    assert code == 2
    assert_one_error_line(err, "cannot read the file")


def test_bad_file_as_a_real_process(tmp_path):
    path = write_json(tmp_path, "c.json", {"qubits": 4, "layer": [{"gate": "rx", "on": [5]}]})
    for command in (["check"], ["analyze", *FAST]):
        proc = run_process(command[0], str(path), *command[1:])
        assert proc.returncode == 2
        assert proc.stdout == b""
        assert_one_error_line(proc.stderr.decode(), "layer[0].on[0]", "qubit 5")


# ------------------------------------------------------------------- bad options


@pytest.mark.parametrize(
    ("flags", "words"),
    [
        (["--pairs", "1"], ["--pairs", "got 1", "2..10000000"]),
        (["--bins", "0"], ["--bins", "got 0", "2..100000"]),
        (["--seed", "-1"], ["--seed", "got -1", "0.."]),
        (["--samples", "1"], ["--samples", "got 1"]),
        (["--layers-sweep", "0"], ["--layers-sweep", "got 0", "1..10000"]),  # 1..0 is empty
        (["--layers-sweep", "20000"], ["--layers-sweep", "got 20000", "1..10000"]),
        (["--layers-sweep", "200"], ["--layers-sweep", "200 values", "at most 100"]),
        (["--layers-sweep", "1,0"], ["--layers-sweep", "0", "1..10000"]),
    ],
)
def test_option_values_out_of_range(capsys, tiny, flags, words):
    code, out, err = run(capsys, "analyze", str(tiny), *FAST, *flags)
    assert code == 2 and out == ""
    assert_one_error_line(err, *words)


@pytest.mark.parametrize(
    ("flags", "words"),
    [
        (["--metrics", "foo"], ["--metrics", "'foo'", "expressibility"]),
        (["--metrics", ","], ["--metrics"]),
        (["--memory-budget", "xyz"], ["--memory-budget", "'xyz'"]),
        (["--memory-budget", "0"], ["--memory-budget"]),
        (["--pairs", "many"], ["--pairs", "'many'"]),
        (["--format", "html"], ["--format", "'html'"]),
        (["--layers-sweep", "a,b"], ["--layers-sweep"]),
    ],
)
def test_flags_argparse_rejects(capsys, tiny, flags, words):
    code, out, err = run(capsys, "analyze", str(tiny), *flags)
    assert code == 2 and out == ""
    assert "Traceback" not in err
    last = err.strip().splitlines()[-1]
    assert "error:" in last
    for word in words:
        assert word in last


@pytest.mark.parametrize("flags", [["--pairs", "1"], ["--metrics", "foo"]])
def test_bad_flags_as_a_real_process(tiny, flags):
    proc = run_process("analyze", str(tiny), *FAST, *flags)
    assert proc.returncode == 2
    assert proc.stdout == b""
    assert b"Traceback" not in proc.stderr


def test_usage_errors_return_2_and_help_returns_0(capsys):
    assert run(capsys)[0] == 2  # no command
    assert run(capsys, "frobnicate")[0] == 2
    code, out, _ = run(capsys, "--version")
    assert code == 0 and out.strip() == f"haarline {haarline.__version__}"
    code, out, _ = run(capsys, "check", "--help")
    assert code == 0 and "FILE" in out


# ----------------------------------------------------------------------- analyze


def test_analyze_json_is_exactly_one_document(capsys, tiny):
    code, out, err = run(capsys, "analyze", str(tiny), *FAST, "--format", "json")
    assert code == 0
    assert err == ""
    report = json.loads(out)  # fails on any text before or after the document
    assert report["report_format"] == 1
    assert report["circuit"]["name"] == "tiny-ladder"
    assert report["circuit"]["parameters"] == 7
    assert report["circuit"]["depth"] == 7
    assert report["options"]["pairs"] == 50
    assert report["options"]["samples"] == 20


def test_analyze_json_as_a_real_process(tiny):
    proc = run_process("analyze", str(tiny), *FAST, "--format", "json", "--seed", "7")
    assert proc.returncode == 0, proc.stderr.decode()
    report = json.loads(proc.stdout)
    assert report["report_format"] == 1
    assert report["options"]["seed"] == 7
    assert b"Traceback" not in proc.stderr


@pytest.mark.parametrize("fmt", ["text", "markdown"])
def test_analyze_other_formats(capsys, tiny, fmt):
    code, out, _ = run(capsys, "analyze", str(tiny), *FAST, "--format", fmt)
    assert code == 0
    assert "tiny-ladder" in out


def test_analyze_one_metric(capsys, tiny):
    code, out, _ = run(
        capsys, "analyze", str(tiny), *FAST, "--metrics", "entanglement", "--format", "json"
    )
    assert code == 0
    assert json.loads(out)["options"]["metrics"] == ["entanglement"]


# ---------------------------------------------------------------- references, ref:


def test_references_lists_the_nineteen_circuits(capsys):
    code, out, _ = run(capsys, "references")
    assert code == 0
    names = {line.split()[0] for line in out.splitlines() if line.strip()}
    for k in range(1, 20):
        assert f"sim2019-{k:02d}" in names
    code, out, _ = run(capsys, "references", "--format", "json")
    rows = json.loads(out)
    assert {f"sim2019-{k:02d}" for k in range(1, 20)} <= {r["name"] for r in rows}
    assert all(r["qubits"] == 4 for r in rows if r["name"].startswith("sim2019-"))


def test_ref_name_works(capsys):
    code, out, _ = run(capsys, "check", "ref:sim2019-02")
    assert code == 0
    assert out.splitlines()[0] == "sim2019-02: valid"
    assert "  qubits           4" in out.splitlines()
    code, out, _ = run(capsys, "analyze", "ref:ry-cz-ring", *FAST, "--format", "json")
    assert code == 0 and json.loads(out)["circuit"]["name"] == "ry-cz-ring"


def test_unknown_ref_lists_valid_names(capsys):
    code, out, err = run(capsys, "check", "ref:sim2019-99")
    assert code == 2 and out == ""
    line = assert_one_error_line(err, "ref:sim2019-99", "'sim2019-99'")
    for name in haarline.reference_names():
        assert name in line


# ------------------------------------------------------------------------ schema


def test_schema_is_json_with_the_top_level_keys(capsys):
    code, out, _ = run(capsys, "schema")
    assert code == 0
    schema = json.loads(out)
    assert schema["type"] == "object"
    assert {"qubits", "layer"} <= set(schema["properties"])
    assert "layer" in schema["required"] and "qubits" in schema["required"]
    assert schema["$schema"].startswith("https://json-schema.org/")


# ------------------------------------------------------------------------- stdin


def feed_stdin(monkeypatch, data: bytes) -> None:
    monkeypatch.setattr(sys, "stdin", io.TextIOWrapper(io.BytesIO(data)))


def test_dash_reads_json_from_stdin(capsys, monkeypatch):
    feed_stdin(monkeypatch, json.dumps(TINY).encode())
    code, out, _ = run(capsys, "check", "-")
    assert code == 0 and out.splitlines() == TINY_CHECK


def test_dash_errors_name_stdin(capsys, monkeypatch):
    feed_stdin(monkeypatch, b'{"qubits": 2, "layer": [{"gate": "cz"}]}')
    code, _, err = run(capsys, "check", "-")
    assert code == 2
    assert_one_error_line(err, "<stdin>: layer[0].on", "missing")


def test_dash_over_the_size_limit(capsys, monkeypatch):
    feed_stdin(monkeypatch, b" " * (MAX_DESCRIPTION_BYTES + 10))
    code, _, err = run(capsys, "check", "-")
    assert code == 2
    assert_one_error_line(err, "<stdin>", f"{MAX_DESCRIPTION_BYTES} bytes")


def test_dash_as_a_real_process():
    proc = run_process("check", "-", stdin=json.dumps(TINY).encode())
    assert proc.returncode == 0, proc.stderr.decode()
    assert proc.stdout.decode().splitlines() == TINY_CHECK
    proc = run_process("analyze", "-", *FAST, "--format", "json", stdin=json.dumps(TINY).encode())
    assert proc.returncode == 0, proc.stderr.decode()
    assert json.loads(proc.stdout)["report_format"] == 1


# --- trainability and capacity flags ------------------------------------------------------

TRAIN = ["--metrics", "trainability,capacity", "--grad-samples", "20", "--capacity-points", "2"]


def test_trainability_and_capacity_in_json(capsys):
    code, out, err = run(
        capsys,
        "analyze",
        "ref:ry-cz-ring",
        *TRAIN,
        "--scan",
        "2,3",
        "--scan-layers",
        "n",
        "--cost",
        "local",
        "--depth-scan",
        "1,2",
        "--format",
        "json",
    )
    assert code == 0, err
    report = json.loads(out)
    t = report["trainability"]
    assert t["cost"] == "local" and t["layers_rule"] == "layers = n"
    assert [(p["qubits"], p["layers"]) for p in t["points"]] == [(2, 2), (3, 3)]
    assert [p["layers"] for p in t["layer_points"]] == [1, 2]
    assert t["barren_plateau"] is None and "at least 4 counts" in t["reason"]
    c = report["capacity"]
    assert c["parameters"] == 12 and c["max_rank"] == 30 and c["points"] == 2
    assert report["expressibility"] is None and report["entanglement"] is None
    opts = report["options"]
    assert opts["scan"] == [2, 3] and opts["scan_layers"] == "n" and opts["cost"] == "local"


def test_pauli_sum_cost_flag(capsys):
    code, out, err = run(
        capsys,
        "analyze",
        "ref:ry-cz-ring",
        *TRAIN,
        "--scan",
        "4",
        "--cost",
        "0.5*ZZII - XIIX",
        "--format",
        "json",
    )
    assert code == 0, err
    assert json.loads(out)["trainability"]["cost"] == [[0.5, "ZZII"], [-1.0, "XIIX"]]


@pytest.mark.parametrize(
    "flags,words",
    [
        (["--cost", "ZZQ"], ["--cost", "Pauli sum"]),
        (["--cost", "ZZ"], ["cost", "acts on 2 qubits", "has 4"]),
        (["--cost", "ZZII", "--scan", "2,4"], ["scan", "fixed to its qubit count"]),
        (["--scan", "0"], ["--scan", "out of range"]),
        (["--scan-layers", "m"], ["--scan-layers", "'n'"]),
        (["--grad-samples", "1"], ["--grad-samples", "2..1000000"]),
        (["--capacity-points", "0"], ["--capacity-points", "1..1000"]),
    ],
)
def test_bad_trainability_flags_exit_2(capsys, flags, words):
    code, out, err = run(capsys, "analyze", "ref:ry-cz-ring", *TRAIN, *flags)
    assert code == 2 and out == ""
    assert "Traceback" not in err
    for word in words:
        assert word in err, (word, err)


def test_a_bundled_reference_scans_at_other_sizes(capsys):
    code, out, err = run(
        capsys, "analyze", "ref:sim2019-11", "--metrics", "trainability", "--grad-samples", "4",
        "--scan", "2,4,6", "--format", "json",
    )  # fmt: skip
    assert code == 0, err
    points = json.loads(out)["trainability"]["points"]
    assert [(p["qubits"], p["parameters"]) for p in points] == [(2, 4), (4, 12), (6, 20)]


def test_scan_of_a_description_with_listed_qubits_says_why_it_cannot_be_resized(capsys, tmp_path):
    fixed = {
        "name": "four-only",
        "qubits": 4,
        "layer": [
            {"gate": "ry"},
            {"gate": "cx", "on": [[1, 0], [3, 2]]},
            {"gate": "rz", "on": [2]},
        ],
    }
    path = write_json(tmp_path, "four-only.json", fixed)
    code, out, err = run(capsys, "analyze", str(path), *TRAIN, "--scan", "2,4")
    assert code == 2 and out == ""
    line = assert_one_error_line(err)
    assert line == (
        f"haarline: error: {path}: layer[1].on: at 2 qubits (trainability scan): this step "
        "lists qubit 3, so the description cannot be re-sized below 4 qubits (it is written "
        "for 4); scan it at 4 qubits (--scan 4), or give this step a placement pattern "
        "instead of listed qubits"
    )


def test_text_summary_mentions_the_verdict(capsys):
    code, out, err = run(capsys, "analyze", "ref:rx-product", *TRAIN, "--scan", "2,3,4,6")
    assert code == 0, err
    assert "Trainability (variance of dC/dtheta, global cost" in out
    assert "verdict:" in out and "Capacity (rank of the quantum Fisher information)" in out


@pytest.mark.parametrize("argv", [["keys", "list"], ["serve", "--dev", "--port", "8799"]])
def test_a_damaged_job_store_is_a_clear_error(tmp_path, monkeypatch, capsys, argv):
    (tmp_path / "haarline.sqlite3").write_text("not a database")
    monkeypatch.setenv("HAARLINE_DATA_DIR", str(tmp_path))
    assert cli.main(argv) == 2
    err = capsys.readouterr().err.strip().splitlines()[-1]
    assert err == (
        f"haarline: error: HAARLINE_DATA_DIR: {tmp_path / 'haarline.sqlite3'}: "
        "the job store is damaged or unreadable: file is not a database"
    )
