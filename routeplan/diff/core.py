"""``routeplan diff``: what changed between two output folders of ``routeplan plan``.

Compares the written schedules (not the inputs), so any two plans can be compared — after a
pad moved, a trench was rerouted or a setting changed. Values are compared as written (fixed
decimals), so a change is a change a reader of the schedule would see.

The schedules are read strictly, because a damaged file must never pass for "no changes":
a file that is missing, unreadable, empty, not UTF-8, not CSV, cut short (no line end after
its last row, a row with fewer fields than the header, fewer rows than ``summary.json``
counts), without a column the comparison needs, with a text where a number belongs, an empty
id or an id twice raises :class:`DiffError`, one line naming the file and the line or column.
The ``'`` that the writer puts before text a spreadsheet would take for a formula
(:func:`routeplan.outputs.schedules.csv_guard`) is removed on reading.
"""

from __future__ import annotations

import csv
import io
import json
import math
import operator
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from ..folder import OutputFolder
from ..outputs.schedules import csv_guard, csv_unguard

#: circuit fields compared, in report order: where the circuit goes and how (its route, its
#: cable), whether it passes; then what follows from them (protection, current, capacity and
#: its derating and grouping, utilisation, drop, losses); last the cumulative DC drop, which
#: changes with the circuits downstream
ROUTE_FIELDS: tuple[str, ...] = (
    "to_id",
    "trench_segments",
    "route_m",
    "cable_m",
    "material",
    "size_mm2",
    "parallel",
    "status",
)
VALUE_FIELDS: tuple[str, ...] = (
    "protection",
    "fuse_a",
    "array_fuse_a",
    "ac_breaker_a",
    "design_current_a",
    "ampacity_a",
    "derating",
    "group_count",
    "group_max",
    "utilisation",
    "vdrop_pct",
    "loss_w",
)
CUMULATIVE_FIELDS: tuple[str, ...] = ("vdrop_total_pct",)
CIRCUIT_FIELDS: tuple[str, ...] = ROUTE_FIELDS + VALUE_FIELDS + CUMULATIVE_FIELDS
#: trench segment fields compared (a segment with the same id in both plans)
SEGMENT_FIELDS: tuple[str, ...] = (
    "length_m",
    "circuits",
    "strings",
    "subarrays",
    "arrays",
    "ac",
    "cable_sets",
    "max_circuits",
    "fill",
    "group_factor",
    "status",
)
QUANTITY_KEYS: tuple[str, ...] = (
    "item",
    "kind",
    "material",
    "size_mm2",
    "laying",
    "depth_m",
    "unit",
    "rating_a",
    "poles",
)
#: key columns a bill may lack (one written before devices had their own rating column): read
#: as empty
QUANTITY_OPTIONAL: frozenset[str] = frozenset({"rating_a", "poles"})
#: columns read as numbers: a cell is empty or a decimal number
NUMBER_FIELDS: frozenset[str] = frozenset(
    {
        "route_m",
        "cable_m",
        "size_mm2",
        "parallel",
        "fuse_a",
        "array_fuse_a",
        "ac_breaker_a",
        "design_current_a",
        "ampacity_a",
        "derating",
        "group_count",
        "group_max",
        "utilisation",
        "vdrop_pct",
        "vdrop_total_pct",
        "loss_w",
        "length_m",
        "from_m",
        "to_m",
        "circuits",
        "strings",
        "subarrays",
        "arrays",
        "ac",
        "cable_sets",
        "max_circuits",
        "fill",
        "group_factor",
        "depth_m",
        "quantity",
        "rating_a",
        "poles",
    }
)


class DiffError(Exception):
    """An output folder is missing, or one of its schedules is missing or damaged."""


@dataclass(frozen=True)
class Table:
    """One schedule as the diff reads it: the file, its key columns (must be filled and
    unique together), the other columns it needs, and those that must not be empty."""

    name: str
    key: tuple[str, ...]
    fields: tuple[str, ...]
    filled: tuple[str, ...] = ()
    #: (column, value, other column): ``other column`` must be filled where ``column`` is
    #: ``value`` (a cable line of the bill has a size)
    filled_where: tuple[tuple[str, str, str], ...] = ()
    #: columns read as empty where the file lacks them
    optional: frozenset[str] = frozenset()

    @property
    def columns(self) -> tuple[str, ...]:
        return self.key + tuple(f for f in self.fields if f not in self.key)


CIRCUITS = Table(
    "cable_schedule.csv", ("circuit_id",), ("kind", "from_id", *CIRCUIT_FIELDS), ("kind",)
)
#: ``from_m``, ``to_m``: a schedule without them numbered its segments, which cannot be matched
SEGMENTS = Table(
    "trench_schedule.csv",
    ("segment_id",),
    ("trench_id", "from_m", "to_m", *SEGMENT_FIELDS),
    ("trench_id", "from_m", "to_m", "length_m"),
)
QUANTITIES = Table(
    "quantities.csv",
    QUANTITY_KEYS,
    ("quantity",),
    ("quantity",),
    (("item", "cable", "size_mm2"), ("item", "cable", "material"), ("item", "cable", "kind")),
    QUANTITY_OPTIONAL,
)
#: columns an earlier version's schedules lack
EARLIER_LACKS: frozenset[str] = frozenset(
    {"from_m", "to_m", "subarrays", "cable_sets", "group_factor", "fuse_a", "protection"}
)
_EARLIER = (
    "made by an earlier routeplan, which numbered trench segments and compared fewer values: "
    "plan that site again with this version to compare"
)


def read_schedule(folder: Path, table: Table) -> pd.DataFrame:
    """The columns ``table`` needs from its file in ``folder``, as text (guards removed), one
    row per record. Raises :class:`DiffError` (one line naming the file, and the line or
    column) on anything but a sound schedule."""
    path = folder / table.name
    if not folder.is_dir():
        raise DiffError(f"{folder}: no such folder")
    if not path.is_file():
        raise DiffError(f"{folder}: no {table.name} (is it an output folder of 'routeplan plan'?)")
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise DiffError(f"{path}: cannot be read ({exc.strerror or exc})") from None
    return parse_schedule(data, table, str(path))


def parse_schedule(data: bytes, table: Table, where: str) -> pd.DataFrame:
    """:func:`read_schedule` of a file's bytes; ``where`` names the file in messages."""
    if not data.strip():
        raise DiffError(f"{where}: empty file")
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise DiffError(f"{where}: not UTF-8 text (byte {exc.start}): not a schedule") from None
    if not text.endswith("\n"):
        raise DiffError(f"{where}: truncated: the last line has no line end")
    reader = csv.reader(io.StringIO(text, newline=""), strict=True)
    try:
        header = next(reader)
    except csv.Error as exc:
        raise DiffError(f"{where}: line {reader.line_num}: not valid CSV ({exc})") from None
    absent = [c for c in table.columns if c in table.optional and c not in header]
    missing = [c for c in table.columns if c not in header and c not in absent]
    if missing:
        names = ", ".join(missing)
        if EARLIER_LACKS.intersection(missing) and table.key[0] not in missing:
            raise DiffError(f"{where}: no column {names}: {_EARLIER}")
        raise DiffError(f"{where}: no column {names} (a schedule of 'routeplan plan' has it)")
    twice = sorted({c for c in header if header.count(c) > 1})
    if twice:
        raise DiffError(f"{where}: column {', '.join(twice)} appears more than once")
    width = len(header)
    # an absent optional column reads the empty field put after each record
    at = {c: header.index(c) if c in header else width for c in table.columns}
    pick = operator.itemgetter(*(at[c] for c in table.columns))
    if absent:
        get, pick = pick, lambda record: get((*record, ""))
    kept: list[tuple[str, ...]] = []  # the fields needed, record by record (the rest dropped)
    blank = -1  # the first blank line's record, when only blank lines followed it so far
    try:
        for i, record in enumerate(reader):
            if len(record) != width:
                if not record:  # blank lines at the end (an editor's) are harmless
                    blank = i if blank < 0 else blank
                    continue
                raise DiffError(
                    f"{where}: line {_line(text, i)}: {len(record)} fields where the header "
                    f"has {width} (truncated or not a schedule)"
                )
            if blank >= 0:
                raise DiffError(
                    f"{where}: line {_line(text, blank)}: 0 fields where the header has "
                    f"{width} (truncated or not a schedule)"
                )
            kept.append(pick(record))
    except csv.Error as exc:
        raise DiffError(f"{where}: line {reader.line_num}: not valid CSV ({exc})") from None
    frame = pd.DataFrame(
        {c: _column(kept, k) for k, c in enumerate(table.columns)}, index=range(len(kept))
    )
    for c in table.columns:
        values = frame[c].to_numpy()
        if c in NUMBER_FIELDS:
            _check_numbers(values, c, where, text, filled=c in table.filled)
            continue
        quoted = np.array(values, dtype="U1") == "'"
        if quoted.any():
            values = values.copy()
            values[quoted] = [csv_unguard(v) for v in values[quoted].tolist()]
            frame[c] = values
        empty = values == ""
        if empty.any() and (c in table.key[:1] or c in table.filled):
            at = _line(text, int(np.argmax(empty)))
            raise DiffError(f"{where}: line {at}: column {c}: empty")
    for column, value, need in table.filled_where:
        empty = (frame[column].to_numpy() == value) & (frame[need].to_numpy() == "")
        if empty.any():
            at = _line(text, int(np.argmax(empty)))
            raise DiffError(f"{where}: line {at}: column {need}: empty on a {value} line")
    _check_unique(frame, table, where, text, absent)
    return frame


def _column(records: list[tuple[str, ...]], j: int) -> pd.Series:
    """Field ``j`` of every record, as a Series of Python strings."""
    return pd.Series(
        np.array(list(map(operator.itemgetter(j), records)), dtype=object), dtype=object
    )


def _line(text: str, row: int) -> int:
    """The line of ``text`` on which record ``row`` (0 = the first after the header) starts:
    records may span lines (a quoted line break), so the file is read again (only for a
    message)."""
    reader = csv.reader(io.StringIO(text, newline=""))
    next(reader)
    start = reader.line_num + 1
    for i, _ in enumerate(reader):
        if i == row:
            return start
        start = reader.line_num + 1
    return start


_DECIMAL = r"[-+]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][-+]?[0-9]+)?"
#: the characters of decimal numbers and of the line ends that join a column's cells
_NUMBER_CHARS = str.maketrans("", "", "0123456789.+-eE\n")


def _check_numbers(values: np.ndarray, column: str, where: str, text: str, *, filled: bool) -> None:
    """Every cell of ``values`` (text) a decimal number, or empty unless ``filled``."""
    empty = values == ""
    # the quick way for a sound column: only the characters of numbers (so no "nan", "inf",
    # blanks, "1_000" or non-ASCII digits), and every filled cell read by float(), whose
    # grammar over those characters is _DECIMAL's (Python reference, "Floating-point
    # literals")
    cells = values.tolist()
    joined = "\n".join(cells)
    one_per_line = joined.count("\n") == len(cells) - 1  # no cell holds a line end
    if one_per_line and not joined.translate(_NUMBER_CHARS) and not (filled and empty.any()):
        try:
            np.array([c for c in cells if c], dtype=float)
            return
        except ValueError:
            pass
    # one reading for every cell: ASCII decimal numbers as routeplan writes them (no "nan",
    # "inf", digit separators "1_000" or non-ASCII digits, which float() would take)
    decimal = pd.Series(values, dtype=object).str.fullmatch(_DECIMAL).to_numpy(dtype=bool)
    bad = ~(decimal | empty)
    bad |= empty & filled
    if bad.any():
        i = int(np.argmax(bad))
        what = "empty" if empty[i] else f"{values[i]!r} is not a number"
        raise DiffError(f"{where}: line {_line(text, i)}: column {column}: {what}")


def _check_unique(
    frame: pd.DataFrame, table: Table, where: str, text: str, absent: list[str] = ()
) -> None:
    """No two rows with the same key (named by the key columns the file has)."""
    key = [k for k in table.key if k not in absent]
    dup = frame.duplicated(key, keep=False).to_numpy()
    if not dup.any():
        return
    first = frame[dup].iloc[0]
    same = np.flatnonzero((frame[key] == first[key]).all(axis=1).to_numpy())[:2].tolist()
    value = tuple(first[key]) if len(key) > 1 else first[key[0]]
    lines = [_line(text, i) for i in same]
    raise DiffError(f"{where}: {', '.join(key)} {value!r} on lines {lines[0]} and {lines[1]}")


#: what ``diff`` reads from ``summary.json``: (path of keys, what it is)
SUMMARY_KEYS: tuple[tuple[str, ...], ...] = (
    ("tool", "name"),
    ("tool", "version"),
    ("circuits",),
    ("segments", "count"),
    ("segments", "over_capacity"),
    ("segments", "trench_m"),
    ("inverter_inputs", "over_limit"),
    ("conductor_m_total",),
    ("loss_w_total",),
    ("energy_loss_kwh_total",),
)
#: keys of ``summary.json`` renamed since: new name → the name plans written before used
RENAMED_KEYS: dict[str, str] = {"conductor_m_total": "cable_m_total"}


def read_summary(folder: Path) -> dict:
    """``summary.json`` of an output folder, with the keys ``diff`` uses checked: written by
    routeplan, numbers where numbers belong. Raises :class:`DiffError` naming the file and
    the key."""
    path = folder / "summary.json"
    if not path.is_file():
        raise DiffError(f"{folder}: no summary.json (is it an output folder of 'routeplan plan'?)")
    try:
        summary = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError) as exc:
        raise DiffError(f"{path}: unreadable ({type(exc).__name__}: {exc})") from None
    written = []  # the keys as this file names them (older plans: the earlier names)
    for keys in SUMMARY_KEYS:
        old = RENAMED_KEYS.get(keys[0]) if len(keys) == 1 else None
        if old and isinstance(summary, dict) and keys[0] not in summary and old in summary:
            keys = (old,)
        value = summary
        for k in keys:
            if not isinstance(value, dict) or k not in value:
                raise DiffError(
                    f"{path}: no key {'.'.join(keys)} (not a summary of 'routeplan plan')"
                )
            value = value[k]
        written.append(keys)
    if summary["tool"]["name"] != "routeplan":
        raise DiffError(f"{path}: tool.name is {summary['tool']['name']!r}, not 'routeplan'")
    circuits = summary["circuits"]
    if not isinstance(circuits, dict):
        raise DiffError(f"{path}: circuits is {circuits!r}, not an object of circuit kinds")
    numbers: list[tuple[str, object, bool]] = []  # (key, value, a count)
    for kind, v in circuits.items():
        for f in ("circuits", "fail"):
            if not isinstance(v, dict) or f not in v:
                raise DiffError(
                    f"{path}: no key circuits.{kind}.{f} (not a summary of 'routeplan plan')"
                )
            numbers.append((f"circuits.{kind}.{f}", v[f], True))
    numbers += [(".".join(k), _get(summary, k), k[-1] in _COUNTS) for k in written[3:]]
    for name, v, count in numbers:
        if isinstance(v, bool) or not isinstance(v, int | float) or not _finite(v):
            raise DiffError(f"{path}: {name} is {v!r}, not a number")
        if count and (v < 0 or v != int(v)):
            raise DiffError(f"{path}: {name} is {v!r}, not a count")
    for new, old in RENAMED_KEYS.items():  # read under the current names
        if new not in summary:
            summary[new] = summary.pop(old)
    return summary


#: keys of summary.json that count things (whole numbers ≥ 0)
_COUNTS = frozenset({"count", "over_capacity", "over_limit"})


def _finite(v: float) -> bool:
    """Whether ``v`` has a finite binary64 value (a JSON integer beyond it has none)."""
    try:
        return math.isfinite(v)
    except OverflowError:
        return False


def _get(data: dict, keys: tuple[str, ...]) -> object:
    for k in keys:
        data = data[k]
    return data


def _check_counts(
    folder: Path, summary: dict, circuits: pd.DataFrame, segments: pd.DataFrame
) -> None:
    """Rows per circuit kind and trench segments as ``summary.json`` counts them (a file cut
    at a line end looks sound otherwise)."""
    expected = {k: int(v["circuits"]) for k, v in summary["circuits"].items()}
    got = circuits["kind"].value_counts().to_dict()
    for kind in sorted(set(expected) | set(got)):
        if got.get(kind, 0) != expected.get(kind, 0):
            raise DiffError(
                f"{folder / CIRCUITS.name}: {got.get(kind, 0)} {kind} circuits where "
                f"summary.json counts {expected.get(kind, 0)} (truncated or edited?)"
            )
    n_segments = int(summary["segments"]["count"])
    if len(segments) != n_segments:
        raise DiffError(
            f"{folder / SEGMENTS.name}: {len(segments)} trench segments where summary.json "
            f"counts {n_segments} (truncated or edited?)"
        )


def read_plan(folder: Path | str) -> dict:
    """The three schedules of an output folder (``circuits``, ``segments``, ``quantities``),
    checked (:func:`read_schedule`), and its ``summary`` (:func:`read_summary`), the
    schedules cross-checked against it."""
    folder = Path(folder)
    if not folder.is_dir():
        raise DiffError(f"{folder}: no such folder")
    summary = read_summary(folder)
    circuits = read_schedule(folder, CIRCUITS)
    segments = read_schedule(folder, SEGMENTS)
    quantities = read_schedule(folder, QUANTITIES)
    _check_counts(folder, summary, circuits, segments)
    return {
        "circuits": circuits,
        "segments": segments,
        "quantities": quantities,
        "summary": summary,
    }


#: the file ``routeplan diff --out DIR`` writes into DIR
CHANGES_FILE = "diff.csv"
#: columns of ``diff.csv``
CHANGE_COLUMNS: tuple[str, ...] = (
    "section",
    "id",
    "change",
    "field",
    "old",
    "new",
    "delta",
    "scope",
    "cause",
    "note",
)


def open_diff_folder(out_dir: Path | str, *, force: bool = False) -> OutputFolder:
    """Open the folder ``routeplan diff --out`` writes into (:mod:`routeplan.folder`: a new
    or empty folder, or one ``diff`` wrote before; ``force`` writes beside other files,
    which are kept). Raises :class:`routeplan.errors.FolderError` when it cannot be used."""
    return OutputFolder.open(out_dir, "diff", force=force, expect=(CHANGES_FILE,))


def write_changes(changes: pd.DataFrame, out: Path | str | OutputFolder) -> Path:
    """Write ``changes`` (columns :data:`CHANGE_COLUMNS`) as ``diff.csv`` into the output
    folder ``out`` (an open one, or a path opened with :func:`open_diff_folder`). Returns the
    file written. Text a spreadsheet would take for a formula (ids, the old and new values of
    text fields, causes and notes) is guarded as in the schedules
    (:func:`routeplan.outputs.schedules.csv_guard`); numbers are not."""
    if not isinstance(out, OutputFolder):
        with open_diff_folder(out) as folder:
            return write_changes(changes, folder)
    table = changes.loc[:, list(CHANGE_COLUMNS)].copy()
    text = ~table["field"].isin(NUMBER_FIELDS).to_numpy(dtype=bool)
    every = np.ones(len(table), dtype=bool)
    for c, rows in (("id", every), ("old", text), ("new", text), ("cause", every), ("note", every)):
        cells = csv_guard([str(v).encode("utf-8") for v in table.loc[rows, c]])
        table.loc[rows, c] = [v.decode("utf-8") for v in cells]
    table.to_csv(out.work / CHANGES_FILE, index=False, lineterminator="\n", encoding="utf-8")
    out.commit([CHANGES_FILE])
    return out.path / CHANGES_FILE
