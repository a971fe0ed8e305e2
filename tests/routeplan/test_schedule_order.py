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


def _plant(rng: np.random.Generator, strings: dict[str, int] | None = None):
    """An invented plant's schedule keys in routes order (rows' strings, then the combiners'
    array circuits, then AC): inverters INV1…INV4, two combiners each, three rows per
    combiner; ``strings`` overrides a row's number of strings."""
    import pandas as pd

    rows = []
    for i in range(1, 5):
        for c in (1, 2):
            cb = f"CB{i}.{c}"
            for r in range(1, 4):
                row = f"R{i}.{c}.{r}"
                n = (strings or {}).get(row, 2 + (i + c + r) % 3)
                rows += [(f"{row}/S{k}", "string", row, cb, f"INV{i}") for k in range(1, n + 1)]
    arrays = [
        (f"A:CB{i}.{c}", "array", f"CB{i}.{c}", f"INV{i}", f"INV{i}")
        for i in range(1, 5)
        for c in (1, 2)
    ]
    ac = [(f"AC:INV{i}", "ac", f"INV{i}", "GRID", f"INV{i}") for i in range(1, 5)]
    table = rows + arrays + ac
    frame = pd.DataFrame(table, columns=["circuit_id", "kind", "from_id", "to_id", "inverter_id"])
    return frame.iloc[rng.permutation(len(frame)) if rng.random() < 0.3 else np.arange(len(frame))]


def test_spliced_order_is_the_schedule_order_after_any_edit():
    """The order taken from the last one where a block is unchanged (a watching process after
    a row's strings edit) must be :func:`schedule_order` of the new table, whatever changed:
    strings removed or added, a row moved to another block, a block added or removed, routes
    order shuffled, circuits with equal keys (ties keep the routes order)."""
    import pandas as pd

    from routeplan.order import spliced_order

    rng = np.random.default_rng(7)
    for trial in range(60):
        last = _plant(rng).reset_index(drop=True)
        if trial % 5 == 0:  # a second array circuit of one combiner: equal keys, a tie
            twin = last[last["kind"] == "array"].iloc[:1].assign(circuit_id="A:twin")
            last = pd.concat([last, twin], ignore_index=True)
        edit = trial % 6
        new = last.copy()
        if edit == 0:  # a row's last string removed
            new = new[new["circuit_id"] != "R2.1.2/S2"]
        elif edit == 1:  # a string added to a row, at the row's place in routes order
            at = int(np.flatnonzero(new["circuit_id"] == "R3.2.1/S1")[0])
            extra = new.iloc[[at]].assign(circuit_id="R3.2.1/S9")
            new = pd.concat([new.iloc[:at], extra, new.iloc[at:]])
        elif edit == 2:  # a row moved to another combiner and block
            m = new["from_id"] == "R1.1.1"
            new.loc[m, "to_id"], new.loc[m, "inverter_id"] = "CB4.2", "INV4"
        elif edit == 3:  # a block removed
            new = new[new["inverter_id"] != "INV3"]
        elif edit == 4:  # a block added
            extra = pd.DataFrame([("AC:INV0", "ac", "INV0", "GRID", "INV0")], columns=new.columns)
            new = pd.concat([new, extra])
        elif edit == 5 and "A:twin" in set(new["circuit_id"]):  # the tie's routes order swapped
            twin = int(np.flatnonzero(new["circuit_id"] == "A:twin")[0])
            first = int(np.flatnonzero(new["kind"] == "array")[0])
            order = np.arange(len(new))
            order[[first, twin]] = order[[twin, first]]
            new = new.iloc[order]
        new = new.reset_index(drop=True)
        if rng.random() < 0.2:  # the carried circuits in another routes order
            new = new.iloc[rng.permutation(len(new))].reset_index(drop=True)
        last_of = pd.Index(last["circuit_id"]).get_indexer(new["circuit_id"])
        got = spliced_order(new, last, schedule_order(last), last_of)
        assert got.tolist() == schedule_order(new).tolist(), (trial, edit)
