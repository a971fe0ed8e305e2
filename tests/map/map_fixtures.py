"""Plans for the map tests: a small hand-made one, a hostile variant, and a large synthetic one.

The small plan:

Layout in a local frame [m] (origin at E 500 000, N 5 400 000, EPSG:32633, about 15° E 48.7° N)::

      R1 (3 strings)  R2 (2)                 R3 (2)   R4 (2)         rows, y 40..44
      |  |  |          |  |                  |  |      |  |          string stubs, unique
    --T1#1----+--T1#2--+ y=30               --T2#1-----+            collectors
              T1#3 (over: 5 > 3)                 T2#2
              CB1 --T3#1-- + --T3#2-- CB2                          y=10
                           T3#3
                          [INV1]                                   pad, y -33..-27
                           T4#1 (no capacity)
                            G                                       y=-120

12 circuits (9 strings, 2 arrays, 1 AC), 9 trench segments, 4 rows, 4 equipment. String R2/S2
fails (total DC drop), segment T1#3 is over capacity. Each string leaves its row on a stub of
its own (10 m), where the tests hover it. Numbers are illustrative only.
"""

from __future__ import annotations

import json
from pathlib import Path

import geopandas as gpd
import numpy as np
import shapely
from shapely.geometry import LineString, Point, Polygon

E0, N0 = 500_000.0, 5_400_000.0
CRS = "EPSG:32633"

HOSTILE = {
    "R1/S1": "<img src=x onerror=alert(1)>",
    "R2": "${alert(1)}",
    "CB2": "CB`2",
    "T1#2": "</script><script>alert(2)</script>",
    "site": "Site </script>${alert(3)}`<b>bold</b>\\",
}


def _xy(points):
    return [(E0 + x, N0 + y) for x, y in points]


def make_frames(names: dict[str, str] | None = None) -> tuple[dict[str, gpd.GeoDataFrame], str]:
    """The plan's four layers and the site name; ``names`` renames ids (for hostile tests)."""
    names = names or {}

    def n(key: str) -> str:
        return names.get(key, key)

    rows_spec = [  # id, x0, strings, to
        ("R1", 10, 3, "CB1"),
        ("R2", 30, 2, "CB1"),
        ("R3", 110, 2, "CB2"),
        ("R4", 130, 2, "CB2"),
    ]
    rows = gpd.GeoDataFrame(
        {
            "id": [n(r) for r, *_ in rows_spec],
            "strings": [s for *_, s, _ in rows_spec],
            "module": "M-550 bifacial",
            "to": [n(t) for *_, t in rows_spec],
        },
        geometry=[
            Polygon(_xy([(x, 40), (x + 18, 40), (x + 18, 44), (x, 44)])) for _, x, *_ in rows_spec
        ],
        crs=CRS,
    )

    # strings: stub from the row down to y=30, along the collector, down to the combiner
    stubs = {"R1": [13, 19, 25], "R2": [34, 44], "R3": [113, 124], "R4": [134, 144]}
    util = {
        "R1/S1": 0.15, "R1/S2": 0.30, "R1/S3": 0.35, "R2/S1": 0.45, "R2/S2": 0.60,
        "R3/S1": 0.50, "R3/S2": 0.70, "R4/S1": 0.85, "R4/S2": 0.95,
    }  # fmt: skip
    records = []
    for row, xs in stubs.items():
        cb = "CB1" if row in ("R1", "R2") else "CB2"
        cx = 50 if cb == "CB1" else 150
        for k, x in enumerate(xs, start=1):
            cid = f"{row}/S{k}"
            segs = (
                ["T1#1", "T1#2", "T1#3"] if x < 30 else ["T1#2", "T1#3"]
            ) if cb == "CB1" else ["T2#1", "T2#2"]  # fmt: skip
            geom = LineString(_xy([(x, 40), (x, 30), (cx, 30), (cx, 10)]))
            records.append((cid, "string", row, cb, 6.0, 1, segs, util[cid], geom))
    records.append(
        ("A:CB1", "array", "CB1", "INV1", 95.0, 1, ["T3#1", "T3#3"], 0.70,
         LineString(_xy([(50, 10), (100, 10), (100, -27)])))
    )  # fmt: skip
    records.append(
        ("A:CB2", "array", "CB2", "INV1", 150.0, 1, ["T3#2", "T3#3"], 0.55,
         LineString(_xy([(150, 10), (100, 10), (100, -27)])))
    )  # fmt: skip
    records.append(
        ("AC:INV1", "ac", "INV1", "G", 240.0, 2, ["T4#1"], 0.80,
         LineString(_xy([(100, -33), (100, -120)])))
    )  # fmt: skip

    n_on = {}
    for rec in records:
        for s in rec[6]:
            n_on[s] = n_on.get(s, 0) + 1
    circ = []
    for cid, kind, frm, to, size, par, segs, u, geom in records:
        route = geom.length
        base = {"string": 70.0, "array": 240.0, "ac": 420.0}[kind] * par
        derating = 0.7
        amp = base * derating
        vd_pct = {"string": 0.4, "array": 0.9, "ac": 0.6}[kind]
        fail = cid == "R2/S2"
        total = 3.4 if fail else (vd_pct + (1.0 if kind == "string" else 0.0))
        circ.append(
            {
                "circuit_id": n(cid),
                "kind": kind,
                "from_id": n(frm),
                "to_id": n(to),
                "material": "Cu" if kind != "ac" else "Al",
                "size_mm2": size,
                "parallel": par,
                "route_m": route,
                "cable_m": route * 1.05 + 4,
                "trench_segments": ";".join(n(s) for s in segs),
                "group_max": max(n_on[s] for s in segs),
                "design_current_a": u * amp,
                "ampacity_base_a": base,
                "derating": derating,
                "ampacity_a": amp,
                "utilisation": u,
                "vdrop_v": vd_pct * 8.0,
                "vdrop_pct": vd_pct,
                "vdrop_total_pct": total,
                "loss_w": 12.5 * route / 10,
                "status": "fail" if fail else "ok",
                "note": "total DC drop 3.40 % > limit 3.00 %" if fail else "",
                "geometry": geom,
            }
        )
    circuits = gpd.GeoDataFrame(circ, geometry="geometry", crs=CRS)

    seg_spec = [  # id, trench, points, max_circuits
        ("T1#1", "T1", [(10, 30), (30, 30)], 6),
        ("T1#2", "T1", [(30, 30), (50, 30)], 6),
        ("T1#3", "T1", [(50, 30), (50, 10)], 3),
        ("T2#1", "T2", [(110, 30), (150, 30)], 6),
        ("T2#2", "T2", [(150, 30), (150, 10)], 6),
        ("T3#1", "T3", [(50, 10), (100, 10)], 4),
        ("T3#2", "T3", [(150, 10), (100, 10)], 4),
        ("T3#3", "T3", [(100, 10), (100, -27)], 4),
        ("T4#1", "T4", [(100, -33), (100, -120)], np.nan),
    ]
    group_factor = {1: 1.0, 2: 0.85, 3: 0.79, 4: 0.75, 5: 0.73}  # illustrative only
    segs = []
    for sid, tid, pts, cap in seg_spec:
        on = [r for r in records if sid in r[6]]
        kinds = [r[1] for r in on]
        count = len(on)
        fill = count / cap if not np.isnan(cap) else np.nan
        segs.append(
            {
                "segment_id": n(sid),
                "trench_id": tid,
                "length_m": LineString(pts).length,
                "circuits": count,
                "strings": kinds.count("string"),
                "arrays": kinds.count("array"),
                "ac": kinds.count("ac"),
                "max_circuits": cap,
                "fill": fill,
                "status": "over" if fill > 1 else "ok",
                "circuit_ids": ";".join(n(r[0]) for r in on),
                "depth_m": 0.8,
                "laying": "direct",
                "group_factor": group_factor[count],
                "geometry": LineString(_xy(pts)),
            }
        )
    segments = gpd.GeoDataFrame(segs, geometry="geometry", crs=CRS)

    equipment = gpd.GeoDataFrame(
        {
            "id": [n("CB1"), n("CB2"), n("INV1"), n("G")],
            "kind": ["combiner", "combiner", "inverter", "grid"],
        },
        geometry=[
            Point(_xy([(50, 10)])[0]),
            Point(_xy([(150, 10)])[0]),
            Polygon(_xy([(96, -33), (104, -33), (104, -27), (96, -27)])),
            Point(_xy([(100, -120)])[0]),
        ],
        crs=CRS,
    )
    frames = {"circuits": circuits, "segments": segments, "rows": rows, "equipment": equipment}
    return frames, names.get("site", "Demo field")


def write_output_folder(out: Path, frames: dict[str, gpd.GeoDataFrame], site_name: str) -> Path:
    """Write ``routes.gpkg`` and ``summary.json`` as ``routeplan plan`` does (through the
    folder's manifest, :mod:`routeplan.folder`)."""
    from routeplan.folder import OutputFolder

    with OutputFolder.open(out, "plan") as folder:
        gpkg = folder.work / "routes.gpkg"
        for layer, gdf in frames.items():
            gdf.to_file(gpkg, layer=layer, driver="GPKG")
        summary = {"site": {"name": site_name, "crs": CRS}}
        (folder.work / "summary.json").write_text(json.dumps(summary), encoding="utf-8")
        folder.commit(["routes.gpkg", "summary.json"])
    return out


def expected_counts(frames: dict[str, gpd.GeoDataFrame]) -> dict[str, int]:
    """Drawn features per layer: one per circuit, segment, row and item of equipment."""
    c = frames["circuits"]
    return {
        "circuits": len(c),
        "strings": int((c["kind"] == "string").sum()),
        "segments": len(frames["segments"]),
        "rows": len(frames["rows"]),
        "equipment": len(frames["equipment"]),
        "fail": int((c["status"] == "fail").sum()),
        "over": int((frames["segments"]["status"] == "over").sum()),
    }


def synthetic_frames(
    n_blocks: int = 2700, rows_per_block: int = 6, strings_per_row: int = 4, seed: int = 1
) -> tuple[dict[str, gpd.GeoDataFrame], str]:
    """A large synthetic plan of about the size of a 1 GW plant (defaults).

    Blocks of ``rows_per_block`` rows on a grid, one combiner per block, one inverter per 27
    blocks, one grid point. With the defaults: 64,800 strings, 2,700 arrays, 100 AC circuits,
    13,500 + 1,500 trench segments (≈ 82,600 lines), 16,200 rows.
    """
    rng = np.random.default_rng(seed)
    side = int(np.ceil(np.sqrt(n_blocks)))
    bw, bh = 140.0, 70.0  # block size [m]
    b = np.arange(n_blocks)
    bx = E0 + (b % side) * bw
    by = N0 + (b // side) * bh
    cx, cy = bx + bw / 2, by + 5.0  # combiner
    inv = b // 27
    n_inv = int(inv.max()) + 1
    ix = np.array([bx[inv == i].mean() for i in range(n_inv)])
    iy = np.array([by[inv == i].min() - 20.0 for i in range(n_inv)])

    # rows: two columns of rows_per_block // 2 rows above the block's collector trench
    r = np.arange(n_blocks * rows_per_block)
    rb = r // rows_per_block
    k = r % rows_per_block
    rx0 = bx[rb] + 5.0 + (k % 2) * 66.0
    ry0 = by[rb] + 20.0 + (k // 2) * 15.0
    rw, rh = 60.0, 4.0
    ring = np.stack(
        [
            np.stack([rx0, ry0], 1),
            np.stack([rx0 + rw, ry0], 1),
            np.stack([rx0 + rw, ry0 + rh], 1),
            np.stack([rx0, ry0 + rh], 1),
            np.stack([rx0, ry0], 1),
        ],
        1,
    )
    row_ids = np.array([f"B{i // rows_per_block}-R{i % rows_per_block}" for i in r])
    rows = gpd.GeoDataFrame(
        {
            "id": row_ids,
            "strings": strings_per_row,
            "module": "M-550",
            "to": [f"CB{i}" for i in rb],
        },
        geometry=shapely.polygons(ring),
        crs=CRS,
    )

    # strings: stub down from the row to the collector at by + 12, along it, down to the combiner
    s = np.arange(len(r) * strings_per_row)
    sr = s // strings_per_row
    sx = rx0[sr] + 6.0 + (s % strings_per_row) * 14.0
    sy = ry0[sr]
    ty = by[rb[sr]] + 12.0
    pts = np.stack(
        [
            np.stack([sx, sy], 1),
            np.stack([sx, ty], 1),
            np.stack([cx[rb[sr]], ty], 1),
            np.stack([cx[rb[sr]], cy[rb[sr]]], 1),
        ],
        1,
    )
    string_geoms = shapely.linestrings(pts)
    a_pts = np.stack(
        [np.stack([cx, cy], 1), np.stack([cx, iy[inv]], 1), np.stack([ix[inv], iy[inv]], 1)], 1
    )
    ac_pts = np.stack([np.stack([ix, iy], 1), np.stack([ix, iy - 200.0], 1)], 1)
    grid = (ix.mean(), iy.min() - 200.0)
    ac_pts[:, 1, :] = grid

    n_s, n_a, n_ac = len(s), n_blocks, n_inv
    kind = np.array(["string"] * n_s + ["array"] * n_a + ["ac"] * n_ac)
    util = np.concatenate(
        [rng.uniform(0.2, 0.98, n_s), rng.uniform(0.4, 0.95, n_a), rng.uniform(0.5, 0.9, n_ac)]
    )
    status = np.where(rng.uniform(size=len(kind)) < 0.002, "fail", "ok")
    size = np.concatenate([np.full(n_s, 6.0), np.full(n_a, 150.0), np.full(n_ac, 300.0)])
    geoms = np.concatenate([string_geoms, shapely.linestrings(a_pts), shapely.linestrings(ac_pts)])
    route = shapely.length(geoms)
    ids = np.concatenate(
        [
            [f"{row_ids[i]}/S{j + 1}" for i, j in zip(sr, s % strings_per_row, strict=True)],
            [f"A:CB{i}" for i in b],
            [f"AC:INV{i}" for i in range(n_inv)],
        ]
    )
    frm = np.concatenate([row_ids[sr], [f"CB{i}" for i in b], [f"INV{i}" for i in range(n_inv)]])
    to = np.concatenate([[f"CB{i}" for i in rb[sr]], [f"INV{i}" for i in inv], ["G"] * n_inv])
    amp = np.where(kind == "string", 49.0, np.where(kind == "array", 300.0, 500.0))
    circuits = gpd.GeoDataFrame(
        {
            "circuit_id": ids,
            "kind": kind,
            "from_id": frm,
            "to_id": to,
            "material": "Cu",
            "size_mm2": size,
            "parallel": 1,
            "route_m": route,
            "cable_m": route * 1.05,
            "trench_segments": "",
            "group_max": 6,
            "design_current_a": util * amp,
            "ampacity_base_a": amp / 0.7,
            "derating": 0.7,
            "ampacity_a": amp,
            "utilisation": util,
            "vdrop_v": rng.uniform(1, 10, len(kind)),
            "vdrop_pct": rng.uniform(0.2, 1.5, len(kind)),
            "vdrop_total_pct": rng.uniform(0.5, 2.5, len(kind)),
            "loss_w": route * 1.2,
            "status": status,
            "note": np.where(status == "fail", "total DC drop above limit", ""),
        },
        geometry=geoms,
        crs=CRS,
    )

    # trench segments: 5 per block along its collector and drop, plus one per block to the inverter
    seg_x = np.linspace(0, 1, 5)
    sb = np.repeat(b, 5)
    t = np.tile(np.arange(5), n_blocks)
    x0 = bx[sb] + seg_x[t] * bw * 0.8
    y = by[sb] + 12.0
    seg_pts = np.stack([np.stack([x0, y], 1), np.stack([x0 + bw * 0.2, y], 1)], 1)
    link = np.stack([np.stack([cx, cy], 1), np.stack([cx, iy[inv]], 1)], 1)
    seg_geoms = np.concatenate([shapely.linestrings(seg_pts), shapely.linestrings(link)])
    n_seg = len(seg_geoms)
    count = rng.integers(1, 14, n_seg)
    cap = np.where(rng.uniform(size=n_seg) < 0.1, np.nan, 12.0)
    segments = gpd.GeoDataFrame(
        {
            "segment_id": [
                f"T{i}#{j}"
                for i, j in zip(np.r_[sb, b], np.r_[t, np.full(n_blocks, 9)], strict=True)
            ],
            "trench_id": [f"T{i}" for i in np.r_[sb, b]],
            "length_m": shapely.length(seg_geoms),
            "circuits": count,
            "strings": count - 1,
            "arrays": 1,
            "ac": 0,
            "max_circuits": cap,
            "fill": count / cap,
            "status": np.where(count / cap > 1, "over", "ok"),
            "circuit_ids": [
                ";".join(
                    f"B{blk}-R{k % rows_per_block}/S{k % strings_per_row + 1}" for k in range(c)
                )
                for blk, c in zip(np.r_[sb, b], count, strict=True)
            ],
            "depth_m": 0.8,
            "laying": "direct",
            "group_factor": 0.7,
        },
        geometry=seg_geoms,
        crs=CRS,
    )
    equipment = gpd.GeoDataFrame(
        {
            "id": [f"CB{i}" for i in b] + [f"INV{i}" for i in range(n_inv)] + ["G"],
            "kind": ["combiner"] * n_blocks + ["inverter"] * n_inv + ["grid"],
        },
        geometry=shapely.points(
            np.concatenate([np.stack([cx, cy], 1), np.stack([ix, iy], 1), [grid]])
        ),
        crs=CRS,
    )
    frames = {"circuits": circuits, "segments": segments, "rows": rows, "equipment": equipment}
    return frames, "Synthetic 1 GW"
