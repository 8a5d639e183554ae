"""Bad circuit descriptions are rejected with one problem naming the JSON path.

Every rejection must say where (the JSON path of the offending field), what was found
and what is allowed (DESIGN.md section 3). The positive tests pin the placement
patterns, ``reverse``, parameter sharing and the ``cnot`` alias to the documented rules.
The last part throws random malformed input at the parser and the expander: the only
exception allowed out is ``haarline.CircuitError``.
"""

from __future__ import annotations

import json
import math

import haarline
import haarline.circuit.model
import pytest
import yaml
from haarline import CircuitError, OptionError, expand, facts, parse_circuit, parse_circuit_text
from haarline.circuit.gates import ALIASES, GATES
from haarline.circuit.loading import load_circuit
from haarline.circuit.model import MAX_DESCRIPTION_BYTES, MAX_LAYERS
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

MAX_QUBITS = haarline.MAX_QUBITS

# --------------------------------------------------------------------------- helpers


def base(**changes):
    """A small valid description (4 qubits), with top-level keys replaced."""
    data = {
        "name": "probe",
        "qubits": 4,
        "layers": 2,
        "layer": [{"gate": "ry", "on": "all"}, {"gate": "cz", "on": "ring"}],
    }
    data.update(changes)
    return data


def only_problem(error: CircuitError | OptionError):
    assert len(error.problems) == 1, [str(p) for p in error.problems]
    return error.problems[0]


def rejected(data, path: str, *words: str):
    """Assert that ``data`` (dict, or JSON text) fails with one problem at ``path``.

    Each of ``words`` must appear in the message (the bad value, what is allowed).
    """
    with pytest.raises(CircuitError) as info:
        circuit = parse_circuit_text(data) if isinstance(data, str | bytes) else parse_circuit(data)
        expand(circuit)
    problem = only_problem(info.value)
    assert problem.path == path, str(problem)
    for word in words:
        assert word in problem.message, f"{word!r} not in {problem.message!r}"
    # the rendered error is "path: message", one line, no traceback text
    assert str(info.value) == f"{path}: {problem.message}"
    return problem


def yaml_rejected(text: str, path: str, *words: str):
    with pytest.raises(CircuitError) as info:
        expand(parse_circuit_text(text, kind="yaml"))
    problem = only_problem(info.value)
    assert problem.path == path, str(problem)
    for word in words:
        assert word in problem.message, f"{word!r} not in {problem.message!r}"
    return problem


# ------------------------------------------------------------------ gates and keys


def test_unknown_gate_names_the_gate_and_the_gate_table():
    problem = rejected(base(layer=[{"gate": "ry"}, {"gate": "rotx"}]), "layer[1].gate", '"rotx"')
    for name in [*GATES, *ALIASES]:
        assert name in problem.message


def test_unknown_gate_of_the_wrong_type():
    rejected(base(layer=[{"gate": 7}]), "layer[0].gate", "7", "ry")


def test_unknown_top_level_key():
    rejected(base(depth=3), "depth", "'depth'", "qubits", "layers", "layer", "finish")


def test_unknown_key_in_a_step():
    rejected(
        base(layer=[{"gate": "ry"}, {"gate": "rz", "angel": 0.5}]),
        "layer[1].angel",
        "'angel'",
        "gate",
        "on",
        "angle",
        "share",
        "reverse",
    )


def test_unknown_key_in_prepare_lists_step_keys():
    problem = rejected(base(prepare=[{"gate": "h", "target": 0}]), "prepare[0].target", "'target'")
    assert "gate" in problem.message and "qubits" not in problem.message


# ----------------------------------------------------------------- qubit placement


def test_qubit_out_of_range_in_a_one_qubit_list():
    problem = rejected(base(layer=[{"gate": "ry"}, {"gate": "rx", "on": [5]}]), "layer[1].on[0]")
    assert problem.message == "qubit 5 is out of range for 4 qubits (0..3)"


def test_qubit_out_of_range_in_a_pair():
    problem = rejected(
        base(layer=[{"gate": "cx", "on": [[0, 1], [1, 2], [2, 5]]}]), "layer[0].on[2][1]"
    )
    assert problem.message == "qubit 5 is out of range for 4 qubits (0..3)"


def test_negative_qubit_index():
    rejected(base(layer=[{"gate": "ry", "on": [0, -1]}]), "layer[0].on[1]", "-1", "0..3")


def test_qubit_range_message_for_one_qubit():
    rejected(
        {"qubits": 1, "layer": [{"gate": "ry", "on": [1]}]},
        "layer[0].on[0]",
        "qubit 1 is out of range for 1 qubit (0..0)",
    )


@pytest.mark.parametrize("index", [1.0, "1", True, None, [1]])
def test_qubit_index_must_be_an_integer(index):
    rejected(base(layer=[{"gate": "ry", "on": [0, index]}]), "layer[0].on[1]", "integer")


def test_qubit_listed_twice_for_a_one_qubit_gate():
    rejected(base(layer=[{"gate": "ry", "on": [2, 2]}]), "layer[0].on[1]", "qubit 2", "twice")


def test_two_qubit_pattern_on_a_one_qubit_gate():
    rejected(base(layer=[{"gate": "ry", "on": "ring"}]), "layer[0].on", '"ring"', "'all'", "'ry'")


def test_all_on_a_two_qubit_gate():
    problem = rejected(base(layer=[{"gate": "cz", "on": "all"}]), "layer[0].on", '"all"', "'cz'")
    for pattern in haarline.circuit.model.TWO_QUBIT_PATTERNS:
        assert repr(pattern) in problem.message


def test_default_on_for_a_two_qubit_gate_says_it_is_the_default():
    problem = rejected(base(layer=[{"gate": "cx"}]), "layer[0].on", "missing", "'all'", "'chain'")
    assert "'cx'" in problem.message


def test_unknown_pattern_name():
    rejected(base(layer=[{"gate": "cz", "on": "star"}]), "layer[0].on", '"star"', "'ring'")


def test_the_old_name_pairs_is_an_error_that_names_all_to_all():
    # "pairs" was the name of "all-to-all" until it was renamed; it is never accepted
    with pytest.raises(CircuitError) as info:
        expand(parse_circuit(base(layer=[{"gate": "cz", "on": "pairs"}])))
    assert str(info.value) == (
        'layer[0].on: "pairs" was renamed; use "all-to-all" (every pair i < j)'
    )
    with pytest.raises(CircuitError) as info:
        expand(parse_circuit(base(layer=[{"gate": "rzz", "on": "pairs", "reverse": True}])))
    assert "renamed" in str(info.value)
    assert "pairs" not in haarline.circuit.model.TWO_QUBIT_PATTERNS
    names = haarline.circuit_schema()["$defs"]["Step"]["properties"]["on"]["anyOf"][0]["enum"]
    assert "all-to-all" in names and "pairs" not in names


def test_repeated_qubit_in_a_pair():
    rejected(
        base(layer=[{"gate": "cz", "on": [[0, 1], [3, 3]]}]),
        "layer[0].on[1]",
        "[3, 3]",
        "qubit 3 twice",
        "two different qubits",
    )


@pytest.mark.parametrize("pair", [[0], [0, 1, 2], 0, "01"])
def test_pair_of_the_wrong_shape(pair):
    rejected(base(layer=[{"gate": "cz", "on": [[0, 1], pair]}]), "layer[0].on[1]", "pair")


@pytest.mark.parametrize("on", [[], {}, None, 3])
def test_on_of_the_wrong_type(on):
    rejected(base(layer=[{"gate": "ry", "on": on}]), "layer[0].on", "'all'")
    rejected(base(layer=[{"gate": "cz", "on": on}]), "layer[0].on", "'chain'")


def test_two_qubit_pattern_needs_two_qubits():
    rejected(
        {"qubits": 1, "layer": [{"gate": "ry"}, {"gate": "cz", "on": "chain"}]},
        "layer[1].on",
        "'chain'",
        "at least 2 qubits",
    )


# ------------------------------------------------------------------ qubits, layers


@pytest.mark.parametrize("key", ["qubits", "layers"])
@pytest.mark.parametrize(
    ("value", "shown", "allowed"),
    [
        (-1, "-1", "1.."),
        (0, "0", "1.."),
        (4.5, "4.5", "integer"),
        (4.0, "4.0", "integer"),  # no silent conversion of 4.0 to 4
        ("4", '"4"', "integer"),
        (True, "true", "integer"),  # JSON true is a literal, not the number 1 (RFC 8259 s3)
        (None, "null", "integer"),
    ],
)
def test_bad_counts(key, value, shown, allowed):
    problem = rejected(base(**{key: value}), key, shown, allowed)
    assert problem.message.startswith(("got", "expected"))


def test_more_qubits_than_the_limit():
    rejected(base(qubits=MAX_QUBITS + 1), "qubits", str(MAX_QUBITS + 1), f"1..{MAX_QUBITS}")
    expand(parse_circuit(base(qubits=MAX_QUBITS, layers=1)))  # the limit itself is allowed


def test_more_layers_than_the_limit():
    rejected(base(layers=MAX_LAYERS + 1), "layers", str(MAX_LAYERS + 1), f"1..{MAX_LAYERS}")


def test_missing_qubits():
    rejected({"layer": [{"gate": "ry"}]}, "qubits", "missing")


def test_expand_at_another_size_checks_the_size():
    circuit = parse_circuit(base())
    with pytest.raises(CircuitError) as info:
        expand(circuit, qubits=MAX_QUBITS + 1)
    assert only_problem(info.value).path == "qubits"
    with pytest.raises(CircuitError) as info:
        expand(circuit, layers=0)
    assert only_problem(info.value).path == "layers"
    with pytest.raises(CircuitError) as info:
        expand(circuit, layers=MAX_LAYERS + 1)
    assert only_problem(info.value).path == "layers"


# -------------------------------------------------------------------------- angles


@pytest.mark.parametrize("literal", ["NaN", "Infinity", "-Infinity", "1e400"])
def test_non_finite_angle_in_json_text(literal):
    # Python's json module accepts NaN and Infinity literals (documented under
    # json.loads / parse_constant in the Python standard library reference) and 1e400
    # overflows to inf; none of them is a usable angle.
    text = '{"qubits": 2, "layer": [{"gate": "rx", "angle": ' + literal + "}]}"
    rejected(text, "layer[0].angle", "finite")


@pytest.mark.parametrize("value", [math.nan, math.inf, -math.inf])
def test_non_finite_angle_from_python(value):
    rejected(
        base(layer=[{"gate": "ry"}, {"gate": "rz", "angle": value}]), "layer[1].angle", "finite"
    )


@pytest.mark.parametrize("literal", [".nan", ".inf", "-.inf"])
def test_non_finite_angle_in_yaml(literal):
    yaml_rejected(
        f"qubits: 2\nlayer:\n  - gate: rx\n    angle: {literal}\n", "layer[0].angle", "finite"
    )


def test_angle_must_be_a_number():
    rejected(base(layer=[{"gate": "ry", "angle": "pi/2"}]), "layer[0].angle", '"pi/2"', "number")
    rejected(base(layer=[{"gate": "ry", "angle": True}]), "layer[0].angle", "true", "number")


@pytest.mark.parametrize("key,value", [("angle", 0.5), ("share", "step"), ("share", "layers")])
@pytest.mark.parametrize("gate", ["h", "cz", "swap"])
def test_angle_or_share_on_a_fixed_gate(gate, key, value):
    on = "chain" if gate in ("cz", "swap") else "all"
    rejected(
        base(layer=[{"gate": gate, "on": on, key: value}]),
        f"layer[0].{key}",
        f"'{gate}'",
        "no angle",
        "rx ry rz",
    )


def test_angle_and_share_together():
    rejected(
        base(layer=[{"gate": "ry", "angle": 0.3, "share": "step"}]),
        "layer[0].share",
        "'angle'",
        "'share'",
    )


def test_unknown_share_mode():
    rejected(
        base(layer=[{"gate": "ry", "share": "all"}]),
        "layer[0].share",
        '"all"',
        "'step'",
        "'layers'",
    )


@pytest.mark.parametrize("section", ["prepare", "finish"])
def test_share_layers_outside_layer(section):
    rejected(
        base(**{section: [{"gate": "h"}, {"gate": "ry", "share": "layers"}]}),
        f"{section}[1].share",
        "'layers'",
        f"'{section}'",
        "'step'",
    )


# ------------------------------------------------------------------------- reverse


def test_reverse_on_an_explicit_pair_list():
    rejected(
        base(layer=[{"gate": "cx", "on": [[0, 1]], "reverse": True}]),
        "layer[0].reverse",
        "placement pattern",
        "explicit list",
    )


def test_reverse_on_a_one_qubit_gate():
    rejected(base(layer=[{"gate": "ry", "reverse": True}]), "layer[0].reverse", "'ry'", "two-qubit")


def test_reverse_must_be_a_boolean():
    rejected(
        base(layer=[{"gate": "cx", "on": "chain", "reverse": 1}]),
        "layer[0].reverse",
        "1",
        "true or false",
    )


# ------------------------------------------------------------------ circuit shape


@pytest.mark.parametrize(
    "data",
    [
        {"qubits": 3, "layer": []},
        {"qubits": 3, "prepare": [], "layer": [], "finish": []},
        # brick-odd is empty on 2 qubits, so this places no gate at all
        {"qubits": 2, "layer": [{"gate": "cz", "on": "brick-odd"}]},
    ],
)
def test_circuit_without_gates(data):
    rejected(data, "layer", "no gates", "'prepare'", "'finish'")


def test_empty_layer_is_fine_when_prepare_has_gates():
    program = expand(parse_circuit({"qubits": 2, "prepare": [{"gate": "h"}], "layer": []}))
    assert [op.gate for op in program.operations] == ["h", "h"]


def test_missing_layer():
    rejected({"qubits": 3, "prepare": [{"gate": "h"}]}, "layer", "missing")


def test_layer_of_the_wrong_type():
    rejected(base(layer={"gate": "ry"}), "layer", "array", "an object")
    rejected(base(layer=["ry"]), "layer[0]", "object", '"ry"')


def test_too_many_steps():
    rejected(base(layer=[{"gate": "ry"}] * 1001), "layer", "1001", "1000")


def test_bad_name():
    rejected(base(name=""), "name", '""', "at least 1 character")
    rejected(base(name="-x"), "name", '"-x"', "letters, digits")
    rejected(base(name="x" * 81), "name", "81 characters", "at most 80")


def test_unknown_format_version():
    rejected(base(format=2), "format", "2", "1")


# ------------------------------------------------------------------- text decoding


def test_malformed_json_names_line_and_column():
    text = '{"qubits": 4,\n "layer": [}'
    problem = rejected(text, "(root)", "line 2, column 12", "invalid JSON")
    assert problem.message.startswith("line 2, column 12: ")


def test_empty_text():
    rejected("", "(root)", "line 1, column 1", "invalid JSON")


def test_duplicate_key_in_json():
    rejected(
        '{"qubits": 4, "layer": [{"gate": "ry"}], "qubits": 5}', "(root)", "duplicate key 'qubits'"
    )


def test_duplicate_key_in_a_json_step():
    rejected(
        '{"qubits": 4, "layer": [{"gate": "ry", "gate": "rx"}]}', "(root)", "duplicate key 'gate'"
    )


def test_duplicate_key_in_yaml():
    yaml_rejected(
        "qubits: 4\nlayer: [{gate: ry}]\nqubits: 5\n",
        "(root)",
        "line 3, column 1",
        "duplicate key 'qubits'",
    )
    yaml_rejected(
        "qubits: 4\nlayer:\n  - gate: ry\n    gate: rx\n",
        "(root)",
        "line 4",
        "duplicate key 'gate'",
    )


@pytest.mark.parametrize(
    ("text", "shown"),
    [("[1, 2]", "[1, 2]"), ('"circuit"', '"circuit"'), ("4", "4"), ("null", "null")],
)
def test_top_level_must_be_an_object(text, shown):
    rejected(text, "(root)", "expected an object", shown)


def test_top_level_array_in_yaml():
    yaml_rejected("- qubits: 4\n", "(root)", "expected an object", "array")


def test_non_utf8_bytes():
    data = b'{"name": "caf\xe9", "qubits": 2, "layer": [{"gate": "h"}]}'
    rejected(data, "(root)", "not UTF-8", "byte 13")


def test_utf8_byte_order_mark_is_accepted():
    # RFC 8259 section 8.1: a parser may ignore a leading byte order mark.
    data = b'\xef\xbb\xbf{"qubits": 2, "layer": [{"gate": "h"}]}'
    assert parse_circuit_text(data).qubits == 2


def test_description_over_one_mebibyte():
    valid = b'{"qubits": 2, "layer": [{"gate": "h"}]}'
    padded = valid + b" " * (MAX_DESCRIPTION_BYTES - len(valid))
    assert parse_circuit_text(padded).qubits == 2  # exactly at the limit is fine
    rejected(
        padded + b" ",
        "(root)",
        f"{MAX_DESCRIPTION_BYTES + 1} bytes",
        f"limit is {MAX_DESCRIPTION_BYTES}",
    )


def test_text_limit_counts_bytes_not_characters():
    # 'é' is two bytes in UTF-8: 600 000 of them are 1.2 MB although only 600 000 characters
    text = '{"qubits": 2, "layer": [{"gate": "h"}], "description": "' + "é" * 600_000 + '"}'
    rejected(text, "(root)", "bytes", f"limit is {MAX_DESCRIPTION_BYTES}")


def test_file_over_one_mebibyte(tmp_path):
    path = tmp_path / "big.json"
    path.write_bytes(b'{"qubits": 2, "layer": [{"gate": "h"}]}' + b" " * MAX_DESCRIPTION_BYTES)
    with pytest.raises(CircuitError) as info:
        load_circuit(path)
    problem = only_problem(info.value)
    assert problem.path == "(root)" and "bytes" in problem.message
    assert info.value.source == str(path)


@pytest.mark.parametrize("name", ["missing.json", "x" * 5000 + ".json", "dir"])
def test_unreadable_files(tmp_path, name):
    (tmp_path / "dir").mkdir()
    with pytest.raises(CircuitError) as info:
        load_circuit(tmp_path / name)
    assert only_problem(info.value).path == "(root)"


def test_json_number_with_too_many_digits():
    rejected('{"qubits": 1' + "0" * 5000 + ', "layer": []}', "(root)", "too many digits")


def test_deeply_nested_json_and_yaml():
    rejected("[" * 100_000 + "]" * 100_000, "(root)", "nested too deeply")
    yaml_rejected("- " * 10_000 + "x", "(root)", "nested too deeply")


# ---------------------------------------------------------------------------- YAML

YAML_TEXT = """\
name: yaml-twin
qubits: 3
layers: 2
prepare:
  - gate: h
    on: all
layer:
  - gate: ry
    on: all
    share: layers
  - gate: cx
    on: ring
    reverse: true
  - gate: rz
    on: [0, 2]
    angle: 1e-3
finish:
  - gate: cz
    on: [[0, 1], [1, 2]]
"""

JSON_TWIN = {
    "name": "yaml-twin",
    "qubits": 3,
    "layers": 2,
    "prepare": [{"gate": "h", "on": "all"}],
    "layer": [
        {"gate": "ry", "on": "all", "share": "layers"},
        {"gate": "cx", "on": "ring", "reverse": True},
        {"gate": "rz", "on": [0, 2], "angle": 0.001},
    ],
    "finish": [{"gate": "cz", "on": [[0, 1], [1, 2]]}],
}


def test_yaml_key_on_stays_the_string_on():
    # PyYAML follows YAML 1.1, where a bare `on` is the boolean true (YAML 1.1 bool type,
    # yaml.org/type/bool.html); the loader must keep it as the key "on", as the YAML 1.2
    # core schema does (YAML 1.2.2 spec, section 10.3).
    circuit = parse_circuit_text(YAML_TEXT, kind="yaml")
    assert circuit.prepare[0].on == "all"
    assert "on" in circuit.prepare[0].model_fields_set
    assert circuit.layer[2].on == [0, 2]


def test_yaml_description_equals_its_json_twin():
    from_yaml = parse_circuit_text(YAML_TEXT, kind="yaml")
    from_json = parse_circuit_text(json.dumps(JSON_TWIN))
    assert from_yaml == from_json
    assert expand(from_yaml) == expand(from_json)
    # and PyYAML's own reading of the same text would not agree (key `on` becomes True)
    assert True in yaml.safe_load(YAML_TEXT)["prepare"][0]


def test_yaml_file_suffix_selects_the_yaml_loader(tmp_path):
    for suffix in (".yaml", ".yml", ".YAML"):
        path = tmp_path / f"twin{suffix}"
        path.write_text(YAML_TEXT, encoding="utf-8")
        assert load_circuit(path) == parse_circuit(JSON_TWIN)


@pytest.mark.parametrize(
    ("scalar", "path", "shown"),
    [
        ("yes", "layer[0].on", '"yes"'),  # YAML 1.1 boolean, a plain string here
        ("on", "layer[0].on", '"on"'),
        ("off", "layer[0].on", '"off"'),
    ],
)
def test_yaml_11_booleans_are_strings(scalar, path, shown):
    yaml_rejected(f"qubits: 2\nlayer:\n  - gate: ry\n    on: {scalar}\n", path, shown)


@pytest.mark.parametrize(
    ("scalar", "shown"),
    [("1_0", '"1_0"'), ("1:30", '"1:30"'), ("0b11", '"0b11"'), ("four", '"four"')],
)
def test_yaml_11_number_forms_are_not_numbers(scalar, shown):
    # YAML 1.1 reads 1_0 as 10, 1:30 as 90 (base 60) and 0b11 as 3 (yaml.org/type/int.html);
    # the 1.2 core schema (YAML 1.2.2 spec, section 10.3.2) and JSON do not, so the loader
    # must not turn them into counts silently.
    yaml_rejected(f"qubits: {scalar}\nlayer: [{{gate: ry}}]\n", "qubits", shown, "integer")


def test_yaml_integers_are_decimal():
    # YAML 1.1 reads 010 as octal 8; the 1.2 core schema reads decimal 10 and spells octal
    # 0o (YAML 1.2.2 spec, section 10.3.2).
    text = "qubits: 010\nlayer: [{gate: ry}]\n"
    assert parse_circuit_text(text, kind="yaml").qubits == 10
    assert parse_circuit_text("qubits: 0o4\nlayer: [{gate: ry}]\n", kind="yaml").qubits == 4


def test_yaml_dates_are_strings():
    circuit = parse_circuit_text("name: 2024-05-01\nqubits: 2\nlayer: [{gate: ry}]\n", kind="yaml")
    assert circuit.name == "2024-05-01"


@pytest.mark.parametrize(
    ("text", "words"),
    [
        ("qubits: 2\nlayer: [{gate: ry}]\n1: x\n", ["line 3", "not a string"]),
        ("{[1]: 2, qubits: 4, layer: [{gate: ry}]}", ["line 1", "not a string"]),
        ("qubits: !!int abc\nlayer: []\n", ["not an integer"]),
        ("qubits: !!float abc\nlayer: []\n", ["not a number"]),
        ("qubits: !!bool abc\nlayer: []\n", ["not a boolean"]),
        ("qubits: !!timestamp 2024-01-01\nlayer: []\n", ["timestamp"]),
        ("qubits: !!python/object:os.system x\nlayer: []\n", ["python/object"]),
        ("!!set {a, b}\n", ["set"]),
        ("base: &b {gate: ry}\nqubits: 2\nlayer: [{<<: *b}]\n", ["'<<'"]),
        ("qubits: 2\nlayer: [{gate: ry}]\n---\nqubits: 3\n", ["another document"]),
        ("qubits: 1" + "0" * 5000 + "\nlayer: []\n", ["too many digits"]),
        ("qubits: [\n", ["invalid YAML"]),
    ],
)
def test_yaml_oddities_are_rejected(text, words):
    with pytest.raises(CircuitError) as info:
        expand(parse_circuit_text(text, kind="yaml"))
    message = str(info.value)
    for word in words:
        assert word in message


def test_yaml_alias_bomb_is_rejected_quickly():
    # Nine aliases per level, nine levels: the value stands for 9**9 integers. Error
    # messages must not walk all of it (common practice: cap what a message renders).
    lines = ["a0: &a0 [1, 2, 3, 4, 5, 6, 7, 8, 9]"]
    for level in range(1, 10):
        lines.append(f"a{level}: &a{level} [" + ", ".join([f"*a{level - 1}"] * 9) + "]")
    text = "anchors:\n" + "\n".join("  " + line for line in lines)
    text += "\nqubits: *a9\nlayer:\n  - gate: ry\n    on: [*a9]\n"
    with pytest.raises(CircuitError) as info:
        expand(parse_circuit_text(text, kind="yaml"))
    assert all(len(p.message) < 400 for p in info.value.problems)


def test_error_messages_stay_short_for_huge_values():
    problem = rejected(base(qubits="q" * 100_000), "qubits", "integer")
    assert len(problem.message) < 200
    problem = rejected(base(layer=[{"gate": "ry", "on": "x" * 100_000}]), "layer[0].on")
    assert len(problem.message) < 300


# ------------------------------------------------------------- placement patterns

# The documented pairs (DESIGN.md section 3, analysis/placements.py), written out by hand.
PATTERNS = {
    "chain": {
        2: [(0, 1)],
        3: [(0, 1), (1, 2)],
        4: [(0, 1), (1, 2), (2, 3)],
        5: [(0, 1), (1, 2), (2, 3), (3, 4)],
        6: [(0, 1), (1, 2), (2, 3), (3, 4), (4, 5)],
    },
    "ring": {
        2: [(0, 1)],  # no wrap-around pair on 2 qubits: it would repeat (0, 1)
        3: [(0, 1), (1, 2), (2, 0)],
        4: [(0, 1), (1, 2), (2, 3), (3, 0)],
        5: [(0, 1), (1, 2), (2, 3), (3, 4), (4, 0)],
        6: [(0, 1), (1, 2), (2, 3), (3, 4), (4, 5), (5, 0)],
    },
    "all-to-all": {
        2: [(0, 1)],
        3: [(0, 1), (0, 2), (1, 2)],
        4: [(0, 1), (0, 2), (0, 3), (1, 2), (1, 3), (2, 3)],
        5: [(0, 1), (0, 2), (0, 3), (0, 4), (1, 2), (1, 3), (1, 4), (2, 3), (2, 4), (3, 4)],
        6: [
            (0, 1),
            (0, 2),
            (0, 3),
            (0, 4),
            (0, 5),
            (1, 2),
            (1, 3),
            (1, 4),
            (1, 5),
            (2, 3),
            (2, 4),
            (2, 5),
            (3, 4),
            (3, 5),
            (4, 5),
        ],
    },
    "brick-even": {
        2: [(0, 1)],
        3: [(0, 1)],
        4: [(0, 1), (2, 3)],
        5: [(0, 1), (2, 3)],
        6: [(0, 1), (2, 3), (4, 5)],
    },
    "brick-odd": {
        2: [],
        3: [(1, 2)],
        4: [(1, 2)],
        5: [(1, 2), (3, 4)],
        6: [(1, 2), (3, 4)],
    },
    "brick-even-up": {
        2: [(1, 0)],
        3: [(1, 0)],
        4: [(1, 0), (3, 2)],
        5: [(1, 0), (3, 2)],
        6: [(1, 0), (3, 2), (5, 4)],
    },
    "brick-odd-up": {
        2: [],
        3: [(2, 1)],
        4: [(2, 1)],
        5: [(2, 1), (4, 3)],
        6: [(2, 1), (4, 3)],
    },
    "ring-up": {
        2: [(1, 0)],
        3: [(2, 1), (1, 0), (2, 0)],
        4: [(3, 2), (2, 1), (1, 0), (3, 0)],
        5: [(4, 3), (3, 2), (2, 1), (1, 0), (4, 0)],
        6: [(5, 4), (4, 3), (3, 2), (2, 1), (1, 0), (5, 0)],
    },
    "ring-backward": {
        2: [(0, 1)],
        3: [(2, 0), (1, 2), (0, 1)],
        4: [(3, 0), (2, 3), (1, 2), (0, 1)],
        5: [(4, 0), (3, 4), (2, 3), (1, 2), (0, 1)],
        6: [(5, 0), (4, 5), (3, 4), (2, 3), (1, 2), (0, 1)],
    },
    "ring-to-previous": {
        2: [(1, 0)],
        3: [(2, 1), (0, 2), (1, 0)],
        4: [(3, 2), (0, 3), (1, 0), (2, 1)],
        5: [(4, 3), (0, 4), (1, 0), (2, 1), (3, 2)],
        6: [(5, 4), (0, 5), (1, 0), (2, 1), (3, 2), (4, 3)],
    },
    "all-to-all-both-ways": {
        2: [(1, 0), (0, 1)],
        3: [(2, 1), (2, 0), (1, 2), (1, 0), (0, 2), (0, 1)],
        4: [
            (3, 2), (3, 1), (3, 0),
            (2, 3), (2, 1), (2, 0),
            (1, 3), (1, 2), (1, 0),
            (0, 3), (0, 2), (0, 1),
        ],
        5: [
            (4, 3), (4, 2), (4, 1), (4, 0),
            (3, 4), (3, 2), (3, 1), (3, 0),
            (2, 4), (2, 3), (2, 1), (2, 0),
            (1, 4), (1, 3), (1, 2), (1, 0),
            (0, 4), (0, 3), (0, 2), (0, 1),
        ],
        6: [
            (5, 4), (5, 3), (5, 2), (5, 1), (5, 0),
            (4, 5), (4, 3), (4, 2), (4, 1), (4, 0),
            (3, 5), (3, 4), (3, 2), (3, 1), (3, 0),
            (2, 5), (2, 4), (2, 3), (2, 1), (2, 0),
            (1, 5), (1, 4), (1, 3), (1, 2), (1, 0),
            (0, 5), (0, 4), (0, 3), (0, 2), (0, 1),
        ],
    },
}  # fmt: skip

# The qubits of the one-qubit patterns, written out by hand.
ONE_QUBIT = {
    "all": {1: [0], 2: [0, 1], 3: [0, 1, 2], 4: [0, 1, 2, 3], 5: [0, 1, 2, 3, 4]},
    "brick-even": {1: [], 2: [0, 1], 3: [0, 1], 4: [0, 1, 2, 3], 5: [0, 1, 2, 3]},
    "brick-odd": {1: [], 2: [], 3: [1, 2], 4: [1, 2], 5: [1, 2, 3, 4]},
}

# A few reversed walks written out by hand (the rule: last pair first, each pair swapped).
REVERSED = {
    ("chain", 4): [(3, 2), (2, 1), (1, 0)],
    ("ring", 4): [(0, 3), (3, 2), (2, 1), (1, 0)],
    ("ring", 2): [(1, 0)],
    ("all-to-all", 3): [(2, 1), (2, 0), (1, 0)],
    ("brick-even", 5): [(3, 2), (1, 0)],
    ("brick-odd", 6): [(4, 3), (2, 1)],
    ("brick-odd", 2): [],
}


def placed(pattern: str, n: int, *, reverse: bool = False) -> list[tuple[int, ...]]:
    """Qubits of the cx gates a one-step layer puts down (cx, so that order matters)."""
    step = {"gate": "cx", "on": pattern}
    if reverse:
        step["reverse"] = True
    circuit = parse_circuit({"qubits": n, "prepare": [{"gate": "h"}], "layer": [step]})
    return [op.qubits for op in expand(circuit).operations if op.step == "layer[0]"]


@pytest.mark.parametrize("pattern", sorted(PATTERNS))
@pytest.mark.parametrize("n", [2, 3, 4, 5, 6])
def test_placement_patterns(pattern, n):
    assert placed(pattern, n) == PATTERNS[pattern][n]
    assert haarline.placement(pattern, n) == PATTERNS[pattern][n]


@pytest.mark.parametrize("pattern", sorted(PATTERNS))
@pytest.mark.parametrize("n", [2, 3, 4, 5, 6])
def test_reverse_walks_back_and_swaps(pattern, n):
    expected = [(b, a) for a, b in reversed(PATTERNS[pattern][n])]
    assert placed(pattern, n, reverse=True) == expected
    if (pattern, n) in REVERSED:
        assert expected == REVERSED[(pattern, n)]


def test_every_two_qubit_pattern_is_written_out_here():
    assert sorted(PATTERNS) == sorted(haarline.circuit.model.TWO_QUBIT_PATTERNS)


@pytest.mark.parametrize("pattern", sorted(ONE_QUBIT))
@pytest.mark.parametrize("n", [1, 2, 3, 4, 5])
def test_one_qubit_patterns(pattern, n):
    assert sorted(ONE_QUBIT) == sorted(haarline.circuit.model.ONE_QUBIT_PATTERNS)
    circuit = parse_circuit(
        {"qubits": n, "prepare": [{"gate": "x"}], "layer": [{"gate": "ry", "on": pattern}]}
    )
    placed = [op.qubits for op in expand(circuit).operations if op.step == "layer[0]"]
    assert placed == [(q,) for q in ONE_QUBIT[pattern][n]]
    assert haarline.pattern_qubits(pattern, n) == ONE_QUBIT[pattern][n]


def test_a_two_qubit_pattern_on_a_one_qubit_gate_lists_the_one_qubit_patterns():
    rejected(
        base(layer=[{"gate": "rx", "on": "brick-odd-up"}]),
        "layer[0].on",
        '"brick-odd-up"',
        "'all', 'brick-even', 'brick-odd'",
    )


def test_patterns_rescale_with_the_qubit_count():
    circuit = parse_circuit({"qubits": 3, "layer": [{"gate": "cz", "on": "ring"}]})
    for n in range(2, 7):
        assert [op.qubits for op in expand(circuit, qubits=n).operations] == PATTERNS["ring"][n]


def test_explicit_lists_keep_their_order():
    circuit = parse_circuit(
        {
            "qubits": 4,
            "layer": [{"gate": "rx", "on": [3, 0]}, {"gate": "crz", "on": [[2, 0], [1, 3]]}],
        }
    )
    assert [op.qubits for op in expand(circuit).operations] == [(3,), (0,), (2, 0), (1, 3)]


# ---------------------------------------------------------------- parameter sharing


def params(data) -> tuple[int, list[int | None]]:
    program = expand(parse_circuit(data))
    return program.parameters, [op.param for op in program.operations]


def test_fresh_parameter_per_application():
    count, indices = params({"qubits": 3, "layers": 2, "layer": [{"gate": "ry"}]})
    assert count == 6 and indices == [0, 1, 2, 3, 4, 5]


def test_share_step_gives_one_parameter_per_step_and_layer():
    count, indices = params(
        {"qubits": 3, "layers": 2, "layer": [{"gate": "ry", "share": "step"}, {"gate": "rz"}]}
    )
    # layer 0: ry -> 0 on all three qubits, rz -> 1, 2, 3; layer 1: ry -> 4, rz -> 5, 6, 7
    assert count == 8
    assert indices == [0, 0, 0, 1, 2, 3, 4, 4, 4, 5, 6, 7]


def test_share_layers_reuses_one_parameter_per_target():
    count, indices = params(
        {"qubits": 3, "layers": 2, "layer": [{"gate": "ry", "share": "layers"}, {"gate": "rz"}]}
    )
    # layer 0: ry -> 0, 1, 2; rz -> 3, 4, 5; layer 1: ry reuses 0, 1, 2; rz -> 6, 7, 8
    assert count == 9
    assert indices == [0, 1, 2, 3, 4, 5, 0, 1, 2, 6, 7, 8]


def test_share_on_two_qubit_rotations_and_outside_layer():
    count, indices = params(
        {
            "qubits": 4,
            "layers": 3,
            "prepare": [{"gate": "rx", "share": "step"}],
            "layer": [{"gate": "rzz", "on": "ring", "share": "layers"}],
            "finish": [{"gate": "cry", "on": "chain", "share": "step"}],
        }
    )
    # prepare: 0 x4; layers: ring pairs 1, 2, 3, 4 each time; finish: 5 x3
    assert count == 6
    assert indices == [0] * 4 + [1, 2, 3, 4] * 3 + [5] * 3


def test_fixed_angle_takes_no_parameter():
    program = expand(
        parse_circuit({"qubits": 2, "layer": [{"gate": "ry", "angle": 0.25}, {"gate": "rx"}]})
    )
    assert program.parameters == 2
    assert [(op.param, op.angle) for op in program.operations] == [
        (None, 0.25),
        (None, 0.25),
        (0, None),
        (1, None),
    ]
    assert facts(program)["fixed_angle_gates"] == 2


def test_fixed_gates_take_no_parameter():
    count, indices = params({"qubits": 2, "layer": [{"gate": "h"}, {"gate": "cz", "on": "chain"}]})
    assert count == 0 and indices == [None, None, None]


def test_parameter_steps_name_the_owning_step():
    program = expand(
        parse_circuit(
            {
                "qubits": 2,
                "layers": 2,
                "prepare": [{"gate": "h"}],
                "layer": [{"gate": "ry", "share": "layers"}, {"gate": "rz", "share": "step"}],
            }
        )
    )
    assert program.parameter_steps == ("layer[0]", "layer[0]", "layer[1]", "layer[1]")


# --------------------------------------------------------------------------- alias


def test_cnot_is_cx():
    with_alias = expand(parse_circuit({"qubits": 3, "layer": [{"gate": "cnot", "on": "chain"}]}))
    canonical = expand(parse_circuit({"qubits": 3, "layer": [{"gate": "cx", "on": "chain"}]}))
    assert [op.gate for op in with_alias.operations] == ["cx", "cx"]
    assert with_alias.operations == canonical.operations
    assert facts(with_alias)["gate_counts"] == {"cx": 2}


def test_cnot_takes_no_angle():
    rejected(
        base(layer=[{"gate": "cnot", "on": "chain", "angle": 1.0}]), "layer[0].angle", "'cnot'"
    )


# ------------------------------------------------------------------------ options


@pytest.mark.parametrize(
    ("data", "path", "words"),
    [
        ({"pairs": 1}, "pairs", ["1", "2..10000000"]),
        ({"bins": 0}, "bins", ["0", "2..100000"]),
        ({"seed": -1}, "seed", ["-1", "0.."]),
        ({"samples": 2.5}, "samples", ["2.5", "integer"]),
        ({"metrics": ["expressibility", "speed"]}, "metrics[1]", ['"speed"', "entanglement"]),
        ({"colour": "red"}, "colour", ["unknown option", "pairs"]),
    ],
)
def test_bad_options(data, path, words):
    with pytest.raises(OptionError) as info:
        haarline.parse_options(data)
    problem = only_problem(info.value)
    assert problem.path == path
    for word in words:
        assert word in problem.message


def test_option_errors_use_the_callers_names():
    with pytest.raises(OptionError) as info:
        haarline.parse_options({"bins": 1}, names={"bins": "--bins"})
    assert str(info.value) == "--bins: got 1; allowed range is 2..100000"


# ------------------------------------------------------------------ fuzzing (hypothesis)

PATTERN_WORDS = [
    "all",
    "chain",
    "ring",
    "all-to-all",
    "pairs",
    "brick-even",
    "brick-odd",
    "star",
    "",
    "ALL",
]
KEY_WORDS = [
    "format", "name", "description", "qubits", "layers", "prepare", "layer", "finish",
    "gate", "on", "reverse", "angle", "share", "steps", "qubit", "",
]  # fmt: skip
GATE_WORDS = [*GATES, *ALIASES, "CX", "rxy", "u3", ""]

scalars = st.one_of(
    st.none(),
    st.booleans(),
    st.integers(min_value=-3, max_value=30),
    st.integers(),
    st.floats(allow_nan=True, allow_infinity=True),
    st.text(max_size=6),
    st.sampled_from(PATTERN_WORDS + GATE_WORDS + ["step", "layers"]),
)
junk = st.recursive(
    scalars,
    lambda inner: st.one_of(
        st.lists(inner, max_size=4),
        st.dictionaries(
            st.one_of(st.sampled_from(KEY_WORDS), st.text(max_size=4)), inner, max_size=4
        ),
    ),
    max_leaves=12,
)


@st.composite
def steps(draw, *, section: str = "layer"):
    gate = draw(st.sampled_from(sorted([*GATES, *ALIASES])))
    step: dict = {"gate": gate}
    two = haarline.lookup(gate).qubits == 2
    choice = draw(st.integers(0, 3))
    if choice == 1:
        step["on"] = draw(st.sampled_from(PATTERN_WORDS[:6]))
    elif choice == 2:
        step["on"] = draw(st.lists(st.integers(0, 6), min_size=1, max_size=4))
    elif choice == 3:
        step["on"] = draw(
            st.lists(st.lists(st.integers(0, 6), min_size=2, max_size=2), min_size=1, max_size=4)
        )
    if two and draw(st.booleans()):
        step["reverse"] = draw(st.booleans())
    if haarline.lookup(gate).takes_angle:
        extra = draw(st.integers(0, 2))
        if extra == 1:
            step["angle"] = draw(st.floats(-10, 10))
        elif extra == 2:
            step["share"] = draw(st.sampled_from(["step", "layers"]))
    return step


@st.composite
def descriptions(draw):
    data: dict = {
        "qubits": draw(st.integers(1, 6)),
        "layer": draw(st.lists(steps(), max_size=3)),
    }
    if draw(st.booleans()):
        data["layers"] = draw(st.integers(1, 3))
    if draw(st.booleans()):
        data["prepare"] = draw(st.lists(steps(section="prepare"), max_size=2))
    if draw(st.booleans()):
        data["finish"] = draw(st.lists(steps(section="finish"), max_size=2))
    if draw(st.booleans()):
        data["name"] = draw(st.sampled_from(["fuzz", "fuzz case (1)", "", "#x"]))
    return data


def containers(value, here=()):
    """Every (path, container) inside a decoded value, the value itself first."""
    if isinstance(value, dict | list):
        yield here, value
        items = value.items() if isinstance(value, dict) else enumerate(value)
        for key, item in items:
            yield from containers(item, (*here, key))


@st.composite
def mutated(draw):
    data = draw(descriptions())
    for _ in range(draw(st.integers(1, 4))):
        spots = list(containers(data))
        _, target = draw(st.sampled_from(spots))
        action = draw(st.sampled_from(["replace", "delete", "add"]))
        keys = list(target.keys()) if isinstance(target, dict) else list(range(len(target)))
        if action == "add" or not keys:
            if isinstance(target, dict):
                target[draw(st.one_of(st.sampled_from(KEY_WORDS), st.text(max_size=5)))] = draw(
                    junk
                )
            else:
                target.append(draw(junk))
        elif action == "delete":
            del target[draw(st.sampled_from(keys))]
        else:
            target[draw(st.sampled_from(keys))] = draw(junk)
    return data


def survive(data) -> None:
    """Parse and expand; anything but success or CircuitError fails the test."""
    try:
        circuit = parse_circuit(data)
        program = expand(circuit)
    except CircuitError as exc:
        assert exc.problems
        for problem in exc.problems:
            assert isinstance(problem.path, str) and problem.path
            assert isinstance(problem.message, str) and problem.message
        str(exc)
        return
    assert program.operations
    assert all(op.param is None or 0 <= op.param < program.parameters for op in program.operations)
    assert all(0 <= q < program.qubits for op in program.operations for q in op.qubits)
    facts(program)
    # scans re-instantiate a description at other sizes: the same rule applies
    for n in (1, 2, 5):
        try:
            expand(circuit, qubits=n, layers=2)
        except CircuitError:
            pass


FUZZ = settings(
    max_examples=300, deadline=None, database=None, suppress_health_check=[HealthCheck.too_slow]
)


@FUZZ
@given(mutated())
def test_fuzz_mutated_descriptions(data):
    survive(data)


@FUZZ
@given(junk)
def test_fuzz_random_values(data):
    survive(data)


@settings(
    max_examples=150, deadline=None, database=None, suppress_health_check=[HealthCheck.too_slow]
)
@given(st.one_of(mutated(), junk))
def test_fuzz_through_json_and_yaml_text(data):
    for text, kind in ((json.dumps(data), "json"), (yaml.safe_dump(data), "yaml")):
        try:
            expand(parse_circuit_text(text, kind=kind))
        except CircuitError:
            pass


@settings(max_examples=150, deadline=None, database=None)
@given(st.one_of(st.binary(max_size=60), st.text(max_size=60)), st.sampled_from(["json", "yaml"]))
def test_fuzz_raw_text(text, kind):
    try:
        expand(parse_circuit_text(text, kind=kind))
    except CircuitError:
        pass


# Token soup: fragments of YAML and JSON syntax (tags, anchors, flow collections, keys of
# the format) glued at random, so the decoders see odd-but-plausible text.
YAML_TOKENS = [
    "qubits: ", "layers: ", "layer:", "prepare:", "gate: ", "on: ", "angle: ", "share: ",
    "reverse: ", "\n", "\n  ", "\n    ", "- ", "{", "}", "[", "]", ", ", ": ", "? ",
    "!!int ", "!!float ", "!!bool ", "!!str ", "!!map ", "!!seq ", "!!null ", "!!set ",
    "!!timestamp ", "!!binary ", "!!merge ", "!!omap ", "!custom ", "&a ", "*a", "<<: ",
    "4", "-1", "0x1F", "0o7", "010", "1_0", "1:30", "1e3", "4.0", ".inf", ".nan", "yes",
    "on", "off", "true", "null", "~", "ry", "cx", "ring", "all", "abc", "'q'", '"x"',
    "---\n", "...\n", "#c\n", "|\n  t\n", "%YAML 1.2\n", "\t", "\ufeff", "\x00",
]  # fmt: skip
JSON_TOKENS = [
    '{', '}', '[', ']', ',', ':', '"qubits"', '"layer"', '"gate"', '"on"', '"angle"',
    '"ry"', '"cx"', '"ring"', '"all"', '4', '-0', '1e999', '1' + '0' * 5000, 'NaN',
    'Infinity', '-Infinity', 'true', 'null', '"\\ud800"', '"\\u0000"', ' ', '\n', '"',
]  # fmt: skip


@settings(max_examples=300, deadline=None, database=None)
@given(st.lists(st.sampled_from(YAML_TOKENS), max_size=25).map("".join))
def test_fuzz_yaml_token_soup(text):
    try:
        expand(parse_circuit_text(text, kind="yaml"))
    except CircuitError:
        pass


@settings(max_examples=200, deadline=None, database=None)
@given(st.lists(st.sampled_from(JSON_TOKENS), max_size=25).map("".join))
def test_fuzz_json_token_soup(text):
    try:
        expand(parse_circuit_text(text))
    except CircuitError:
        pass


# --- named parameters ('param') ----------------------------------------------------------


def test_named_parameter_is_shared_across_steps_and_layers():
    desc = {
        "qubits": 2,
        "layers": 2,
        "layer": [
            {"gate": "rx", "param": "a"},
            {"gate": "ry", "on": [1], "param": "a"},
            {"gate": "rz"},
        ],
    }
    p = expand(parse_circuit(desc))
    assert p.parameters == 1 + 2 * 2
    assert {op.param for op in p.operations if op.gate in ("rx", "ry")} == {0}
    assert p.parameter_names[0] == "a" and p.parameter_names[1] is None


@pytest.mark.parametrize(
    "step,path,words",
    [
        ({"gate": "h", "param": "a"}, "layer[0].param", ["'h' has no angle"]),
        ({"gate": "rx", "param": "a", "share": "step"}, "layer[0].param", ["'share'"]),
        ({"gate": "rx", "param": "a", "angle": 0.1}, "layer[0].param", ["'angle'"]),
        ({"gate": "rx", "param": "9x"}, "layer[0].param", ["9x"]),
    ],
)
def test_named_parameter_errors(step, path, words):
    with pytest.raises(CircuitError) as info:
        expand(parse_circuit({"qubits": 2, "layer": [step]}))
    problems = info.value.problems
    assert len(problems) == 1 and problems[0].path == path
    for word in words:
        assert word in problems[0].message
