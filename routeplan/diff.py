"""``routeplan diff``: what changed between two output folders of ``routeplan plan``.

Compares the written schedules (not the inputs), so any two plans can be compared — after a
pad moved, a trench was rerouted or a setting changed. Values are compared as written (fixed
decimals), so a change is a change a reader of the schedule would see.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from .folder import OutputFolder

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
SEGMENT_FIELDS: tuple[str, ...] = ("circuits", "strings", "arrays", "ac", "status")
QUANTITY_KEYS: tuple[str, ...] = (
    "item",
    "kind",
    "material",
    "size_mm2",
    "laying",
    "depth_m",
    "unit",
)


class DiffError(Exception):
    """An output folder is missing or lacks a schedule file."""


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


def _read(folder: Path, name: str) -> pd.DataFrame:
    path = folder / name
    if not path.is_file():
        raise DiffError(f"{folder}: no {name} (is it an output folder of 'routeplan plan'?)")
    return pd.read_csv(path, dtype=str, keep_default_na=False)


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
        fields = [f for f in fields if f in o.columns and f in n.columns]
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


def diff_outputs(old_dir: Path | str, new_dir: Path | str) -> PlanDiff:
    """Compare the schedules in two output folders."""
    old_dir, new_dir = Path(old_dir), Path(new_dir)
    rows = _compare(
        _read(old_dir, "cable_schedule.csv"),
        _read(new_dir, "cable_schedule.csv"),
        "circuit_id",
        CIRCUIT_FIELDS,
        "circuit",
    )
    rows += _compare(
        _read(old_dir, "trench_schedule.csv"),
        _read(new_dir, "trench_schedule.csv"),
        "segment_id",
        SEGMENT_FIELDS,
        "segment",
    )
    rows += _quantity_delta(_read(old_dir, "quantities.csv"), _read(new_dir, "quantities.csv"))
    changes = pd.DataFrame(rows, columns=["section", "id", "change", "field", "old", "new"])
    return PlanDiff(changes)


def _quantity_delta(old: pd.DataFrame, new: pd.DataFrame) -> list[dict]:
    keys = list(QUANTITY_KEYS)

    def label(frame: pd.DataFrame) -> pd.Series:
        parts = frame[keys].apply(lambda r: " ".join(v for v in r if v), axis=1)
        return pd.Series(pd.to_numeric(frame["quantity"]).to_numpy(), index=parts.to_numpy())

    a, b = label(old), label(new)
    rows = []
    for k in sorted(set(a.index) | set(b.index)):
        va, vb = float(a.get(k, 0.0)), float(b.get(k, 0.0))
        if round(va - vb, 2) != 0:
            change = "added" if k not in a.index else "removed" if k not in b.index else "changed"
            rows.append(
                dict(
                    section="quantity",
                    id=k,
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
    a path opened with :func:`open_diff_folder`). Returns the file written."""
    if not isinstance(out, OutputFolder):
        with open_diff_folder(out) as folder:
            return write_diff(diff, folder)
    diff.changes.to_csv(out.work / CHANGES_FILE, index=False, lineterminator="\n", encoding="utf-8")
    out.commit([CHANGES_FILE])
    return out.path / CHANGES_FILE
