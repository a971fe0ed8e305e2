"""``routeplan diff``: what changed between two output folders of ``routeplan plan``.

:mod:`.core` reads the output folders strictly and writes ``diff.csv``; :mod:`.compare`
compares two plans; :mod:`.text` says it on the terminal.
"""

from pathlib import Path

from ..folder import OutputFolder
from .compare import PlanDiff, diff_outputs
from .core import (
    CHANGE_COLUMNS,
    CHANGES_FILE,
    CIRCUIT_FIELDS,
    CIRCUITS,
    NUMBER_FIELDS,
    QUANTITIES,
    QUANTITY_KEYS,
    SEGMENT_FIELDS,
    SEGMENTS,
    DiffError,
    Table,
    open_diff_folder,
    parse_schedule,
    read_plan,
    read_schedule,
    write_changes,
)
from .text import diff_lines

#: the mark a change map carries near its start (``diff --map`` replaces only such a file)
CHANGE_MAP_MARK = b'<meta name="generator" content="routeplan diff --map">'


def change_map_html(diff: PlanDiff) -> str:
    """The change map of ``diff`` (:mod:`routeplan.diff.changemap`), with
    :data:`CHANGE_MAP_MARK` at the start of its ``<head>``. Circuits whose only change is
    their cumulative DC drop (scope ``follows``) are not drawn: they did not move or change."""
    from .changemap import render_change_map

    drawn = diff.circuits[diff.circuits["scope"] != "follows"]
    page = render_change_map(diff.old_dir, diff.new_dir, drawn, diff.segments, diff.plant)
    head = page.lower().find("<head>")
    if head < 0:
        raise ValueError("the change map has no <head>")
    at = head + len("<head>")
    return page[:at] + CHANGE_MAP_MARK.decode() + page[at:]


def write_diff(diff: PlanDiff, out: Path | str | OutputFolder) -> Path:
    """Write ``diff.csv`` (one line per change) into ``out``
    (:func:`routeplan.diff.core.write_changes`)."""
    return write_changes(diff.changes, out)


__all__ = [
    "CHANGES_FILE",
    "CHANGE_COLUMNS",
    "CHANGE_MAP_MARK",
    "CIRCUITS",
    "CIRCUIT_FIELDS",
    "NUMBER_FIELDS",
    "QUANTITIES",
    "QUANTITY_KEYS",
    "SEGMENTS",
    "SEGMENT_FIELDS",
    "DiffError",
    "PlanDiff",
    "Table",
    "change_map_html",
    "diff_lines",
    "diff_outputs",
    "open_diff_folder",
    "parse_schedule",
    "read_plan",
    "read_schedule",
    "write_diff",
]
