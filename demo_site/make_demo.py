"""Regenerate the demo site: ``python demo_site/make_demo.py``.

An invented scenario — "Cerro Pardo Solar", a fictitious 6 MWdc fixed-tilt ground-mount plant
on a made-up plateau in central Spain. Every name and number here is invented for the demo.

The plant shows the three ways routeplan collects DC: blocks W and E with string combiners
feeding a central inverter, block R with string combiners feeding two sub-array combiners
(recombiners) at the inverter pad, and block S with multi-input string inverters.

Layout (local metres, x east, y north, then converted to WGS 84 lon/lat GeoJSON); the blocks
stand side by side along x (W at 0, E at 300, R at 600, S at 900), each with its own trench
network and LV/MV transformer station:

- every table is a 2-in-portrait fixed-tilt polygon 4.6 m deep, carrying strings of 27
  modules (62 m long for 4 strings, 31 m for 2); pitch 9 m; a trench *lateral* runs along the
  east end of each column of tables, 3 m clear of them, and a block *ring* joins the laterals'
  north ends (so routes have competing paths); a block *branch* runs south of the first table;
- **W, E** (central inverter, as before): 4 columns × 7 tables of 4 strings; one combiner per
  column, 1 m west of its lateral at mid-column (7 tables = 28 strings, max_strings 32); two
  tables are left without ``to`` so the planner assigns them; the array cable leaves the
  combiner by its own trench to the branch; one inverter pad per block on a drop trench south
  of its branch; the drop continues in duct to the block's transformer station (the grid
  point of that block's AC circuit);
- **R** (sub-array combiners): the same 4 columns × 7 tables, but two string combiners per
  column — one for the south 4 tables (16 strings), one for the north 3 (12 strings) — whose
  sub-array cables leave by one trench per column (the south combiner joins it by a short
  cross trench) to the branch; two recombiners stand beside the branch at the inverter pad,
  each collecting the four string combiners of its half of the block and feeding its own DC
  input of the inverter (``dc_inputs`` 2, the recombiner's ``input``) by a short array cable;
- **S** (string inverters): 3 columns × 8 tables of 2 strings; two 100 kVA string inverters
  per column, mounted 1 m west of the lateral, each taking the 8 strings of its 4 tables on
  4 MPPT inputs of at most 2 strings (30 A operating, 40 A short-circuit per input); three
  tables name the input their strings land on, the others are spread by the planner; each
  inverter's AC circuit leaves by its column's AC trench (the south inverter by a short cross
  trench) to the branch and in duct to the block's transformer station.
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
ARRAY_TRENCH_DX_M = 1.5  # a feeder trench runs this far east of its lateral, down to the branch

# block R: string combiners feeding two recombiners at the pad (sub-array combiners)
RECOMBINER_BLOCK = ("R", 600.0)
SOUTH_TABLES = 4  # tables of a column on its south string combiner; the rest on the north one
RECOMBINER_DX_M = 6.0  # recombiners stand this far west and east of the pad's drop trench
RECOMBINER_DY_M = 1.5  # … and this far south of the branch (their stubs to it)

# block S: multi-input string inverters
STRING_BLOCK = ("S", 900.0)
S_ROW_LEN_M = 31.0  # a 2-string table: 54 modules, 27 across in portrait
S_STRINGS_PER_ROW = 2
S_ROWS_PER_COLUMN = 8
S_COLUMNS = 3
S_COLUMN_STEP_M = S_ROW_LEN_M + 8.0
S_TABLES_PER_INVERTER = 4  # 8 strings on 4 MPPT inputs of 2 strings
S_RING_Y_M = (S_ROWS_PER_COLUMN - 1) * PITCH_M + ROW_DEPTH_M + 4.0
S_TX_X_M = 55.0  # the transformer station's drop trench, from the block's west edge
#: tables that name the inverter input their strings land on (the rest are spread)
S_INPUTS = {"S1-R1": 1, "S2-R6": 4, "S3-R3": 2}
STRING_INVERTER = {  # invented datasheet values of a 100 kVA, 1500 V string inverter
    "ac_kva": 100.0,
    "ac_v": 800.0,
    "phases": 3,
    "pf": 0.95,
    "ac_max_a": 76.0,  # maximum continuous output current
    "dc_inputs": 4,  # MPPT inputs
    "input_max_a": 30.0,  # maximum operating current per input
    "input_max_isc_a": 40.0,  # maximum short-circuit current per input
    "input_max_strings": 2,  # string terminals per input
}

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


def group_y(first: int, last: int) -> float:
    """y midway between tables ``first`` and ``last`` (0-based) of a column."""
    return (first + last) / 2 * PITCH_M + ROW_DEPTH_M / 2


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
        trenches += drop_trenches(block, pad_x)
        grid.append(station(block, pad_x))
    recombiner_block(rows, combiners, trenches, inverters, grid)
    string_block(rows, trenches, inverters, grid)
    return {
        "rows": collection("rows", rows),
        "combiners": collection("combiners", combiners),
        "inverters": collection("inverters", inverters),
        "trenches": collection("trenches", trenches),
        "transformers": collection("grid", grid),
    }


def block_trenches(block: str, bx: float, lateral_xs: list[float], ring_y: float) -> list[dict]:
    """The branch (south) and ring (north) trenches of a block with these laterals."""
    first, last = lateral_xs[0], lateral_xs[-1]
    return [
        feature(
            line((bx - 5.0, BRANCH_Y_M), (last + 5.0, BRANCH_Y_M)),
            id=f"T-{block}-BR",
            depth_m=0.8,
            laying="direct",
            spacing_m=0.07,
            max_circuits=16,
        ),
        feature(line((first, ring_y), (last, ring_y)), id=f"T-{block}-RING", depth_m=0.7),
    ]


def feeder_trenches(name: str, lx: float, y_north: float, y_south: float) -> list[dict]:
    """A column's feeder trench — from its lateral at ``y_north``, ``ARRAY_TRENCH_DX_M`` east,
    then south to the branch — and the cross trench joining it from the lateral at
    ``y_south``: the feeders of a column's two pieces of equipment leave by one trench."""
    fx = lx + ARRAY_TRENCH_DX_M
    common = {"depth_m": 0.8, "laying": "direct", "spacing_m": 0.07}
    return [
        feature(line((lx, y_north), (fx, y_north), (fx, BRANCH_Y_M)), id=name, **common),
        feature(line((lx, y_south), (fx, y_south)), id=f"{name}X", **common),
    ]


def lateral(name: str, lx: float, ring_y: float, max_circuits: int) -> dict:
    return feature(
        line((lx, LATERAL_SOUTH_Y_M), (lx, ring_y)),
        id=name,
        depth_m=0.7,
        laying="direct",
        spacing_m=0.0,
        max_circuits=max_circuits,
    )


def recombiner_block(rows, combiners, trenches, inverters, grid) -> None:
    """Block R: two string combiners per column feed two recombiners at the inverter pad."""
    block, bx = RECOMBINER_BLOCK
    pad_x = bx + 1.5 * COLUMN_STEP_M
    lateral_xs = []
    for c in range(COLUMNS_PER_BLOCK):
        x0 = bx + c * COLUMN_STEP_M
        x1 = x0 + ROW_LEN_M
        lx = x1 + LATERAL_OFFSET_M
        lateral_xs.append(lx)
        south, north = f"CB-{block}{c + 1}S", f"CB-{block}{c + 1}N"
        recombiner = f"RC-{block}{1 if c < COLUMNS_PER_BLOCK // 2 else 2}"
        for r in range(ROWS_PER_COLUMN):
            y0 = r * PITCH_M
            rows.append(
                feature(
                    polygon(x0, y0, x1, y0 + ROW_DEPTH_M),
                    id=f"{block}{c + 1}-R{r + 1}",
                    strings=4,
                    module="m575",
                    to=south if r < SOUTH_TABLES else north,
                )
            )
        y_south = group_y(0, SOUTH_TABLES - 1)
        y_north = group_y(SOUTH_TABLES, ROWS_PER_COLUMN - 1)
        for cb, y in ((south, y_south), (north, y_north)):
            combiners.append(
                feature(point(lx - 1.0, y), id=cb, to=recombiner, max_strings=4 * SOUTH_TABLES)
            )
        trenches.append(lateral(f"T-{block}{c + 1}", lx, RING_Y_M, 32))
        trenches += feeder_trenches(f"T-{block}{c + 1}-SA", lx, y_north, y_south)
    trenches += block_trenches(block, bx, lateral_xs, RING_Y_M)
    for k, dx in ((1, -RECOMBINER_DX_M), (2, RECOMBINER_DX_M)):
        combiners.append(
            feature(
                point(pad_x + dx, BRANCH_Y_M - RECOMBINER_DY_M),
                id=f"RC-{block}{k}",
                to=f"INV-{block}",
                input=k,  # each recombiner on its own DC input of the inverter
            )
        )
    inverters.append(
        feature(
            polygon(pad_x - 3.0, BRANCH_Y_M - 9.0, pad_x + 3.0, BRANCH_Y_M - 5.5),
            id=f"INV-{block}",
            ac_kva=1600.0,
            ac_v=800.0,
            phases=3,
            pf=0.95,
            ac_max_a=1220.0,
            dc_inputs=2,  # one DC input per recombiner
            to=f"TX-{block}",
        )
    )
    trenches += drop_trenches(block, pad_x)
    grid.append(station(block, pad_x))


def drop_trenches(block: str, x: float) -> list[dict]:
    """The drop south of a block's branch: direct to the pad, then in duct to the station."""
    return [
        feature(
            line((x, BRANCH_Y_M), (x, BRANCH_Y_M - 11.0)),
            id=f"T-{block}-DROP",
            depth_m=0.9,
            laying="direct",
            spacing_m=0.07,
        ),
        station_trench(block, x, BRANCH_Y_M - 11.0),
    ]


def station_trench(block: str, x: float, top_y: float) -> dict:
    """The duct from ``top_y`` south to the block's station."""
    return feature(
        line((x, top_y), (x, DROP_END_Y_M)),
        id=f"T-{block}-TX",
        depth_m=0.9,
        laying="duct",
        spacing_m=0.25,
        soil_k_m_w=1.2,
        max_circuits=12,
    )


def station(block: str, x: float) -> dict:
    """The block's station (its grid connection point), beside the end of its duct."""
    return feature(point(x + 1.0, DROP_END_Y_M - 2.0), id=f"TX-{block}")


def string_block(rows, trenches, inverters, grid) -> None:
    """Block S: rows straight to multi-input string inverters beside the laterals."""
    block, bx = STRING_BLOCK
    per_column = S_ROWS_PER_COLUMN // S_TABLES_PER_INVERTER
    lateral_xs = []
    for c in range(S_COLUMNS):
        x0 = bx + c * S_COLUMN_STEP_M
        x1 = x0 + S_ROW_LEN_M
        lx = x1 + LATERAL_OFFSET_M
        lateral_xs.append(lx)
        ys = []
        for k in range(per_column):
            first = k * S_TABLES_PER_INVERTER
            inv = f"SI-{block}{c + 1}{'ab'[k]}"
            ys.append(group_y(first, first + S_TABLES_PER_INVERTER - 1))
            for r in range(first, first + S_TABLES_PER_INVERTER):
                rid = f"{block}{c + 1}-R{r + 1}"
                y0 = r * PITCH_M
                props = {"id": rid, "strings": S_STRINGS_PER_ROW, "module": "m575", "to": inv}
                if rid in S_INPUTS:
                    props["input"] = S_INPUTS[rid]
                rows.append(feature(polygon(x0, y0, x1, y0 + ROW_DEPTH_M), **props))
            inverters.append(
                feature(point(lx - 1.0, ys[-1]), id=inv, to=f"TX-{block}", **STRING_INVERTER)
            )
        trenches.append(lateral(f"T-{block}{c + 1}", lx, S_RING_Y_M, 16))
        trenches += feeder_trenches(f"T-{block}{c + 1}-AC", lx, ys[1], ys[0])
    trenches += block_trenches(block, bx, lateral_xs, S_RING_Y_M)
    tx_x = bx + S_TX_X_M
    trenches.append(station_trench(block, tx_x, BRANCH_Y_M))
    grid.append(station(block, tx_x))


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
