"""Writing the tabular outputs: CSV (deterministic), XLSX (for people) and GeoPackage (for GIS)."""

from __future__ import annotations

from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd

from .columns import Col


def ordered(frame: pd.DataFrame, cols: tuple[Col, ...]) -> pd.DataFrame:
    """The frame with the contract columns first, in order, then any others."""
    first = [c.name for c in cols if c.name in frame.columns]
    missing = [c.name for c in cols if c.name not in frame.columns]
    if missing:
        raise KeyError(f"output frame lacks columns {missing}")
    rest = [c for c in frame.columns if c not in first and c != "geometry"]
    return frame[first + rest]


def _fixed(values: np.ndarray, decimals: int) -> list[str]:
    """Fixed-decimal text, '' for NaN; '-0.00' is written as '0.00'."""
    fmt = f"%.{decimals}f"
    out = list(map(fmt.__mod__, values.tolist()))
    negzero, zero = "-" + fmt % 0.0, fmt % 0.0
    return ["" if t == "nan" else zero if t == negzero else t for t in out]


def _general(values: np.ndarray) -> list[str]:
    """Whole numbers without decimals, others with up to 6 significant digits, '' for NaN."""
    return ["" if v != v else (f"{int(v)}" if v == int(v) else f"{v:.6g}") for v in values.tolist()]


def formatted(frame: pd.DataFrame, cols: tuple[Col, ...]) -> pd.DataFrame:
    """Numbers as text with fixed decimals (empty for NaN), so reruns give identical bytes."""
    spec = {c.name: c for c in cols}
    out = {}
    for name in ordered(frame, cols).columns:
        col = frame[name]
        c = spec.get(name)
        if pd.api.types.is_bool_dtype(col):
            out[name] = np.where(col.to_numpy(), "true", "false").tolist()
        elif pd.api.types.is_numeric_dtype(col):
            values = col.to_numpy(dtype=float)
            if c is not None and c.decimals is not None:
                out[name] = _fixed(values, c.decimals)
            else:
                out[name] = _general(values)
        else:
            out[name] = ["" if v is None or v != v else str(v) for v in col.tolist()]
    return pd.DataFrame(out, index=frame.index, dtype=object)


def write_csv(frame: pd.DataFrame, cols: tuple[Col, ...], path: Path) -> None:
    """Write ``frame`` as UTF-8 CSV with Unix line ends and fixed number formats."""
    formatted(frame, cols).to_csv(path, index=False, lineterminator="\n", encoding="utf-8")


def write_gpkg(
    layers: dict[str, tuple[gpd.GeoDataFrame, tuple[Col, ...] | None]], path: Path
) -> None:
    """Write GeoDataFrames as layers of one GeoPackage (contract columns first)."""
    for name, (frame, cols) in layers.items():
        data = ordered(frame, cols) if cols else frame.drop(columns="geometry")
        gdf = gpd.GeoDataFrame(data, geometry=frame.geometry.values, crs=frame.crs)
        gdf.to_file(path, layer=name, driver="GPKG", engine="pyogrio")


def write_xlsx(
    sheets: dict[str, tuple[pd.DataFrame, tuple[Col, ...] | None]], path: Path, caution: str
) -> None:
    """Write sheets with a bold, frozen header row, units in the titles and numbers as numbers
    (with each column's decimals as its number format), plus a ``caution`` sheet."""
    from .xlsx import Column, write_workbook

    books: dict[str, list[Column]] = {}
    for sheet_name, (frame, cols) in sheets.items():
        spec = {c.name: c for c in cols} if cols else {}
        data = ordered(frame, cols) if cols else frame
        text = formatted(data, cols or ())
        columns = []
        for name in data.columns:
            c = spec.get(name)
            title = c.title if c else str(name)
            col = data[name]
            numeric = pd.api.types.is_numeric_dtype(col) and not pd.api.types.is_bool_dtype(col)
            if numeric:
                columns.append(
                    Column.numbers(title, text[name].tolist(), c.decimals if c else None)
                )
            else:
                columns.append(Column.text(title, text[name].tolist()))
        books[sheet_name] = columns
    books["caution"] = [Column.text("caution", [caution])]
    write_workbook(books, path)
