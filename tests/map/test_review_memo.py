"""The map's review data made from the last map's (routeplan.map.details.ReviewMemo): after
each kind of edit it is the text a map without memo gives, byte for byte, and only the rows
whose content changed are encoded again. The JSON text itself is checked against Python's
json module (the reference) in test_map.py; here, what a re-plan keeps must not change it."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest

from routeplan.cache import dumps, loads
from routeplan.map import details as map_details
from routeplan.map.tiles import MapMemo
from routeplan.outputs.reuse import row_hashes

from .map_fixtures import make_frames, synthetic_frames

LAYERS = ("circuits", "segments", "rows", "equipment")


def _hashes(frames: dict) -> tuple:
    return tuple(
        row_hashes(frames[k].drop(columns=frames[k].geometry.name), frames[k].geometry.to_numpy())
        for k in LAYERS
    )


def _review(frames: dict, memo: map_details.ReviewMemo | None = None) -> str:
    return map_details.review_json(
        *(frames[k] for k in LAYERS),
        drop_limits_pct={"string": 1.0, "dc_total": 1.5},
        memo=memo,
        hashes=_hashes(frames) if memo is not None else None,
    )


def _replan(frames: dict, stored: bytes | None) -> tuple[str, map_details.ReviewMemo, bytes]:
    """The review data with the memo of the last run (through the plan cache's format)."""
    memo = map_details.ReviewMemo(loads(stored) if stored is not None else None)
    text = _review(frames, memo)
    return text, memo, dumps(memo.export())


def _set(frames: dict, layer: str, column: str, rows, values) -> dict:
    df = frames[layer].copy()
    df[column] = df[column].astype(object) if df[column].dtype == object else df[column]
    df.loc[df.index[rows], column] = values
    return {**frames, layer: df}


def _new_rows(memo: map_details.ReviewMemo, table: str) -> int:
    return int((memo.found[table] < 0).sum())


@pytest.fixture(scope="module")
def plant():
    """A generated plan of 60 blocks, each circuit's trench segments listed (the inverse of
    the segments' circuit_ids, in table order)."""
    frames, _ = synthetic_frames(n_blocks=60)
    segments = {}
    seg = frames["segments"]
    for sid, ids in zip(seg["segment_id"], seg["circuit_ids"], strict=True):
        for cid in str(ids).split(";"):
            segments.setdefault(cid, []).append(sid)
    c = frames["circuits"].copy()
    c["trench_segments"] = [";".join(segments.get(cid, [])) for cid in c["circuit_id"]]
    return {**frames, "circuits": c}


def test_a_value_edit_encodes_its_row_only_and_gives_the_fresh_text(plant):
    text, _, stored = _replan(plant, None)
    assert text == _review(plant)
    # nothing changed: every row kept
    again, memo, stored = _replan(plant, stored)
    assert again == text and all(_new_rows(memo, t) == 0 for t in "csre")
    # one circuit longer and failing
    i = int(np.flatnonzero(plant["circuits"]["kind"].to_numpy() == "string")[40])
    edited = _set(plant, "circuits", "route_m", [i], [123.456])
    edited = _set(edited, "circuits", "status", [i], ["fail"])
    edited = _set(edited, "circuits", "note", [i], ['a "new" note <b>{x}</b>'])
    got, memo, stored = _replan(edited, stored)
    assert got == _review(edited)
    assert _new_rows(memo, "c") == 1 and _new_rows(memo, "s") == 0
    c = json.loads(got)["c"]
    assert "status" in c["k"] or "status" in c.get("p", {}).get("k", [])
    # and back: the last run's texts of that row are found again
    back, memo, _ = _replan(plant, stored)
    assert back == text and _new_rows(memo, "c") == 1


def test_zero_and_minus_zero_are_one_value_in_each_run(plant):
    """-0.0 and 0.0 are one value of the column (its distinct values, as pandas.factorize
    sees them) but each row keeps its own text: the memo's texts keep that in any order of
    appearance. The rows' content hashes tell -0.0 from 0.0 (by their bits), so an edit of
    the sign alone encodes the rows whose sign changed."""
    rows = np.arange(3)
    zeros = _set(plant, "circuits", "vdrop_v", slice(None), 0.0)  # one value: {"v": [0.0]}

    def edit(values: list[float]) -> dict:
        return _set(zeros, "circuits", "vdrop_v", rows, values)

    last = [0.0, 0.0, 0.0]
    first = edit(last)
    text, _, stored = _replan(first, None)
    assert text == _review(first)
    steps = ([-0.0, 0.0, 0.0], [0.0, -0.0, -0.0], [-0.0, -0.0, -0.0], [0.0, 0.0, -0.0])
    for values in steps:
        edited = edit(values)
        got, memo, stored = _replan(edited, stored)
        assert got == _review(edited), values
        assert _new_rows(memo, "c") == int((np.signbit(values) != np.signbit(last)).sum())
        last = values
        column = json.loads(got)["c"]["k"]["vdrop_v"]  # still one value, the first row's
        assert column == {"v": [values[0]]} and np.signbit(column["v"][0]) == np.signbit(values[0])
    # a memo made when only -0.0 was there, then 0.0 added
    only = _set(edit([-0.0, -0.0, -0.0]), "circuits", "vdrop_v", slice(3, None), -0.0)
    _, _, stored = _replan(only, None)
    edited = _set(only, "circuits", "vdrop_v", [1], [0.0])
    got = _replan(edited, stored)[0]
    assert got == _review(edited) and json.loads(got)["c"]["k"]["vdrop_v"] == {"v": [-0.0]}


def test_segments_inserted_renamed_and_removed_move_the_positions(plant):
    """A segment inserted (the ids after it move down a position), an id a circuit lists
    that the table did not have until now, a segment removed that circuits still list: each
    circuit's segments and each segment's circuits are those a map without memo finds."""
    seg = plant["segments"]
    circuits = plant["circuits"]
    text, _, stored = _replan(plant, None)
    assert text == _review(plant)
    # a circuit names a segment the table does not have (skipped)
    i = int(np.flatnonzero(circuits["trench_segments"].to_numpy() != "")[5])
    listed = circuits["trench_segments"].iloc[i] + ";NEW-1"
    named = _set(plant, "circuits", "trench_segments", [i], [listed])
    got, _, stored = _replan(named, stored)
    assert got == _review(named)
    # the segment appears, inserted in the middle: every later position moves
    k = len(seg) // 3
    new = seg.iloc[[k]].copy()
    new["segment_id"] = "NEW-1"
    inserted = {
        **named,
        "segments": pd.concat([seg.iloc[:k], new, seg.iloc[k:]], ignore_index=True),
    }
    got, memo, stored = _replan(inserted, stored)
    assert got == _review(inserted)
    assert _new_rows(memo, "s") == 1 and _new_rows(memo, "c") == 0
    data = json.loads(got)
    j = data["cs"]["x"][sum(data["cs"]["k"][:i]) : sum(data["cs"]["k"][: i + 1])]
    assert j[-1] == k  # NEW-1, at its new position
    # a segment removed that circuits still list
    gone = int(np.flatnonzero(seg["circuit_ids"].to_numpy() != "")[0])
    removed = {**inserted, "segments": inserted["segments"].drop(index=gone).reset_index(drop=True)}
    got, _, stored = _replan(removed, stored)
    assert got == _review(removed)
    # two segments of one id: its first position (the memo does not move positions then)
    twice = removed["segments"].copy()
    twice.loc[twice.index[7], "segment_id"] = twice["segment_id"].iloc[3]
    doubled = {**removed, "segments": twice}
    got, _, stored = _replan(doubled, stored)
    assert got == _review(doubled)
    got, _, _ = _replan(removed, stored)
    assert got == _review(removed)


def test_equal_rows_and_empty_tables(plant):
    """Two rows alike (one content hash), a table emptied and filled again."""
    text, _, stored = _replan(plant, None)
    rows = plant["rows"]
    twice = pd.concat([rows.iloc[:5], rows.iloc[[2]], rows.iloc[5:]], ignore_index=True)
    doubled = {**plant, "rows": twice}
    got, memo, stored = _replan(doubled, stored)
    assert got == _review(doubled) and _new_rows(memo, "r") == 0  # the copy: a known row
    edited = _set(doubled, "rows", "module", [3, 5, 9], ["M-600"] * 3)
    got, memo, stored = _replan(edited, stored)
    assert got == _review(edited) and _new_rows(memo, "r") == 3
    empty = {**edited, "equipment": edited["equipment"].iloc[:0]}
    got, _, stored = _replan(empty, stored)
    assert got == _review(empty)
    got, _, _ = _replan(plant, stored)
    assert got == text


def test_the_small_plan_and_a_hostile_one_after_an_edit():
    from .map_fixtures import HOSTILE

    for names in (None, HOSTILE):
        frames, _ = make_frames(names)
        _, _, stored = _replan(frames, None)
        edited = _set(frames, "circuits", "utilisation", [0, 2], [1.25, 0.0])
        edited = _set(edited, "rows", "module", [1], ["M-600 $`{}`"])
        got, memo, _ = _replan(edited, stored)
        assert got == _review(edited)
        assert _new_rows(memo, "c") == 2 and _new_rows(memo, "r") == 1


def test_a_damaged_or_foreign_memo_is_an_empty_one(plant):
    text = _review(plant)
    for last in (None, "garbage", {"version": 1, "c": "x"}, {"c": {"names": ["circuit_id"]}}):
        assert _review(plant, map_details.ReviewMemo(last)) == text
    _, memo, _ = _replan(plant, None)
    stored = memo.export()
    stored["c"]["cols"]["route_m"]["tok"] = stored["c"]["cols"]["route_m"]["tok"][:-1]
    stored["s"]["cols"]["segment_id"]["count"] = 3  # its texts do not match
    assert _review(plant, map_details.ReviewMemo(stored)) == text
    older = map_details.ReviewMemo({**memo.export(), "version": 0})  # another form: not used
    assert _review(plant, older) == text and older.found == {}
    assert MapMemo.load({"scripts": {}, "review": "garbage"}).review.last == {}
    # hashes of other rows than the frames': no memo
    short = tuple(h[:-1] for h in _hashes(plant))
    memo = map_details.ReviewMemo(loads(dumps(memo.export())))
    frames = [plant[k] for k in LAYERS]
    got = map_details.review_json(*frames, memo=memo, hashes=short)
    assert got == map_details.review_json(*frames)
    assert memo.found == {}


def test_a_page_after_edits_equals_a_cold_one_byte_for_byte(plant):
    """The whole page with the last map's memo (tiles, review data, the list of failing
    circuits) after edits that change which circuits fail: the page a map without memo gives."""
    from routeplan.map.page import render_map

    def render(frames: dict, memo: MapMemo | None = None) -> str:
        return render_map(
            *(frames[k] for k in LAYERS), site_name="Edited field", memo=memo, hashes=None
        )

    first = MapMemo()
    render(plant, first)
    status = plant["circuits"]["status"].to_numpy()
    fails = np.flatnonzero(status == "fail")
    passes = np.flatnonzero(status != "fail")
    edited = _set(plant, "circuits", "status", [*passes[:2], *fails[:1]], ["fail", "fail", "ok"])
    memo = MapMemo.load(loads(dumps(first.export())))
    html = render(edited, memo)
    assert html == render(edited)
    assert memo.review.found and _new_rows(memo.review, "c") == 3
    again = MapMemo.load(loads(dumps(memo.export())))
    assert render(plant, again) == render(plant)


def test_the_review_data_made_in_a_child_is_the_one_made_here(plant, monkeypatch):
    """The page's review data is made in a child process while the tiles are drawn
    (page._ReviewData): the page and the memo it leaves equal those made in this process
    alone (ROUTEPLAN_SERIAL), after an edit too; a child that fails leaves it to this
    process."""
    import os

    from routeplan.map import page as map_page

    def render(frames: dict, memo: MapMemo) -> str:
        return map_page.render_map(
            *(frames[k] for k in LAYERS), site_name="Edited field", memo=memo, hashes=None
        )

    def twice() -> tuple[list[str], bytes]:
        first = MapMemo()
        one = render(plant, first)
        status = plant["circuits"]["status"].to_numpy()
        edited = _set(plant, "circuits", "status", [int(np.argmax(status != "fail"))], ["fail"])
        memo = MapMemo.load(loads(dumps(first.export())))
        two = render(edited, memo)
        return [one, two], dumps(memo.export())

    forked = twice()
    monkeypatch.setenv("ROUTEPLAN_SERIAL", "1")
    assert twice() == forked
    monkeypatch.delenv("ROUTEPLAN_SERIAL")
    parent, real = os.getpid(), map_page.review_json

    def dies_in_a_child(*args, **kwargs):
        if os.getpid() != parent:
            os._exit(1)
        return real(*args, **kwargs)

    monkeypatch.setattr(map_page, "review_json", dies_in_a_child)
    assert twice() == forked
