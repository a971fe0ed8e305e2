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


def formatted(frame: pd.DataFrame, cols: tuple[Col, ...]) -> pd.DataFrame:
    """Numbers as text with fixed decimals (empty for NaN), so reruns give identical bytes."""
    spec = {c.name: c for c in cols}
    out = {}
    for name in ordered(frame, cols).columns:
        col = frame[name]
        c = spec.get(name)
        if c is not None and c.decimals is not None:
            values = col.to_numpy(dtype=float)
            text = np.char.mod(f"%.{c.decimals}f", np.nan_to_num(values, nan=0.0))
            text = np.where(np.isfinite(values), text, "")
            out[name] = np.char.replace(text, "-0.00", "0.00") if c.decimals else text
        elif pd.api.types.is_float_dtype(col):
            values = col.to_numpy(dtype=float)
            whole = np.isfinite(values) & (values == np.round(values))
            text = np.where(whole, np.char.mod("%d", np.nan_to_num(values).astype(np.int64)), "")
            rest = np.isfinite(values) & ~whole
            text = np.where(rest, np.char.mod("%.6g", values), text)
            out[name] = text
        elif pd.api.types.is_bool_dtype(col):
            out[name] = np.where(col.to_numpy(), "true", "false")
        else:
            out[name] = col.astype(object).where(col.notna(), "").astype(str).to_numpy()
    return pd.DataFrame(out, index=frame.index)


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
    (rounded to each column's decimals). Streams rows (openpyxl write-only mode), so a
    utility-scale schedule of 70,000 circuits stays fast and small in memory."""
    from openpyxl import Workbook
    from openpyxl.cell import WriteOnlyCell
    from openpyxl.styles import Font
    from openpyxl.utils import get_column_letter

    wb = Workbook(write_only=True)
    bold = Font(bold=True)
    for sheet_name, (frame, cols) in sheets.items():
        ws = wb.create_sheet(sheet_name)
        data = ordered(frame, cols) if cols else frame
        spec = {c.name: c for c in cols} if cols else {}
        titles = [spec[c].title if c in spec else str(c) for c in data.columns]
        for j, title in enumerate(titles, start=1):
            ws.column_dimensions[get_column_letter(j)].width = min(max(len(title), 8) + 2, 40)
        ws.freeze_panes = "A2"
        header = []
        for title in titles:
            cell = WriteOnlyCell(ws, value=title)
            cell.font = bold
            header.append(cell)
        ws.append(header)
        columns = []
        for name in data.columns:
            col = data[name]
            c = spec.get(name)
            if pd.api.types.is_numeric_dtype(col) and not pd.api.types.is_bool_dtype(col):
                values = col.to_numpy(dtype=float)
                if c is not None and c.decimals is not None:
                    values = np.round(values, c.decimals)
                whole = pd.api.types.is_integer_dtype(col)
                columns.append(
                    [
                        None if not np.isfinite(v) else (int(v) if whole else v)
                        for v in values.tolist()
                    ]
                )
            else:
                columns.append([_cell(v) for v in col.tolist()])
        for record in zip(*columns, strict=True):
            ws.append(record)
    ws = wb.create_sheet("caution")
    ws.append([caution])
    wb.save(path)


def _cell(v):
    if isinstance(v, float | np.floating):
        return None if not np.isfinite(v) else float(v)
    if isinstance(v, np.integer):
        return int(v)
    if isinstance(v, np.bool_):
        return bool(v)
    return v
