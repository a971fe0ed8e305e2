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

A re-plan changes a few hundred of a 1 GW plant's ~70,000 circuits. :class:`ReviewMemo` (kept
in the map's memo, :class:`routeplan.map.tiles.MapMemo`) holds the last map's tables by their
rows' content hashes: each column as its distinct texts and each row's index into them, the
JSON text of each column written on its own, and each row's segment or circuit positions. A
re-plan encodes only the rows whose hash is new, copies the JSON of a column whose rows all
kept their texts, and moves the kept positions to where their ids are now; the text is the
one a map without memo gives, byte for byte (``tests/map/test_review_memo.py``).
"""

from __future__ import annotations

import itertools
import json
import math
import re
from collections.abc import Callable, Mapping
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
    "spread_m", "soil_k_m_w", "group_factor",
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


def _firsts(codes: np.ndarray) -> np.ndarray:
    """The position of each code's first row, for codes numbered in order of first appearance
    (as :func:`pandas.factorize` gives them): where the running maximum grows.

    Examples
    --------
    >>> _firsts(np.array([0, 1, 0, 2, 1, 3])).tolist()
    [0, 1, 3, 5]
    """
    if not len(codes):
        return np.zeros(0, dtype=np.int64)
    top = np.maximum.accumulate(codes)
    return np.flatnonzero(np.r_[True, top[1:] > top[:-1]])


@dataclass
class _Column:
    """One column of a review table, encoded: its distinct JSON texts (``texts``, each once, in
    any order), each row's index into them (``tok``) and, per text, the index of the first text
    of its value (``canon``: -0.0 and 0.0 are one value, written apart). ``codes`` (each row's
    value among the column's distinct values, in order of first appearance, as
    :func:`pandas.factorize` of the values gives them) and ``distinct`` (the texts of those
    values, each that of its first row) are made when first needed."""

    source: list[str] | _KeptColumn
    tok: np.ndarray
    canon: np.ndarray
    _codes: np.ndarray | None = None
    _distinct: list[str] | None = None
    _json: str | None = None

    @property
    def texts(self) -> list[str]:
        """The column's distinct texts (those of the last run's table decoded when first
        needed)."""
        return self.source if isinstance(self.source, list) else self.source.texts

    @classmethod
    def of(cls, df: pd.DataFrame, name: str) -> _Column:
        """The column ``name`` of ``df`` as the details show it: text raw, numbers rounded
        as the schedules write them (:func:`_converted`)."""
        if name in TEXT_COLUMNS:
            codes, distinct = pd.factorize(_text(df, name).to_numpy(dtype=object))
            tokens = _text_tokens(distinct.tolist())
            codes = codes.astype(np.int64)
            return cls(tokens, codes, np.arange(len(tokens)), codes, tokens)
        v = np.ascontiguousarray(_num(df, name), dtype=np.float64)
        # every distinct float (bit for bit: -0.0 and 0.0 are written apart) …
        bits, distinct_bits = pd.factorize(v.view(np.int64))
        values = _converted(distinct_bits.view(np.float64), DECIMALS.get(name))
        tokens = np.empty(len(values), dtype=object)
        tokens[:] = _tokens(values)
        # … and the distinct values as pandas.factorize of the values sees them (-0.0 == 0.0)
        merged, _ = pd.factorize(pd.Series(values, dtype=object), use_na_sentinel=False)
        first = np.unique(merged, return_index=True)[1]
        # the texts once each (floats that round alike have one text)
        text_of, texts = pd.factorize(tokens)
        canon = np.empty(len(texts), dtype=np.int64)
        canon[text_of] = text_of[first[merged]]
        return cls(
            texts.tolist(),
            text_of[bits].astype(np.int64),
            canon,
            merged[bits].astype(np.int64),
            tokens[first].tolist(),
        )

    @property
    def codes(self) -> np.ndarray:
        if self._codes is None:
            self._classify()
        return self._codes  # type: ignore[return-value]

    @property
    def distinct(self) -> list[str]:
        if self._distinct is None:
            self._classify()
        return self._distinct  # type: ignore[return-value]

    def _classify(self) -> None:
        codes, _ = pd.factorize(self.canon[self.tok])
        first = _firsts(codes)
        self._codes = codes.astype(np.int64)
        texts = self.texts
        self._distinct = [texts[t] for t in self.tok[first].tolist()]

    def tokens_at(self, positions: np.ndarray) -> list[str]:
        """The texts of the rows at ``positions``."""
        texts = self.texts
        return [texts[t] for t in self.tok[positions].tolist()]

    def json(self) -> str:
        """The column: a JSON list, or ``{"v": distinct values, "i": indices}`` where shorter
        (``{"v": [value]}`` when all are equal), made safe for ``<script>``
        (:func:`routeplan.map.script.script_safe`: the lengths compared are those before)."""
        if self._json is None:
            self._json = script_safe(self._json_text())
        return self._json

    def _json_text(self) -> str:
        n, m = len(self.tok), len(self.distinct)
        if n and m == 1:
            return '{"v":[' + self.distinct[0] + "]}"
        counts = np.bincount(self.codes, minlength=m)
        lengths = np.fromiter(map(len, self.distinct), dtype=np.int64, count=m)
        plain = 2 + max(n - 1, 0) + int(counts @ lengths) if n else 2
        digits = _index_digits(m)
        distinct = 2 + max(m - 1, 0) + int(lengths.sum())
        coded = 5 + distinct + 6 + int(counts @ digits) + max(n - 1, 0) + 2
        if coded < plain:
            return '{"v":[' + ",".join(self.distinct) + '],"i":' + ints_json(self.codes) + "}"
        texts = self.texts
        return "[" + ",".join([texts[t] for t in self.tok.tolist()]) + "]"


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
    in ``df`` are left out; see :meth:`_Column.json`), made safe for ``<script>``.

    Columns with few distinct values (a plant's strings mostly share size, factors, status,
    protection …) are stored together as a *profile*: ``{"k": names, "v": [[values], …],
    "i": each row's profile}``, one small index per row instead of one per column; columns join
    it, fewest distinct values first, while the profiles stay few.
    """
    cols = {name: _Column.of(df, name) for name in columns if name in df.columns}
    return _table_text(len(df), cols, {})


def _table_text(
    n: int, cols: dict[str, _Column], known: dict[str, tuple[str, int]], profile: list | None = None
) -> str:
    """:func:`table_json`'s text of the encoded columns ``cols`` (``n`` rows); ``known``: the
    JSON text and number of distinct values of columns whose text is known already. The names
    of the profile's columns are appended to ``profile`` when given."""
    shared: list[str] = [] if profile is None else profile
    counts = {
        name: known[name][1] if name in known else len(c.distinct) for name, c in cols.items()
    }
    codes = {}
    for name, c in cols.items():
        if name not in _ID_COLUMNS and 1 < counts[name] <= max(16, PROFILE_DISTINCT * n):
            codes[name] = (c, counts[name])
    key = np.zeros(n, dtype=np.int64)
    keys = 1  # distinct values of key, numbered 0, 1, … in order
    for name in sorted(codes, key=lambda k: codes[k][1]):
        c, m = codes[name]
        trial = key * m + c.codes
        ranked = _ranks(trial, keys * m, max(16, PROFILE_ROWS * n))
        if ranked is None:
            continue
        key, keys = ranked
        shared.append(name)
    profile = shared

    def text(name: str) -> str:
        return known[name][0] if name in known else cols[name].json()

    def key_text(name: str) -> str:
        return script_safe(json.dumps(name))

    parts = [f"{key_text(name)}:{text(name)}" for name in cols if name not in profile]
    out = f'{{"n":{n},"k":{{' + ",".join(parts) + "}"
    if len(profile) > 1:
        _, first, inverse = np.unique(key, return_index=True, return_inverse=True)
        table = zip(*(cols[name].tokens_at(first) for name in profile), strict=True)
        body = script_safe(
            '{"k":'
            + _list_json(profile)
            + ',"v":['
            + ",".join("[" + ",".join(r) + "]" for r in table)
            + "]}"
        )
        out += ',"p":' + body[:-1] + ',"i":' + ints_json(inverse.reshape(-1)) + "}"
    elif profile:  # one column only: as a column of its own
        name = profile[0]
        out = out[:-1] + ("," if parts else "") + f"{key_text(name)}:{text(name)}}}"
    return out + "}"


#: what separates the texts of a column in the memo (JSON texts of values never hold it raw)
_SEP = "\n"


def _blob(text: str) -> np.ndarray:
    return np.frombuffer(text.encode("utf-8"), dtype=np.uint8)


def _unblob(blob: object) -> str:
    return np.asarray(blob, dtype=np.uint8).tobytes().decode("utf-8")


class _KeptColumn:
    """A column of the last run's table (:class:`ReviewMemo`): its texts (decoded when first
    needed, one by one or all), each text's value, each row's text and the column's JSON
    text; texts found in this run's new rows are appended (:func:`_ids`)."""

    def __init__(self, stored: dict) -> None:
        self.stored = stored
        self.count = int(stored["count"])
        canon = np.asarray(stored["canon"], dtype=np.int64)
        # a column whose texts are each a value of its own keeps no canon
        self.canon = canon if len(canon) else np.arange(self.count)
        self.tok = np.asarray(stored["tok"], dtype=np.int64)
        self.m = int(stored["m"])
        #: whether the column was written on its own (its JSON text kept)
        self.has_json = self.m >= 0
        if len(self.canon) != self.count:
            raise ValueError("damaged")
        self._texts: list[str] | None = None
        self._bytes: bytes | None = None
        self._bounds: np.ndarray | None = None
        #: texts appended in this run (ids from ``count`` on)
        self.added: list[str] = []
        #: each text's id, made when a new row's text is not the last text of its row
        self.index: dict[str, int] | None = None
        #: ``canon`` with the texts appended since
        self.canon_now = self.canon

    @property
    def texts(self) -> list[str]:
        if self._texts is None:
            texts = _unblob(self.stored["texts"]).split(_SEP) if self.count else []
            if len(texts) != self.count:
                raise ValueError("damaged")
            self._texts = texts
        return self._texts + self.added if self.added else self._texts

    def text_at(self, i: int) -> str:
        """The text of id ``i``, decoded alone."""
        if i >= self.count:
            return self.added[i - self.count]
        if self._texts is not None:
            return self._texts[i]
        if self._bounds is None:
            raw = np.asarray(self.stored["texts"], dtype=np.uint8)
            seps = np.flatnonzero(raw == ord(_SEP))
            if len(seps) != self.count - 1:
                raise ValueError("damaged")
            self._bytes = raw.tobytes()
            self._bounds = np.r_[0, seps + 1, len(raw) + 1]
        a, b = int(self._bounds[i]), int(self._bounds[i + 1]) - 1
        return self._bytes[a:b].decode("utf-8")  # type: ignore[index]

    @property
    def json(self) -> str:
        return _unblob(self.stored["json"])


def _zero_pair(token: str) -> str | None:
    """The other text of a number that equals ``token`` (0.0 and -0.0), if any."""
    return {"0.0": "-0.0", "-0.0": "0.0"}.get(token)


class ReviewMemo:
    """The review tables of the last map, kept by their rows' content hashes: each column's
    texts, each row's text and the column's JSON text. A table whose rows are the last run's
    is copied; otherwise only the rows whose hash is new are encoded again
    (:meth:`_Column.of` of those rows), every other row takes its last text, and a column
    whose rows all have the texts they had keeps its JSON text. The result is the text
    :func:`table_json` gives (-0.0 and 0.0 are one value with two texts, as there)."""

    #: the form of :meth:`export`'s value (a memo of another form is not used)
    VERSION = 1

    def __init__(self, last: object = None) -> None:
        self.last: dict = {}
        if isinstance(last, dict) and last.get("version") == self.VERSION:
            self.last = {k: v for k, v in last.items() if k != "version"}
        self.now: dict = {}
        #: per table of this run: each row's row in the last run's table (-1: new)
        self.found: dict[str, np.ndarray] = {}
        #: per table of this run: its id column's texts, by id, last run's and this run's
        self.ids: dict[str, tuple[np.ndarray, np.ndarray]] = {}

    def table(
        self,
        key: str,
        df: pd.DataFrame,
        columns: tuple[str, ...],
        hashes: np.ndarray,
        extra: dict[str, np.ndarray] | None = None,
    ) -> str:
        """:func:`table_json` of ``df`` (with the columns ``extra`` put in place of its own),
        its rows' content hashes ``hashes`` (covering every column shown)."""
        extra = extra or {}
        names = [c for c in columns if c in df.columns]
        hashes = np.asarray(hashes, dtype=np.uint64)
        n = len(df)
        try:
            kept = self._kept(key, names, hashes)
        except (KeyError, TypeError, ValueError, AttributeError, UnicodeDecodeError):
            kept = None
        if kept is None:
            frame = _frame(df, names, extra)
            cols = {name: _Column.of(frame, name) for name in names}
            profile: list[str] = []
            text = _table_text(n, cols, {}, profile)
            self.now[key] = _state(hashes, cols, {}, profile, {})
            return text
        last, kcols = kept
        index = pd.Index(np.asarray(last["hashes"], dtype=np.uint64))
        at = np.arange(len(index))
        if not index.is_unique:  # equal rows, equal texts: the first one's
            keep = ~index.duplicated()
            index, at = index[keep], at[keep]
        found = index.get_indexer(hashes)
        found[found >= 0] = at[found[found >= 0]]
        self.found[key] = found
        old = found >= 0
        fresh = np.flatnonzero(~old)
        sub = _frame(df.iloc[fresh], names, {k: np.asarray(v)[fresh] for k, v in extra.items()})
        cols: dict[str, _Column] = {}
        known: dict[str, tuple[str, int]] = {}
        blobs: dict[str, np.ndarray] = {}
        for name in names:
            k = kcols[name]
            canon = k.canon
            tok = np.empty(n, dtype=np.int64)
            tok[old] = k.tok[found[old]]
            if len(fresh):
                part = _Column.of(sub, name)
                first = fresh[np.unique(part.tok, return_index=True)[1]]
                rows = np.full(len(part.texts), n, dtype=np.int64)
                rows[np.unique(part.tok)] = first
                ids = _ids(k, part.texts, rows, numbers=name not in TEXT_COLUMNS)
                tok[fresh] = ids[part.tok]
                canon = k.canon_now
            blobs[name] = k.stored["texts"]
            if k.added:  # the last texts and the new ones
                more = _blob((_SEP if k.count else "") + _SEP.join(k.added))
                blobs[name] = np.concatenate([np.asarray(k.stored["texts"], np.uint8), more])
            if k.has_json and len(tok) == len(k.tok) and np.array_equal(tok, k.tok):
                known[name] = (k.json, k.m)
            cols[name] = _Column(k, tok, canon)
            if name in _ID_COLUMNS:
                self.ids[key] = (k.tok, tok)
        profile = []
        text = _table_text(n, cols, known, profile)
        self.now[key] = _state(hashes, cols, known, profile, blobs, kcols)
        return text

    def positions(
        self,
        key: str,
        rows: str,
        lists: Callable[[np.ndarray | None], list[str]],
        target: str,
        ids: np.ndarray,
    ) -> tuple[np.ndarray, np.ndarray]:
        """:func:`_positions` of the lists of the table ``rows`` (``lists(positions)``: the
        texts of those rows, of all rows for None) in the ids ``ids`` of the table ``target``
        (both tables made by :meth:`table` in this run), as arrays: a row whose hash the last
        run had takes its last positions, moved to where their ids are now; rows whose hash is
        new, that named an id no longer there or skipped one (when the ids changed) are found
        again."""
        last = self.last.get(key)
        found = self.found.get(rows)
        remap = self._remap(target)
        usable = False
        if isinstance(last, dict) and found is not None and remap is not None:
            try:
                counts_old = np.asarray(last["counts"], dtype=np.int64)
                flat_old = np.asarray(last["flat"], dtype=np.int64)
                short_old = np.asarray(last["short"], dtype=bool)
                usable = (
                    len(counts_old) == len(short_old) == len(self.last[rows]["hashes"])
                    and int(counts_old.sum()) == len(flat_old)
                    and not (ids == "").any()  # an empty list names no id
                )
            except (KeyError, TypeError, ValueError):
                usable = False
        if not usable:
            counts, flat, short = _position_arrays(lists(None), ids)
            self._keep_positions(key, counts, flat, short)
            return counts, flat
        changed, remap = remap  # type: ignore[misc]
        n = len(found)  # type: ignore[arg-type]
        starts_old = np.cumsum(counts_old) - counts_old
        if changed:
            moved = remap[flat_old]
            gone = np.bincount(
                np.repeat(np.arange(len(counts_old)), counts_old)[moved < 0],
                minlength=len(counts_old),
            )
            bad_old = (gone > 0) | short_old
        else:
            moved = flat_old
            bad_old = np.zeros(len(counts_old), dtype=bool)
        redo = found < 0
        redo[~redo] = bad_old[found[~redo]]
        again = np.flatnonzero(redo)
        c_new, f_new, s_new = (
            _position_arrays(lists(again), ids)
            if len(again)
            else (np.zeros(0, np.int64), np.zeros(0, np.int64), np.zeros(0, bool))
        )
        counts = np.empty(n, dtype=np.int64)
        short = np.empty(n, dtype=bool)
        starts = np.empty(n, dtype=np.int64)
        keep = ~redo
        src = found[keep]
        counts[keep], short[keep], starts[keep] = counts_old[src], short_old[src], starts_old[src]
        counts[again], short[again] = c_new, s_new
        starts[again] = len(moved) + np.cumsum(c_new) - c_new
        pool = np.concatenate([moved, f_new])
        total = int(counts.sum())
        gather = np.repeat(starts - (np.cumsum(counts) - counts), counts) + np.arange(total)
        flat = pool[gather]
        self._keep_positions(key, counts, flat, short)
        return counts, flat

    def _keep_positions(self, key: str, counts, flat, short) -> None:
        self.now[key] = {
            "counts": np.asarray(counts, dtype=np.int32),
            "flat": np.asarray(flat, dtype=np.int32),
            "short": np.asarray(short, dtype=np.uint8),
        }

    def _remap(self, target: str) -> tuple[bool, np.ndarray] | None:
        """Whether the ids of ``target`` changed since the last run, and the position now of
        each last position's id (-1: gone); None when ids are not unique or not known."""
        pair = self.ids.get(target)
        if pair is None:
            return None
        old, new = pair
        if len(old) == len(new) and np.array_equal(old, new):
            return False, np.arange(len(new))
        size = int(max(old.max(initial=-1), new.max(initial=-1))) + 1
        if np.bincount(old, minlength=size).max(initial=0) > 1:
            return None
        if np.bincount(new, minlength=size).max(initial=0) > 1:
            return None
        where = np.full(size, -1, dtype=np.int64)
        where[new] = np.arange(len(new))
        return True, where[old]

    def _kept(self, key: str, names: list[str], hashes: np.ndarray):
        last = self.last.get(key)
        if not isinstance(last, dict) or list(last["names"]) != names:
            return None
        kcols = {name: _KeptColumn(last["cols"][name]) for name in names}
        if any(len(k.tok) != len(last["hashes"]) for k in kcols.values()):
            return None
        return last, kcols

    def export(self) -> dict:
        """What this run's tables were, for the next one (arrays, no pickle)."""
        return {"version": self.VERSION, **self.now}


def _ids(k: _KeptColumn, new: list[str], rows: np.ndarray, *, numbers: bool) -> np.ndarray:
    """The ids of the texts ``new`` among a column's texts, those not there appended (with
    their values in ``k.canon_now``: a number's 0.0 and -0.0 are one value); ``rows``: for
    each, a row holding it (a text is looked for first as that row's last text)."""
    out = np.full(len(new), -1, dtype=np.int64)
    last = np.full(len(new), -1, dtype=np.int64)
    if len(k.tok):
        last = np.where(rows < len(k.tok), k.tok[np.minimum(rows, len(k.tok) - 1)], -1)
    for j, (t, i) in enumerate(zip(new, last.tolist(), strict=True)):
        if i >= 0 and k.text_at(i) == t:
            out[j] = i
    todo = np.flatnonzero(out < 0).tolist()
    if not todo:
        return out
    if k.index is None:
        k.index = {t: i for i, t in enumerate(k.texts)}
    index = k.index
    canon = k.canon_now.tolist()
    for j in todo:
        t = new[j]
        i = index.get(t)
        if i is None:
            i = k.count + len(k.added)
            k.added.append(t)
            index[t] = i
            other = _zero_pair(t) if numbers else None
            canon.append(canon[index[other]] if other in index else i)
        out[j] = i
    k.canon_now = np.asarray(canon, dtype=np.int64)
    return out


def _frame(df: pd.DataFrame, names: list[str], extra: dict[str, np.ndarray]) -> pd.DataFrame:
    """The columns ``names`` of ``df``, those of ``extra`` in place of its own."""
    out = pd.DataFrame({name: df[name] for name in names if name not in extra}, index=df.index)
    for name, values in extra.items():
        if name in names:
            out[name] = values
    return out


def _state(hashes, cols, known, profile, blobs, kept=None) -> dict:
    """A table of :class:`ReviewMemo` as the plan cache stores it: per column its texts, their
    values, each row's text (in the smallest integer type) and, for a column written on its
    own (not in the profile), its JSON text."""
    own = set(cols) - set(profile) if len(profile) > 1 else set(cols)
    out = {}
    for name, c in cols.items():
        used, canon = c.tok, c.canon
        blob = blobs.get(name)
        if len(canon) > 2 * max(len(used), 16):  # texts no row has any more: dropped
            texts = c.texts
            present = np.unique(used)
            keep = np.unique(np.r_[present, canon[present]])
            renum = np.full(len(texts), -1, dtype=np.int64)
            renum[keep] = np.arange(len(keep))
            texts = [texts[i] for i in keep.tolist()]
            canon, used = renum[canon[keep]], renum[used]
            blob = None
        count = len(canon)
        if blob is None:
            blob = _blob(_SEP.join(c.texts if count == len(c.canon) else texts))
        js, m = b"", -1
        if name in own:
            if name in known:
                js = kept[name].stored["json"] if kept is not None else _blob(known[name][0])
                m = known[name][1]
            else:
                js, m = _blob(c.json()), len(c.distinct)
        small = np.uint8 if count < 2**8 else np.uint16 if count < 2**16 else np.int32
        out[name] = {
            "texts": blob,
            "count": count,
            "canon": np.zeros(0, dtype=np.int32)
            if np.array_equal(canon, np.arange(count))
            else np.asarray(canon, dtype=np.int32),
            "tok": np.asarray(used, dtype=small),
            "json": js if len(js) else np.zeros(0, dtype=np.uint8),
            "m": m,
        }
    return {"names": list(cols), "hashes": hashes, "cols": out}


def _positions(lists: pd.Series, ids: np.ndarray) -> tuple[list, list]:
    """Per item of ``lists`` (';'-separated ids), the positions of its ids in ``ids``, in
    their order: counts per item and the flat list; ids not in ``ids`` are skipped."""
    counts, flat, _ = _position_arrays(lists.tolist(), ids)
    return counts.tolist(), flat.tolist()


def _position_arrays(
    texts: list[str], ids: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """:func:`_positions` as arrays, and per item whether one of its ids was skipped."""
    if not texts:
        empty = np.zeros(0, dtype=np.int64)
        return empty, empty, np.zeros(0, dtype=bool)
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
    return counts, first[found[known]], counts < per_item


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
    memo: ReviewMemo | None = None,
    hashes: tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray] | None = None,
) -> str:
    """The review data as compact JSON text (made safe for ``<script>``).

    Keys: ``c`` circuits, ``s`` trench segments, ``r`` rows, ``e`` equipment (tables, see
    :func:`table_json`); ``sc`` the circuits of each segment (``{"k": counts, "x": positions}``);
    ``cs`` the trench segments of each circuit in route order (the same form);
    ``lim`` the voltage-drop limits [%] by circuit kind and ``dc_total`` (empty if unknown);
    ``dec`` the decimals of the number columns.

    With ``memo`` (:class:`ReviewMemo`) and ``hashes`` (the content hashes of the rows of the
    four tables, in that order), the tables re-encode only the rows whose hash is new.
    """
    kind = {"kind": circuit_kind(circuits)} if "kind" in circuits.columns else {}
    specs = (
        ("c", circuits, CIRCUIT_DETAIL_COLUMNS, kind),
        ("s", segments, SEGMENT_DETAIL_COLUMNS, {}),
        ("r", rows, ("id", "strings", "module", "to"), {}),
        ("e", equipment, ("id", "kind"), {}),
    )
    tables = []
    for i, (key, df, columns, extra) in enumerate(specs):
        if memo is not None and hashes is not None and len(hashes[i]) == len(df):
            tables.append(memo.table(key, df, columns, hashes[i], extra))
        else:
            names = [c for c in columns if c in df.columns]
            tables.append(table_json(_frame(df, names, extra), columns))
    circuit_ids = _text(circuits, "circuit_id").to_numpy(dtype=object)
    segment_ids = _text(segments, "segment_id").to_numpy(dtype=object)
    if memo is not None and hashes is not None:

        def lists_of(df: pd.DataFrame, name: str) -> Callable[[np.ndarray | None], list[str]]:
            return lambda at: _text(df if at is None else df.iloc[at], name).tolist()

        counts, flat = memo.positions(
            "sc", "s", lists_of(segments, "circuit_ids"), "c", circuit_ids
        )
        c_counts, c_flat = memo.positions(
            "cs", "c", lists_of(circuits, "trench_segments"), "s", segment_ids
        )
    else:
        counts, flat = segment_circuits(segments, circuit_ids)
        c_counts, c_flat = circuit_segments(circuits, segment_ids)
    limits = {
        str(k): float(v)
        for k, v in (drop_limits_pct or {}).items()
        if isinstance(v, int | float) and np.isfinite(v) and v > 0
    }
    dec = {k: v for k, v in DECIMALS.items() if v}
    parts = [
        *(f'"{key}":{text}' for (key, *_), text in zip(specs, tables, strict=True)),
        '"sc":{"k":' + ints_json(counts) + ',"x":' + ints_json(flat) + "}",
        '"cs":{"k":' + ints_json(c_counts) + ',"x":' + ints_json(c_flat) + "}",
        script_safe(f'"lim":{json.dumps(limits, sort_keys=True)}'),
        script_safe(f'"dec":{json.dumps(dec, sort_keys=True, separators=(",", ":"))}'),
    ]
    # the tables' texts are safe already (each column and profile made so), the lists hold
    # integers only
    return "{" + ",".join(parts) + "}"


def review_data_html(text: str) -> str:
    """The ``<script type="application/json">`` element holding :func:`review_json`'s text
    (``<``, ``>``, ``&`` are escaped in it, so it cannot end the element)."""
    return f'<script type="application/json" id="rp-data">{text}</script>'
