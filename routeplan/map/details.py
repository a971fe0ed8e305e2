"""The map's review data: every feature's id and the values its details show, by column.

The search box, the ``#find=<id>`` address, the details of a circuit, the trench panel and the
colour views (:data:`routeplan.map.script.REVIEW_SCRIPT`) read one JSON object embedded in the
page as ``<script type="application/json" id="rp-data">``; the page parses it only when it is
first needed (a search, a click, an address with ``#find``), so it costs nothing at opening.

Every circuit is in it, also where strings are drawn one line per row
(``aggregate_strings_above``): the ids of all strings stay searchable and their details come
from here. The tables are columnar, like the drawn layers (:func:`table_json`): one list per
column, or a list of its distinct values and each row's index into it where that is shorter.
Numbers are rounded to the decimals the schedules write (:mod:`routeplan.outputs.columns`), so
the details show the schedule's digits; ``null`` is a missing value. Texts are raw (not
escaped): the page shows them with ``textContent`` only.

Which circuits run in a trench segment is given once, from the segment's ``circuit_ids``
(positions in the circuits table, as counts per segment and one flat list): the trench panel
lists exactly what ``trench_schedule.csv`` says; a circuit's route is the inverse.
"""

from __future__ import annotations

import itertools
import json
import math
import re
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
import pandas as pd

from routeplan.map.features import _num, _text, circuit_kind
from routeplan.map.script import script_safe
from routeplan.map.text import ints_json
from routeplan.outputs.columns import CIRCUIT_COLUMNS, SEGMENT_COLUMNS

#: Circuit columns the details show, in the order of the table (text or number).
CIRCUIT_DETAIL_COLUMNS = (
    "circuit_id", "kind", "from_id", "to_id", "inverter_id", "material", "insulation",
    "size_mm2", "size_label", "parallel", "route_m", "cable_m", "design_current_a",
    "ampacity_base_a", "derating", "ampacity_a", "governing", "factor_temp", "factor_soil",
    "factor_depth", "factor_group", "group_count", "utilisation", "vdrop_v", "vdrop_pct",
    "vdrop_total_pct", "loss_w", "protection", "status", "note", "remedy",
)  # fmt: skip
#: Trench segment columns the trench panel shows.
SEGMENT_DETAIL_COLUMNS = (
    "segment_id", "trench_id", "length_m", "circuits", "cable_sets", "max_circuits",
    "max_cable_sets", "fill", "fill_basis", "status", "depth_m", "laying", "spacing_m",
    "soil_k_m_w", "group_factor",
)  # fmt: skip
#: Text columns (everything else is a number).
TEXT_COLUMNS = {
    "circuit_id", "kind", "from_id", "to_id", "inverter_id", "material", "insulation",
    "governing", "protection", "status", "note", "remedy", "segment_id", "trench_id", "size_label",
    "fill_basis", "laying", "id", "module", "to",
}  # fmt: skip

#: Decimals of each number column, as the schedules write it (None: integer).
DECIMALS: dict[str, int | None] = {
    c.name: c.decimals for c in (*CIRCUIT_COLUMNS, *SEGMENT_COLUMNS) if c.name not in TEXT_COLUMNS
}


def _converted(distinct: np.ndarray, decimals: int | None) -> list:
    """Numbers rounded as the schedule writes them (``f"{x:.{d}f}"``), NaN → None; integers
    where ``decimals`` is None (or 0)."""
    if decimals:
        # the schedule's text, read back: the nearest double of that decimal (JavaScript's
        # toFixed(d) gives the same digits back)
        return [None if x != x else float(f"{x:.{decimals}f}") for x in distinct.tolist()]
    return [None if x != x else int(x) for x in np.round(distinct).tolist()]


#: characters of users' text written as \u escapes in the data too, so that no text of a
#: user's file appears in the page as it is (``<``, ``>``, ``&`` are escaped for
#: ``<script>`` later; these are live in JavaScript template literals and Jinja templates)
_LIVE = str.maketrans({"$": "\\u0024", "`": "\\u0060", "{": "\\u007b", "}": "\\u007d"})
#: a text holding none of these is written in JSON as it is, between quotes (json escapes
#: the quote, the backslash and control characters; :data:`_LIVE` the others)
_SPECIAL = re.compile(r'["\\\x00-\x1f$`{}]')


def _list_json(values: list) -> str:
    """A JSON list of values (text, numbers, null), with the characters of :data:`_LIVE`
    escaped (a list's own syntax holds none of them)."""
    text = json.dumps(values, ensure_ascii=False, separators=(",", ":"), allow_nan=False)
    return text.translate(_LIVE)


def _tokens(values: list) -> list[str]:
    """Each value (text, int, float, None) as :func:`_list_json` writes it in a list: the
    list's text is ``"[" + ",".join(tokens) + "]"``."""
    if all(type(v) is str for v in values):
        return _text_tokens(values)
    out = []
    for v in values:
        if v is None:
            out.append("null")
        elif type(v) is float and math.isfinite(v):
            out.append(float.__repr__(v))  # json writes a float so
        else:  # text, int, a float out of range (json refuses it)
            out.append(_list_json([v])[1:-1])
    return out


def _text_tokens(values: list[str]) -> list[str]:
    """:func:`_tokens` of texts."""
    if not _SPECIAL.search("".join(values)):  # one scan of the column
        return [f'"{v}"' for v in values]
    return [
        json.dumps(v, ensure_ascii=False).translate(_LIVE) if _SPECIAL.search(v) else f'"{v}"'
        for v in values
    ]


def _ints(values) -> str:
    """A JSON list of integers (a list or an integer array)."""
    return ints_json(values)


def _index_digits(m: int) -> np.ndarray:
    """The number of decimal digits of each of 0, 1, …, ``m`` - 1.

    Examples
    --------
    >>> _index_digits(12).tolist()
    [1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 2, 2]
    """
    out = np.ones(m, dtype=np.int64)
    power = 10
    while power < m:
        out[power:] += 1
        power *= 10
    return out


@dataclass
class _Column:
    """One column of a review table, encoded: each row's JSON text (``tokens``), its code
    among the column's distinct values (in order of first appearance, as
    :func:`pandas.factorize` of the values gives them) and the distinct values' texts."""

    tokens: np.ndarray
    codes: np.ndarray
    distinct: list[str]

    @classmethod
    def of(cls, df: pd.DataFrame, name: str) -> _Column:
        """The column ``name`` of ``df`` as the details show it: text raw, numbers rounded
        as the schedules write them (:func:`_converted`)."""
        if name in TEXT_COLUMNS:
            codes, distinct = pd.factorize(_text(df, name).to_numpy(dtype=object))
            tokens = _text_tokens(distinct.tolist())
            table = np.empty(len(tokens), dtype=object)
            table[:] = tokens
            return cls(table[codes], codes.astype(np.int64), tokens)
        v = np.ascontiguousarray(_num(df, name), dtype=np.float64)
        # every distinct float (bit for bit: -0.0 and 0.0 are written apart) …
        bits, distinct_bits = pd.factorize(v.view(np.int64))
        values = _converted(distinct_bits.view(np.float64), DECIMALS.get(name))
        table = np.empty(len(values), dtype=object)
        table[:] = _tokens(values)
        # … and the distinct values as pandas.factorize of the values sees them (-0.0 == 0.0)
        merged, _ = pd.factorize(pd.Series(values, dtype=object), use_na_sentinel=False)
        first = np.unique(merged, return_index=True)[1]
        return cls(table[bits], merged[bits].astype(np.int64), table[first].tolist())

    def json(self) -> str:
        """The column: a JSON list, or ``{"v": distinct values, "i": indices}`` where shorter
        (``{"v": [value]}`` when all are equal)."""
        n, m = len(self.tokens), len(self.distinct)
        if n and m == 1:
            return '{"v":[' + self.tokens[0] + "]}"
        counts = np.bincount(self.codes, minlength=m)
        lengths = np.fromiter(map(len, self.distinct), dtype=np.int64, count=m)
        plain = 2 + max(n - 1, 0) + int(counts @ lengths) if n else 2
        digits = _index_digits(m)
        distinct = 2 + max(m - 1, 0) + int(lengths.sum())
        coded = 5 + distinct + 6 + int(counts @ digits) + max(n - 1, 0) + 2
        if coded < plain:
            return '{"v":[' + ",".join(self.distinct) + '],"i":' + _ints(self.codes) + "}"
        return "[" + ",".join(self.tokens.tolist()) + "]"


#: Columns that name a row: never in a profile.
_ID_COLUMNS = {"circuit_id", "segment_id", "id"}
#: A column joins the shared profile when it has at most this share of distinct values …
PROFILE_DISTINCT = 0.01
#: … and while the profiles stay at most this share of the rows.
PROFILE_ROWS = 0.05


def _ranks(values: np.ndarray, bound: int, most: float) -> tuple[np.ndarray, int] | None:
    """Each of ``values`` (integers in ``[0, bound)``) as its rank among the distinct values
    (``numpy.unique(values, return_inverse=True)``), and their number; None when there are
    more than ``most`` (with a table of ``bound`` flags where that is small: no sorting)."""
    if bound > (1 << 22):
        seen, rank = np.unique(values, return_inverse=True)
        return (rank.reshape(-1), len(seen)) if len(seen) <= most else None
    present = np.zeros(bound, dtype=bool)
    present[values] = True
    count = int(np.count_nonzero(present))
    if count > most:
        return None
    rank = np.cumsum(present, dtype=np.int32) - 1
    return rank[values].astype(np.int64), count


def table_json(df: pd.DataFrame, columns: tuple[str, ...]) -> str:
    """A table by column: ``{"n": rows, "k": {name: column}, "p": profile}`` (columns missing
    in ``df`` are left out; see :meth:`_Column.json`).

    Columns with few distinct values (a plant's strings mostly share size, factors, status,
    protection …) are stored together as a *profile*: ``{"k": names, "v": [[values], …],
    "i": each row's profile}``, one small index per row instead of one per column; columns join
    it, fewest distinct values first, while the profiles stay few.
    """
    n = len(df)
    cols = {name: _Column.of(df, name) for name in columns if name in df.columns}
    codes = {}
    for name, c in cols.items():
        if name not in _ID_COLUMNS and 1 < len(c.distinct) <= max(16, PROFILE_DISTINCT * n):
            codes[name] = (c.codes, len(c.distinct))
    profile: list[str] = []
    key = np.zeros(n, dtype=np.int64)
    keys = 1  # distinct values of key, numbered 0, 1, … in order
    for name in sorted(codes, key=lambda k: codes[k][1]):
        c, m = codes[name]
        trial = key * m + c
        ranked = _ranks(trial, keys * m, max(16, PROFILE_ROWS * n))
        if ranked is None:
            continue
        key, keys = ranked
        profile.append(name)
    parts = [f"{json.dumps(name)}:{c.json()}" for name, c in cols.items() if name not in profile]
    text = f'{{"n":{n},"k":{{' + ",".join(parts) + "}"
    if len(profile) > 1:
        _, first, inverse = np.unique(key, return_index=True, return_inverse=True)
        table = zip(*(cols[name].tokens[first].tolist() for name in profile), strict=True)
        body = (
            '{"k":'
            + _list_json(profile)
            + ',"v":['
            + ",".join("[" + ",".join(r) + "]" for r in table)
            + "]}"
        )
        text += ',"p":' + body[:-1] + ',"i":' + _ints(inverse.reshape(-1)) + "}"
    elif profile:  # one column only: as a column of its own
        name = profile[0]
        text = text[:-1] + ("," if parts else "") + f"{json.dumps(name)}:{cols[name].json()}}}"
    return text + "}"


def _positions(lists: pd.Series, ids: np.ndarray) -> tuple[list, list]:
    """Per item of ``lists`` (';'-separated ids), the positions of its ids in ``ids``, in
    their order: counts per item and the flat list; ids not in ``ids`` are skipped."""
    texts = lists.tolist()
    if not texts:
        return [], []
    flat = np.array(";".join(texts).split(";"), dtype=object)  # every item's ids, in turn
    per_item = np.fromiter(map(str.count, texts, itertools.repeat(";")), np.int64, len(texts)) + 1
    index = pd.Index(np.asarray(ids, dtype=object))
    first = np.arange(len(index))
    if not index.is_unique:  # an id twice: its first position
        keep = ~index.duplicated()
        index, first = index[keep], first[keep]
    found = index.get_indexer(flat)
    known = found >= 0
    owner = np.repeat(np.arange(len(texts)), per_item)
    counts = np.bincount(owner[known], minlength=len(texts))
    return counts.tolist(), first[found[known]].tolist()


def segment_circuits(segments: pd.DataFrame, circuit_ids: np.ndarray) -> tuple[list, list]:
    """Per segment, the positions of its circuits (``circuit_ids`` column, ';'-separated) in
    the circuits table: counts per segment and the flat list; ids not in the table are
    skipped."""
    return _positions(_text(segments, "circuit_ids"), circuit_ids)


def circuit_segments(circuits: pd.DataFrame, segment_ids: np.ndarray) -> tuple[list, list]:
    """Per circuit, the positions of its trench segments (``trench_segments``, in route
    order) in the segments table, as :func:`segment_circuits` gives them."""
    return _positions(_text(circuits, "trench_segments"), segment_ids)


def review_json(
    circuits: pd.DataFrame,
    segments: pd.DataFrame,
    rows: pd.DataFrame,
    equipment: pd.DataFrame,
    *,
    drop_limits_pct: Mapping[str, float] | None = None,
) -> str:
    """The review data as compact JSON text (made safe for ``<script>``).

    Keys: ``c`` circuits, ``s`` trench segments, ``r`` rows, ``e`` equipment (tables, see
    :func:`table_json`); ``sc`` the circuits of each segment (``{"k": counts, "x": positions}``);
    ``cs`` the trench segments of each circuit in route order (the same form);
    ``lim`` the voltage-drop limits [%] by circuit kind and ``dc_total`` (empty if unknown);
    ``dec`` the decimals of the number columns.
    """
    cdf = circuits.drop(columns=circuits.geometry.name, errors="ignore")  # a new frame
    if "kind" in cdf.columns:
        cdf["kind"] = circuit_kind(cdf)
    counts, flat = segment_circuits(segments, _text(cdf, "circuit_id").to_numpy(dtype=object))
    c_counts, c_flat = circuit_segments(cdf, _text(segments, "segment_id").to_numpy(dtype=object))
    limits = {
        str(k): float(v)
        for k, v in (drop_limits_pct or {}).items()
        if isinstance(v, int | float) and np.isfinite(v) and v > 0
    }
    dec = {k: v for k, v in DECIMALS.items() if v}
    parts = [
        f'"c":{table_json(cdf, CIRCUIT_DETAIL_COLUMNS)}',
        f'"s":{table_json(segments, SEGMENT_DETAIL_COLUMNS)}',
        f'"r":{table_json(rows, ("id", "strings", "module", "to"))}',
        f'"e":{table_json(equipment, ("id", "kind"))}',
        '"sc":{"k":' + _ints(counts) + ',"x":' + _ints(flat) + "}",
        '"cs":{"k":' + _ints(c_counts) + ',"x":' + _ints(c_flat) + "}",
        f'"lim":{json.dumps(limits, sort_keys=True)}',
        f'"dec":{json.dumps(dec, sort_keys=True, separators=(",", ":"))}',
    ]
    return script_safe("{" + ",".join(parts) + "}")


def review_data_html(text: str) -> str:
    """The ``<script type="application/json">`` element holding :func:`review_json`'s text
    (``<``, ``>``, ``&`` are escaped in it, so it cannot end the element)."""
    return f'<script type="application/json" id="rp-data">{text}</script>'
