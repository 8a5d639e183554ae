"""The YAML reader of descriptions: YAML 1.2 scalars on PyYAML's safe loader.

Imported by :mod:`haarline.circuit.loading` only when a YAML text is read, so that
reading JSON (and the bundled references) never loads PyYAML.
"""

from __future__ import annotations

import re
from collections.abc import Hashable
from typing import Any

import yaml
from haarline.circuit.model import _describe

__all__ = ["Loader"]

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


Loader = _Loader
"""The loader :func:`haarline.circuit.loading.parse_circuit_text` reads YAML with."""
