"""The plan pipeline: read → validate → route → size → tables.

:func:`plan` returns a :class:`Plan` holding every result in memory; writers in
:mod:`routeplan.outputs` turn it into files. The pipeline only moves data between the
packages: geometry and graphs come from :mod:`routeplan.routing`, electrical rules from
:mod:`calc` (which receives plain arrays), files from :mod:`layers`.
"""

from __future__ import annotations

import dataclasses
import math
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import geopandas as gpd
import numpy as np
import pandas as pd

import calc
from layers import Site
from layers.sources import LayerMemo
from layers.validate import MAX_DC_INPUTS

from . import CAUTION, __version__, parallel
from .cache import PlanCache, digest, site_key, uncacheable_layers
from .check import load
from .config import DESIGN_KEYS, DesignConfig, parse_design
from .errors import DesignError, Problem
from .inputs import INPUT_COLUMNS, assign_inputs, input_table, landing_input
from .network import NetworkMemo
from .order import inverter_of, schedule_order
from .quantities import bill_of_quantities, unused_segments
from .remedy import WhatIfs, remedies
from .routing import RouteParams, RoutePlan, TrenchDefaults, route_site
from .units import feet, size_labels

KIND_CODE = {
    "string": calc.KIND_STRING,
    "subarray": calc.KIND_SUBARRAY,
    "array": calc.KIND_ARRAY,
    "ac": calc.KIND_AC,
}
#: current-carrying conductors of one circuit per parallel set: DC + and −; AC three-phase
#: L1 L2 L3 (PV inverter outputs are commonly three-wire, no neutral — common practice);
#: single-phase L and N. Protective conductors are not counted.
POLES = {"dc": 2, "ac3": 3, "ac1": 2}
_EPS = 1e-9
#: the highest ``design.max_parallel`` site.toml accepts (a remedy may ask for it)
MAX_PARALLEL = int(next(k.high for k in DESIGN_KEYS if k.name == "max_parallel"))


@dataclass
class Plan:
    """Everything one run of the pipeline produced (SI units, unit in every column name)."""

    site: Site
    design: DesignConfig
    routes: RoutePlan
    sizing: calc.SizingResult
    circuits: gpd.GeoDataFrame
    segments: gpd.GeoDataFrame
    quantities: pd.DataFrame
    summary: dict[str, Any]
    timings_s: dict[str, float] = field(default_factory=dict)
    #: the output folder's cache this run used (None: a run without cache)
    cache: PlanCache | None = field(default=None, repr=False)
    #: each inverter DC input something lands on, with its load and limits
    #: (:func:`routeplan.inputs.input_table`)
    inputs: pd.DataFrame = field(default_factory=lambda: pd.DataFrame(columns=INPUT_COLUMNS))

    @property
    def reused(self) -> dict[str, bool]:
        """Which cached stages this run reused (empty without a cache)."""
        return dict(self.cache.reused) if self.cache is not None else {}

    @property
    def ok(self) -> bool:
        """True when every circuit, trench segment and inverter input meets its limits."""
        return bool(
            (self.circuits["status"] == "ok").all()
            and (self.segments["status"] == "ok").all()
            and (self.inputs["status"] == "ok").all()
        )


def route_params(design: DesignConfig) -> RouteParams:
    """Routing parameters from the design settings."""
    v = design.values
    return RouteParams(
        snap_m=v["snap_m"],
        node_tol_m=v["node_tol_m"],
        termination_m=design.allowances["termination_m"],
        slack_pct=design.allowances["slack_pct"],
        row_run_factor=design.allowances["row_run_factor"],
        trench=TrenchDefaults(
            depth_m=v["depth_m"],
            laying=v["laying"],
            spacing_m=v["spacing_m"],
            soil_k_m_w=v["soil_k_m_w"],
            max_circuits=v["max_circuits"],
        ),
    )


def design_params(design: DesignConfig) -> calc.DesignParams:
    """calc's design parameters from the design settings."""
    v = design.values
    unset = lambda x: None if isinstance(x, float) and math.isnan(x) else x  # noqa: E731
    return calc.DesignParams(
        ground_temp_c=v["ground_temp_c"],
        air_temp_c=v["air_temp_c"],
        row_air_temp_c=v["row_air_temp_c"],
        material_array=design.material["array"],
        material_subarray=design.material["subarray"],
        insulation_subarray=design.insulation["subarray"],
        drop_subarray_pct=design.drop_pct["subarray"],
        sizes_subarray_mm2=design.sizes_mm2.get("subarray"),
        material_ac=design.material["ac"],
        insulation_array=design.insulation["array"],
        insulation_ac=design.insulation["ac"],
        drop_string_pct=design.drop_pct["string"],
        drop_array_pct=design.drop_pct["array"],
        drop_dc_total_pct=design.drop_pct["dc_total"],
        drop_ac_pct=design.drop_pct["ac"],
        sizes_string_mm2=design.sizes_mm2.get("string"),
        sizes_array_mm2=design.sizes_mm2.get("array"),
        sizes_ac_mm2=design.sizes_mm2.get("ac"),
        max_parallel=int(v["max_parallel"]),
        conductor_temp=v["conductor_temp"],
        power_factor=v["power_factor"],
        loss_hours_h=v["loss_hours_h"],
        fault_ka=unset(v["fault_ka"]),
        clear_s=unset(v["clear_s"]),
        marking=v["marking"],
        air_arrangement=tuple(design.air_arrangement[k] for k in calc.KIND_NAMES),
        string_fuse_ratings_a=design.ratings_a.get("string_fuse"),
        array_fuse_ratings_a=design.ratings_a.get("array_fuse"),
        ac_breaker_ratings_a=design.ratings_a.get("ac_breaker"),
        array_protection=v["array_protection"],
        rear_irradiance_ratio=v["rear_irradiance_ratio"],
        ac_breaker_device=v["ac_breaker_device"],
        frequency_hz=v["frequency_hz"],
        min_ambient_c=v["min_ambient_c"],
        dc_rated_v=v["dc_rated_v"],
        terminal_temp_c=unset(v["terminal_temp_c"]),
        buried_rating=v["buried_rating"],
    )


def sizing_input(
    site: Site, routes: RoutePlan, inputs: np.ndarray | None = None
) -> tuple[calc.SizingInput, np.ndarray]:
    """The plain arrays calc needs, per circuit and per trench segment.

    String circuits carry their module's data (Vmp × modules per string); a feeder (array or
    sub-array cable) carries every string below it through the combiner tree: mean per-string
    Isc and Imp (so that × strings gives the exact sum for mixed module types), the lowest
    string Vmp (conservative for the drop in percent) and the lowest module maximum series
    fuse. ``parent`` links a string to its combiner's cable and a sub-array cable to the cable
    of the combiner it feeds. ``strings_in_parallel`` is the number of strings joined at a
    string's destination — its combiner, or the inverter DC input it lands on — the basis of
    the IEC 62548 protection rules. ``inputs``: :func:`routeplan.inputs.assign_inputs` (found
    here when None); an array cable's ``dc_group`` is its inverter input, a sub-array cable's
    that of its array cable. Returns the input and each circuit's inverter input (NaN but for
    the circuits that end at an inverter).
    """
    c = routes.circuits
    n = len(c)
    kind = c["kind"].map(KIND_CODE).to_numpy(dtype=np.int8)
    is_s, is_ac = kind == calc.KIND_STRING, kind == calc.KIND_AC
    is_feed = np.isin(kind, calc.FEEDER_KINDS)
    from_id = c["from_id"].to_numpy(dtype=object)
    to_id = c["to_id"].to_numpy(dtype=object)
    s_idx = np.flatnonzero(is_s)

    # module data per string circuit: row → module key → module table (one lookup per column)
    mods = pd.DataFrame(
        {
            "isc": {k: m.isc_a for k, m in site.modules.items()},
            "imp": {k: m.imp_a for k, m in site.modules.items()},
            "vmp": {k: m.vmp_v * m.per_string for k, m in site.modules.items()},
            "fuse": {k: m.max_fuse_a for k, m in site.modules.items()},
            "phi": {k: m.bifaciality for k, m in site.modules.items()},
            "isc_bif": {k: m.isc_bifacial_a for k, m in site.modules.items()},
            "voc": {k: m.voc_v * m.per_string for k, m in site.modules.items()},
            "beta": {k: m.voc_temp_coeff_pct_per_c for k, m in site.modules.items()},
            "n": {k: float(m.per_string) for k, m in site.modules.items()},
        }
    )
    module_of = pd.Series(site.rows["module"].to_numpy(), index=site.rows["id"].to_numpy())
    per_string = mods.reindex(module_of.reindex(from_id[s_idx]).to_numpy())
    isc, imp, vmp, max_fuse = (np.full(n, np.nan) for _ in range(4))
    isc[s_idx], imp[s_idx] = per_string["isc"].to_numpy(), per_string["imp"].to_numpy()
    vmp[s_idx], max_fuse[s_idx] = per_string["vmp"].to_numpy(), per_string["fuse"].to_numpy()
    phi, isc_bif = np.full(n, np.nan), np.full(n, np.nan)
    phi[s_idx], isc_bif[s_idx] = per_string["phi"].to_numpy(), per_string["isc_bif"].to_numpy()
    voc, beta = np.full(n, np.nan), np.full(n, np.nan)
    voc[s_idx], beta[s_idx] = per_string["voc"].to_numpy(), per_string["beta"].to_numpy()
    series = np.full(n, np.nan)
    series[s_idx] = per_string["n"].to_numpy()

    # the combiner tree: each combiner's cable; a string's and a sub-array cable's parent
    feeder_of = pd.Series(np.flatnonzero(is_feed), index=from_id[is_feed])
    parent = np.full(n, -1, dtype=np.int64)
    up = is_s | (kind == calc.KIND_SUBARRAY)
    parent[up] = feeder_of.reindex(to_id[up]).fillna(-1).to_numpy(dtype=np.int64)

    # what each feeder carries: the strings below it, summed level by level from the strings
    n_strings = np.where(is_s, 1.0, c["strings"].to_numpy(dtype=float))
    sums = {"isc": np.where(is_s, isc, 0.0), "imp": np.where(is_s, imp, 0.0)}
    count = is_s.astype(float)
    low_vmp = np.where(is_s, vmp, np.inf)
    low_fuse = np.where(is_s, np.nan_to_num(max_fuse, nan=np.inf), np.inf)
    for step in _levels_up(parent, is_s):
        j = parent[step]
        for arr in (*sums.values(), count):
            np.add.at(arr, j, arr[step])
        np.minimum.at(low_vmp, j, low_vmp[step])
        np.minimum.at(low_fuse, j, low_fuse[step])
    empty = np.flatnonzero(is_feed & (count == 0))
    if len(empty):  # rows deleted, a phase not built yet: nothing for its cable to carry
        raise DesignError(
            [
                Problem(
                    "combiners",
                    str(from_id[i]),
                    "no strings reach it (no row or combiner names it in `to`, and every row "
                    "without one went to a nearer destination with room): remove it or give "
                    "it rows",
                )
                for i in empty
            ]
        )
    carried = is_feed & (count > 0)
    isc[carried] = sums["isc"][carried] / count[carried]
    imp[carried] = sums["imp"][carried] / count[carried]
    vmp[carried] = low_vmp[carried]
    max_fuse[carried] = np.where(np.isinf(low_fuse), np.nan, low_fuse)[carried]
    n_strings[carried] = count[carried]

    # inverter inputs, the strings in parallel at each destination, each feeder's input group
    own_input = inputs if inputs is not None else assign_inputs(site, c, imp * n_strings)
    n_par, dc_group = input_groups(site, kind, parent, to_id, own_input)

    fuse_fixed = np.full(n, np.nan)
    comb_fuse = pd.Series(
        site.combiners["fuse_a"].to_numpy(dtype=float), index=site.combiners["id"].to_numpy()
    )
    fuse_fixed[s_idx] = comb_fuse.reindex(to_id[s_idx]).to_numpy(dtype=float)

    inv = site.inverters.set_index("id")
    ac_max = np.full(n, np.nan)
    ac_kva = np.full(n, np.nan)
    ac_v = np.full(n, np.nan)
    phases = np.full(n, 3, dtype=np.int64)
    pf = np.full(n, np.nan)
    ac_idx = np.flatnonzero(is_ac)
    if len(ac_idx):
        rows = inv.loc[from_id[ac_idx]]
        ac_kva[ac_idx] = rows["ac_kva"].to_numpy(dtype=float)
        ac_v[ac_idx] = rows["ac_v"].to_numpy(dtype=float)
        phases[ac_idx] = rows["phases"].to_numpy(dtype=np.int64)
        pf[ac_idx] = rows["pf"].to_numpy(dtype=float)
        ac_max[ac_idx] = rows["ac_max_a"].to_numpy(dtype=float)
        # an inverter whose maximum output current is under half the current of its rating
        # (calc.pv.ac_max_implausible: a lost digit, common practice)
        args = (ac_kva[ac_idx], ac_v[ac_idx], phases[ac_idx])
        rated = calc.pv.ac_current_a(*args)
        low = np.flatnonzero(calc.pv.ac_max_implausible(ac_max[ac_idx], *args))
        formula = {3: "ac_kva / (√3 × ac_v)", 1: "ac_kva / ac_v"}
        if len(low):
            raise DesignError(
                [
                    Problem(
                        "inverters",
                        str(from_id[ac_idx[k]]),
                        f"ac_max_a {ac_max[ac_idx[k]]:g} A is less than half the current of "
                        f"its rating, {rated[k]:.0f} A ({formula[phases[ac_idx[k]]]}): the AC "
                        "cable is sized for ac_max_a; check the datasheet",
                        "ac_max_a",
                    )
                    for k in low
                ]
            )

    seg = routes.segments
    inp = calc.SizingInput(
        kind=kind,
        cable_m=c["cable_m"].to_numpy(dtype=float),
        air_m=(c["stub_m"] + c["row_run_m"]).to_numpy(dtype=float),
        parent=parent,
        isc_a=isc,
        imp_a=imp,
        vmp_v=vmp,
        n_strings=n_strings,
        strings_in_parallel=n_par,
        max_fuse_a=max_fuse,
        fuse_a=fuse_fixed,
        bifaciality=phi,
        isc_bifacial_a=isc_bif,
        voc_v=voc,
        voc_coeff_pct_per_c=beta,
        modules_in_series=series,
        dc_group=dc_group,
        ac_kva=ac_kva,
        ac_v=ac_v,
        phases=phases,
        pf=pf,
        ac_max_a=ac_max,
        seg_depth_m=seg["depth_m"].to_numpy(dtype=float),
        seg_laying=(seg["laying"] == "duct").to_numpy(dtype=np.int8),
        seg_spacing_m=seg["spacing_m"].to_numpy(dtype=float),
        seg_soil_k_m_w=seg["soil_k_m_w"].to_numpy(dtype=float),
        seg_count=seg["circuits"].to_numpy(dtype=np.int64),
        seg_length_m=seg["length_m"].to_numpy(dtype=float),
        inc_circuit=routes.incidence_circuit,
        inc_segment=routes.incidence_segment,
        air_count=np.zeros(len(routes.air)),
        air_behind_modules=(routes.air["kind"] == "row run").to_numpy(dtype=bool),
        air_inc_circuit=routes.air_incidence_circuit,
        air_inc_stretch=routes.air_incidence_stretch,
        air_length_m=routes.air["length_m"].to_numpy(dtype=float),
    )
    return inp, own_input


def input_groups(
    site: Site, kind: np.ndarray, parent: np.ndarray, to_id: np.ndarray, own_input: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """What follows from the inverter inputs (``own_input``, :func:`routeplan.inputs.assign_inputs`)
    for calc: each string's ``strings_in_parallel`` (the strings joined at its destination and
    input; 1 for other circuits) and each feeder's ``dc_group`` (:func:`_dc_groups`)."""
    s_idx = np.flatnonzero(kind == calc.KIND_STRING)
    at = pd.DataFrame({"to": to_id[s_idx], "input": np.nan_to_num(own_input[s_idx], nan=0.0)})
    n_par = np.ones(len(kind))
    n_par[s_idx] = at.groupby(["to", "input"])["to"].transform("size").to_numpy(dtype=float)
    return n_par, _dc_groups(site, kind, parent, to_id, own_input)


def _levels_up(parent: np.ndarray, is_string: np.ndarray) -> list[np.ndarray]:
    """The circuits that pass their totals up, in steps: the strings first, then each level of
    sub-array cables from the deepest (each step's totals are complete before it is taken)."""
    depth = np.zeros(len(parent), dtype=np.int64)  # cables above each circuit
    step = parent.copy()
    has = step >= 0
    while has.any():
        depth[has] += 1
        step[has] = parent[step[has]]
        has = step >= 0
    steps = [np.flatnonzero(is_string & (parent >= 0))]
    feeders = ~is_string & (parent >= 0)
    for d in sorted(set(depth[feeders].tolist()), reverse=True):
        steps.append(np.flatnonzero(feeders & (depth == d)))
    return steps


def _dc_groups(
    site: Site, kind: np.ndarray, parent: np.ndarray, to_id: np.ndarray, own_input: np.ndarray
) -> np.ndarray:
    """calc's ``dc_group`` of each feeder: an id of the inverter DC input its array cable lands
    on (inverter position × (MAX_DC_INPUTS + 1) + input); −1 for other circuits."""
    group = np.full(len(kind), -1, dtype=np.int64)
    arrays = np.flatnonzero(kind == calc.KIND_ARRAY)
    if not len(arrays):
        return group
    pos = pd.Index(site.inverters["id"].to_numpy(dtype=object)).get_indexer(to_id[arrays])
    number = np.nan_to_num(own_input[arrays], nan=1.0).astype(np.int64)
    group[arrays] = pos * (MAX_DC_INPUTS + 1) + number
    sub = kind == calc.KIND_SUBARRAY
    top = np.where(sub, parent, -1)
    while True:  # climb to the array cable
        climb = (top >= 0) & (kind[np.clip(top, 0, None)] == calc.KIND_SUBARRAY)
        if not climb.any():
            break
        top[climb] = parent[top[climb]]
    group[sub] = np.where(top[sub] >= 0, group[np.clip(top[sub], 0, None)], -1)
    return group


def plan(
    path: Path | str,
    progress: Callable[[str], None] | None = None,
    cache: PlanCache | None = None,
) -> Plan:
    """Run the whole pipeline on the site folder at ``path``.

    ``progress(stage)`` is called as each stage starts (for the CLI's display). With
    ``cache`` (the output folder's :class:`routeplan.cache.PlanCache`), stages whose inputs
    did not change since the run that wrote it are reused, and the new results are kept for
    the next run; after an edit of the site alone (settings unchanged), the last run's plan
    is re-planned locally (:func:`routeplan.localplan.from_cache`). The results are the same as
    without it. Raises :class:`layers.SiteError` /
    :class:`routeplan.errors.RoutingError` on bad input.
    """
    say = progress or (lambda stage: None)
    t: dict[str, float] = {}
    t0 = time.perf_counter()
    say("read and validate")
    site, design = _load(Path(path), cache)
    t["read_validate"] = time.perf_counter() - t0
    if cache is not None:
        from .localplan import from_cache  # it builds on this module

        local = from_cache(site, design, cache, progress=say, timings=t)
        if local is not None:
            return local
    return plan_site(site, design, progress=say, timings=t, cache=cache)


def _load(root: Path, cache: PlanCache | None) -> tuple[Site, DesignConfig]:
    """:func:`routeplan.check.load`, reusing the cached validated site when its key matches."""
    if cache is None:
        return load(root)
    from layers.sources import locate_layers, read_config

    config, problems = read_config(root)
    sources, more = locate_layers(root, config) if not problems else ({}, [])
    if problems or more:
        return load(root)  # reports every problem
    key = site_key(root, config, sources)
    if key is None:  # inputs the cache cannot fingerprint: no cache for this run
        names = ", ".join(f"{name} ({sources[name]})" for name in uncacheable_layers(root, sources))
        cache.bypassed = (
            f"the files of layer {names} cannot all be listed, so an edit of them could not "
            "be seen; this run planned from scratch"
        )
        return load(root)
    cached = cache.get("site", key)
    if cached is None:
        resident = cache.resident  # a watching process: unchanged layers are not read again
        site, design = load(
            root, resident.memos.setdefault("layers", LayerMemo()) if resident else None
        )
        cache.put("site", key, dataclasses.replace(site, config={}))
        return site, design
    design, problems = parse_design(config)
    if problems:
        return load(root)  # reports every problem, the network checks' too
    return dataclasses.replace(cached, root=root, config=config, sources=dict(sources)), design


def plan_site(
    site: Site,
    design: DesignConfig,
    progress: Callable[[str], None] | None = None,
    timings: dict[str, float] | None = None,
    cache: PlanCache | None = None,
    noding_memo: NetworkMemo | None = None,
    with_remedies: bool = True,
    routes: RoutePlan | None = None,
) -> Plan:
    """Route and size a validated site (see :func:`plan`; ``cache`` only after its ``site``
    stage, as :func:`plan` uses it). ``noding_memo``: without a cache, the ``network.memo`` of
    a plan of the same trenches, whose noding and taps are reused where they still hold
    (:func:`routeplan.network.build_network`). ``with_remedies=False`` leaves the ``remedy``
    column blank (a plan compared, not delivered: ``routeplan place``'s candidates).
    ``routes``: the routing of this very site under ``route_params(design)`` (a plan's
    ``routes`` when only settings that do not route changed): not routed again."""
    say = progress or (lambda stage: None)
    t = timings if timings is not None else {}
    if cache is not None and "site" not in cache.keys:
        cache = None
    say("route")
    t0 = time.perf_counter()
    params = route_params(design)
    if routes is not None:
        cache = None
    if cache is not None:
        route_key = digest("route", cache.keys["site"], repr(params))
        routes = cache.get("route", route_key)
    if routes is None:
        memo = cache.latest("noding") if cache is not None else noding_memo
        routes = route_site(site, params, memo=memo)
        for k, v in routes.timings_s.items():
            t[f"route.{k}"] = v
        if cache is not None:
            cache.put("route", route_key, routes)
            new_memo = routes.network.memo
            cache.reused["noding"] = memo is not None and new_memo.noded is memo.noded
            cache.put("noding", digest("noding", route_key), new_memo)
    elif cache is not None:
        cache.carry("noding")
    t["route"] = time.perf_counter() - t0
    say("size")
    t0 = time.perf_counter()
    inp, own_input = sizing_input(site, routes)
    dp = design_params(design)
    shallow = shallow_trenches(routes.segments, dp)
    if shallow:
        raise DesignError(shallow)
    rules = design.values["rules"]
    result = None
    if cache is not None:
        size_key = digest("size", route_key, repr(dp), rules)
        result = cache.get("size", size_key)
    if result is None:
        try:
            result = calc.size_circuits(inp, dp, rules=rules)
        except (calc.InputError, calc.UnknownOptionError, calc.TableRangeError) as exc:
            raise DesignError([Problem("site.toml", _design_key_of(str(exc)), str(exc))]) from exc
        if cache is not None:
            cache.put("size", size_key, result)
    t["size"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    governing = governing_ids(routes, result)
    remedy = None
    if cache is not None and not np.all(result.ok):  # a plan that passes needs no remedy
        remedy = cache.get("remedy", digest("remedy", size_key))
        if remedy is not None:
            cache.carry("whatif")  # the what-ifs of those remedies, for a local re-plan
    job = None
    if remedy is None and with_remedies:  # computed beside the tables
        job = RemedyJob(routes, inp, dp, rules, result, governing, WhatIfs(rules))
        remedy = job
    t["remedy"] = time.perf_counter() - t0
    say("tables")
    t0 = time.perf_counter()
    landing = landing_input(inp.parent, own_input)
    inputs = input_table(
        site,
        routes.circuits,
        own_input,
        inp.imp_a * inp.n_strings,
        np.asarray(result.isc_design_a),
        inp.n_strings,
    )
    circuits, segments, quantities, summary = plan_tables(
        site, design, routes, result, inp, inputs, landing, governing, remedy
    )
    t["tables"] = time.perf_counter() - t0
    if job is not None:
        if cache is not None and not np.all(result.ok):
            cache.put_all(
                [
                    ("remedy", digest("remedy", size_key), job()),
                    ("whatif", digest("whatif", size_key), job.whatifs.kept),
                ]
            )
        job.account(t)
    return Plan(
        site, design, routes, result, circuits, segments, quantities, summary, t, cache, inputs
    )


def plan_tables(
    site: Site,
    design: DesignConfig,
    routes: RoutePlan,
    result: calc.SizingResult,
    inp: calc.SizingInput,
    inputs: pd.DataFrame,
    landing: np.ndarray,
    governing: np.ndarray,
    remedy: np.ndarray | RemedyJob | None,
    order: np.ndarray | None = None,
) -> tuple[gpd.GeoDataFrame, gpd.GeoDataFrame, pd.DataFrame, dict[str, Any]]:
    """A plan's cable schedule (in schedule order, :func:`routeplan.order.schedule_order`),
    trench schedule, bill of quantities and summary, from its routes and sizing. ``order``:
    that order (positions of ``routes.circuits``) where the caller has it — a local re-plan
    keeps its baseline's circuits, ids and blocks, so their order
    (:class:`routeplan.localplan.Baseline`). ``remedy``: each circuit's remedy in routes
    order, or the :class:`RemedyJob` computing them meanwhile (waited for last: no other
    table holds them)."""
    job = remedy if isinstance(remedy, RemedyJob) else None
    try:
        given = None if job is not None else remedy
        circuits = circuit_table(routes, result, inp, design, landing, governing, given)
        segments = segment_table(routes, result)
        quantities = quantity_table(circuits, segments, design)
        summary = summarise(site, design, circuits, segments, result, inputs)
        summary["assigned"] = assigned_destinations(routes)
        if order is None:
            order = schedule_order(circuits)
        if job is not None:
            circuits["remedy"] = job()
    finally:
        if job is not None:
            job.cancel()  # a table that failed: the child is not waited for
    circuits = circuits.iloc[order].reset_index(drop=True)  # block order
    return circuits, segments, quantities, summary


class RemedyJob:
    """:func:`plan_remedies` computed in a child process (:func:`routeplan.parallel.compute`)
    while this one builds the tables (:func:`plan_tables`), which need the remedies for their
    last column only. Calling it returns the remedies (waiting for the child) and sets
    ``whatifs``' record of the what-ifs (``kept``, ``resized``) from the child's; where the
    child fails they are computed here, and their exceptions raised here. ``waited_s``: this
    process's time spent waiting for them [s]."""

    def __init__(
        self,
        routes: RoutePlan,
        inp: calc.SizingInput,
        dp: calc.DesignParams,
        rules: str,
        result: calc.SizingResult,
        governing: np.ndarray,
        whatifs: WhatIfs,
    ) -> None:
        self.whatifs = whatifs

        def work() -> tuple[np.ndarray, dict, int]:
            remedy = plan_remedies(routes, inp, dp, rules, result, governing, whatifs)
            return remedy, whatifs.kept, whatifs.resized

        # a plan that passes needs no remedy, nor a child to find none
        passes = bool(np.all(result.ok))
        self._pending = parallel.Pending(work) if passes else parallel.compute(work)
        self.waited_s = 0.0

    def __call__(self) -> np.ndarray:
        t0 = time.perf_counter()
        remedy, kept, resized = self._pending.result()
        self.whatifs.kept, self.whatifs.resized = kept, resized
        self.waited_s += time.perf_counter() - t0
        return remedy

    def account(self, timings: dict[str, float]) -> None:
        """Move the wait for the remedies from ``timings["tables"]`` (they were waited for
        there) to ``timings["remedy"]``."""
        timings["remedy"] = timings.get("remedy", 0.0) + self.waited_s
        timings["tables"] = timings.get("tables", 0.0) - self.waited_s

    def cancel(self) -> None:
        """Stop the child where its remedies were not taken
        (:meth:`routeplan.parallel.Pending.cancel`)."""
        self._pending.cancel()  # nothing left to stop once the value was taken


def plan_remedies(
    routes: RoutePlan,
    inp: calc.SizingInput,
    dp: calc.DesignParams,
    rules: str,
    result: calc.SizingResult,
    governing: np.ndarray,
    whatifs: WhatIfs | None = None,
) -> np.ndarray:
    """Each circuit's remedy text in routes order (:func:`routeplan.remedy.remedies`; ""
    for a circuit that passes); ``whatifs``: how its what-if sizings are made and kept."""
    ids = routes.circuits["circuit_id"].to_numpy(dtype=object)
    trench = routes.segments["trench_id"].to_numpy(dtype=object)
    return remedies(inp, dp, rules, result, ids, governing, trench, MAX_PARALLEL, whatifs)


def _design_key_of(message: str) -> str:
    """The site.toml key a calc refusal is about: ``design.<key>`` where the message begins
    with a ``[design]`` key's name (calc names the setting it refuses), else ``design``."""
    for key in DESIGN_KEYS:
        if message.startswith((f"{key.name} ", f"{key.name} =")):
            return f"design.{key.name}"
    return "design"


def shallow_trenches(segments: pd.DataFrame, dp: calc.DesignParams) -> list[Problem]:
    """Trenches whose depth does not exceed half the outer diameter of what lies in them (a
    direct-buried circuit or a duct, ``cable_od_m`` / ``duct_od_m``): the cable would not be
    buried. One problem per trench, naming it."""
    duct = (segments["laying"] == "duct").to_numpy()
    depth = segments["depth_m"].to_numpy(dtype=float)
    bad = ~calc.buried_deep_enough(depth, duct, dp)
    problems = []
    seen: set[str] = set()
    for i in np.flatnonzero(bad).tolist():
        tid = str(segments["trench_id"].iloc[i])
        if tid in seen:
            continue
        seen.add(tid)
        what = "duct" if duct[i] else "direct-buried cable"
        problems.append(
            Problem(
                "trenches",
                tid,
                f"depth_m {depth[i]:g} m does not exceed half the {what}'s outer diameter "
                f"({dp.duct_od_m if duct[i] else dp.cable_od_m:g} m): the cable would not be "
                "buried",
            )
        )
    return problems


def circuit_table(
    routes: RoutePlan,
    r: calc.SizingResult,
    inp: calc.SizingInput,
    design: DesignConfig,
    landing: np.ndarray | None = None,
    governing: np.ndarray | None = None,
    remedy: np.ndarray | None = None,
) -> gpd.GeoDataFrame:
    """The cable schedule: contract columns first (see :mod:`routeplan.outputs.columns`), in
    the order of ``routes.circuits`` (:func:`plan_site` sorts it by block afterwards,
    :func:`routeplan.order.schedule_order`). ``governing`` (:func:`governing_ids`) and
    ``remedy`` (:func:`routeplan.remedy.remedies`) are computed here when not given
    (``remedy`` then left blank)."""
    c = routes.circuits
    final = np.asarray(r.seg_count_final)
    group_max = np.zeros(len(c), dtype=np.int64)
    if len(routes.incidence_circuit):
        np.maximum.at(group_max, routes.incidence_circuit, final[routes.incidence_segment])
    kind = inp.kind
    poles = conductor_poles(kind, inp.phases)
    u_ref = np.where(kind == calc.KIND_AC, inp.ac_v, inp.vmp_v)
    governing = governing_ids(routes, r) if governing is None else governing
    remedy = np.full(len(c), "", dtype=object) if remedy is None else remedy
    status = np.where(r.ok, "ok", "fail")
    frame = pd.DataFrame(
        {
            "circuit_id": c["circuit_id"].to_numpy(),
            "kind": c["kind"].to_numpy(),
            "from_id": c["from_id"].to_numpy(),
            "to_id": c["to_id"].to_numpy(),
            "inverter_id": inverter_of(c["kind"], c["from_id"], c["to_id"]),
            "material": r.material,
            "size_mm2": r.size_mm2,
            "parallel": r.parallel,
            "route_m": c["route_m"].to_numpy(),
            "cable_m": c["cable_m"].to_numpy(),
            "trench_segments": c["segment_ids"].to_numpy(),
            "group_max": group_max,
            "design_current_a": r.design_current_a,
            "ampacity_base_a": r.ampacity_base_a,
            "derating": r.derating,
            "ampacity_a": r.ampacity_a,
            "utilisation": r.utilisation,
            "vdrop_v": r.vdrop_v,
            "vdrop_pct": r.vdrop_pct,
            "vdrop_total_pct": r.vdrop_total_pct,
            "loss_w": r.loss_w,
            "status": status,
            "note": r.note,
            "remedy": remedy,
            "insulation": r.insulation,
            "conductors": poles * np.asarray(r.parallel),
            "stub_m": c["stub_m"].to_numpy(),
            "row_run_m": c["row_run_m"].to_numpy(),
            "operating_current_a": r.operating_current_a,
            "voltage_v": u_ref,
            "conductor_temp_c": r.conductor_temp_c,
            "power_factor": np.where(kind == calc.KIND_AC, _pf(inp.pf, design), np.nan),
            "governing": governing,
            "factor_temp": r.factor_temp,
            "factor_soil": r.factor_soil,
            "factor_depth": r.factor_depth,
            "factor_group": r.factor_group,
            "group_count": r.group_count,
            # a string fuse wherever one is fitted: chosen because required, or fixed by the
            # combiner (`fuse_a`) where none is required
            "fuse_a": np.where(kind == calc.KIND_STRING, r.fuse_a, np.nan),
            "isc_design_a": r.isc_design_a,
            "voc_max_v": r.voc_max_v,
            "backfeed_a": r.backfeed_a,
            "array_fuse_a": r.array_fuse_a,
            "ac_breaker_a": r.ac_breaker_a,
            "protection": r.protection,
            "input": np.full(len(c), np.nan) if landing is None else landing,
            "loss_pct": r.loss_pct,
            "energy_loss_kwh": r.energy_loss_kwh,
            "marking": r.marking,
            "size_label": size_labels(r.size_mm2, design.values["rules"]),
            "route_ft": feet(c["route_m"].to_numpy(dtype=float)),
            "cable_ft": feet(c["cable_m"].to_numpy(dtype=float)),
            "governing_condition": governing_condition(
                r.design_current_a, r.ampacity_a, r.terminal_required_a, r.terminal_ampacity_a
            ),
            "sc_min_mm2": r.sc_min_mm2,
        }
    )
    # the frame is this function's own: wrapped, not copied
    return gpd.GeoDataFrame(frame, geometry=c.geometry.values, crs=c.crs, copy=False)


_CONDITIONS = np.array(["", "690.8(B)(1)", "690.8(B)(2)"], dtype=object)


def governing_condition(
    design_current_a: np.ndarray,
    ampacity_a: np.ndarray,
    terminal_required_a: np.ndarray,
    terminal_ampacity_a: np.ndarray,
) -> np.ndarray:
    """Which 690.8(B) condition governs each circuit: ``"690.8(B)(1)"`` where 1.25 × I_max over
    the uncorrected terminal-column ampacity is the larger ratio, ``"690.8(B)(2)"`` otherwise;
    ``""`` where the rule set has no condition (1) (nan, IEC).

    >>> governing_condition([81.25, 16.25, 5.0], [140.4, 21.6, 9.0], [101.5625, 20.3125, np.nan],
    ...                     [115.0, 35.0, np.nan]).tolist()
    ['690.8(B)(1)', '690.8(B)(2)', '']
    """
    with np.errstate(invalid="ignore", divide="ignore"):
        r2 = np.asarray(design_current_a, dtype=float) / np.asarray(ampacity_a, dtype=float)
        r1 = np.asarray(terminal_required_a, dtype=float) / np.asarray(terminal_ampacity_a, float)
        code = np.where(np.isnan(r1), 0, np.where(r1 > r2, 1, 2))
    return _CONDITIONS[code]


def conductor_poles(kind: np.ndarray, phases: np.ndarray) -> np.ndarray:
    """Current-carrying conductors of each circuit per parallel set (:data:`POLES`)."""
    return np.where(
        kind != calc.KIND_AC, POLES["dc"], np.where(phases == 3, POLES["ac3"], POLES["ac1"])
    )


def segment_fill(
    count: np.ndarray, cap: np.ndarray, cap_sets: np.ndarray, sets: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Each trench segment's fill, its basis and status (:func:`segment_table`) from its
    circuits, ``max_circuits``, ``max_cable_sets`` (NaN: none) and cable sets."""
    by_sets = np.isnan(cap) & np.isfinite(cap_sets)
    with np.errstate(invalid="ignore", divide="ignore"):
        fill = np.where(by_sets, sets / cap_sets, np.where(np.isfinite(cap), count / cap, np.nan))
    basis = np.where(by_sets, "cable_sets", np.where(np.isfinite(cap), "circuits", ""))
    status = np.where(np.isfinite(fill) & (fill > 1 + _EPS), "over", "ok")
    return fill, basis, status


def governing_ids(routes: RoutePlan, r: calc.SizingResult) -> np.ndarray:
    """Per circuit, the id of the stretch that governs its capacity: a trench segment, an air
    stretch (a row run or stub), or "air" where the circuit has neither."""
    seg_ids = routes.segments["segment_id"].to_numpy(dtype=object)
    gov = np.asarray(r.governing_segment)
    air = np.asarray(r.governing_air)
    stretch_ids = routes.air["stretch_id"].to_numpy(dtype=object)
    return np.where(
        gov >= 0,
        seg_ids[np.clip(gov, 0, None)] if len(seg_ids) else "",
        np.where(air >= 0, stretch_ids[np.clip(air, 0, None)] if len(stretch_ids) else "", "air"),
    )


def _pf(pf: np.ndarray, design: DesignConfig) -> np.ndarray:
    return np.where(np.isnan(pf), design.values["power_factor"], pf)


def segment_table(routes: RoutePlan, r: calc.SizingResult) -> gpd.GeoDataFrame:
    """The trench schedule: one line per segment. ``circuits`` counts circuits, ``cable_sets``
    counts a circuit laid as n parallel sets n times (the count the grouping factor uses), and
    ``spread_m`` [m] is the clear spacing across them laid side by side, (cable sets − 1) ×
    ``spacing_m``: the width the grouping factor's single layer needs besides the cables.
    ``fill`` is measured against the capacity the trench gives (``fill_basis``): ``circuits /
    max_circuits``, or ``cable_sets / max_cable_sets`` (a trench gives at most one)."""
    s = routes.segments
    sets = np.asarray(r.seg_count_final, dtype=np.int64)
    count = s["circuits"].to_numpy(dtype=float)
    cap = s["max_circuits"].to_numpy(dtype=float)
    cap_sets = (
        s["max_cable_sets"].to_numpy(dtype=float)
        if "max_cable_sets" in s
        else np.full(len(s), np.nan)
    )
    fill, basis, status = segment_fill(count, cap, cap_sets, sets)
    frame = pd.DataFrame(
        {
            "segment_id": s["segment_id"].to_numpy(),
            "trench_id": s["trench_id"].to_numpy(),
            "length_m": s["length_m"].to_numpy(),
            "circuits": s["circuits"].to_numpy(),
            "strings": s["strings"].to_numpy(),
            "arrays": s["arrays"].to_numpy(),
            "ac": s["ac"].to_numpy(),
            "max_circuits": cap,
            "fill": fill,
            "status": status,
            "circuit_ids": s["circuit_ids"].to_numpy(),
            "max_cable_sets": cap_sets,
            "fill_basis": basis,
            "depth_m": s["depth_m"].to_numpy(),
            "laying": s["laying"].to_numpy(),
            "spacing_m": s["spacing_m"].to_numpy(),
            "soil_k_m_w": s["soil_k_m_w"].to_numpy(),
            "group_factor": r.seg_group_factor,
            "cable_sets": sets,
            "spread_m": np.maximum(sets - 1, 0) * s["spacing_m"].to_numpy(dtype=float),
            "subarrays": s["subarrays"].to_numpy(),
            "from_m": s["start_m"].to_numpy(),
            "to_m": s["end_m"].to_numpy(),
        }
    )
    return gpd.GeoDataFrame(frame, geometry=s.geometry.values, crs=s.crs, copy=False)


def quantity_table(
    circuits: pd.DataFrame, segments: pd.DataFrame, design: DesignConfig
) -> pd.DataFrame:
    """Bill of quantities for purchasing (:func:`routeplan.quantities.bill_of_quantities`):
    cable types with their designation by open standard and conductor metres (allowances
    included), lugs and PV connectors per size, fuses and breakers by rating, trench metres by
    laying and depth, a total per item family."""
    return bill_of_quantities(
        circuits,
        segments,
        float(design.values["dc_rated_v"]),
        str(design.values["ac_breaker_device"]),
        rules=str(design.values["rules"]),
        units=str(design.values["units"]),
    )


def _chosen(routes: RoutePlan) -> pd.Series | None:
    """Which rows of the routes' destination assignment the planner chose (not ``given``)."""
    a = routes.assignment
    return None if a is None or a.empty else a["rule"] != "given"


def destinations_chosen(routes: RoutePlan) -> bool:
    """Whether the planner filled any feature's empty ``to`` (:func:`assigned_destinations`)."""
    chosen = _chosen(routes)
    return chosen is not None and bool(chosen.any())


def assigned_destinations(routes: RoutePlan) -> list[dict[str, Any]]:
    """Features whose empty ``to`` the planner filled, with the rule and the route length."""
    chosen = _chosen(routes)
    if chosen is None:
        return []
    a = routes.assignment[chosen]
    return [
        {
            "layer": r.layer,
            "id": r.feature_id,
            "to": r.to_id,
            "rule": r.rule,
            "route_m": round(float(r.route_m), 2),
        }
        for r in a.itertuples(index=False)
    ]


def summarise(
    site: Site,
    design: DesignConfig,
    circuits: pd.DataFrame,
    segments: pd.DataFrame,
    r: calc.SizingResult,
    inputs: pd.DataFrame | None = None,
) -> dict[str, Any]:
    """The closing summary as plain data (also written as summary.json). Sub-array circuits
    appear only in a plan that has some."""
    # the columns read per kind, as arrays (one comparison of the text columns each)
    kind = circuits["kind"].to_numpy(dtype=object)
    failing = (circuits["status"] == "fail").to_numpy(dtype=bool)
    kinds = ["string", "array", "ac"]
    if (kind == "subarray").any():
        kinds.insert(1, "subarray")
    inputs = pd.DataFrame(columns=INPUT_COLUMNS) if inputs is None else inputs
    why = calc.failure_causes(r)
    by_kind = {}
    for k in kinds:
        m = kind == k
        by_kind[k] = {
            "circuits": int(m.sum()),
            "fail": int((m & failing).sum()),
            "fail_capacity": int((m & why["capacity"]).sum()),
            "fail_drop": int((m & why["drop"]).sum()),
            "fail_other": int((m & why["other"]).sum()),
            "worst_vdrop_pct": _max(circuits.loc[m, "vdrop_pct"]),
            "worst_utilisation": _max(circuits.loc[m, "utilisation"]),
            "loss_w": float(circuits.loc[m, "loss_w"].sum()),
            "energy_loss_kwh": float(circuits.loc[m, "energy_loss_kwh"].sum()),
        }
    dc = kind != "ac"
    metres = (
        circuits.assign(m=circuits["cable_m"] * circuits["conductors"])
        .groupby(["material", "size_mm2"])["m"]
        .sum()
    )
    us = design.values["units"] == "us"
    labels = size_labels(metres.index.get_level_values("size_mm2"), design.values["rules"])
    # in feet too where the plan's units are US customary (summary.json, the CLI's lines)
    in_feet = (
        {
            "conductor_ft_total": round(float(feet(metres.sum())), 2),
            "run_ft_total": round(float(feet(circuits["cable_m"].sum())), 2),
        }
        if us
        else {}
    )
    return {
        "tool": {"name": "routeplan", "version": __version__},
        "site": {"name": site.name, "crs": site.crs.to_string(), "crs_note": site.crs_note},
        "rules": design.values["rules"],
        "marking": design.values["marking"],
        # the bill's length unit (design.units); the schedules give metres and feet either way
        "units": design.values["units"],
        "ok": bool(
            (circuits["status"] == "ok").all()
            and (segments["status"] == "ok").all()
            and (inputs["status"] == "ok").all()
        ),
        "circuits": by_kind,
        "worst_vdrop_pct": {
            **{k: by_kind[k]["worst_vdrop_pct"] for k in kinds if k != "ac"},
            "dc_total": _max(circuits.loc[dc, "vdrop_total_pct"]),
            "ac": by_kind["ac"]["worst_vdrop_pct"],
        },
        "drop_limits_pct": dict(design.drop_pct),
        "segments": {
            "count": len(segments),
            "over_capacity": int((segments["status"] == "over").sum()),
            "trench_m": float(segments["length_m"].sum()),
            # drawn trench along which no circuit runs (billed apart, as the bill finds it)
            "unused_trench_m": float(segments.loc[unused_segments(segments), "length_m"].sum()),
        },
        "inverter_inputs": {
            "count": len(inputs),
            "over_limit": int((inputs["status"] == "over").sum()),
        },
        # conductor metres (cable length × current-carrying conductors) and run metres (each
        # circuit's cable length once), allowances included in both
        "conductor_m": [
            {
                "material": mat,
                "size_mm2": float(size),
                "size_label": str(label),
                "conductor_m": round(float(v), 2),
                **({"conductor_ft": round(float(feet(v)), 2)} if us else {}),
            }
            for ((mat, size), v), label in zip(metres.items(), labels, strict=True)
        ],
        "conductor_m_total": round(float(metres.sum()), 2),
        "run_m_total": round(float(circuits["cable_m"].sum()), 2),
        **in_feet,
        "loss_w_total": float(circuits["loss_w"].sum()),
        "energy_loss_kwh_total": float(circuits["energy_loss_kwh"].sum()),
        "caution": CAUTION,
    }


def _max(s: pd.Series) -> float | None:
    v = pd.to_numeric(s, errors="coerce")
    return None if v.isna().all() else round(float(v.max()), 4)
