"""Reading descriptions from text and files: JSON and YAML, with strict decoding.

JSON duplicate keys are rejected (the standard parser would keep the last one silently).
YAML is read by YAML 1.2 rules for booleans and numbers (so the key ``on`` stays a
string and ``010`` is ten), with string keys only and no timestamps, sets or merge keys.
Every problem raises :class:`~haarline.errors.CircuitError`.
"""

from __future__ import annotations

import json
import re
from collections.abc import Hashable
from pathlib import Path
from typing import Any

import yaml
from haarline.circuit.model import MAX_DESCRIPTION_BYTES, Circuit, _describe, parse_circuit
from haarline.circuit.text import bounded_text, read_file
from haarline.errors import CircuitError, Problem

__all__ = ["decode_text", "load_circuit", "parse_circuit_text"]


_YAML_TAG = "tag:yaml.org,2002:"


class _Loader(yaml.SafeLoader):
    """A SafeLoader that reads plain scalars as the YAML 1.2 core schema does.

    PyYAML follows YAML 1.1, where ``on``/``off``/``yes``/``no`` are booleans (so the key
    ``on`` would become ``True``), ``010`` is octal 8, ``1_0`` is 10, ``1:30`` is 90 and
    ``1e-3`` is a string. Here only ``true``/``false`` are booleans, integers are decimal
    (or ``0o``/``0x``), ``1e-3`` is a float, and there are no timestamps, sets, merge keys
    or other extra types, so a YAML description means what its JSON twin means.
    """


def _yaml_fail(node: yaml.Node, problem: str) -> yaml.constructor.ConstructorError:
    return yaml.constructor.ConstructorError(None, None, problem, node.start_mark)


def _construct_bool(loader: _Loader, node: yaml.ScalarNode) -> bool:
    text = loader.construct_scalar(node)
    if text in ("true", "True", "TRUE"):
        return True
    if text in ("false", "False", "FALSE"):
        return False
    raise _yaml_fail(node, f"{text!r} is not a boolean (expected true or false)")


def _construct_int(loader: _Loader, node: yaml.ScalarNode) -> int:
    text = str(loader.construct_scalar(node))
    try:
        if re.fullmatch(r"[-+]?[0-9]+", text):
            return int(text, 10)
        if re.fullmatch(r"0o[0-7]+", text):
            return int(text[2:], 8)
        if re.fullmatch(r"0x[0-9a-fA-F]+", text):
            return int(text[2:], 16)
    except ValueError:  # more digits than Python converts
        raise _yaml_fail(node, "integer with too many digits") from None
    raise _yaml_fail(node, f"{text[:40]!r} is not an integer")


def _construct_float(loader: _Loader, node: yaml.ScalarNode) -> float:
    text = str(loader.construct_scalar(node))
    special = {
        ".inf": float("inf"),
        "+.inf": float("inf"),
        "-.inf": float("-inf"),
        ".nan": float("nan"),
    }
    if text.lower() in special:
        return special[text.lower()]
    if re.fullmatch(r"[-+]?(?:\.[0-9]+|[0-9]+(?:\.[0-9]*)?)(?:[eE][-+]?[0-9]+)?", text):
        return float(text)
    raise _yaml_fail(node, f"{text[:40]!r} is not a number")


def _construct_mapping(
    loader: _Loader, node: yaml.MappingNode, deep: bool = False
) -> dict[Hashable, Any]:
    if not isinstance(node, yaml.MappingNode):
        raise _yaml_fail(node, "expected a mapping")
    seen: set[str] = set()
    for key_node, _ in node.value:
        key = loader.construct_object(key_node, deep=True)
        if not isinstance(key, str):
            raise _yaml_fail(
                key_node,
                f"key {_describe(key)} is not a string; keys are names such as 'qubits' or 'gate'",
            )
        if key in seen:
            raise _yaml_fail(key_node, f"duplicate key {key!r}")
        seen.add(key)
    return yaml.SafeLoader.construct_mapping(loader, node, deep=deep)


_Loader.yaml_implicit_resolvers = {}
_Loader.add_implicit_resolver(
    _YAML_TAG + "null", re.compile(r"^(?:~|null|Null|NULL|)$"), ["~", "n", "N", ""]
)
_Loader.add_implicit_resolver(
    _YAML_TAG + "bool", re.compile(r"^(?:true|True|TRUE|false|False|FALSE)$"), list("tTfF")
)
_Loader.add_implicit_resolver(
    _YAML_TAG + "int",
    re.compile(r"^(?:[-+]?[0-9]+|0o[0-7]+|0x[0-9a-fA-F]+)$"),
    list("-+0123456789"),
)
_Loader.add_implicit_resolver(
    _YAML_TAG + "float",
    re.compile(
        r"^(?:[-+]?(?:\.[0-9]+|[0-9]+(?:\.[0-9]*)?)(?:[eE][-+]?[0-9]+)?"
        r"|[-+]?\.(?:inf|Inf|INF)|\.(?:nan|NaN|NAN))$"
    ),
    list("-+.0123456789"),
)
_Loader.yaml_constructors = {
    _YAML_TAG + "null": yaml.SafeLoader.yaml_constructors[_YAML_TAG + "null"],
    _YAML_TAG + "str": yaml.SafeLoader.yaml_constructors[_YAML_TAG + "str"],
    _YAML_TAG + "seq": yaml.SafeLoader.yaml_constructors[_YAML_TAG + "seq"],
    _YAML_TAG + "bool": _construct_bool,
    _YAML_TAG + "int": _construct_int,
    _YAML_TAG + "float": _construct_float,
    _YAML_TAG + "map": _construct_mapping,
    None: yaml.SafeLoader.construct_undefined,
}


class _DuplicateKey(ValueError):
    """A JSON object repeats a key."""


def _reject_duplicates(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for key, value in pairs:
        if key in out:
            raise _DuplicateKey(f"duplicate key {key!r}")
        out[key] = value
    return out


def _decode(text: str, kind: str, source: str | None) -> Any:
    if kind == "yaml":
        try:
            return yaml.load(text, Loader=_Loader)  # _Loader is a SafeLoader subclass
        except yaml.YAMLError as exc:
            mark = getattr(exc, "problem_mark", None) or getattr(exc, "context_mark", None)
            where = f"line {mark.line + 1}, column {mark.column + 1}: " if mark else ""
            what = getattr(exc, "problem", None) or str(exc)
            raise CircuitError(
                [Problem("(root)", f"{where}invalid YAML: {what}")], source=source
            ) from None
        except RecursionError:
            raise CircuitError(
                [Problem("(root)", "invalid YAML: nested too deeply")], source=source
            ) from None
    try:
        return json.loads(text, object_pairs_hook=_reject_duplicates)
    except json.JSONDecodeError as exc:
        raise CircuitError(
            [Problem("(root)", f"line {exc.lineno}, column {exc.colno}: invalid JSON: {exc.msg}")],
            source=source,
        ) from None
    except _DuplicateKey as exc:
        raise CircuitError([Problem("(root)", f"invalid JSON: {exc}")], source=source) from None
    except ValueError:  # an integer literal longer than Python converts
        raise CircuitError(
            [Problem("(root)", "invalid JSON: a number has too many digits")], source=source
        ) from None
    except RecursionError:
        raise CircuitError(
            [Problem("(root)", "invalid JSON: nested too deeply")], source=source
        ) from None


def decode_text(
    text: str | bytes, *, kind: str = "json", source: str | None = None, what: str = "text"
) -> Any:
    """Decode JSON or YAML text (at most 1 MiB) strictly, without interpreting it.

    Raises
    ------
    CircuitError
        For text that is too large, not UTF-8, or not valid JSON/YAML.
    """
    text = bounded_text(text, limit=MAX_DESCRIPTION_BYTES, what=what, source=source)
    if kind not in ("json", "yaml"):
        raise ValueError(f"kind must be 'json' or 'yaml', got {kind!r}")
    return _decode(text, kind, source)


def parse_circuit_text(
    text: str | bytes, *, kind: str = "json", source: str | None = None
) -> Circuit:
    """Decode JSON or YAML text and validate it as a description.

    Duplicate keys are rejected (JSON would silently keep the last one). YAML plain
    scalars follow the YAML 1.2 core schema: only ``true``/``false`` are booleans (so the
    key ``on`` is not read as ``True``), ``010`` is ten, ``1e-3`` is a number, and keys must
    be strings. A leading UTF-8 byte order mark is ignored.
    """
    data = decode_text(text, kind=kind, source=source, what="description")
    return parse_circuit(data, source=source)


def load_circuit(path: str | Path) -> Circuit:
    """Read a description from a ``.json``, ``.yaml``/``.yml`` or OpenQASM ``.qasm`` file.

    Raises
    ------
    CircuitError
        If the file is missing, too large, not valid JSON/YAML/OpenQASM, or not a valid
        description.
    """
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix == ".qasm":  # the OpenQASM reader (and its parser) loads only for such files
        from haarline.circuit.qasm.parse import MAX_QASM_BYTES, parse_qasm

        return parse_qasm(read_file(path, limit=MAX_QASM_BYTES), source=str(path))
    kind = "yaml" if suffix in (".yaml", ".yml") else "json"
    return parse_circuit_text(read_file(path), kind=kind, source=str(path))
