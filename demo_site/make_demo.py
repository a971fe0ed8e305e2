"""Regenerate the demo site: ``python demo_site/make_demo.py``.

An invented scenario — "Cerro Pardo Solar", a fictitious 3.5 MWdc fixed-tilt ground-mount plant
on a made-up plateau in central Spain. Every name and number here is invented for the demo.

Layout (local metres, x east, y north, then converted to WGS 84 lon/lat GeoJSON):

- two blocks (W, E), each 4 columns × 7 fixed-tilt tables; a table is a 2-in-portrait
  polygon 62 m × 4.6 m carrying 4 strings of 27 modules; pitch 9 m;
- one combiner per column, 1 m west of its lateral at mid-column (7 tables = 28 strings,
  max_strings 32); two tables are left without ``to`` so the planner assigns them;
- a trench lateral along the east end of each column, joined at the north by a block ring
  (so routes have competing paths); the array cable leaves the combiner by its own trench
  to the block branch;
- one inverter pad per block on a drop trench south of its branch; the drop continues in duct
  to the block's LV/MV transformer station (the grid point of that block's AC circuit).
"""

from __future__ import annotations

import json
from pathlib import Path

from pyproj import Transformer

HERE = Path(__file__).resolve().parent
UTM = "EPSG:32630"  # WGS 84 / UTM zone 30N
ORIGIN_E, ORIGIN_N = 421_350.0, 4_312_620.0  # invented plateau, central Spain

ROW_LEN_M = 62.0
ROW_DEPTH_M = 4.6
PITCH_M = 9.0
ROWS_PER_COLUMN = 7
COLUMNS_PER_BLOCK = 4
COLUMN_STEP_M = ROW_LEN_M + 8.0  # 8 m service gap holding the lateral trench
LATERAL_OFFSET_M = 3.0  # lateral trench 3 m east of the tables' east edge
BLOCK_X0_M = {"W": 0.0, "E": 300.0}
BRANCH_Y_M = -8.0  # block branch trench, south of the first table
RING_Y_M = (ROWS_PER_COLUMN - 1) * PITCH_M + ROW_DEPTH_M + 4.0  # block ring trench, north
COMBINER_Y_M = 3.5 * PITCH_M  # combiners at mid-column, between tables 4 and 5
LATERAL_SOUTH_Y_M = -2.0  # laterals stop south of the first table; arrays leave by their own trench
DROP_END_Y_M = -28.0  # the drop trench ends at the transformer station
UNASSIGNED = {"W2-R4", "E3-R6"}  # tables left for the planner to assign

_to_lonlat = Transformer.from_crs(UTM, "EPSG:4326", always_xy=True)


def lonlat(x: float, y: float) -> list[float]:
    lon, lat = _to_lonlat.transform(ORIGIN_E + x, ORIGIN_N + y)
    return [round(lon, 8), round(lat, 8)]


def line(*pts: tuple[float, float]) -> dict:
    return {"type": "LineString", "coordinates": [lonlat(x, y) for x, y in pts]}


def polygon(x0: float, y0: float, x1: float, y1: float) -> dict:
    ring = [(x0, y0), (x1, y0), (x1, y1), (x0, y1), (x0, y0)]
    return {"type": "Polygon", "coordinates": [[lonlat(x, y) for x, y in ring]]}


def point(x: float, y: float) -> dict:
    return {"type": "Point", "coordinates": lonlat(x, y)}


def feature(geom: dict, **props) -> dict:
    return {"type": "Feature", "properties": props, "geometry": geom}


def collection(name: str, feats: list[dict]) -> dict:
    return {"type": "FeatureCollection", "name": name, "features": feats}


def build() -> dict[str, dict]:
    rows, combiners, trenches, inverters, grid = [], [], [], [], []
    for block, bx in BLOCK_X0_M.items():
        lateral_xs = []
        for c in range(COLUMNS_PER_BLOCK):
            x0 = bx + c * COLUMN_STEP_M
            x1 = x0 + ROW_LEN_M
            lx = x1 + LATERAL_OFFSET_M
            lateral_xs.append(lx)
            cb = f"CB-{block}{c + 1}"
            for r in range(ROWS_PER_COLUMN):
                rid = f"{block}{c + 1}-R{r + 1}"
                y0 = r * PITCH_M
                props = {"id": rid, "strings": 4, "module": "m575"}
                if rid not in UNASSIGNED:
                    props["to"] = cb
                rows.append(feature(polygon(x0, y0, x1, y0 + ROW_DEPTH_M), **props))
            combiners.append(
                feature(point(lx - 1.0, COMBINER_Y_M), id=cb, to=f"INV-{block}", max_strings=32)
            )
            trenches.append(
                feature(
                    line((lx, LATERAL_SOUTH_Y_M), (lx, RING_Y_M)),
                    id=f"T-{block}{c + 1}",
                    depth_m=0.7,
                    laying="direct",
                    spacing_m=0.0,
                    max_circuits=32,
                )
            )
            trenches.append(
                feature(
                    line((lx, COMBINER_Y_M), (lx + 1.5, COMBINER_Y_M), (lx + 1.5, BRANCH_Y_M)),
                    id=f"T-{block}{c + 1}-A",
                    depth_m=0.8,
                    laying="direct",
                    spacing_m=0.07,
                )
            )
        first, last = lateral_xs[0], lateral_xs[-1]
        trenches.append(
            feature(
                line((bx - 5.0, BRANCH_Y_M), (last + 5.0, BRANCH_Y_M)),
                id=f"T-{block}-BR",
                depth_m=0.8,
                laying="direct",
                spacing_m=0.07,
                max_circuits=16,
            )
        )
        trenches.append(
            feature(line((first, RING_Y_M), (last, RING_Y_M)), id=f"T-{block}-RING", depth_m=0.7)
        )
        pad_x = bx + 1.5 * COLUMN_STEP_M
        inverters.append(
            feature(
                polygon(pad_x - 3.0, BRANCH_Y_M - 9.0, pad_x + 3.0, BRANCH_Y_M - 5.5),
                id=f"INV-{block}",
                ac_kva=1600.0,
                ac_v=800.0,
                phases=3,
                pf=0.95,  # the grid connection's reactive-power setting (invented)
                ac_max_a=1220.0,  # maximum continuous output current (invented datasheet value)
                dc_inputs=1,  # every array of the block on one DC busbar
                to=f"TX-{block}",
            )
        )
        trenches.append(
            feature(
                line((pad_x, BRANCH_Y_M), (pad_x, BRANCH_Y_M - 11.0)),
                id=f"T-{block}-DROP",
                depth_m=0.9,
                laying="direct",
                spacing_m=0.07,
            )
        )
        trenches.append(
            feature(
                line((pad_x, BRANCH_Y_M - 11.0), (pad_x, DROP_END_Y_M)),
                id=f"T-{block}-TX",
                depth_m=0.9,
                laying="duct",
                spacing_m=0.25,
                soil_k_m_w=1.2,
                max_circuits=12,
            )
        )
        grid.append(feature(point(pad_x + 1.0, DROP_END_Y_M - 2.0), id=f"TX-{block}"))
    return {
        "rows": collection("rows", rows),
        "combiners": collection("combiners", combiners),
        "inverters": collection("inverters", inverters),
        "trenches": collection("trenches", trenches),
        "transformers": collection("grid", grid),
    }


def main() -> None:
    for name, data in build().items():
        feats = ",\n".join(json.dumps(f, separators=(",", ":")) for f in data["features"])
        text = (
            f'{{"type":"FeatureCollection","name":{json.dumps(data["name"])},"features":[\n'
            f"{feats}\n]}}\n"
        )
        (HERE / f"{name}.geojson").write_text(text, encoding="utf-8")


if __name__ == "__main__":
    main()
