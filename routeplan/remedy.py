"""What would make each failing circuit pass: the smallest change, computed by re-sizing.

A failing circuit's note (from calc) says which limit it breaks. Its *remedy* says what to
change in site.toml, and that change is computed, not guessed: the plan's circuits are sized
again on the same routes (:func:`calc.size_circuits`, the whole plan, so that trench grouping
settles as it would after the change) with the settings relaxed in turn, smallest change first:

1. **sizes**: the size lists of the failing circuits' kinds and of their feeders' kinds
   extended by every larger standard size the rule set tabulates for that cable (IEC 60228;
   nec: Chapter 9 Table 8, named by their AWG / kcmil labels)
   (:func:`calc.larger_sizes_mm2`); a circuit that passes is given the size it was sized to:
   "passes with 16 mm² (add 16 to design.sizes_mm2.string)";
2. **parallel**: ``design.max_parallel`` at the highest value site.toml accepts (array,
   sub-array and AC cables; a string is one cable); a circuit that passes is given the sets
   it was sized to, the setting it needs: "passes with 3 × 300 mm² (design.max_parallel = 3)";
3. **both** of these, for the circuits neither makes pass alone;
4. **spacing** (rule sets whose grouping factor depends on it: not nec, whose Table
   310.15(C)(1) counts the trench's conductors as one bundle): for circuits failing on
   capacity with a group factor below 1, the clear
   distance between circuits in their trenches raised to 0.25 m, then to 0.5 m (both
   spacings are tabulated in IEC 60364-5-52:2009 Tables B.52.18 and B.52.19), offered as an
   alternative where a larger cable passes too ("…; or passes with spacing_m = 0.25 on
   trench T-4, T-5 (design.spacing_m where a trench has none)").

A string is held by its feeders' drop too (the cumulative DC drop), so a remedy names every
cable of the path that changed, each with the setting it needs: "passes with 6 mm² once
A:CB-1 is 240 mm² (add 6 to design.sizes_mm2.string; add 240 to design.sizes_mm2.array)".
Where the change would make circuits that pass now fail (more cable sets in a shared trench),
the remedy says how many. Each remedy is what the re-sizing found for that circuit; changing
the settings of several remedies at once can interact through the trench grouping.

Under nec a circuit whose overcurrent device does not protect the conductor (240.4; counted as
``other`` by :func:`calc.failure_causes`) is named so (:func:`calc.protection_failures`) and given
the larger size or the parallel sets that the re-sizing finds protected.

Each what-if sizing goes through a :class:`WhatIfs` (by default: the whole plan sized again),
which keeps what a remedy reads of it: a local re-plan (:mod:`routeplan.localplan`) re-sizes
only the circuits an edit can change in each what-if, from the last run's.

A Voc above ``design.dc_rated_v`` (at the record low, :func:`calc.pv.voc_max_v`) is changed by
no cable: a string's remedy gives the most modules in series that fit
(:func:`calc.pv.max_modules_in_series`), or a rating for cables and equipment at or above its
Voc; its feeders' remedies point to their strings'.

Before the change, a remedy names the stretch that governs the capacity (a trench segment id,
a row run or stub) and the settings that stop the sizing (the size list, ``max_parallel``,
the drop limit). A circuit that none of the changes makes pass keeps only these: a shorter
route, another equipment position or another project limit are the designer's choice.
"""

from __future__ import annotations

import dataclasses
import re
from collections.abc import Callable
from typing import Any

import numpy as np
import pandas as pd

import calc
from calc.pv import max_modules_in_series, voc_above_rating
from calc.tables import load_table

from .routing import joined


def _common_spacings_m() -> tuple[float, ...]:
    """The clear spacings [m] tabulated both for cables direct in the ground and in ducts
    (IEC 60364-5-52:2009 Tables B.52.18 and B.52.19, calc/data: columns such as ``s_0_25_m``)."""
    found = []
    for name in (
        "iec60364_5_52_2009_b52_18_group_direct.csv",
        "iec60364_5_52_2009_b52_19_group_duct.csv",
    ):
        cols = load_table(name).columns
        found.append(
            {float(f"{a}.{b}") for a, b in re.findall(r"^s_(\d+)_(\d+)_m$", "\n".join(cols), re.M)}
        )
    return tuple(sorted(set.intersection(*found)))


#: trench spacings tried for a capacity failure caused by grouping [m]: those both grouping
#: tables give (0.25 m and 0.5 m)
SPACINGS_M: tuple[float, ...] = _common_spacings_m()


def _size_setting(size_mm2: float, rs) -> str:
    """A size as a ``design.sizes_mm2`` entry: ``16`` (mm², IEC) or ``"8 AWG"`` (a label, NEC)."""
    text = rs.size_text(size_mm2)
    return f"{size_mm2:g}" if text == f"{size_mm2:g} mm²" else f'"{text}"'


_SIZE_FIELD = {
    calc.KIND_STRING: "sizes_string_mm2",
    calc.KIND_ARRAY: "sizes_array_mm2",
    calc.KIND_SUBARRAY: "sizes_subarray_mm2",
    calc.KIND_AC: "sizes_ac_mm2",
}


#: what a remedy reads of a what-if sizing, and what a local re-plan needs to re-size one
WHATIF_FIELDS = ("ok", "size_mm2", "parallel", "seg_count_final", "air_count_final")


class WhatIfs:
    """The what-if sizings of :func:`remedies`. Each is named by what it changes (``key``)
    and kept (:data:`WHATIF_FIELDS` and the trench spacings it was sized with) in ``kept``,
    for a local re-plan of a later edit. ``resize(key, inp, dp)``: a what-if from the last
    run's (:func:`routeplan.localplan.from_cache`), or None where it has none — then, and
    without ``resize``, the whole plan is sized (:func:`calc.size_circuits`)."""

    def __init__(
        self,
        rules: str,
        resize: Callable[[str, calc.SizingInput, calc.DesignParams], Any] | None = None,
    ) -> None:
        self.rules = rules
        self.resize = resize
        self.kept: dict[str, dict[str, Any]] = {}
        #: how many what-ifs ``resize`` gave (the others were sized whole)
        self.resized = 0

    def __call__(self, key: str, inp: calc.SizingInput, dp: calc.DesignParams) -> Any:
        r = self.resize(key, inp, dp) if self.resize is not None else None
        self.resized += r is not None
        if r is None:
            r = calc.size_circuits(inp, dp, rules=self.rules)
        spacing = None if inp.seg_spacing_m is None else np.asarray(inp.seg_spacing_m, float)
        self.kept[key] = {
            **{name: np.asarray(getattr(r, name)) for name in WHATIF_FIELDS},
            "seg_spacing_m": spacing,
        }
        return r


#: each circuit kind's name, by its code (``calc.KIND_NAMES`` as an array to index)
_KIND_TEXT = np.asarray(calc.KIND_NAMES, dtype=object)


def _text(values: np.ndarray) -> np.ndarray:
    """``str`` of each value, as an object array (what an f-string puts in the text)."""
    return np.frompyfunc(str, 1, 1)(np.asarray(values, dtype=object))


def _each(values: np.ndarray, fmt: Callable[[Any], str]) -> np.ndarray:
    """``fmt`` of each value, as an object array, called once per distinct value."""
    values = np.asarray(values)
    if not values.size:
        return np.zeros(0, dtype=object)
    distinct, at = np.unique(values, return_inverse=True)
    return np.asarray([fmt(v) for v in distinct.tolist()], dtype=object)[at.reshape(-1)]


def _joined_nonempty(parts: list[np.ndarray], sep: str) -> np.ndarray:
    """Per position, ``sep.join`` of the texts of ``parts`` (object arrays of one length) that
    are not empty, in order.

    >>> a, b = np.array(["x", "", ""], dtype=object), np.array(["y", "z", ""], dtype=object)
    >>> _joined_nonempty([a, b], "; ").tolist()
    ['x; y', 'z', '']
    """
    out = np.asarray(parts[0], dtype=object)
    for part in parts[1:]:
        part = np.asarray(part, dtype=object)
        both = (out != "") & (part != "")
        out = np.where(both, out + sep + part, np.where(part != "", part, out))
    return out


def _sorted_codes(values: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Each value's rank among the distinct values sorted as Python sorts them, and those
    distinct values as text in that order (object array).

    >>> rank, text = _sorted_codes(np.array(["T-2", "T-10", "T-2"], dtype=object))
    >>> rank.tolist(), text.tolist()
    ([1, 0, 1], ['T-10', 'T-2'])
    """
    codes, uniques = pd.factorize(values, use_na_sentinel=False)
    text = [str(u) for u in uniques.tolist()]
    by = sorted(range(len(text)), key=text.__getitem__)
    rank = np.empty(len(text), dtype=np.int64)
    rank[by] = np.arange(len(text))
    return rank[codes], np.asarray([text[k] for k in by], dtype=object)


def remedies(
    inp: calc.SizingInput,
    dp: calc.DesignParams,
    rules: str,
    result: calc.SizingResult,
    circuit_ids: np.ndarray,
    governing: np.ndarray,
    segment_trench: np.ndarray,
    max_parallel: int,
    whatifs: WhatIfs | None = None,
) -> np.ndarray:
    """One remedy text per circuit ("" for a circuit that passes), see the module docstring.

    ``circuit_ids``: the circuits' ids; ``governing``: per circuit, the id of the stretch that
    governs its capacity (the schedule's ``governing`` column); ``segment_trench``: per trench
    segment, its trench's id; ``max_parallel``: the highest ``design.max_parallel`` site.toml
    accepts; ``whatifs``: how the what-ifs are sized (and kept; default: the whole plan).
    """
    size_whatif = WhatIfs(rules) if whatifs is None else whatifs
    n = len(result.ok)
    out = np.full(n, "", dtype=object)
    fail = ~np.asarray(result.ok, dtype=bool)
    if not fail.any():
        return out
    kind = np.asarray(inp.kind)
    parent = np.asarray(inp.parent) if inp.parent is not None else np.full(n, -1)
    why = calc.failure_causes(result)
    rs = calc.get_rules(rules)
    # nec: a device that does not protect the conductor (240.4) is met like a capacity limit,
    # by a larger size or more parallel sets (the what-ifs below re-size every failing circuit)
    unprotected = calc.protection_failures(result, rules)
    size = np.asarray(result.size_mm2, dtype=float)
    parallel = np.asarray(result.parallel)
    found = np.full(n, "", dtype=object)
    ok = ~fail

    listed = {k: calc.size_list_mm2(k, dp, rules) for k in np.unique(kind).tolist()}
    ids = np.asarray(circuit_ids, dtype=object)

    def apply(
        r: calc.SizingResult, todo: np.ndarray, extra: np.ndarray | None = None
    ) -> np.ndarray:
        """Write the remedy of each circuit of ``todo`` that passes in the what-if ``r``:
        the new cables of the circuit and of the feeders above it (a string is held by its
        feeders' drop too), each with the setting it needs, and ``extra`` (per circuit, a
        change that is not a cable's; "" for none). Returns the circuits given a remedy."""
        r_ok = np.asarray(r.ok, dtype=bool)
        hits = np.flatnonzero(todo & r_ok)
        given = np.zeros(n, dtype=bool)
        if not hits.size:
            return given
        r_size, r_par = np.asarray(r.size_mm2, dtype=float), np.asarray(r.parallel)
        moved = (r_size != size) | (r_par != parallel)
        unlisted = np.ones(n, dtype=bool)
        for k, sizes in listed.items():
            unlisted[(kind == k) & np.isin(r_size, sizes)] = False
        broken = int((ok & ~r_ok).sum())
        side = f"; {broken} circuits that pass now would then fail" if broken else ""
        h = hits.size
        cables = np.full(h, "", dtype=object)
        settings: list[np.ndarray] = []  # one per level of the chain, "" where none
        sets_needed = np.zeros(h, dtype=np.int64)
        node, level = hits.copy(), 0
        while True:  # the circuit, then each feeder above it
            at = np.flatnonzero(node >= 0)
            if not at.size:
                break
            j = node[at]
            mv = moved[j]
            at, j = at[mv], j[mv]
            sets = r_par[j].astype(np.int64)
            cable = _each(sets, lambda v: f"{v} × " if v > 1 else "") + _each(
                r_size[j], lambda v: rs.size_text(float(v))
            )
            piece = np.full(h, "", dtype=object)
            if level == 0:
                piece[at] = "with " + cable
            else:
                piece[at] = "once " + _text(ids[j]) + " is " + cable
            cables = _joined_nonempty([cables, piece], " ")
            setting = np.full(h, "", dtype=object)
            add = unlisted[j]
            entry = _each(r_size[j[add]], lambda v: _size_setting(float(v), rs))
            names = _KIND_TEXT[kind[j[add]]]
            setting[at[add]] = "add " + entry + " to design.sizes_mm2." + names
            for before in settings:  # each setting once, where it first appears
                setting[setting == before] = ""
            settings.append(setting)
            np.maximum.at(sets_needed, at, sets)
            node = np.where(node >= 0, parent[np.maximum(node, 0)], -1)
            level += 1
        over = sets_needed > int(dp.max_parallel)
        wide_text = np.full(h, "", dtype=object)
        wide_text[over] = "design.max_parallel = " + _text(sets_needed[over])
        more = [wide_text] if extra is None else [wide_text, extra[hits]]
        setting_text = _joined_nonempty([*settings, *more], "; ")
        has = setting_text != ""
        text = np.where(
            cables != "",
            "passes " + cables + " (" + setting_text + side + ")",
            "passes with " + setting_text + side,
        )
        at = hits[has]
        found[at] = _joined_nonempty([found[at], text[has]], "; or ")
        given[at] = True
        return given

    # 1. larger sizes for the failing kinds (and the feeders of failing strings); 2. more
    # parallel sets, up to the setting's limit; 3. both
    chain = np.flatnonzero(fail)  # the failing circuits and the feeders above them
    kinds: set[int] = set()
    while chain.size:
        kinds |= set(kind[chain].tolist())
        chain = np.unique(parent[chain])
        chain = chain[chain >= 0]
    extended = {}
    for k in sorted(kinds):
        more = calc.larger_sizes_mm2(k, dp, rules)
        if more.size:
            extended[_SIZE_FIELD[k]] = tuple(listed[k].tolist() + more.tolist())
    wide = {"max_parallel": max_parallel} if int(dp.max_parallel) < max_parallel else {}
    fixed = np.zeros(n, dtype=bool)
    for change in (extended, wide, {**extended, **wide} if extended and wide else {}):
        if change and (fail & ~fixed).any():
            key = repr(sorted((k, repr(v)) for k, v in change.items()))
            r = size_whatif(key, inp, dataclasses.replace(dp, **change))
            fixed |= apply(r, fail & ~fixed)

    # 4. more space between the circuits in the trenches of the circuits failing on
    # grouping, with the sizes as listed (also offered beside a larger cable)
    grouped = fail & why["capacity"] & (np.asarray(result.factor_group) < 1.0 - 1e-9)
    if not rs.grouping_uses_spacing:  # nec: Table 310.15(C)(1), conductors whatever the gap
        grouped[:] = False
    # the trench fields as calc reads them: left out, none (spacing 0 m); incidences whole
    # numbers of any dtype
    m = len(segment_trench)
    spacing = np.zeros(m) if inp.seg_spacing_m is None else np.asarray(inp.seg_spacing_m, float)
    inc_c, inc_s = (
        np.zeros(0, np.int64) if v is None else np.asarray(v).astype(np.int64).ravel()
        for v in (inp.inc_circuit, inp.inc_segment)
    )
    trench_code, trench_names = _sorted_codes(np.asarray(segment_trench, dtype=object))
    for gap in SPACINGS_M:
        used = np.zeros(spacing.size, dtype=bool)
        used[inc_s[grouped[inc_c]]] = True
        narrow = used & (spacing < gap)
        if not narrow.any():
            break
        wider = dataclasses.replace(inp, seg_spacing_m=np.where(narrow, gap, spacing))
        r = size_whatif(f"spacing_m {gap!r}", wider, dp)
        hit = grouped & np.asarray(r.ok, dtype=bool)
        # each circuit's own narrow trenches, named once each, in sorted order
        mine = hit[inc_c] & narrow[inc_s]
        pair = np.unique(inc_c[mine] * len(trench_names) + trench_code[inc_s[mine]])
        pair_c, pair_t = pair // max(len(trench_names), 1), pair % max(len(trench_names), 1)
        hits = np.flatnonzero(hit)
        names = joined(trench_names[pair_t].tolist(), np.searchsorted(pair_c, np.r_[hits, n]), ", ")
        extra = np.full(n, "", dtype=object)
        text = f"spacing_m = {gap:g} on trench " + names
        extra[hits] = text + " (design.spacing_m where a trench has none)"
        apply(r, hit, extra)
        grouped &= ~hit

    # the cumulative DC drop of a string through its feeders, above the DC total
    path = fail & (kind == calc.KIND_STRING)
    path &= np.asarray(result.vdrop_total_pct) > dp.drop_dc_total_pct + 1e-6
    f = np.flatnonzero(fail)
    cap, drop, prot, path = why["capacity"][f], why["drop"][f], unprotected[f], path[f]
    name = _KIND_TEXT[kind[f]]
    held = cap | drop | prot
    limits = _joined_nonempty(
        [
            np.where(
                held,
                "largest size in design.sizes_mm2."
                + name
                + " ("
                + _each(size[f], lambda v: rs.size_text(float(v)))
                + ")",
                "",
            ),
            np.where(
                held & (kind[f] != calc.KIND_STRING),
                "design.max_parallel (" + _each(parallel[f], lambda v: str(int(v))) + ")",
                "",
            ),
            np.where(drop, "design.drop_pct." + name, ""),
            np.where(path, "design.drop_pct.dc_total (the drop through its feeders)", ""),
        ],
        ", ",
    )
    out[f] = _joined_nonempty(
        [
            np.where(cap, "governed by " + _text(np.asarray(governing, dtype=object)[f]), ""),
            np.where(prot, "its overcurrent device does not protect the conductor (240.4)", ""),
            np.where(limits != "", "limited by " + limits, ""),
            found[f],
            _over_voltage(inp, dp, result, kind)[f],
        ],
        "; ",
    )
    return out


def _over_voltage(
    inp: calc.SizingInput, dp: calc.DesignParams, result: calc.SizingResult, kind: np.ndarray
) -> np.ndarray:
    """The remedy of each d.c. circuit whose highest Voc is above the rated d.c. voltage ("" for
    the others): no cable changes it. A string is told the most modules in series that fit
    (:func:`calc.pv.max_modules_in_series`: "at most 25 modules per string fit (27 now …)"), or
    cables and equipment rated for its Voc; a feeder is sent to its strings' remedies."""
    n = len(kind)
    voc = np.asarray(result.voc_max_v, dtype=float)
    over = voc_above_rating(voc, dp.dc_rated_v)  # as calc judged it
    out = np.full(n, "", dtype=object)
    if not over.any():
        return out
    series = inp.modules_in_series
    series = np.full(n, np.nan) if series is None else np.asarray(series, dtype=float)
    most = max_modules_in_series(voc, series, dp.dc_rated_v)
    volts = _each(voc[over], lambda v: f"{v:.0f} V")  # as the note gives it
    needed = _each(np.ceil(voc[over]), lambda v: f"{v:.0f} V")  # a rating at or above it
    where = f" at {dp.min_ambient_c:g} °C is above design.dc_rated_v ({dp.dc_rated_v:g} V)"
    string = kind[over] == calc.KIND_STRING
    fewer = np.where(
        np.isfinite(most[over]) & (most[over] >= 1),
        "at most "
        + _each(np.nan_to_num(most[over]), lambda v: str(int(v)))
        + " modules per string fit ("
        + _each(np.nan_to_num(series[over]), lambda v: str(int(v)))
        + " now: per_string of its module)",
        np.where(
            np.isfinite(most[over]),
            "one module alone is above it",
            "fewer modules per string",
        ),
    )
    rated = ", or with cables and equipment rated for " + needed + " (design.dc_rated_v)"
    out[over] = np.where(
        string,
        "its Voc " + volts + where + ": " + fewer + rated,
        "its strings' Voc (up to " + volts + ")" + where + ": see their remedies",
    )
    return out
