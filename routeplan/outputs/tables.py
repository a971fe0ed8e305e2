"""Formatting the tabular outputs as text, for the CSV files and the workbook (the writers:
:mod:`routeplan.outputs.schedules`).

Each table is formatted once (:func:`format_table`) into a :class:`TextTable` — every cell as
UTF-8 text with its column's fixed decimals — and that one text serves both the CSV and the
workbook, so the two never disagree and the numbers are formatted once. Formatting is
vectorised (numpy) and gives exactly the bytes of Python's ``'%.Nf' % x`` (correctly rounded,
round-half-even on the exact binary value), with ``''`` for NaN and ``-0.00`` written as
``0.00``; the few values where the fast path cannot prove its answer (within a hair of a
rounding tie, or too large for exact integer arithmetic) are formatted by Python itself.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from .columns import Col

_POW10 = 10 ** np.arange(19, dtype=np.int64)
_TEN = np.uint64(10)


def ordered(frame: pd.DataFrame, cols: tuple[Col, ...]) -> pd.DataFrame:
    """The frame with the contract columns first, in order, then any others."""
    first = [c.name for c in cols if c.name in frame.columns]
    missing = [c.name for c in cols if c.name not in frame.columns]
    if missing:
        raise KeyError(f"output frame lacks columns {missing}")
    rest = [c for c in frame.columns if c not in first and c != "geometry"]
    if list(frame.columns) == first + rest:
        return frame  # in order already (a layer's data): no copy
    # a plain frame's columns: geopandas' selection of a GeoDataFrame costs ten times more
    return pd.DataFrame(frame, copy=False)[first + rest]


def fixed_text(values: np.ndarray, decimals: int) -> np.ndarray:
    """``'%.{decimals}f' % x`` of each value as ASCII bytes (numpy ``S`` array), vectorised.

    ``b''`` for NaN; a negative zero result (``-0.00``) is written ``0.00``. Exactly the text
    Python gives: values scaled by ``10**decimals`` are rounded half-to-even with numpy, and
    values whose scaled fraction lies within rounding error of one half (where the scaled
    float might round differently from the exact binary value), infinities and values too
    large for exact integer arithmetic are formatted by Python.

    Examples
    --------
    >>> fixed_text(np.array([1.005, 0.125, -0.004, np.nan, 12.0, -3.14159]), 2).tolist()
    [b'1.00', b'0.12', b'0.00', b'', b'12.00', b'-3.14']
    """
    v = np.asarray(values, dtype=float)
    d = int(decimals)
    s = v * (10.0**d)
    a = np.abs(s)
    with np.errstate(invalid="ignore"):
        safe = (a < 2.0**52) & (np.abs(a - np.floor(a) - 0.5) > a * 2.0**-50 + 2.0**-60)
    n = np.rint(np.where(safe, s, 0.0)).astype(np.int64)
    mag = np.abs(n)
    # digits of the scaled magnitude: at least decimals + 1 (the units digit before the point)
    nd = np.maximum(np.searchsorted(_POW10, mag, side="right"), d + 1)
    key = nd * 2 + (n < 0)
    key[~safe] = -1
    dot = 1 if d else 0
    groups = [(int(k) // 2, int(k) % 2) for k in np.unique(key) if k >= 0]
    width = max([neg + nd_ + dot for nd_, neg in groups], default=1)
    out = np.zeros((len(v), width), dtype=np.uint8)
    umag = mag.astype(np.uint64)
    for nd_, neg in groups:
        rows = np.flatnonzero(key == nd_ * 2 + neg)
        m = umag[rows]
        block = np.zeros((len(rows), width), dtype=np.uint8)
        if neg:
            block[:, 0] = ord("-")
        col = neg + nd_ + dot - 1
        for q in range(nd_):  # from the last digit leftwards
            if d and q == d:
                block[:, col] = ord(".")
                col -= 1
            m, r = np.divmod(m, _TEN)
            block[:, col] = r.astype(np.uint8) + ord("0")
            col -= 1
        out[rows] = block
    text = out.view(f"S{width}").ravel()
    slow = np.flatnonzero(~safe & ~np.isnan(v))
    if len(slow):
        fmt = f"%.{d}f"
        zero, negzero = fmt % 0.0, "-" + fmt % 0.0
        done = [fmt % float(x) for x in v[slow]]
        done = [(zero if t == negzero else t).encode("ascii") for t in done]
        text = text.astype(f"S{max(width, *map(len, done))}")
        text[slow] = done
    return text


def general_text(values: np.ndarray) -> np.ndarray:
    """Whole numbers without decimals, others with up to 6 significant digits (``%.6g``),
    ``b''`` for NaN, as ASCII bytes (numpy ``S`` array).

    Examples
    --------
    >>> general_text(np.array([3.0, np.nan, 0.1234567, -0.0])).tolist()
    [b'3', b'', b'0.123457', b'0']
    """
    v = np.asarray(values, dtype=float)
    with np.errstate(invalid="ignore"):
        whole = np.isfinite(v) & (v == np.trunc(v))
    text = fixed_text(np.where(whole | np.isnan(v), v, np.nan), 0)
    other = np.flatnonzero(~whole & ~np.isnan(v))
    if len(other):
        done = [(f"{float(x):.6g}").encode("ascii") for x in v[other]]
        text = text.astype(f"S{max(text.dtype.itemsize, *map(len, done))}")
        text[other] = done
    return text


@dataclass(frozen=True, eq=False)
class TextColumn:
    """One formatted column: its name, spreadsheet title, whether it holds numbers (and their
    decimals, None = general format) and its cells as UTF-8 bytes (``b''`` = empty), as a list
    and as a numpy array (``S`` dtype for numbers, object for text)."""

    name: str
    title: str
    numeric: bool
    decimals: int | None
    cells: list[bytes]
    array: np.ndarray
    #: the values themselves, for a column of mixed types (numbers, booleans, text: the
    #: workbook writes each cell by its type); None for a column of one type
    values: list | None = None

    @classmethod
    def of(
        cls,
        name: str,
        title: str,
        numeric: bool,
        decimals: int | None,
        cells,
        values: list | None = None,
    ) -> TextColumn:
        """A column from a list or array of bytes cells."""
        if isinstance(cells, np.ndarray):
            return cls(name, title, numeric, decimals, cells.tolist(), cells, values)
        return cls(name, title, numeric, decimals, cells, np.array(cells, dtype=object), values)


@dataclass(frozen=True, eq=False)
class TextTable:
    """A table formatted once for every writer (see the module docstring)."""

    columns: tuple[TextColumn, ...]
    n_rows: int

    def csv_header(self) -> bytes:
        """The CSV header line, without its line end: the column names (identifiers of
        routeplan's own, which need no quoting). The rows are written by
        :func:`routeplan.outputs.schedules.csv_lines`."""
        return b",".join(c.name.encode("utf-8") for c in self.columns)


def _text_cells(col: pd.Series) -> list[bytes]:
    """Text cells of a non-numeric column: ``str(value)`` in UTF-8, ``b''`` for None/NaN."""
    values = col.to_numpy(dtype=object)
    if pd.api.types.infer_dtype(values, skipna=True) not in ("string", "empty"):
        # mixed values (e.g. the summary's): one by one, as 1, 1.0 and True hash alike
        return [b"" if pd.isna(v) else str(v).encode("utf-8") for v in values.tolist()]
    codes, uniques = pd.factorize(values, use_na_sentinel=True)
    enc = np.array([*(str(u).encode("utf-8") for u in uniques), b""], dtype=object)
    return enc[codes].tolist()  # code -1 (missing) picks the trailing b''


def format_table(frame: pd.DataFrame, cols: tuple[Col, ...] = ()) -> TextTable:
    """Format ``frame`` once: contract columns first (when ``cols`` is given), numbers with
    their column's fixed decimals (or the general format), booleans as ``true``/``false``,
    text as is; empty for NaN/None. Rerunning gives identical bytes."""
    spec = {c.name: c for c in cols}
    data = ordered(frame, cols) if cols else frame.drop(columns="geometry", errors="ignore")
    out = []
    for name in data.columns:
        col = data[name]
        c = spec.get(name)
        title = c.title if c else str(name)
        decimals = c.decimals if c is not None else None
        if pd.api.types.is_bool_dtype(col):
            cells = np.where(col.to_numpy(dtype=bool), b"true", b"false")
            out.append(TextColumn.of(str(name), title, False, None, cells))
        elif pd.api.types.is_numeric_dtype(col):
            values = col.to_numpy(dtype=float, na_value=np.nan)
            text = fixed_text(values, decimals) if decimals is not None else general_text(values)
            out.append(TextColumn.of(str(name), title, True, decimals, text))
        else:
            values = col.to_numpy(dtype=object)
            mixed = pd.api.types.infer_dtype(values, skipna=True) not in ("string", "empty")
            typed = values.tolist() if mixed else None
            out.append(TextColumn.of(str(name), title, False, None, _text_cells(col), typed))
    return TextTable(tuple(out), len(data))
