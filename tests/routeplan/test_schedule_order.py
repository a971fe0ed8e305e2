"""The cable schedule's block column and order (README, "Outputs").

``inverter_id`` is checked against the demo site's tree built here by hand from its layer
files (each row's and combiner's ``to`` followed up to an inverter, read with the json
module), and the order against an independent natural-order key (digit runs compared as
Python integers), on the CSV file and the GeoPackage (read with pyogrio/GDAL).
"""

from __future__ import annotations

import csv
import json
import re
from pathlib import Path

import numpy as np
import pyogrio
import pytest
from typer.testing import CliRunner

from routeplan.cli import app
from routeplan.order import (
    inverter_of,
    natural_key,
    natural_rank,
    schedule_order,
    string_number,
)

DEMO = Path(__file__).resolve().parents[2] / "demo_site"
runner = CliRunner()


def nat(text: str) -> tuple:
    """Natural-order key, written apart from the module's: text and integers alternating."""
    return tuple(int(p) if p.isdigit() else p for p in re.split(r"(\d+)", text))


def test_natural_order_of_ids():
    ids = ["R10", "R2", "R1-S3", "R1", "R1/S10", "R1/S2", "R1-S10", "B2R10", "B10R2", "B2R9"]
    expected = [
        "B2R9", "B2R10", "B10R2", "R1", "R1-S3", "R1-S10", "R1/S2", "R1/S10", "R2", "R10",
    ]  # fmt: skip
    assert sorted(ids, key=natural_key) == expected
    assert sorted(ids, key=nat) == expected  # the independent key agrees
    rank = natural_rank(np.array(ids, dtype=object))
    assert [ids[i] for i in np.argsort(rank)] == expected


def test_natural_rank_ties_and_missing():
    # equal numbers written differently: by their text ("R01" < "R1"); missing first
    rank = natural_rank(np.array(["R1", None, "R01", "R2"], dtype=object))
    assert rank.tolist() == [2, 0, 1, 3]


def test_inverter_of_a_hand_built_tree():
    # rows R1, R2 → CB1 → RC1 → INV1 (a recombiner); R3 → CB2 → INV1; R10 → INV2 directly
    kind = ["string", "string", "string", "string", "subarray", "array", "array", "ac", "ac"]
    frm = ["R1", "R2", "R3", "R10", "CB1", "RC1", "CB2", "INV1", "INV2"]
    to = ["CB1", "CB1", "CB2", "INV2", "RC1", "INV1", "INV1", "GRID", "GRID"]
    inv = inverter_of(*(np.array(v, dtype=object) for v in (kind, frm, to)))
    assert inv.tolist() == ["INV1", "INV1", "INV1", "INV2", "INV1", "INV1", "INV1", "INV1", "INV2"]


@pytest.fixture(scope="module")
def demo_out(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("order") / "out"
    result = runner.invoke(app, ["plan", str(DEMO), "--out", str(out)])
    assert result.exit_code == 0, result.output
    return out


def read_csv(path: Path) -> list[dict[str, str]]:
    with open(path, encoding="utf-8", newline="") as fh:
        return list(csv.DictReader(fh))


def demo_tree(out: Path) -> dict[str, str]:
    """Feature id → the feature its current flows to, from the demo's layer files; the rows
    the planner assigned (no ``to`` in the file) from ``summary.json``'s ``assigned``."""
    up: dict[str, str] = {}
    for layer in ("rows", "combiners"):
        data = json.loads((DEMO / f"{layer}.geojson").read_text(encoding="utf-8"))
        for f in data["features"]:
            if f["properties"].get("to"):
                up[f["properties"]["id"]] = f["properties"]["to"]
    summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    for a in summary["assigned"]:
        up.setdefault(a["id"], a["to"])
    return up


def test_inverter_id_follows_the_demo_tree(demo_out):
    up = demo_tree(demo_out)
    data = json.loads((DEMO / "inverters.geojson").read_text(encoding="utf-8"))
    inverters = {f["properties"]["id"] for f in data["features"]}
    rows = read_csv(demo_out / "cable_schedule.csv")
    assert len(rows) > 100
    seen = set()
    for r in rows:
        if r["kind"] == "ac":
            expected = r["from_id"]
        else:
            node = r["from_id"]
            while node not in inverters:
                node = up[node]
            expected = node
        assert r["inverter_id"] == expected, r["circuit_id"]
        seen.add(expected)
    assert seen == inverters  # every block has circuits


def test_schedule_sorted_by_block(demo_out):
    rows = read_csv(demo_out / "cable_schedule.csv")
    combiners = {r["from_id"] for r in rows if r["kind"] in ("array", "subarray")}
    rank = {"ac": 0, "array": 1, "subarray": 2, "string": 3}

    def key(r: dict[str, str]) -> tuple:
        if r["kind"] == "string":
            cb = r["to_id"] if r["to_id"] in combiners else ""
            row = r["from_id"]
        else:
            cb = "" if r["kind"] == "ac" else r["from_id"]
            row = ""
        return (nat(r["inverter_id"]), nat(cb), rank[r["kind"]], nat(row), nat(r["circuit_id"]))

    ids = [r["circuit_id"] for r in rows]
    assert ids == [r["circuit_id"] for r in sorted(rows, key=key)]
    # a block starts with its AC circuit, and a row's strings follow S1, S2, … S10
    assert rows[0]["kind"] == "ac"
    first = rows[0]["inverter_id"]
    assert [r["inverter_id"] for r in rows] == sorted((r["inverter_id"] for r in rows), key=nat)
    assert any(r["inverter_id"] != first for r in rows)
    # the GeoPackage's circuits layer holds the same rows in the same order (GDAL)
    gpkg = pyogrio.read_dataframe(demo_out / "routes.gpkg", layer="circuits")
    assert gpkg["circuit_id"].tolist() == ids
    assert gpkg["inverter_id"].tolist() == [r["inverter_id"] for r in rows]


def test_schedule_order_of_a_frame():
    import pandas as pd

    frame = pd.DataFrame(
        {
            "circuit_id": ["R10/S1", "AC:INV2", "R2/S10", "A:CB1", "R2/S2", "AC:INV10"],
            "kind": ["string", "ac", "string", "array", "string", "ac"],
            "from_id": ["R10", "INV2", "R2", "CB1", "R2", "INV10"],
            "to_id": ["CB1", "G", "CB1", "INV2", "CB1", "G"],
            "inverter_id": ["INV2", "INV2", "INV2", "INV2", "INV2", "INV10"],
        }
    )
    got = frame["circuit_id"].to_numpy()[schedule_order(frame)].tolist()
    assert got == ["AC:INV2", "A:CB1", "R2/S2", "R2/S10", "R10/S1", "AC:INV10"]


def test_string_number_of_long_and_odd_ids():
    ids = ["X" * 500 + "/S17", "R1/S" + "9" * 15, "R1/S" + "9" * 16, "/S3", "S3", "R/S03", ""]
    assert string_number(np.array(ids, dtype=object)).tolist() == [
        17, 999_999_999_999_999, -1, 3, -1, 3, -1,
    ]  # fmt: skip
