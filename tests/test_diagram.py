"""The circuit diagram, tested on the layout it draws (not on pixels).

Every operation is placed once, in a column that respects the order of the gates on each
wire; blocks (prepare, each layer, finish) never share a column or overlap in a row; rows
never exceed their width; the demos and every bundled reference are drawn in full; a
capped drawing says exactly what it shows; tiles and labels read what the description
says. The greedy time-step rule is written out again here (it is the depth rule of
haarline.circuit.program.facts) rather than imported.
"""

import base64
import io
from pathlib import Path

import haarline
import matplotlib.image
import pytest
from haarline.plots import diagram, diagram_layout

ROOT = Path(__file__).resolve().parents[1]
DEMOS = ["examples/ring-classifier.json", "examples/greenhouse-classifier.json"]

ZOO = {
    "name": "zoo",
    "qubits": 4,
    "layers": 2,
    "inputs": 4,
    "prepare": [
        {"gate": "h"},
        {"gate": "rz", "on": [1], "angle": 0.5},
        {"gate": "rx", "input": "qubit", "scale": 3},
    ],
    "layer": [
        {"gate": "rzz", "on": [[0, 2], [1, 3]]},
        {"gate": "crx", "on": "chain"},
        {"gate": "cy", "on": [[3, 0]]},
        {"gate": "swap", "on": [[1, 2]]},
        {"gate": "cx", "on": [[2, 0]]},
        {"gate": "ryy", "on": [[2, 3]], "angle": 0.25},
        {"gate": "rzz", "on": "chain", "input": "product"},
        {"gate": "sdg", "on": [0]},
    ],
    "finish": [{"gate": "ry", "on": [0, 3], "param": "beta"}, {"gate": "rz", "param": "tilt_all"}],
}

WIDE_12 = {
    "name": "wide-12",
    "qubits": 12,
    "layers": 8,
    "layer": [{"gate": "ry"}, {"gate": "rz"}, {"gate": "cz", "on": "chain"}],
}


def load(source):
    if isinstance(source, dict):
        return haarline.parse_circuit(source)
    if source.startswith("ref:"):
        return haarline.load_reference(source)
    return haarline.load_circuit(ROOT / source)


def greedy_steps(program):
    """One step after the latest gate on any of the gate's qubits."""
    level, steps = [0] * program.qubits, []
    for op in program.operations:
        t = 1 + max(level[q] for q in op.qubits)
        for q in op.qubits:
            level[q] = t
        steps.append(t)
    return steps


def part_of(op, layers):
    if op.step.startswith("prepare"):
        return 0
    if op.step.startswith("finish"):
        return layers + 1
    return 1 + op.layer


def check_layout(program, lay, row_width=diagram_layout.ROW_WIDTH):
    """What must hold for any layout: placement, order, blocks, rows."""
    gates, blocks = lay["gates"], lay["blocks"]
    ops = program.operations
    assert [g["index"] for g in gates] == list(range(len(gates)))  # a prefix, in order
    assert len(gates) + lay["hidden_gates"] == len(ops)
    steps = greedy_steps(program)
    assert lay["depth"] == haarline.facts(program)["depth"] == max(steps)
    for g in gates:
        op = ops[g["index"]]
        assert g["qubits"] == op.qubits and g["gate"] == op.gate
        assert g["step"] == steps[g["index"]] and g["part"] == part_of(op, program.layers)
        assert 0 <= g["column"] < lay["columns"]
    # each wire sees its gates left to right in program order
    last = {}
    for g in gates:
        for q in g["qubits"]:
            assert g["column"] > last.get(q, -1)
            last[q] = g["column"]
    # nothing drawn over anything: gates sharing a column cover disjoint wire ranges
    by_column = {}
    for g in gates:
        span = set(range(min(g["qubits"]), max(g["qubits"]) + 1))
        assert not by_column.get(g["column"], set()) & span
        by_column.setdefault(g["column"], set()).update(span)
    # blocks tile the drawn columns in order, one block's columns after another's
    assert blocks[0]["first"] == 0 and blocks[-1]["last"] == lay["columns"] - 1
    for a, b in zip(blocks, blocks[1:], strict=False):
        assert b["first"] == a["last"] + 1
        assert b["part"] >= a["part"] and b["row"] >= a["row"]
        if b["part"] == a["part"]:  # a block split over rows: its next piece opens a row
            assert a["continues"] and b["continued"] and b["row"] == a["row"] + 1
            assert b["x0"] == 0
        if b["row"] == a["row"]:  # side by side, never overlapping
            assert b["x0"] >= a["x1"] + diagram_layout.BLOCK_GAP - 1e-9
    for b in blocks:
        assert 0 <= b["x0"] < b["x1"] <= row_width + 1e-9
        assert b["x1"] - b["x0"] == pytest.approx(b["last"] - b["first"] + 1)
    assert lay["rows"] == blocks[-1]["row"] + 1
    # every gate sits in the block piece of its own part, at its column's place
    for g in gates:
        (b,) = [b for b in blocks if b["first"] <= g["column"] <= b["last"]]
        assert b["part"] == g["part"] and b["row"] == g["row"]
        assert g["x"] == pytest.approx(b["x0"] + g["column"] - b["first"])
    # labels: the block's name, "(continued)" on later pieces, or the short form
    for b in blocks:
        part = b["part"]
        name = "prepare" if part == 0 else "finish" if part > program.layers else f"layer {part}"
        short = {"prepare": "prep", "finish": "fin"}.get(name, f"L{part}")
        tails = [" (continued)", " (cont.)"] if b["continued"] else [""]
        shown = [short + t for t in [*tails[1:], ""]] if b["short"] else [name + t for t in tails]
        assert b["label"] in shown
        assert b["kind"] == name.split()[0]


# ------------------------------------------------------------------------------ placement


@pytest.mark.parametrize(
    "source",
    [*DEMOS, *(f"ref:{n}" for n in haarline.reference_names()), ZOO, WIDE_12],
    ids=lambda s: s["name"] if isinstance(s, dict) else s,
)
def test_every_gate_is_drawn_in_order_in_blocks_that_never_overlap(source):
    program = haarline.expand(load(source))
    lay = diagram_layout.diagram_layout(program)
    check_layout(program, lay)
    # the demos, every reference at its default size and the 12-qubit, 8-layer circuit
    # are drawn in full: every gate and every time step
    assert lay["hidden_gates"] == 0 and lay["note"] == "" and lay["cut_part"] is None
    assert {g["step"] for g in lay["gates"]} == set(range(1, lay["depth"] + 1))
    assert lay["rows"] <= diagram_layout.row_cap(program.qubits)
    if not isinstance(source, dict):  # the demos and the references fit in one row
        assert lay["rows"] == 1
    drawn_parts = {b["part"] for b in lay["blocks"]}
    assert drawn_parts == {part_of(op, program.layers) for op in program.operations}


def test_the_ring_demo_is_one_row_of_three_layers_and_finish():
    program = haarline.expand(load(DEMOS[0]))
    lay = diagram_layout.diagram_layout(program)
    assert lay["rows"] == 1 and lay["columns"] == lay["depth"] == 19
    assert [(b["label"], b["first"], b["last"]) for b in lay["blocks"]] == [
        ("layer 1", 0, 5),
        ("layer 2", 6, 11),
        ("layer 3", 12, 17),
        ("finish", 18, 18),
    ]


def test_a_block_starts_after_the_previous_one_ends():
    # in layer 1 of the ring demo the cz ring keeps qubit 1 busy until step 6, but layer
    # 2's ry on qubit 1 could run at step 5 (the depth rule); the drawing keeps it in
    # layer 2's block
    program = haarline.expand(load(DEMOS[0]))
    lay = diagram_layout.diagram_layout(program)
    early = [g for g in lay["gates"] if g["part"] == 2 and g["step"] <= 6]
    assert early and all(g["column"] >= 6 for g in early)


def test_the_12_qubit_circuit_wraps_onto_rows_and_splits_blocks_to_save_rows():
    program = haarline.expand(load(WIDE_12))
    lay = diagram_layout.diagram_layout(program)
    assert lay["total_columns"] == 8 * 13  # ry, rz and 11 cz of the chain per layer
    assert lay["depth"] == 41 and lay["block_steps"] == 104
    assert lay["rows"] == 6  # whole blocks would take 8 rows, one layer per row
    whole = diagram_layout._pieces({p: 13 for p in range(1, 9)}, lay_width(), fill=False)
    assert whole[-1]["row"] == 7
    assert any(b["continued"] for b in lay["blocks"])
    assert [b["label"] for b in lay["blocks"]][:3] == ["layer 1", "layer 2", "layer 2 (continued)"]


def lay_width():
    return diagram_layout.ROW_WIDTH


def test_small_layers_are_kept_whole_on_a_row():
    program = haarline.expand(load(ZOO))
    lay = diagram_layout.diagram_layout(program)
    check_layout(program, lay)
    assert lay["rows"] == 2 and not any(b["continued"] for b in lay["blocks"])


def test_crossing_gates_get_columns_of_their_own():
    program = haarline.expand(load(ZOO))
    lay = diagram_layout.diagram_layout(program)
    assert lay["total_columns"] > lay["block_steps"]
    # rzz (0,2) and (1,3) open layer 1 together, but the link of (0,2) crosses wire 1
    (start,) = [b["first"] for b in lay["blocks"] if b["part"] == 1]
    first = [g["column"] for g in lay["gates"] if g["gate"] == "rzz" and g["part"] == 1][:2]
    assert first == [start, start + 1]


# ---------------------------------------------------------------------------------- cap


def test_a_long_circuit_is_capped_at_a_layer_end_and_says_so():
    program = haarline.expand(haarline.load_reference("rx-product"), layers=400)
    lay = diagram_layout.diagram_layout(program)
    check_layout(program, lay)
    cap = diagram_layout.row_cap(4)
    assert cap == 12 and lay["rows"] == cap
    drawn_layers = {g["part"] for g in lay["gates"]}
    assert drawn_layers == set(range(1, len(drawn_layers) + 1))
    k = len(drawn_layers)
    assert lay["blocks"][-1]["label"] in (f"layer {k}", f"L{k}")
    assert lay["hidden_layers"] == 400 - k and lay["hidden_gates"] == 4 * (400 - k)
    assert lay["note"] == (
        f"Drawn: layers 1–{k} ({4 * k} of 1600 gates). Not drawn: layers {k + 1}–400."
    )


def test_a_block_longer_than_the_cap_is_cut_inside_and_says_how_much():
    c = haarline.parse_circuit(
        {
            "name": "long-prepare",
            "qubits": 2,
            "layers": 2,
            "prepare": [{"gate": "h", "on": [0]}] * 100,
            "layer": [{"gate": "ry"}],
            "finish": [{"gate": "rx"}],
        }
    )
    program = haarline.expand(c)
    lay = diagram_layout.diagram_layout(program, row_width=20, max_rows=2)
    check_layout(program, lay, row_width=20)
    assert lay["columns"] == 40 and lay["cut_part"] == 0 and lay["rows"] == 2
    assert [b["label"] for b in lay["blocks"]] == ["prepare", "prepare (continued)"]
    assert lay["blocks"][-1]["continues"]
    assert lay["hidden_layers"] == 2 and lay["hidden_gates"] == 60 + 4 + 2
    assert lay["note"] == (
        "Drawn: the first 40 of the 100 columns of prepare (40 of 106 gates). "
        "Not drawn: the rest of prepare; layers 1–2 and finish."
    )


def test_row_cap_follows_the_wire_budget():
    assert [diagram_layout.row_cap(n) for n in (1, 4, 6, 12, 24)] == [12, 12, 12, 6, 3]


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"row_width": 0.5}, "row_width must be at least 1 column, got 0.5"),
        ({"max_rows": 0}, "max_rows must be at least 1, got 0"),
    ],
)
def test_no_room_is_refused(kwargs, message):
    program = haarline.expand(load(ZOO))
    with pytest.raises(ValueError, match=message):
        diagram_layout.diagram_layout(program, **kwargs)


# ---------------------------------------------------------------------- tiles and labels


def test_tiles_read_the_gate_and_labels_the_angle_source():
    program = haarline.expand(load(ZOO))
    lay = diagram_layout.diagram_layout(program)
    seen = {(g["gate"], g["name"], g["angle"], g["source"], g["family"]) for g in lay["gates"]}
    assert ("h", "h", "", "none", "fixed") in seen
    assert ("rz", "rz", "0.50", "fixed", "rotation") in seen
    assert ("rx", "rx", "3·x1", "input", "input") in seen
    assert ("rzz", "rzz", "θ0", "parameter", "pair") in seen
    assert ("crx", "rx", "θ2", "parameter", "controlled") in seen
    assert ("cy", "y", "", "none", "controlled") in seen
    assert ("cx", "x", "", "none", "controlled") in seen
    assert ("swap", "swap", "", "none", "swap") in seen
    assert ("ryy", "ryy", "0.25", "fixed", "pair") in seen
    assert ("rzz", "rzz", "x0·x1", "input", "input") in seen
    assert ("ry", "ry", "beta", "named", "rotation") in seen
    assert ("rz", "rz", "tilt_…", "named", "rotation") in seen  # tilt_all: 8 characters
    assert lay["shortened"]
    assert lay["families"] == ["rotation", "input", "fixed", "controlled", "pair", "swap"]


def test_every_trainable_label_is_its_parameter():
    program = haarline.expand(load(ZOO))
    lay = diagram_layout.diagram_layout(program)
    for g in lay["gates"]:
        op = program.operations[g["index"]]
        if g["source"] == "parameter":
            assert g["angle"] == f"θ{op.param}" and program.parameter_names[op.param] is None
        elif g["source"] == "named":
            name = program.parameter_names[op.param]
            assert g["angle"] == (name if len(name) <= 6 else name[:5] + "…")


def test_demo_input_labels_name_features():
    program = haarline.expand(load(DEMOS[1]))
    lay = diagram_layout.diagram_layout(program)
    inputs = [g for g in lay["gates"] if g["family"] == "input"]
    assert [g["angle"] for g in inputs] == ["x0", "x1", "x2", "x3"] * 2


EXPECTED_FAMILY = {
    **dict.fromkeys(["i", "h", "x", "y", "z", "s", "sdg", "t", "tdg", "sx"], "fixed"),
    **dict.fromkeys(["rx", "ry", "rz"], "rotation"),
    **dict.fromkeys(["cx", "cy", "cz", "crx", "cry", "crz"], "controlled"),
    **dict.fromkeys(["rxx", "ryy", "rzz", "cphase"], "pair"),
    "swap": "swap",
}


def test_every_gate_of_the_table_is_drawn_in_its_family():
    from haarline.circuit.gates import GATES

    assert set(GATES) == set(EXPECTED_FAMILY)  # a new gate: say here which family it joins
    steps = [{"gate": g, "on": [0] if GATES[g].qubits == 1 else [[1, 0]]} for g in GATES]
    program = haarline.expand(
        haarline.parse_circuit({"name": "every-gate", "qubits": 2, "layer": steps})
    )
    lay = diagram_layout.diagram_layout(program)
    check_layout(program, lay)
    assert {g["gate"]: g["family"] for g in lay["gates"]} == EXPECTED_FAMILY
    png = haarline.circuit_diagram_png(program)
    assert abs(matplotlib.image.imread(io.BytesIO(png), format="png").shape[1] - 900) <= 3


def test_every_family_has_its_own_colour_and_words():
    assert set(diagram.COLOURS) == set(diagram.WORDS) == set(diagram_layout.FAMILIES)
    assert len(set(diagram.COLOURS.values())) == len(diagram.COLOURS)


# ---------------------------------------------------------------------------- the caption


def test_caption_of_the_ring_demo_states_what_is_drawn():
    program = haarline.expand(load(DEMOS[0]))
    lines = diagram._caption(diagram_layout.diagram_layout(program), program.qubits)
    assert lines == [
        "Under a tile: θk is trainable parameter k.",
        "Shaded blocks, labelled above: each layer and finish, in order. One column per "
        "time step (depth 19).",
        "All 40 gates are drawn.",
    ]


def test_caption_of_the_zoo_explains_every_label_and_the_extra_columns():
    program = haarline.expand(load(ZOO))
    lay = diagram_layout.diagram_layout(program)
    text = " ".join(diagram._caption(lay, program.qubits))
    for words in (
        "θk is trainable parameter k",
        "a name is the description's name for a parameter (names over 6 letters keep 5 and …)",
        "xk is input feature k (3·xk: times its scale; xj·xk: a product encoding)",
        "a number is a fixed angle in radians",
        "prepare, each layer and finish",
        f"{lay['total_columns']} columns for depth {lay['depth']}",
        "a gate across distant wires gets a column of its own",
        "The drawing wraps onto 2 rows; ▷ marks wires that go on",
        "All 41 gates are drawn.",
    ):
        assert words in text


def test_caption_of_a_capped_drawing_quotes_the_note_and_the_cap():
    program = haarline.expand(haarline.load_reference("rx-product"), layers=400)
    lay = diagram_layout.diagram_layout(program)
    text = " ".join(diagram._caption(lay, program.qubits))
    assert "‖ marks where it stops (at most 12 rows for 4 qubits)" in text
    assert lay["note"] in text and "are drawn" not in text
    assert "Lk is layer k" in text  # one-column layers are labelled L1, L2, …


# ---------------------------------------------------------------------------------- PNGs


@pytest.mark.parametrize("source", [*DEMOS, "ref:sim2019-05", ZOO])
def test_png_is_900_px_wide_and_the_same_for_the_same_program(source):
    program = haarline.expand(load(source))
    png = haarline.circuit_diagram_png(program)
    assert haarline.circuit_diagram_png(program) == png
    image = matplotlib.image.imread(io.BytesIO(png), format="png")
    assert abs(image.shape[1] - 900) <= 3 and image.shape[0] <= 1400


def test_the_png_grows_with_its_rows():
    short = haarline.circuit_diagram_png(haarline.expand(load(DEMOS[0])))
    tall = haarline.circuit_diagram_png(haarline.expand(load(WIDE_12)))
    heights = [matplotlib.image.imread(io.BytesIO(p), format="png").shape[0] for p in (short, tall)]
    assert heights[0] < 600 < 3000 < heights[1] < 4000


# ------------------------------------------------------------------------------ the service


@pytest.fixture
def client(tmp_path):
    from fastapi.testclient import TestClient
    from haarline.service.api.app import create_app
    from haarline.service.api.keys import issue_key
    from haarline.service.jobs.store import Store
    from haarline.service.settings import Settings

    cfg = Settings.from_env({}, data_dir=str(tmp_path / "data"), workers=1)
    with TestClient(create_app(cfg, start_runner=False)) as c:
        _, key = issue_key(Store(tmp_path / "data" / "haarline.sqlite3"), "alice")
        c.headers["Authorization"] = f"Bearer {key}"
        yield c


def test_check_route_returns_the_diagram_when_asked(client):
    plain = client.post("/v1/check", json={"reference": "ry-cz-ring", "qubits": 6})
    assert plain.status_code == 200 and "diagram_png" not in plain.json()
    r = client.post("/v1/check", json={"reference": "ry-cz-ring", "qubits": 6, "diagram": True})
    assert r.status_code == 200
    body = r.json()
    assert {k: v for k, v in body.items() if k != "diagram_png"} == plain.json()
    program = haarline.expand(haarline.load_reference("ry-cz-ring"), qubits=6)
    assert base64.b64decode(body["diagram_png"]) == haarline.circuit_diagram_png(program)


def test_check_route_refuses_a_diagram_that_is_not_a_boolean(client):
    r = client.post("/v1/check", json={"reference": "ry-cz-ring", "diagram": "yes please"})
    assert r.status_code == 422
    assert [e["path"] for e in r.json()["errors"]] == ["diagram"]
