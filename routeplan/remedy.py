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

import calc
from calc.tables import load_table


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

    def apply(r: calc.SizingResult, todo: np.ndarray, extra=lambda i: "") -> np.ndarray:
        """Write the remedy of each circuit of ``todo`` that passes in the what-if ``r``:
        the new cables of the circuit and of the feeders above it (a string is held by its
        feeders' drop too), each with the setting it needs, and ``extra(i)`` (a change that is
        not a cable's). Returns the circuits given a remedy."""
        hit = todo & np.asarray(r.ok, dtype=bool)
        given = np.zeros(n, dtype=bool)
        r_size, r_par = np.asarray(r.size_mm2, dtype=float), np.asarray(r.parallel)
        moved = (r_size != size) | (r_par != parallel)
        broken = int((ok & ~np.asarray(r.ok, dtype=bool)).sum())
        side = f"; {broken} circuits that pass now would then fail" if broken else ""
        for i in np.flatnonzero(hit).tolist():
            cables, settings, sets_needed = [], [], 0
            j = i
            while j >= 0:
                if moved[j]:
                    sets = int(r_par[j])
                    text = rs.size_text(float(r_size[j]))
                    cable = f"{sets} × {text}" if sets > 1 else text
                    cables.append(
                        f"with {cable}" if j == i else f"once {circuit_ids[j]} is {cable}"
                    )
                    if not np.isin(r_size[j], listed[kind[j]]):
                        name = calc.KIND_NAMES[kind[j]]
                        entry = _size_setting(float(r_size[j]), rs)
                        settings.append(f"add {entry} to design.sizes_mm2.{name}")
                    sets_needed = max(sets_needed, sets)
                j = int(parent[j])
            settings = list(dict.fromkeys(settings))
            if sets_needed > int(dp.max_parallel):
                settings.append(f"design.max_parallel = {sets_needed}")
            settings += [extra(i)] if extra(i) else []
            if settings:
                if cables:
                    text = f"passes {' '.join(cables)} ({'; '.join(settings)}{side})"
                else:
                    text = f"passes with {'; '.join(settings)}{side}"
                found[i] = f"{found[i]}; or {text}" if found[i] else text
                given[i] = True
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
    order = np.argsort(inc_c, kind="stable")  # each circuit's incidences: first[i]:first[i+1]
    first = np.searchsorted(inc_c[order], np.arange(n + 1))
    for gap in SPACINGS_M:
        used = np.zeros(spacing.size, dtype=bool)
        used[inc_s[grouped[inc_c]]] = True
        narrow = used & (spacing < gap)
        if not narrow.any():
            break
        wider = dataclasses.replace(inp, seg_spacing_m=np.where(narrow, gap, spacing))
        r = size_whatif(f"spacing_m {gap!r}", wider, dp)
        hit = grouped & np.asarray(r.ok, dtype=bool)

        def trenches(i: int, gap: float = gap, narrow: np.ndarray = narrow) -> str:
            own = inc_s[order[first[i] : first[i + 1]]]
            names = ", ".join(sorted(set(segment_trench[own[narrow[own]]].tolist())))
            return (
                f"spacing_m = {gap:g} on trench {names} (design.spacing_m where a trench has none)"
            )

        apply(r, hit, trenches)
        grouped &= ~hit

    # the cumulative DC drop of a string through its feeders, above the DC total
    path = fail & (kind == calc.KIND_STRING)
    path &= np.asarray(result.vdrop_total_pct) > dp.drop_dc_total_pct + 1e-6
    for i in np.flatnonzero(fail).tolist():
        name = calc.KIND_NAMES[kind[i]]
        parts, limits = [], []
        if why["capacity"][i]:
            parts.append(f"governed by {governing[i]}")
        if unprotected[i]:
            parts.append("its overcurrent device does not protect the conductor (240.4)")
        if why["capacity"][i] or why["drop"][i] or unprotected[i]:
            limits.append(
                f"largest size in design.sizes_mm2.{name} ({rs.size_text(float(size[i]))})"
            )
            if kind[i] != calc.KIND_STRING:
                limits.append(f"design.max_parallel ({int(parallel[i])})")
        if why["drop"][i]:
            limits.append(f"design.drop_pct.{name}")
        if path[i]:
            limits.append("design.drop_pct.dc_total (the drop through its feeders)")
        if limits:
            parts.append("limited by " + ", ".join(limits))
        if found[i]:
            parts.append(found[i])
        out[i] = "; ".join(parts)
    return out
