"""``routeplan diff OLD NEW --map FILE`` end to end: the change map file is written with
routeplan's mark, replaced on the next run, never written over a user's file, and its path is
checked before the comparison (README, "Output folders": the change map file)."""

from __future__ import annotations

from pathlib import Path

import pytest
from typer.testing import CliRunner

from routeplan.cli import app
from routeplan.diff import CHANGE_MAP_MARK

from .test_diff_revision import (  # noqa: F401  (fixtures: a new tap splits T1; a pad moved)
    pad_move,
    read_rows,
    split,
)

runner = CliRunner()


def diff_map(old: Path, new: Path, target: Path):
    return runner.invoke(app, ["diff", str(old), str(new), "--map", str(target)])


def one_error_line(result) -> str:
    lines = [line for line in result.stderr.splitlines() if line.strip()]
    assert len(lines) == 1, result.stderr
    return lines[0]


def test_the_map_is_written_with_the_mark_and_replaced_next_time(split, tmp_path):  # noqa: F811
    target = tmp_path / "changes.html"
    for _ in range(2):
        result = runner.invoke(
            app, ["diff", str(split["old"]), str(split["new"]), "--map", str(target)]
        )
        assert result.exit_code == 0, result.output
        page = target.read_bytes()
        assert CHANGE_MAP_MARK in page[:4096]
    text = page.decode("utf-8")
    # the added strings of R3 and the split trench segment's new parts are on the map
    for shown in ("R3/S1", "R3/S2", "A:CB1", "T1@100.0-150.0", "T1@150.0-200.0"):
        assert shown in text, shown
    assert sorted(p.name for p in tmp_path.iterdir()) == ["changes.html"]


def test_strings_changed_only_by_their_array_cable_are_not_drawn(pad_move, tmp_path):  # noqa: F811
    """After INV-W moved, CB-W1's strings changed only in their cumulative drop: nothing of
    them moved or changed, so the map draws their array cable, not them."""
    target = tmp_path / "m.html"
    result = diff_map(pad_move["old"], pad_move["new"], target)
    assert result.exit_code == 0, result.output
    page = target.read_text(encoding="utf-8")
    strings = [
        r["circuit_id"]
        for r in read_rows(pad_move["old"] / "cable_schedule.csv")
        if r["to_id"] == "CB-W1"
    ]
    assert strings
    assert "A:CB-W1" in page and "AC:INV-W" in page
    assert not [s for s in strings if s in page]


@pytest.mark.parametrize("what", ["user file", "folder", "old plan's map"])
def test_a_path_that_is_not_routeplans_change_map_is_refused_first(split, tmp_path, what):  # noqa: F811
    if what == "user file":
        target = tmp_path / "notes.html"
        target.write_text("<html>my notes</html>", encoding="utf-8")
    elif what == "folder":
        target = tmp_path / "dir.html"
        target.mkdir()
    else:
        target = split["old"] / "map.html"  # the plan's own map is not a change map
    before = target.read_bytes() if target.is_file() else None
    # the comparison would fail too (no such folder): the map path is named first
    result = runner.invoke(
        app, ["diff", str(tmp_path / "missing"), str(split["new"]), "--map", str(target)]
    )
    assert result.exit_code == 2
    line = one_error_line(result)
    assert line.startswith(f"error: {target}")
    if before is not None:
        assert target.read_bytes() == before


def test_no_map_when_the_comparison_fails(split, tmp_path):  # noqa: F811
    target = tmp_path / "m.html"
    result = runner.invoke(
        app, ["diff", str(tmp_path / "missing"), str(split["new"]), "--map", str(target)]
    )
    assert result.exit_code == 2
    assert f"{tmp_path / 'missing'}" in one_error_line(result)
    assert not target.exists()
    assert list(Path(tmp_path).iterdir()) == []
