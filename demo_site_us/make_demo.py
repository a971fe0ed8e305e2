"""Regenerate the US demo site: ``python demo_site_us/make_demo.py``.

An invented scenario — "Dos Arroyos Solar", a fictitious 2 MWdc fixed-tilt ground-mount plant on
made-up desert land in central Arizona, designed to the NEC (``rules = "nec"``). Every name and
number here is invented for the demo; it describes no real project or place.

The layers are drawn in US customary units, in a US State Plane CRS: **EPSG:2223, NAD83 / Arizona
Central (ft)**, whose unit is the *international* foot (0.3048 m; Arizona's State Plane zones use
it, not the US survey foot). Each GeoJSON file names that CRS in its ``crs`` member (the 2008
GeoJSON form GDAL reads). ``routeplan`` measures in metres: since the layers are in feet it works in
the local UTM zone (12N) and says so in the plan's CRS note (see ``layers.crs``); the schedules then
give lengths in metres and feet, and the bill in feet (``units = "us"``).

Layout (feet, x east, y north, from an invented origin): two blocks, A and B, side by side along
x (A at 0, B at 900 ft); each has 3 columns × 8 tables of 3 strings (27 modules a string), one
string combiner per column (24 strings) beside the column's lateral trench at mid-column, the
combiner's array cable by its own trench to the block's branch trench south of the tables, one
central inverter on a pad south of the branch, and a duct from the pad to the block's
transformer (the grid point of the block's AC circuit). Trench attributes keep the site format's
metre names (``depth_m``: 3 ft = 0.9144 m).
"""

from __future__ import annotations

import json
from pathlib import Path

HERE = Path(__file__).resolve().parent
CRS = "EPSG:2223"  # NAD83 / Arizona Central (ft): international feet
ORIGIN_X_FT, ORIGIN_Y_FT = 536_450.0, 720_670.0  # invented desert land, central Arizona
FT = 0.3048  # the international foot [m], for the metre-named attributes

BLOCK_X0_FT = {"A": 0.0, "B": 900.0}
COLUMNS = 3
TABLES_PER_COLUMN = 8
STRINGS_PER_TABLE = 3
TABLE_LEN_FT = 210.0  # 3 strings of 27 modules, 2-in-portrait (invented)
TABLE_DEPTH_FT = 15.0
PITCH_FT = 32.0
COLUMN_STEP_FT = TABLE_LEN_FT + 26.0  # 26 ft service gap holding the lateral trench
LATERAL_DX_FT = 10.0  # lateral trench east of the tables' east edge
BRANCH_Y_FT = -25.0  # block branch trench, south of the first table
LATERAL_SOUTH_Y_FT = -6.0
RING_Y_FT = (TABLES_PER_COLUMN - 1) * PITCH_FT + TABLE_DEPTH_FT + 12.0
COMBINER_Y_FT = 3.5 * PITCH_FT + TABLE_DEPTH_FT / 2  # mid-column, between tables 4 and 5
ARRAY_TRENCH_DX_FT = 5.0
PAD_Y_FT = BRANCH_Y_FT - 30.0  # the inverter pad south of the branch
TX_Y_FT = PAD_Y_FT - 90.0  # the transformer at the end of the duct
DEPTH_LATERAL_M = round(2.5 * FT, 4)  # 30 in to the cables
DEPTH_FEEDER_M = round(3.0 * FT, 4)  # 36 in
UNASSIGNED = {"B2-T5"}  # a table left for the planner to assign


def xy(x: float, y: float) -> list[float]:
    return [round(ORIGIN_X_FT + x, 3), round(ORIGIN_Y_FT + y, 3)]


def line(*pts: tuple[float, float]) -> dict:
    return {"type": "LineString", "coordinates": [xy(x, y) for x, y in pts]}


def polygon(x0: float, y0: float, x1: float, y1: float) -> dict:
    ring = [(x0, y0), (x1, y0), (x1, y1), (x0, y1), (x0, y0)]
    return {"type": "Polygon", "coordinates": [[xy(x, y) for x, y in ring]]}


def point(x: float, y: float) -> dict:
    return {"type": "Point", "coordinates": xy(x, y)}


def feature(geom: dict, **props) -> dict:
    return {"type": "Feature", "properties": props, "geometry": geom}


def collection(name: str, feats: list[dict]) -> dict:
    return {
        "type": "FeatureCollection",
        "name": name,
        "crs": {"type": "name", "properties": {"name": "urn:ogc:def:crs:EPSG::2223"}},
        "features": feats,
    }


def build() -> dict[str, dict]:
    rows, combiners, trenches, inverters, grid = [], [], [], [], []
    for block, bx in BLOCK_X0_FT.items():
        lateral_xs = []
        for c in range(COLUMNS):
            x0 = bx + c * COLUMN_STEP_FT
            x1 = x0 + TABLE_LEN_FT
            lx = x1 + LATERAL_DX_FT
            lateral_xs.append(lx)
            cb = f"CB-{block}{c + 1}"
            for t in range(TABLES_PER_COLUMN):
                tid = f"{block}{c + 1}-T{t + 1}"
                y0 = t * PITCH_FT
                props = {"id": tid, "strings": STRINGS_PER_TABLE, "module": "m540"}
                if tid not in UNASSIGNED:
                    props["to"] = cb
                rows.append(feature(polygon(x0, y0, x1, y0 + TABLE_DEPTH_FT), **props))
            combiners.append(
                feature(point(lx - 3.0, COMBINER_Y_FT), id=cb, to=f"INV-{block}", max_strings=24)
            )
            trenches.append(
                feature(
                    line((lx, LATERAL_SOUTH_Y_FT), (lx, RING_Y_FT)),
                    id=f"T-{block}{c + 1}",
                    depth_m=DEPTH_LATERAL_M,
                    laying="direct",
                    spacing_m=0.0,
                    max_circuits=24,
                )
            )
            fx = lx + ARRAY_TRENCH_DX_FT
            trenches.append(
                feature(
                    line((lx, COMBINER_Y_FT), (fx, COMBINER_Y_FT), (fx, BRANCH_Y_FT)),
                    id=f"T-{block}{c + 1}-A",
                    depth_m=DEPTH_FEEDER_M,
                    laying="direct",
                    spacing_m=round(0.25 * FT, 4),  # 3 in between circuits
                )
            )
        first, last = lateral_xs[0], lateral_xs[-1]
        trenches.append(
            feature(
                line((bx - 15.0, BRANCH_Y_FT), (last + 15.0, BRANCH_Y_FT)),
                id=f"T-{block}-BR",
                depth_m=DEPTH_FEEDER_M,
                laying="direct",
                spacing_m=round(0.25 * FT, 4),
                max_circuits=8,
            )
        )
        trenches.append(
            feature(
                line((first, RING_Y_FT), (last, RING_Y_FT)),
                id=f"T-{block}-RING",
                depth_m=DEPTH_LATERAL_M,
            )
        )
        pad_x = bx + 1.5 * COLUMN_STEP_FT
        inverters.append(
            feature(
                polygon(pad_x - 10.0, PAD_Y_FT - 12.0, pad_x + 10.0, PAD_Y_FT),
                id=f"INV-{block}",
                ac_kva=1000.0,
                ac_v=630.0,
                phases=3,
                pf=1.0,
                ac_max_a=917.0,  # maximum continuous output current (invented datasheet value)
                dc_inputs=1,
                to=f"TX-{block}",
            )
        )
        trenches.append(
            feature(
                line((pad_x, BRANCH_Y_FT), (pad_x, PAD_Y_FT)),
                id=f"T-{block}-PAD",
                depth_m=DEPTH_FEEDER_M,
                laying="direct",
                spacing_m=round(0.25 * FT, 4),
            )
        )
        trenches.append(
            feature(
                line((pad_x, PAD_Y_FT), (pad_x, TX_Y_FT)),
                id=f"T-{block}-DUCT",
                depth_m=DEPTH_FEEDER_M,
                laying="duct",
                spacing_m=round(0.25 * FT, 4),
            )
        )
        grid.append(feature(point(pad_x + 4.0, TX_Y_FT - 6.0), id=f"TX-{block}"))
    return {
        "rows": collection("rows", rows),
        "combiners": collection("combiners", combiners),
        "inverters": collection("inverters", inverters),
        "trenches": collection("trenches", trenches),
        "transformers": collection("grid", grid),
    }


def main() -> None:
    for name, data in build().items():
        head = {k: v for k, v in data.items() if k != "features"}
        feats = ",\n".join(json.dumps(f, separators=(",", ":")) for f in data["features"])
        text = json.dumps(head, separators=(",", ":"))[:-1] + f',"features":[\n{feats}\n]}}\n'
        (HERE / f"{name}.geojson").write_text(text, encoding="utf-8")


if __name__ == "__main__":
    main()
