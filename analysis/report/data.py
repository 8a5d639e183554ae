"""Data sets for circuits with inputs: a table of feature rows and, optionally, labels.

A data set comes from a CSV file (a header row; the first ``D`` numeric columns are the
features and a column named ``label`` holds the labels), a ``.npy`` file (a 2-D array of
features), or, in the service, an inline object ``{"x": [[...], ...], "labels": [...]}``.
Every problem is one :class:`~haarline.errors.InputError` line that names the row and the
column (rows count from 1 after the header, as a spreadsheet shows them).
"""

from __future__ import annotations

import csv
import hashlib
import io
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
from haarline.circuit.text import bounded_text, read_file
from haarline.errors import DataError, Problem
from numpy.typing import NDArray

__all__ = ["MAX_DATA_BYTES", "MAX_ROWS", "Dataset", "dataset_from", "load_data"]

MAX_ROWS = 100_000
"""Most rows a data set may hold."""

MAX_DATA_BYTES = 32 * 1024 * 1024
"""Largest data file read (32 MiB)."""

LABEL = "label"
"""The name of the label column of a CSV file."""


@dataclass(frozen=True)
class Dataset:
    """Feature rows ``x`` (shape ``(N, D)``) and optional labels ``(N,)``."""

    x: NDArray[np.float64] = field(repr=False)
    labels: NDArray[Any] | None = field(default=None, repr=False)
    source: str = "data"

    @property
    def rows(self) -> int:
        """Number of rows ``N``."""
        return int(self.x.shape[0])

    @property
    def features(self) -> int:
        """Number of features ``D``."""
        return int(self.x.shape[1])

    def facts(self) -> dict[str, Any]:
        """The report's ``data`` object: sizes, classes and a digest of the values."""
        digest = hashlib.sha256(np.ascontiguousarray(self.x, dtype="<f8").tobytes())
        classes = None
        if self.labels is not None:
            digest.update(json_labels(self.labels).encode())
            classes = len(set(self.labels.tolist()))
        return {
            "source": self.source,
            "rows": self.rows,
            "features": self.features,
            "labelled": self.labels is not None,
            "classes": classes,
            "sha256": digest.hexdigest(),
        }


def json_labels(labels: NDArray[Any]) -> str:
    """Labels as one canonical text (for the digest)."""
    return "\n".join(str(v) for v in labels.tolist())


def _fail(problems: list[Problem], source: str) -> DataError:
    return DataError(problems[:20], source=source)


def _check(x: NDArray[np.float64], source: str) -> None:
    problems: list[Problem] = []
    if x.ndim != 2 or x.shape[0] == 0 or x.shape[1] == 0:
        raise _fail([Problem("(root)", f"expected a non-empty table, got shape {x.shape}")], source)
    if x.shape[0] > MAX_ROWS:
        raise _fail([Problem("(root)", f"{x.shape[0]} rows; at most {MAX_ROWS} are read")], source)
    bad = np.argwhere(~np.isfinite(x))
    for r, c in bad[:20]:
        problems.append(
            Problem(f"row {r + 1}, column {c + 1}", f"got {x[r, c]}; expected a finite number")
        )
    if problems:
        raise _fail(problems, source)


def _labels(values: list[Any], source: str) -> NDArray[Any]:
    """Integer labels when every label is an integer, else text labels."""
    try:
        numbers = [float(v) for v in values]
    except (TypeError, ValueError):
        return np.asarray([str(v) for v in values])
    if all(math.isfinite(v) and v == int(v) for v in numbers):
        return np.asarray([int(v) for v in numbers])
    return np.asarray([str(v) for v in values])


def dataset_from(data: Any, *, source: str = "data") -> Dataset:
    """Validate an inline data set ``{"x": [[...], ...], "labels": [...]}``.

    Examples
    --------
    >>> d = dataset_from({"x": [[0.1, 0.2], [0.3, 0.4]], "labels": [0, 1]})
    >>> d.rows, d.features, d.labels.tolist()
    (2, 2, [0, 1])
    >>> dataset_from({"x": [[0.1, 0.2], [0.3]]})
    Traceback (most recent call last):
    ...
    haarline.errors.DataError: data: x[1]: got 1 values; expected 2 like the first row
    """
    if not isinstance(data, dict) or "x" not in data:
        raise _fail(
            [Problem("(root)", 'expected an object {"x": [[...], ...], "labels": [...]}')], source
        )
    unknown = sorted(set(data) - {"x", "labels"})
    if unknown:
        raise _fail([Problem(unknown[0], "unknown key; allowed keys: x, labels")], source)
    rows = data["x"]
    if not isinstance(rows, list) or not rows:
        raise _fail([Problem("x", "expected a non-empty array of rows")], source)
    width = len(rows[0]) if isinstance(rows[0], list) else -1
    problems: list[Problem] = []
    for i, row in enumerate(rows):
        if not isinstance(row, list):
            problems.append(Problem(f"x[{i}]", "expected an array of numbers"))
        elif len(row) != width:
            problems.append(
                Problem(f"x[{i}]", f"got {len(row)} values; expected {width} like the first row")
            )
        else:
            for j, v in enumerate(row):
                if isinstance(v, bool) or not isinstance(v, int | float) or not math.isfinite(v):
                    problems.append(Problem(f"x[{i}][{j}]", f"got {v!r}; expected a finite number"))
        if len(problems) >= 20:
            break
    if problems:
        raise _fail(problems, source)
    x = np.asarray(rows, dtype=float)
    _check(x, source)
    labels = None
    if data.get("labels") is not None:
        values = data["labels"]
        if not isinstance(values, list) or len(values) != len(rows):
            raise _fail(
                [Problem("labels", f"expected an array of {len(rows)} labels, one per row")], source
            )
        labels = _labels(values, source)
    return Dataset(x, labels, source)


def _read_csv(text: str, source: str) -> Dataset:
    reader = csv.reader(io.StringIO(text))
    header = next(reader, None)
    if not header or not any(h.strip() for h in header):
        raise _fail(
            [Problem("(root)", "the file is empty; expected a header row, then data rows")], source
        )
    names = [h.strip() for h in header]
    label_at = names.index(LABEL) if LABEL in names else None
    columns = [i for i in range(len(names)) if i != label_at]
    rows: list[list[float]] = []
    labels: list[str] = []
    problems: list[Problem] = []
    for r, record in enumerate(reader, start=1):
        if not record or all(not v.strip() for v in record):
            continue
        if len(record) != len(names):
            problems.append(
                Problem(f"row {r}", f"got {len(record)} columns; the header has {len(names)}")
            )
            continue
        values = []
        for c in columns:
            cell = record[c].strip()
            try:
                value = float(cell)
            except ValueError:
                problems.append(
                    Problem(
                        f"row {r}, column {c + 1} ({names[c]})", f"got {cell!r}; expected a number"
                    )
                )
                continue
            if not math.isfinite(value):
                problems.append(
                    Problem(
                        f"row {r}, column {c + 1} ({names[c]})",
                        f"got {cell!r}; expected a finite number",
                    )
                )
            values.append(value)
        rows.append(values)
        if label_at is not None:
            labels.append(record[label_at].strip())
        if len(problems) >= 20 or len(rows) > MAX_ROWS:
            break
    if problems:
        raise _fail(problems, source)
    if not rows:
        raise _fail([Problem("(root)", "no data rows after the header")], source)
    x = np.asarray(rows, dtype=float)
    _check(x, source)
    return Dataset(x, _labels(labels, source) if label_at is not None else None, source)


def load_data(path: str | Path) -> Dataset:
    """Read a data set from a ``.csv`` or ``.npy`` file.

    Raises
    ------
    InputError
        For a missing file, a wrong width, text in a numeric column, NaN or an empty file,
        naming the row and the column.
    """
    path = Path(path)
    source = str(path)
    raw = read_file(path, limit=MAX_DATA_BYTES)
    if path.suffix.lower() == ".npy":
        try:
            x = np.load(io.BytesIO(raw), allow_pickle=False)
        except (ValueError, OSError) as exc:
            raise _fail([Problem("(root)", f"not a NumPy array file: {exc}")], source) from None
        if x.ndim != 2 or not np.issubdtype(x.dtype, np.number):
            raise _fail(
                [
                    Problem(
                        "(root)", f"expected a 2-D numeric array, got {x.dtype} of shape {x.shape}"
                    )
                ],
                source,
            )
        x = x.astype(float)
        _check(x, source)
        return Dataset(x, None, source)
    text = bounded_text(raw, limit=MAX_DATA_BYTES, what="data file", source=source)
    return _read_csv(text, source)
