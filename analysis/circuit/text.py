"""Bounded text: descriptions, programs and policies are read with a size limit.

Shared by the JSON/YAML loader (:mod:`haarline.circuit.loading`), the OpenQASM reader and
the policy loader, so that every input is decoded the same way (UTF-8, a leading byte
order mark ignored) and every oversized input gets the same message.
"""

from __future__ import annotations

from pathlib import Path

from haarline.circuit.model import MAX_DESCRIPTION_BYTES
from haarline.errors import CircuitError, Problem

__all__ = ["bounded_text", "read_file"]


def _utf8_length(text: str) -> int:
    return len(text.encode("utf-8", "surrogatepass"))


def bounded_text(text: str | bytes, *, limit: int, what: str, source: str | None) -> str:
    """Text of at most ``limit`` UTF-8 bytes; bytes are decoded (a leading BOM dropped).

    Raises
    ------
    CircuitError
        ``"{what} is N bytes; the limit is L bytes"``, or for bytes that are not UTF-8.
    """
    size = len(text) if isinstance(text, bytes) else _utf8_length(text)
    if size > limit:
        raise CircuitError(
            [Problem("(root)", f"{what} is {size} bytes; the limit is {limit} bytes")],
            source=source,
        )
    if isinstance(text, bytes):
        try:
            # RFC 8259 section 8.1 lets a parser ignore a leading byte order mark.
            text = text.decode("utf-8-sig")
        except UnicodeDecodeError as exc:
            raise CircuitError(
                [Problem("(root)", f"not UTF-8 text (byte {exc.start})")], source=source
            ) from None
    return text


def read_file(path: str | Path, *, limit: int = MAX_DESCRIPTION_BYTES) -> bytes:
    """Read at most ``limit`` bytes of a file, or raise a ``CircuitError`` that says why.

    The read is bounded even for special files that report no size.
    """
    path = Path(path)
    source = str(path)
    try:
        size = path.stat().st_size
        if path.is_file() and size > limit:
            raise CircuitError(
                [Problem("(root)", f"file is {size} bytes; the limit is {limit} bytes")],
                source=source,
            )
        with path.open("rb") as handle:
            raw = handle.read(limit + 1)
    except FileNotFoundError:
        raise CircuitError([Problem("(root)", "no such file")], source=source) from None
    except IsADirectoryError:
        raise CircuitError(
            [Problem("(root)", "is a directory, not a file")], source=source
        ) from None
    except PermissionError:
        raise CircuitError([Problem("(root)", "permission denied")], source=source) from None
    except (OSError, ValueError) as exc:  # name too long, bad characters, I/O errors
        why = getattr(exc, "strerror", None) or str(exc)
        raise CircuitError(
            [Problem("(root)", f"cannot read the file: {why}")], source=source
        ) from None
    if len(raw) > limit:
        raise CircuitError(
            [Problem("(root)", f"file is larger than the limit of {limit} bytes")],
            source=source,
        )
    return raw
