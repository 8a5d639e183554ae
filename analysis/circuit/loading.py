"""Reading descriptions from text and files: JSON and YAML, with strict decoding.

JSON duplicate keys are rejected (the standard parser would keep the last one silently).
YAML is read by YAML 1.2 rules for booleans and numbers (so the key ``on`` stays a
string and ``010`` is ten), with string keys only and no timestamps, sets or merge keys.
Every problem raises :class:`~haarline.errors.CircuitError`.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from haarline.circuit.model import MAX_DESCRIPTION_BYTES, Circuit, parse_circuit
from haarline.circuit.text import bounded_text, read_file
from haarline.errors import CircuitError, Problem

__all__ = ["decode_text", "load_circuit", "parse_circuit_text"]


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
        import yaml  # PyYAML and our loader load only for YAML texts
        from haarline.circuit._yaml import Loader

        try:
            return yaml.load(text, Loader=Loader)  # a SafeLoader subclass
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
