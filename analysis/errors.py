"""The exceptions haarline raises, in one small tree.

::

    HaarlineError                  base of everything haarline raises on purpose
    ├── InputError (ValueError)    the caller gave something we cannot use
    │   ├── CircuitError           a circuit description is malformed or invalid
    │   ├── OptionError            analysis options are out of range
    │   │   └── ClusterError       the Dask cluster of the scheduler option cannot do the work
    │   ├── DataError              a data set has a bad row or column
    │   └── PolicyError            a policy file is malformed (haarline.report.policy)
    └── LimitError                 the work would exceed a configured limit

Every ``InputError`` carries a list of :class:`Problem` entries, each naming the
JSON path of the offending field, so that the CLI, the service and the library all
report the same ``path: message`` lines. The CLI maps ``InputError`` and
``LimitError`` to exit code 2; the service maps them to 4xx responses.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass

__all__ = [
    "CircuitError",
    "ClusterError",
    "DataError",
    "HaarlineError",
    "InputError",
    "LimitError",
    "OptionError",
    "Problem",
    "format_path",
]


def format_path(loc: Sequence[str | int]) -> str:
    """Render a location tuple as a JSON path such as ``layer[1].on[0]``.

    Examples
    --------
    >>> format_path(("layer", 1, "on", 0))
    'layer[1].on[0]'
    >>> format_path(())
    '(root)'
    """
    out = ""
    for part in loc:
        if isinstance(part, int):
            out += f"[{part}]"
        else:
            out += f".{part}" if out else str(part)
    return out or "(root)"


@dataclass(frozen=True)
class Problem:
    """One thing wrong with an input: where it is and what is wrong."""

    path: str
    message: str

    def __str__(self) -> str:
        return f"{self.path}: {self.message}"


class HaarlineError(Exception):
    """Base class of every error haarline raises on purpose."""


class InputError(HaarlineError, ValueError):
    """The caller's input cannot be used; ``problems`` says where and why."""

    def __init__(self, problems: Iterable[Problem] | str, *, source: str | None = None):
        if isinstance(problems, str):
            problems = [Problem("(root)", problems)]
        self.problems: list[Problem] = list(problems)
        self.source = source
        super().__init__(str(self))

    def __str__(self) -> str:
        prefix = f"{self.source}: " if self.source else ""
        return "\n".join(prefix + str(p) for p in self.problems)


class CircuitError(InputError):
    """A circuit description is malformed (bad JSON, wrong types) or invalid."""


class OptionError(InputError):
    """Analysis options are missing, of the wrong type or out of range."""


class ClusterError(OptionError):
    """The Dask cluster named by the ``scheduler`` option cannot do the work.

    Nothing answers at the address, the scheduler has no workers, a worker runs another
    haarline or numpy, the scheduler went away, or one block kept killing its workers.
    An option error because the address is an option: the CLI names ``--dask``.
    """


class DataError(InputError):
    """A data set cannot be used; the problems name the row and the column."""


class LimitError(HaarlineError):
    """The requested work exceeds a configured limit (memory budget, size caps)."""
