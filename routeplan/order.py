"""The order of the cable schedule: by inverter block, then combiner, row and string.

A team works a schedule block by block: every circuit carries the inverter it ultimately
feeds (``inverter_id``: a string or sub-array circuit's through its combiners, an array
circuit's directly, an AC circuit its own), and the rows are sorted inverter → combiner →
row → string, each in *natural* order (text compared with its digit runs as numbers, so
``R2`` comes before ``R10``). The order is a pure function of the ids, so the schedules stay
deterministic, and it is computed on arrays (the ids are factorised first, so each distinct id
is keyed once).
"""

from __future__ import annotations

import re

import numpy as np
import pandas as pd

#: most combiner levels between a row and its inverter (``layers.validate``) plus one
_MAX_HOPS = 8
#: a digit run; runs are zero-padded to this width for comparison (longer runs stay as they
#: are and compare by their padded prefix, then by the raw text)
_DIGITS = re.compile(r"\d+")
_WIDTH = 20
#: order of the kinds within one combiner: the cable leaving it first, then what it collects
KIND_RANK = {"ac": 0, "array": 1, "subarray": 2, "string": 3}


def natural_key(text: str) -> str:
    """``text`` with each digit run left-padded with zeros to 20 digits: comparing the keys
    as text compares the digit runs as numbers (natural order).

    Examples
    --------
    >>> sorted(["R10", "R2", "R1-S3", "R1"], key=natural_key)
    ['R1', 'R1-S3', 'R2', 'R10']
    """
    return _DIGITS.sub(lambda m: m.group().zfill(_WIDTH), text)


def natural_rank(values: np.ndarray | pd.Series) -> np.ndarray:
    """Rank (int64, 0 = first) of each value in natural order (:func:`natural_key`; equal
    keys, such as ``R01`` and ``R1``, by their text). Missing values rank first, all alike.

    Examples
    --------
    >>> natural_rank(np.array(["R10", "R2", None, "R2", "R1/S3", "R1/S10"], dtype=object))
    array([4, 3, 0, 3, 1, 2])
    """
    codes, uniques = pd.factorize(np.asarray(values, dtype=object), use_na_sentinel=True)
    text = [str(u) for u in uniques.tolist()]
    # key, NUL, text: compared as fixed-width unicode by numpy (an object array would compare
    # through Python); NUL sorts below any character, so a key that is a prefix comes first
    joined = np.array([f"{natural_key(t)}\x00{t}" for t in text], dtype=str)
    by = np.argsort(joined, kind="stable")
    rank = np.empty(len(text) + 1, dtype=np.int64)
    rank[by] = np.arange(1, len(text) + 1)
    rank[-1] = 0  # code -1: missing
    return rank[codes]


def _among(values: np.ndarray, choices) -> np.ndarray:
    """``values`` (object array) found in ``choices``, by hashing (``np.isin`` compares
    objects by sorting them, through Python)."""
    return pd.Series(values, dtype=object).isin(list(choices)).to_numpy(dtype=bool)


def inverter_of(kind: pd.Series, from_id: pd.Series, to_id: pd.Series) -> np.ndarray:
    """The inverter each circuit ultimately feeds (its block), as object array.

    AC circuits: their own inverter (``from_id``). Others: ``to_id``, followed up through the
    combiners' own circuits (a sub-array or array circuit leaves its combiner, ``from_id``,
    for ``to_id``; the first such circuit of a combiner counts) until it reaches a feature no
    combiner circuit leaves: the inverter. The ids are factorised once and followed as
    integer codes.
    """
    kind = np.asarray(kind, dtype=object)
    frm = np.asarray(from_id, dtype=object)
    to = np.asarray(to_id, dtype=object)
    leaving = np.flatnonzero(_among(kind, ("array", "subarray")))
    n, m = len(to), len(leaving)
    # a missing id is an id too (as pandas looks it up), but never a destination
    codes, ids = pd.factorize(
        np.concatenate([to, frm[leaving], to[leaving]]), use_na_sentinel=False
    )
    at, key, value = codes[:n], codes[n : n + m], codes[n + m :]
    up = np.full(len(ids), -1, dtype=np.int64)
    first = np.unique(key, return_index=True)[1]  # the first circuit leaving a combiner
    up[key[first]] = np.where(pd.isna(ids)[value[first]], -1, value[first])
    moved = np.zeros(n, dtype=bool)
    for _ in range(_MAX_HOPS):
        nxt = up[at]
        more = nxt >= 0
        if not more.any():
            break
        at = np.where(more, nxt, at)
        moved |= more
    target = to.copy()
    target[moved] = np.asarray(ids, dtype=object)[at[moved]]
    return np.where(kind == "ac", frm, target)


def combiner_of(kind: pd.Series, from_id: pd.Series, to_id: pd.Series) -> np.ndarray:
    """The combiner a circuit belongs to in the schedule's order: a string's destination
    when that is a combiner (``to_id`` leaving as a combiner circuit), the combiner an array
    or sub-array circuit leaves; None for AC circuits and strings landing on an inverter."""
    kind = np.asarray(kind, dtype=object)
    frm = np.asarray(from_id, dtype=object)
    to = np.asarray(to_id, dtype=object)
    combiners = frm[_among(kind, ("array", "subarray"))]
    string_cb = np.where(_among(to, combiners), to, None)
    return np.where(kind == "string", string_cb, np.where(kind == "ac", None, frm))


def string_number(ids: np.ndarray) -> np.ndarray:
    """The number ``k`` ending each id of the form ``…/S<k>`` (int64; -1 where an id does
    not end so, or has more than 15 digits there), from the ids' code points on arrays.

    Examples
    --------
    >>> string_number(np.array(["R1/S2", "R10/S12", "AC:INV1", "R2/S", "B/S7x"])).tolist()
    [2, 12, -1, -1, -1]
    """
    # the last 24 characters hold "/S" and up to 15 digits (and a long id costs no memory)
    ids = pd.Series(np.asarray(ids, dtype=object)).str[-24:].to_numpy(dtype=str)
    n = len(ids)
    if n == 0 or ids.dtype.itemsize == 0:
        return np.full(n, -1, dtype=np.int64)
    width = ids.dtype.itemsize // 4
    cp = ids.view(np.uint32).reshape(n, width)
    length = (cp != 0).sum(axis=1)  # numpy pads with NUL (an id's own trailing NULs: -1)
    digit = (cp >= 48) & (cp <= 57)
    # trailing digits: digits from each position to the end of the text
    from_end = np.arange(width)[None, :] >= length[:, None]
    tail = np.flip(np.cumprod(np.flip(digit | from_end, axis=1), axis=1), axis=1).astype(bool)
    tail &= ~from_end
    n_digits = tail.sum(axis=1)
    start = length - n_digits  # first trailing digit
    at = np.arange(n)
    before = np.clip(start - 2, 0, None)
    marked = (
        (start >= 2)
        & (cp[at, before] == ord("/"))
        & (cp[at, np.clip(start - 1, 0, None)] == ord("S"))
    )
    ok = marked & (n_digits > 0) & (n_digits <= 15)
    power = np.where(tail, length[:, None] - 1 - np.arange(width)[None, :], 0)
    value = (np.where(tail, cp.astype(np.int64) - 48, 0) * 10 ** np.clip(power, 0, 15)).sum(axis=1)
    return np.where(ok, value, -1)


def schedule_order(circuits: pd.DataFrame) -> np.ndarray:
    """Positions of ``circuits`` (columns ``inverter_id``, ``kind``, ``from_id``, ``to_id``,
    ``circuit_id``) in schedule order: inverter, combiner (the inverter's own circuits
    first), kind (:data:`KIND_RANK`: the cable leaving a combiner before what it collects),
    row, then string number (``<row>/S<k>`` by k), each in natural order; ties (none among
    the ids routeplan makes) keep their order (the sort is stable)."""
    kind = circuits["kind"].to_numpy(dtype=object)
    frm = circuits["from_id"].to_numpy(dtype=object)
    is_string = kind == "string"
    row = np.where(is_string, frm, None)
    # a string's number k of "<row>/S<k>" (the ids of one row differ only there); the few
    # ties left (one array or AC circuit per combiner or inverter) keep the routes' order
    k = np.where(is_string, string_number(circuits["circuit_id"].to_numpy(dtype=str)), -1)
    keys = (
        k,
        natural_rank(row),
        pd.Series(kind).map(KIND_RANK).fillna(9).to_numpy(dtype=np.int64),
        natural_rank(combiner_of(kind, frm, circuits["to_id"])),
        natural_rank(circuits["inverter_id"]),
    )
    return np.lexsort(keys)


def spliced_order(
    keys: pd.DataFrame, last_keys: pd.DataFrame, last_order: np.ndarray, last_of: np.ndarray
) -> np.ndarray:
    """:func:`schedule_order` of ``keys``, taken from the last order where a block is unchanged.

    ``keys`` and ``last_keys``: the columns :func:`schedule_order` reads (``inverter_id``,
    ``kind``, ``from_id``, ``to_id``, ``circuit_id``), in routes order; ``last_order`` =
    ``schedule_order(last_keys)``; ``last_of``: each circuit's row in ``last_keys`` (-1: a new
    circuit). The order is a function of the keys, block by block (the inverter first), and of
    the routes order between equal keys: a block whose circuits are all the last run's with
    the same keys keeps its last order, the other blocks are sorted again. Where the blocks
    are not the last run's (one added or removed) or the circuits carried over change their
    relative routes order, the whole table is sorted (the result is the same either way)."""
    n, m = len(keys), len(last_keys)
    if n == 0 or m == 0:
        return schedule_order(keys)
    has = last_of >= 0
    new_of = np.full(m, -1, dtype=np.int64)
    new_of[last_of[has]] = np.flatnonzero(has)
    kept = new_of[new_of >= 0]  # in the last routes order
    if np.any(np.diff(kept) <= 0):
        return schedule_order(keys)
    same = has.copy()
    at = last_of[has]
    for col in ("inverter_id", "kind", "from_id", "to_id"):
        a = keys[col].to_numpy(dtype=object)[has]
        b = last_keys[col].to_numpy(dtype=object)[at]
        same[has] &= a == b
    codes = pd.factorize(
        np.concatenate(
            [
                keys["inverter_id"].to_numpy(dtype=object),
                last_keys["inverter_id"].to_numpy(dtype=object),
            ]
        ),
        use_na_sentinel=False,
    )[0]
    block, last_block = codes[:n], codes[n:]
    if not np.array_equal(np.unique(block), np.unique(last_block)):
        return schedule_order(keys)
    changed = np.zeros(int(codes.max(initial=-1)) + 1, dtype=bool)
    changed[block[~same]] = True  # a new circuit, or one with other keys: its block now …
    changed[last_block[last_of[has & ~same]]] = True  # … and the one it left
    changed[last_block[new_of < 0]] = True  # a circuit removed
    runs = last_block[last_order]
    starts = np.flatnonzero(np.r_[True, runs[1:] != runs[:-1]])
    if len(np.unique(runs[starts])) != len(starts):  # a block in two places: sort it all
        return schedule_order(keys)
    bounds = np.r_[starts, m]
    parts = []
    for s, e in zip(bounds[:-1].tolist(), bounds[1:].tolist(), strict=True):
        k = runs[s]
        if not changed[k]:
            parts.append(new_of[last_order[s:e]])
        else:
            sub = np.flatnonzero(block == k)
            parts.append(sub[schedule_order(keys.iloc[sub])])
    return np.concatenate(parts) if parts else np.zeros(0, dtype=np.int64)
