"""Loading of the packaged data tables in ``calc/data``.

Each table is a CSV file whose leading ``#`` lines give the source standard, edition, table number,
units and the ``confirmed`` / ``memory`` tags; then one header row and the data rows. Every file has
a ``tag`` column. Columns whose cells are all numbers (empty cells = not tabulated → ``nan``) load
as ``float64`` arrays, the others as ``str`` arrays. Tables are read once (cached) and returned
read-only.
"""

from __future__ import annotations

import csv
import functools
import importlib.resources
import io
from dataclasses import dataclass

import numpy as np

from calc.errors import DataFileError

__all__ = ["Table", "load_table", "parse_table", "table_names"]


@dataclass(frozen=True)
class Table:
    """A parsed data table: its ``#`` header lines and its columns by name."""

    name: str
    header: tuple[str, ...]
    columns: dict[str, np.ndarray]

    def __getitem__(self, column: str) -> np.ndarray:
        try:
            return self.columns[column]
        except KeyError:
            raise DataFileError(f"{self.name}: no column {column!r}") from None

    def __len__(self) -> int:
        return len(next(iter(self.columns.values())))

    def where(self, **equal: str) -> np.ndarray:
        """Boolean row mask of the rows whose string columns equal the given values."""
        mask = np.ones(len(self), dtype=bool)
        for col, value in equal.items():
            mask &= self[col] == value
        return mask


def _convert(values: list[str]) -> np.ndarray:
    try:
        return np.array([float(v) if v.strip() else np.nan for v in values], dtype=float)
    except ValueError:
        return np.array([v.strip() for v in values], dtype=str)


def parse_table(text: str, name: str = "<text>") -> Table:
    """Parse the text of a data table (no file access).

    >>> t = parse_table("# source: demo\\nsize_mm2,r,tag\\n4,4.61,confirmed\\n6,,memory\\n")
    >>> t["size_mm2"], t["r"], t["tag"].tolist(), t.header
    (array([4., 6.]), array([4.61,  nan]), ['confirmed', 'memory'], ('# source: demo',))
    """
    lines = text.splitlines()
    header = tuple(line for line in lines if line.startswith("#"))
    body = [line for line in lines if line.strip() and not line.startswith("#")]
    if not body:
        raise DataFileError(f"{name}: no header row")
    rows = list(csv.reader(io.StringIO("\n".join(body))))
    names = [c.strip() for c in rows[0]]
    data = rows[1:]
    if any(len(r) != len(names) for r in data):
        raise DataFileError(f"{name}: every row must have {len(names)} cells")
    if "tag" not in names:
        raise DataFileError(f"{name}: no tag column")
    columns = {}
    for j, col in enumerate(names):
        arr = _convert([r[j] for r in data])
        arr.flags.writeable = False
        columns[col] = arr
    return Table(name=name, header=header, columns=columns)


def table_names() -> list[str]:
    """Names of the packaged data tables."""
    root = importlib.resources.files("calc").joinpath("data")
    return sorted(p.name for p in root.iterdir() if p.name.endswith(".csv"))


@functools.cache
def load_table(name: str) -> Table:
    """Load a packaged data table by file name (cached, read-only arrays)."""
    res = importlib.resources.files("calc").joinpath("data", name)
    try:
        text = res.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise DataFileError(f"no packaged data table {name!r}") from None
    return parse_table(text, name)
