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
import operator
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from ..folder import OutputFolder, reading
from ..outputs.schedules import csv_guard, csv_unguard

#: circuit fields compared, in report order (route, length, size, drop, status)
CIRCUIT_FIELDS: tuple[str, ...] = (
    "to_id",
    "trench_segments",
    "route_m",
    "cable_m",
    "material",
    "size_mm2",
    "parallel",
    "vdrop_pct",
    "vdrop_total_pct",
    "status",
)
SEGMENT_FIELDS: tuple[str, ...] = ("circuits", "strings", "subarrays", "arrays", "ac", "status")
QUANTITY_KEYS: tuple[str, ...] = (
    "item",
    "kind",
    "material",
    "size_mm2",
    "laying",
    "depth_m",
    "unit",
)
#: columns read as numbers: a cell is empty or a decimal number
NUMBER_FIELDS: frozenset[str] = frozenset(
    {
        "route_m",
        "cable_m",
        "size_mm2",
        "parallel",
        "vdrop_pct",
        "vdrop_total_pct",
        "circuits",
        "strings",
        "subarrays",
        "arrays",
        "ac",
        "depth_m",
        "quantity",
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
    #: columns a schedule of an earlier version lacks, with the value they stand for there
    added_later: tuple[tuple[str, str], ...] = ()

    @property
    def columns(self) -> tuple[str, ...]:
        return self.key + tuple(f for f in self.fields if f not in self.key)


CIRCUITS = Table("cable_schedule.csv", ("circuit_id",), ("kind", *CIRCUIT_FIELDS), ("kind",))
#: ``subarrays``: sub-array cables came after routeplan 0.1.0 (its schedules have none)
SEGMENTS = Table("trench_schedule.csv", ("segment_id",), SEGMENT_FIELDS, (), (("subarrays", "0"),))
QUANTITIES = Table("quantities.csv", QUANTITY_KEYS, ("quantity",), ("quantity",))


@dataclass(frozen=True)
class PlanDiff:
    """Changes between two plans. ``changes`` has one line per changed value.

    Columns of ``changes``: ``section`` (circuit, segment, quantity), ``id``, ``change``
    (added, removed, changed), ``field``, ``old``, ``new``.
    """

    changes: pd.DataFrame

    def ids(self, section: str, change: str | None = None) -> list[str]:
        """Sorted unique ids of a section (optionally one kind of change)."""
        c = self.changes[self.changes["section"] == section]
        if change:
            c = c[c["change"] == change]
        return sorted(set(c["id"]))

    @property
    def empty(self) -> bool:
        return self.changes.empty


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
    later = dict(table.added_later)
    missing = [c for c in table.columns if c not in header and c not in later]
    if missing:
        names = ", ".join(missing)
        raise DiffError(f"{where}: no column {names} (a schedule of 'routeplan plan' has it)")
    twice = sorted({c for c in header if header.count(c) > 1})
    if twice:
        raise DiffError(f"{where}: column {', '.join(twice)} appears more than once")
    width = len(header)
    absent = [c for c in table.columns if c not in header]
    if absent:  # an earlier version's schedule: stand-in values at the end of each record
        header = header + absent
    pick = operator.itemgetter(*(header.index(c) for c in table.columns))
    fill = [later[c] for c in absent]
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
            kept.append(pick(record + fill) if fill else pick(record))
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
    _check_unique(frame, table, where, text)
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


def _check_numbers(values: np.ndarray, column: str, where: str, text: str, *, filled: bool) -> None:
    """Every cell of ``values`` (text) a decimal number, or empty unless ``filled``."""
    empty = values == ""
    # one reading for every cell: ASCII decimal numbers as routeplan writes them (no "nan",
    # "inf", digit separators "1_000" or non-ASCII digits, which float() would take)
    decimal = pd.Series(values, dtype=object).str.fullmatch(_DECIMAL).to_numpy(dtype=bool)
    bad = ~(decimal | empty)
    bad |= empty & filled
    if bad.any():
        i = int(np.argmax(bad))
        what = "empty" if empty[i] else f"{values[i]!r} is not a number"
        raise DiffError(f"{where}: line {_line(text, i)}: column {column}: {what}")


def _check_unique(frame: pd.DataFrame, table: Table, where: str, text: str) -> None:
    """No two rows with the same key."""
    key = list(table.key)
    dup = frame.duplicated(key, keep=False).to_numpy()
    if not dup.any():
        return
    first = frame[dup].iloc[0]
    same = np.flatnonzero((frame[key] == first[key]).all(axis=1).to_numpy())[:2].tolist()
    value = tuple(first[key]) if len(key) > 1 else first[key[0]]
    lines = [_line(text, i) for i in same]
    raise DiffError(f"{where}: {', '.join(key)} {value!r} on lines {lines[0]} and {lines[1]}")


def _check_counts(folder: Path, circuits: pd.DataFrame, segments: pd.DataFrame) -> None:
    """Rows per circuit kind and trench segments as ``summary.json`` counts them (a file cut
    at a line end looks sound otherwise). Skipped when the folder has no ``summary.json``."""
    path = folder / "summary.json"
    if not path.is_file():
        return
    try:
        summary = json.loads(path.read_text(encoding="utf-8"))
        expected = {k: int(v["circuits"]) for k, v in summary["circuits"].items()}
        n_segments = int(summary["segments"]["count"])
    except (OSError, ValueError, KeyError, TypeError, AttributeError) as exc:
        raise DiffError(f"{path}: unreadable ({type(exc).__name__}: {exc})") from None
    got = circuits["kind"].value_counts().to_dict()
    for kind in sorted(set(expected) | set(got)):
        if got.get(kind, 0) != expected.get(kind, 0):
            raise DiffError(
                f"{folder / CIRCUITS.name}: {got.get(kind, 0)} {kind} circuits where "
                f"summary.json counts {expected.get(kind, 0)} (truncated or edited?)"
            )
    if len(segments) != n_segments:
        raise DiffError(
            f"{folder / SEGMENTS.name}: {len(segments)} trench segments where summary.json "
            f"counts {n_segments} (truncated or edited?)"
        )


def _compare(old: pd.DataFrame, new: pd.DataFrame, key: str, fields, section: str) -> list[dict]:
    rows: list[dict] = []
    o = old.set_index(key)
    n = new.set_index(key)
    for k in sorted(set(n.index) - set(o.index)):
        rows.append(dict(section=section, id=k, change="added", field="", old="", new=""))
    for k in sorted(set(o.index) - set(n.index)):
        rows.append(dict(section=section, id=k, change="removed", field="", old="", new=""))
    common = sorted(set(o.index) & set(n.index))
    if common:
        fields = list(fields)
        a = o.loc[common, fields]
        b = n.loc[common, fields]
        diff = a.ne(b)
        for k, f in zip(*diff.to_numpy().nonzero(), strict=True):
            cid = common[k]
            field = fields[f]
            rows.append(
                dict(
                    section=section,
                    id=cid,
                    change="changed",
                    field=field,
                    old=a.iloc[k, f],
                    new=b.iloc[k, f],
                )
            )
    return rows


def read_plan(folder: Path | str) -> dict[str, pd.DataFrame]:
    """The three schedules of an output folder, checked (:func:`read_schedule`) and
    cross-checked against its ``summary.json``."""
    folder = Path(folder)
    circuits = read_schedule(folder, CIRCUITS)
    segments = read_schedule(folder, SEGMENTS)
    quantities = read_schedule(folder, QUANTITIES)
    _check_counts(folder, circuits, segments)
    return {"circuits": circuits, "segments": segments, "quantities": quantities}


def diff_outputs(old_dir: Path | str, new_dir: Path | str) -> PlanDiff:
    """Compare the schedules in two output folders. Raises :class:`DiffError` when a folder
    or one of its schedules is missing or damaged."""
    with reading(old_dir), reading(new_dir):  # a run killed mid-commit completed first
        old, new = read_plan(old_dir), read_plan(new_dir)
    rows = _compare(old["circuits"], new["circuits"], "circuit_id", CIRCUIT_FIELDS, "circuit")
    rows += _compare(old["segments"], new["segments"], "segment_id", SEGMENT_FIELDS, "segment")
    rows += _quantity_delta(old["quantities"], new["quantities"])
    changes = pd.DataFrame(rows, columns=["section", "id", "change", "field", "old", "new"])
    return PlanDiff(changes)


def _quantity_delta(old: pd.DataFrame, new: pd.DataFrame) -> list[dict]:
    keys = list(QUANTITY_KEYS)

    def by_key(frame: pd.DataFrame) -> dict[tuple[str, ...], float]:
        values = pd.to_numeric(frame["quantity"]).to_numpy(dtype=float).tolist()
        return dict(zip(frame[keys].itertuples(index=False, name=None), values, strict=True))

    a, b = by_key(old), by_key(new)
    rows = []
    for k in sorted(set(a) | set(b)):
        va, vb = a.get(k, 0.0), b.get(k, 0.0)
        if round(va - vb, 2) != 0:
            change = "added" if k not in a else "removed" if k not in b else "changed"
            rows.append(
                dict(
                    section="quantity",
                    id=" ".join(v for v in k if v),
                    change=change,
                    field="quantity",
                    old=f"{va:.2f}",
                    new=f"{vb:.2f}",
                )
            )
    return rows


#: the file ``routeplan diff --out DIR`` writes into DIR
CHANGES_FILE = "changes.csv"


def open_diff_folder(out_dir: Path | str, *, force: bool = False) -> OutputFolder:
    """Open the folder ``routeplan diff --out`` writes into (:mod:`routeplan.folder`: a new
    or empty folder, or one ``diff`` wrote before; ``force`` writes beside other files,
    which are kept). Raises :class:`routeplan.errors.FolderError` when it cannot be used."""
    return OutputFolder.open(out_dir, "diff", force=force, expect=(CHANGES_FILE,))


def write_diff(diff: PlanDiff, out: Path | str | OutputFolder) -> Path:
    """Write the changes as ``changes.csv`` into the output folder ``out`` (an open one, or
    a path opened with :func:`open_diff_folder`). Returns the file written. Text a
    spreadsheet would take for a formula (ids, and the old and new values of text fields) is
    guarded as in the schedules (:func:`routeplan.outputs.schedules.csv_guard`), numbers
    are not."""
    if not isinstance(out, OutputFolder):
        with open_diff_folder(out) as folder:
            return write_diff(diff, folder)
    table = diff.changes.copy()
    text = ~table["field"].isin(NUMBER_FIELDS).to_numpy(dtype=bool)
    for c, rows in (("id", np.ones(len(table), dtype=bool)), ("old", text), ("new", text)):
        cells = csv_guard([str(v).encode("utf-8") for v in table.loc[rows, c]])
        table.loc[rows, c] = [v.decode("utf-8") for v in cells]
    table.to_csv(out.work / CHANGES_FILE, index=False, lineterminator="\n", encoding="utf-8")
    out.commit([CHANGES_FILE])
    return out.path / CHANGES_FILE
