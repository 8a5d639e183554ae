"""Small formatting helpers shared by the summaries and the registry rows."""

from __future__ import annotations

from collections.abc import Sequence

__all__ = ["count_text", "interval_text", "sentence"]


def interval_text(pair: Sequence[float] | None, spec: str = ".4f") -> str:
    """``"lo .. hi"`` in the given format; empty for a missing interval.

    Examples
    --------
    >>> interval_text([0.1, 0.25]), interval_text([1e-5, 2e-4], ".2e")
    ('0.1000 .. 0.2500', '1.00e-05 .. 2.00e-04')
    """
    if not pair:
        return ""
    return f"{format(pair[0], spec)} .. {format(pair[1], spec)}"


def count_text(k: int, word: str) -> str:
    """``"1 qubit"``, ``"4 qubits"``.

    Examples
    --------
    >>> count_text(1, "layer"), count_text(3, "layer")
    ('1 layer', '3 layers')
    """
    return f"{k} {word}" + ("" if k == 1 else "s")


def sentence(text: str) -> str:
    """A clause as a sentence: capital first letter, one final period.

    Examples
    --------
    >>> sentence("not concentrated: the variance is flat")
    'Not concentrated: the variance is flat.'
    """
    text = text.rstrip(".")
    return f"{text[:1].upper()}{text[1:]}."
