"""Local re-plans: after an edit, recompute only the circuits the edit can change.

:func:`baseline` plans a site in full and keeps what a re-plan needs (the sizing input, the
inverter inputs, each circuit's taps and block). :func:`replan` takes a baseline and an edited
site and returns the same :class:`~routeplan.pipeline.Plan` a full plan of the edited site gives
(``plan_site(..., with_remedies=False)``), value for value, recomputing only:

1. **Network**: the trench noding is reused (:class:`routeplan.network.NetworkMemo`); only the
   moved equipment is tapped again (or, for many positions of one feature, :class:`MoveSearch`
   joins it to the network built once without it, :func:`routeplan.network.retap`). Segments
   are matched to the baseline's by ``segment_id`` and length (compared at small shifts of
   position first: the order of segments is kept): a moved tap splits a segment where it now
   joins and frees the one where it joined before. After a **trench edit** (a trench added,
   removed, redrawn or given other attributes, :func:`site_edit`) the trenches are checked
   as routing checks them (:func:`routeplan.network.trench_problems`) and noded again, and
   segments match only where their geometry is the same too (a trench moved as a whole
   keeps its segments' ids and lengths); every segment's attributes are read again, and a
   segment whose depth, laying, spacing or soil differs counts as changed.
2. **Routes** of the circuits of a moved feature and of every circuit whose route used a
   segment that no longer exists (same path, new segments); one Dijkstra search per
   destination, as a full plan searches. After a trench edit every circuit is searched again
   (an added or redrawn trench can shorten any route) and the circuits whose path differs
   from their old route, segment for segment, are the rerouted ones; circuits whose ends now
   lie on separate islands leave it to the full plan, which reports them. The incidence is
   the baseline's with those circuits'
   rows replaced; segment counts are the carried counts less the old routes plus the new
   ones; circuit lists are joined again only for the segments whose circuits changed. The air
   stretches keep their rows (one per tap and per row): a moved stub's length changes, and
   its circuits join or leave it where its length becomes or stops being zero. Inverter
   inputs chosen by route length are assigned again for the inverters a rerouted circuit
   lands on (each inverter's assignment is its own).
3. **Sizing** (:func:`calc.size_circuits`, on a subset): the *affected* circuits are those
   rerouted, those sharing a trench segment or an air stretch whose circuit count changed,
   and those whose inverter input changed; each is closed over its whole block (the inverter
   it feeds: its combiner trees — a feeder's drop budget follows from its strings' drops and a
   string's total drop from its feeders' — and its inputs' backfeed and strings in parallel).
   The subset is sized with the cable sets of the circuits outside it on its segments and
   stretches held as they were; where the sized subset changes the final cable sets of a
   segment or stretch that outside circuits share, their blocks join the subset and it is
   sized again, until no outside circuit sees a change (the grouping's fixed point over the
   affected segments). Everything else is carried over from the baseline.
4. **Tables**: the cable schedule, trench schedule, inputs, bill and summary from the spliced
   arrays (their row order is the baseline's: the circuits, their ids and blocks do not change,
   so the schedule's order is the one the baseline keeps, :attr:`Baseline.order`, computed
   with it — while a watching process waits for the next edit). calc's notes that
   name a feeder by its position in the sizing input are renumbered to the plan's positions.
   :func:`figures` skips the tables: the columns ``routeplan place`` ranks by, from the spliced
   arrays (:class:`Figures`).

Remedies (:mod:`routeplan.remedy`) are not computed by :func:`replan` and :func:`figures`:
they give the plan ``plan_site(..., with_remedies=False)`` gives. :func:`from_cache` — what
``routeplan plan`` does when the output folder's cache holds the last run's plan — computes
them too, as a full plan does, with each of the remedies' what-if sizings (the plan sized
again with longer size lists, more parallel sets or wider spacing) re-sized from the last
run's by the same fixed point as the plan itself (:class:`routeplan.remedy.WhatIfs`); a
what-if the last run did not make is sized whole.

A change of design settings alone (the site the baseline's, nothing moved) that leaves the
routing parameters as they were (:func:`routeplan.pipeline.route_params`: snap and noding
distances, trench defaults, allowances) — a temperature, a drop limit, a material, a rule
set — reuses the baseline's routes (network, paths, segment counts) and sizes every circuit
again, with every table, as a full plan does after routing: a setting of that kind can change
any circuit's size, so nothing smaller is re-sized.

Destinations chosen by route length (a row, combiner or inverter without ``to``) are chosen
again on the edited network, as routing chooses them; where every feature keeps its
destination the re-plan stays local (with the new route lengths in the plan's ``assignment``),
where one changes it the site is routed in full and sized locally (below). Moves and trench
edits may come together in one re-plan.

Any other edit of the site under the same design settings — a row's strings or module, rows
added or removed, attributes of equipment, the module table, the grid — is **routed in full
and sized locally** (:func:`_resized`): the site is routed as a full plan routes it (on the
last run's network where the trenches and equipment features are the same, else with the last
noding reused where the trenches are), circuits are matched to the last plan's by
``circuit_id`` (segments by id, length and geometry; air stretches by kind and feature), and
only the blocks of the circuits whose sizing input differs (a new circuit, another route, any
other per-circuit value of :class:`calc.SizingInput`, another parent) or that share a segment
or stretch whose figures differ are sized again, by the same fixed point; the last sizing and
its remedies' what-ifs are renumbered to the new circuits first. Settings that route, or an
edit together with a settings change, fall back to a full plan. :func:`replan` says which it
did in ``Plan.timings_s["local"]``: 1.0 local, 0.75 routed in full and sized locally, 0.5
routes reused and every circuit sized again, 0.0 full. The result is a design aid, to be
reviewed by a qualified, licensed person.
"""

from __future__ import annotations

import dataclasses
import functools
import re
import time
from collections.abc import Callable
from dataclasses import dataclass
from types import SimpleNamespace

import geopandas as gpd
import numpy as np
import pandas as pd
import shapely

import calc
from calc.losses import energy_loss_kwh
from layers import Site

from .cache import PlanCache, digest
from .circuits import KINDS, assign_destinations
from .config import DesignConfig
from .errors import DesignError, RoutingError
from .inputs import assign_inputs, input_table, landing_input
from .network import (
    TRENCH_ATTRIBUTES,
    NetworkMemo,
    TrenchNetwork,
    retap,
    site_equipment,
    trench_problems,
)
from .order import inverter_of, schedule_order, spliced_order
from .pipeline import (
    Plan,
    RemedyJob,
    conductor_poles,
    design_params,
    destinations_chosen,
    governing_ids,
    input_groups,
    plan_site,
    plan_tables,
    route_params,
    segment_fill,
    shallow_trenches,
    sizing_input,
)
from .remedy import WHATIF_FIELDS, WhatIfs
from .routing import (
    RoutePlan,
    _route_geometry,
    _route_lengths_fn,
    joined,
    route_site,
    shortest_paths,
    site_network,
)

__all__ = [
    "Baseline",
    "Figures",
    "MoveSearch",
    "baseline",
    "figures",
    "from_cache",
    "last_baseline",
    "moved_features",
    "replan",
]

#: equipment layers whose features a local re-plan may move
MOVABLE = ("combiners", "inverters")


@dataclass(frozen=True, eq=False)
class Baseline:
    """A full plan and what a local re-plan of an edit of its site needs (routes order)."""

    plan: Plan
    inp: calc.SizingInput
    own_input: np.ndarray
    tap_from: np.ndarray
    tap_to: np.ndarray
    from_index: np.ndarray
    block: np.ndarray  # each circuit's block (its inverter), as an integer code
    block_ids: np.ndarray  # each circuit's block: its inverter's id (object)
    rank: np.ndarray  # each circuit's position in circuit-id order (segments' circuit lists)
    order: np.ndarray  # routes order → schedule order (of plan.circuits where it has them)
    load_a: np.ndarray  # each circuit's Σ Imp [A] (inverter input balancing)
    kind_code: np.ndarray  # each circuit's kind as its position in KINDS
    free_input: np.ndarray  # circuits landing on an inverter input chosen by route length
    dp: calc.DesignParams
    to_inverter: np.ndarray  # the inverter (row) each circuit lands on; -1: none
    inputs_given: bool  # an ``input`` given on some row or combiner
    input_frame: pd.DataFrame  # the columns assign_inputs and input_table read
    #: the schedule's columns a move does not change (:class:`Figures`; None: a baseline
    #: rebuilt from a cache, without the last plan's tables, :func:`from_cache`)
    figure_static: pd.DataFrame | None

    @functools.cached_property
    def material_codes(self) -> tuple[np.ndarray, pd.Index]:
        """The baseline's conductor materials (routes order) as codes into sorted names."""
        cat = pd.Categorical(np.asarray(self.plan.sizing.material, dtype=object))
        return np.asarray(cat.codes), cat.categories


def baseline(site: Site, design: DesignConfig, plan: Plan | None = None, memo=None) -> Baseline:
    """Plan ``site`` in full (``with_remedies=False``; or take ``plan``, a plan of it) and keep
    what :func:`replan` needs."""
    if plan is None:
        plan = plan_site(site, design, noding_memo=memo, with_remedies=False)
    routes = plan.routes
    c = routes.circuits
    inp, own_input = sizing_input(site, routes)
    if plan.inputs is None:  # a plan without its tables (from_cache)
        inputs = input_table(
            site,
            routes.circuits,
            own_input,
            inp.imp_a * inp.n_strings,
            np.asarray(plan.sizing.isc_design_a),
            inp.n_strings,
        )
        plan = dataclasses.replace(plan, inputs=inputs)
    taps = routes.network.taps
    tap_key = pd.Index(taps["layer"].astype(str) + "\x00" + taps["feature_id"].astype(str))
    tap_from = tap_key.get_indexer(c["from_layer"].astype(str) + "\x00" + c["from_id"].astype(str))
    tap_to = tap_key.get_indexer(c["to_layer"].astype(str) + "\x00" + c["to_id"].astype(str))
    rows = pd.Index(site.rows["id"].astype(str))
    from_index = np.where(
        c["from_layer"].to_numpy() == "rows", rows.get_indexer(c["from_id"].astype(str)), -1
    )
    # from_index of other circuits: their row in their own layer (as routing numbers them)
    for layer in ("combiners", "inverters", "grid"):
        m = c["from_layer"].to_numpy() == layer
        if m.any():
            ids = pd.Index(site.layer(layer)["id"].astype(str))
            from_index[m] = ids.get_indexer(c.loc[m, "from_id"].astype(str))
    block_ids = inverter_of(c["kind"], c["from_id"], c["to_id"])
    _, block = np.unique(block_ids.astype(str), return_inverse=True)
    cid = c["circuit_id"].to_numpy(dtype=object)
    rank = np.empty(len(c), dtype=np.int64)
    rank[np.argsort(cid, kind="stable")] = np.arange(len(c))
    tables = plan.circuits is not None
    if tables:
        order = pd.Index(cid).get_indexer(plan.circuits["circuit_id"].to_numpy(dtype=object))
    else:  # the schedule's order, as plan_tables sorts: the local re-plan keeps it
        keys = c[["circuit_id", "kind", "from_id", "to_id"]].assign(inverter_id=block_ids)
        order = schedule_order(keys)
    return Baseline(
        plan,
        inp,
        own_input,
        tap_from.astype(np.int64),
        tap_to.astype(np.int64),
        from_index.astype(np.int64),
        block.reshape(-1).astype(np.int64),
        block_ids,
        rank,
        order,
        inp.imp_a * inp.n_strings,
        pd.Categorical(c["kind"], categories=KINDS).codes.astype(np.int64),
        _free_inputs(site, c),
        design_params(design),
        np.where(
            (c["to_layer"] == "inverters").to_numpy(),
            pd.Index(site.inverters["id"].astype(str)).get_indexer(c["to_id"].astype(str)),
            -1,
        ),
        any(
            "input" in site.layer(name).columns and site.layer(name)["input"].notna().any()
            for name in ("rows", "combiners")
        ),
        c[["circuit_id", "kind", "from_id", "to_layer", "to_id", "strings"]],
        (
            plan.circuits[["circuit_id", "kind", "from_id", "inverter_id"]].reset_index(drop=True)
            if tables
            else None
        ),
    )


def _free_inputs(site: Site, c: pd.DataFrame) -> np.ndarray:
    """Circuits that land on an inverter with no ``input`` given (their input follows from
    the route lengths, :func:`routeplan.inputs.assign_inputs`)."""
    kind = c["kind"].to_numpy(dtype=object)
    lands = (c["to_layer"] == "inverters").to_numpy() & np.isin(kind, ("string", "array"))
    given = np.zeros(len(c), dtype=bool)
    from_id = c["from_id"].to_numpy(dtype=object)
    for layer, k in (("rows", "string"), ("combiners", "array")):
        frame = site.layer(layer)
        if "input" not in frame.columns or not len(frame):
            continue
        named = frame.loc[frame["input"].notna(), "id"].to_numpy(dtype=object)
        given |= (kind == k) & np.isin(from_id, named)
    n_inputs = (
        site.inverters.set_index("id")["dc_inputs"]
        .reindex(c["to_id"].to_numpy(dtype=object))
        .to_numpy(dtype=float)
    )
    return lands & ~given & ~(n_inputs == 1)  # a single input takes everything


def _same_frame(a: pd.DataFrame, b: pd.DataFrame, geometry: bool = True) -> bool:
    if a is b:
        return True
    if len(a) != len(b) or list(a.columns) != list(b.columns):
        return False
    cols = [k for k in a.columns if k != a.geometry.name] if not geometry else list(a.columns)
    for k in cols:
        if k == getattr(a, "_geometry_column_name", None):
            if not _equal_geometries(np.asarray(a[k].array), np.asarray(b[k].array)).all():
                return False
        elif not a[k].equals(b[k]):
            return False
    return True


def _equal_geometries(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Whether each geometry of ``a`` equals ``b``'s at its position: of the same type, with
    the same coordinates in the same order, exactly (or both missing)."""
    return shapely.equals_exact(a, b, 0.0) | (shapely.is_missing(a) & shapely.is_missing(b))


def _redrawn(old: Site, new: Site) -> np.ndarray | None:
    """Per trench of ``new``, whether ``old`` has no trench of its id with its geometry,
    exactly (added, redrawn or renamed); None where ``old``'s ids repeat. The others are the
    last plan's, whose trenches had no problem (:func:`routeplan.network.trench_problems`)
    under the same settings."""
    ids0 = pd.Index(old.trenches["id"].astype(str).to_numpy(dtype=object))
    if not ids0.is_unique:
        return None
    at = ids0.get_indexer(new.trenches["id"].astype(str).to_numpy(dtype=object))
    g0 = np.asarray(old.trenches.geometry.array, dtype=object)
    g = np.asarray(new.trenches.geometry.array, dtype=object)
    same = at >= 0
    same[same] = _equal_geometries(g[same], g0[at[same]])
    return ~same


def _same_modules(a: dict, b: dict) -> bool:
    """The same module table: compared by each module's ``repr`` (exact for floats, and a
    ``nan`` field — no bifacial data — equals a ``nan`` read again, which ``==`` denies)."""
    return a.keys() == b.keys() and all(repr(a[k]) == repr(b[k]) for k in a)


def moved_features(old: Site, new: Site) -> dict[str, np.ndarray] | None:
    """Rows of the combiner and inverter layers whose geometry differs between the sites, or
    None when anything else differs (a move alone: a local re-plan of moves applies)."""
    edit = site_edit(old, new)
    return None if edit is None or edit[1] else edit[0]


def site_edit(old: Site, new: Site) -> tuple[dict[str, np.ndarray], bool] | None:
    """What differs between the sites, where a local re-plan applies: the rows of the combiner
    and inverter layers whose geometry differs, and whether the trench layer differs in
    anything (a trench added, removed, redrawn or given other attributes); None when anything
    else differs (rows, the grid, modules, the CRS, attributes of equipment)."""
    if old.crs != new.crs or not _same_modules(old.modules, new.modules):
        return None
    for name in ("rows", "grid"):
        if not _same_frame(old.layer(name), new.layer(name)):
            return None
    moved = {}
    for name in MOVABLE:
        a, b = old.layer(name), new.layer(name)
        if a is b:
            moved[name] = np.zeros(0, dtype=np.int64)
            continue
        if not _same_frame(a, b, geometry=False):
            return None
        ga, gb = np.asarray(a.geometry.array), np.asarray(b.geometry.array)
        moved[name] = np.flatnonzero(~_equal_geometries(ga, gb))
    return moved, not _same_frame(old.trenches, new.trenches)


def _same_network(old: Site, new: Site) -> bool:
    """Whether the sites give one trench network under the same routing settings
    (:func:`routeplan.routing.site_network`): the same CRS, trench layer and equipment
    features (layer, id and geometry, exactly, in order)."""
    if old.crs != new.crs or not _same_frame(old.trenches, new.trenches):
        return False
    a, b = site_equipment(old), site_equipment(new)
    ga, gb = np.asarray(a.geometry.array), np.asarray(b.geometry.array)
    return (
        len(a) == len(b)
        and a["layer"].equals(b["layer"])
        and a["feature_id"].equals(b["feature_id"])
        and bool(_equal_geometries(ga, gb).all())
    )


def replan(
    base: Baseline,
    site: Site,
    design: DesignConfig | None = None,
    *,
    network: TrenchNetwork | None = None,
) -> Plan:
    """The plan of ``site`` (the baseline's site with combiners or inverters moved, or trenches
    edited), recomputing only what the edit can change (see the module docstring); after any
    other edit of the site under the same design, routed in full and sized locally; a full
    plan after a change of settings that route. ``network``: the edited site's network when
    the caller has it (:func:`routeplan.network.retap`). Raises as
    :func:`routeplan.pipeline.plan_site` does."""
    t0 = time.perf_counter()
    old = base.plan
    design = old.design if design is None else design
    edit = _edit_of(base, site, design)
    if edit is not None:
        out = _local(base, site, design, t0, network=network, light=False, trenches=edit[1])
        if out is not None:
            return out
    if design is old.design or design == old.design:  # routed in full, sized locally
        out = _resized(base, site, design, t0, memo=old.routes.network.memo)
        if out is not None:
            return out
    if _settings_only(base, site, design):  # the routes hold: every circuit sized again
        plan = plan_site(site, design, with_remedies=False, routes=old.routes)
        plan.timings_s["local"] = 0.5
        return plan
    plan = plan_site(site, design, noding_memo=old.routes.network.memo, with_remedies=False)
    plan.timings_s["local"] = 0.0
    return plan


def from_cache(
    site: Site,
    design: DesignConfig,
    cache: PlanCache,
    progress: Callable[[str], None] | None = None,
    timings: dict[str, float] | None = None,
) -> Plan | None:
    """The plan of ``site`` as a local re-plan of the last run's plan kept in ``cache`` (the
    output folder's :class:`~routeplan.cache.PlanCache`, after :func:`routeplan.pipeline.plan`
    read the site through it), with remedies, as :func:`routeplan.pipeline.plan_site` would
    give it with the same cache; None where a local re-plan does not apply — the last run kept
    no site, routes or sizing, nothing changed that routes (the cached routes hold), a design
    setting that routes or sizes changed, or the edited site is refused (the full plan says
    why) — and the caller plans as usual. Moves and trench edits (:func:`site_edit`) are
    re-planned locally; any other edit of the site is routed in full and sized locally
    (:func:`_resized`), remedies' what-ifs re-sized from the last run's alike.

    The new routes, sizing and remedies are kept in the cache for the next run, under the keys
    a full plan would use; ``cache.reused["local"]`` says the last plan was re-planned."""
    say = progress or (lambda stage: None)
    t = timings if timings is not None else {}
    site_key = cache.keys.get("site")
    old_route_key, old_size_key = cache.last_key("route"), cache.last_key("size")
    if site_key is None or old_route_key is None or old_size_key is None:
        return None
    params, dp, rules = route_params(design), design_params(design), design.values["rules"]
    route_key = digest("route", site_key, repr(params))
    # the same routing settings give the same key for the same site: a moved feature is seen
    # by the site's key; the sizing settings must be the last run's
    if route_key == old_route_key or digest("size", old_route_key, repr(dp), rules) != old_size_key:
        return None
    say("route")
    t0 = time.perf_counter()
    old_site = cache.latest("site")
    if old_site is None:
        return None
    edit = site_edit(old_site, site)
    if edit is not None and not (edit[1] or any(len(v) for v in edit[0].values())):
        return None  # nothing changed that routes: the cached routes hold
    base = last_baseline(cache, design, old_site)
    if base is None or repr(base.plan.routes.params) != repr(params):
        return None
    t["local.baseline"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    memo0 = cache.latest("noding")  # the route entry keeps no memo
    whatifs = WhatIfs(rules)
    before = None
    if cache.last_key("whatif") == digest("whatif", old_size_key):
        before = cache.latest("whatif")
    plan = None
    if edit is not None:
        net = site_network(site, params, memo0)
        plan = _local(
            base, site, design, t0, network=net, light=False, trenches=edit[1],
            whatifs=whatifs, whatifs_before=before,
        )  # fmt: skip
    if plan is None:  # another edit, or a move the local re-plan leaves: sized locally
        plan = _resized(base, site, design, t0, memo=memo0, whatifs=whatifs, whatifs_before=before)
    if plan is None:
        return None
    net = plan.routes.network
    t.update(plan.timings_s)
    t["local.whatifs"] = float(whatifs.resized)  # what-ifs re-sized locally
    t["local.whatifs_whole"] = float(len(whatifs.kept) - whatifs.resized)
    size_key = digest("size", route_key, repr(dp), rules)
    memo = net.memo
    cache.reused.update(
        route=False,
        size=False,
        noding=memo0 is not None and memo is not None and memo.noded is memo0.noded,
        local=True,
    )
    entries = [
        ("route", route_key, plan.routes),
        ("noding", digest("noding", route_key), memo),
        ("size", size_key, plan.sizing),
    ]
    if not np.all(plan.sizing.ok):  # each circuit's remedy in routes order, as plan_site keeps it
        ids = plan.routes.circuits["circuit_id"].to_numpy(dtype=object)
        at = pd.Index(plan.circuits["circuit_id"].to_numpy(dtype=object)).get_indexer(ids)
        remedy = plan.circuits["remedy"].to_numpy()[at]
        entries += [
            ("remedy", digest("remedy", size_key), remedy),
            ("whatif", digest("whatif", size_key), whatifs.kept),
        ]
    cache.put_all(entries)
    return dataclasses.replace(plan, timings_s=t, cache=cache)


def last_baseline(
    cache: PlanCache, design: DesignConfig, old_site: Site | None = None
) -> Baseline | None:
    """The last run's plan kept in ``cache`` (its ``site``, ``route`` and ``size`` entries;
    ``old_site``: the site entry when the caller has it), without its tables, as the
    :class:`Baseline` of a local re-plan under ``design``; None when an entry is missing. A
    watching process (``cache.resident``, :class:`routeplan.cache.Resident`) keeps it: built
    once per run, while the process waits for the next edit (:mod:`routeplan.watch`)."""
    key = tuple(cache.last_key(stage) for stage in ("site", "route", "size"))
    resident = cache.resident
    if resident is not None:
        kept = resident.derived("baseline", key)
        if kept is not None and kept.plan.design == design:
            return kept
    old_site = cache.latest("site") if old_site is None else old_site
    routes0, result0 = cache.latest("route"), cache.latest("size")
    if old_site is None or routes0 is None or result0 is None:
        return None
    # the last plan without its tables (none is read back: the local re-plan builds them;
    # baseline() makes the inverter inputs' table)
    old = Plan(old_site, design, routes0, result0, None, None, None, {}, {}, None, None)
    base = baseline(old_site, design, plan=old)
    if resident is not None:
        resident.keep_derived("baseline", key, base)
    return base


def _settings_only(base: Baseline, site: Site, design: DesignConfig) -> bool:
    """Only design settings that do not route changed: the site is the baseline's, feature
    for feature (nothing moved), and the routing parameters (:func:`routeplan.pipeline.
    route_params`: snap and noding distances, trench defaults, allowances) are the same."""
    old = base.plan
    if repr(route_params(design)) != repr(old.routes.params):
        return False
    moved = moved_features(old.site, site)
    return moved is not None and not any(len(v) for v in moved.values())


def _edit_of(
    base: Baseline, site: Site, design: DesignConfig
) -> tuple[dict[str, np.ndarray], bool] | None:
    """:func:`site_edit` of the baseline's site and ``site``; None also where the design
    differs from the baseline's (a local re-plan does not apply)."""
    old = base.plan
    if not (design is old.design or design == old.design):
        return None
    return site_edit(old.site, site)


@dataclass(frozen=True, eq=False)
class Figures:
    """What ranking a candidate needs of its plan, without the whole tables: ``circuits`` (the
    cable schedule's ``circuit_id``, ``kind``, ``from_id``, ``inverter_id``, ``material``,
    ``size_mm2``, ``parallel``, ``cable_m``, ``conductors``, ``loss_w``, ``energy_loss_kwh``,
    ``utilisation``, ``vdrop_total_pct``, ``status``, in the schedule's order), ``segments`` and
    ``inputs`` (their ``status``), as :class:`~routeplan.pipeline.Plan` has them."""

    circuits: pd.DataFrame
    segments: pd.DataFrame
    inputs: pd.DataFrame
    timings_s: dict[str, float]


#: the sizing fields :class:`Figures` needs
_FIGURE_FIELDS = (
    "size_mm2",
    "parallel",
    "material",
    "loss_w",
    "energy_loss_kwh",
    "utilisation",
    "vdrop_total_pct",
    "ok",
    "seg_count_final",
)


def figures(base: Baseline, site: Site, network: TrenchNetwork | None = None) -> Figures | Plan:
    """:class:`Figures` of ``site`` (the baseline's site with features moved) by a local
    re-plan; where one does not apply, the full plan (which has the same columns)."""
    t0 = time.perf_counter()
    old = base.plan
    edit = _edit_of(base, site, old.design) if base.figure_static is not None else None
    if edit is not None and not edit[1]:  # moves alone (the candidates of a placement search)
        out = _local(base, site, old.design, t0, network=network, light=True)
        if out is not None:
            return out
    plan = plan_site(site, old.design, noding_memo=old.routes.network.memo, with_remedies=False)
    plan.timings_s["local"] = 0.0
    return plan


def _local(
    base: Baseline,
    site: Site,
    design: DesignConfig,
    t0: float,
    *,
    network: TrenchNetwork | None,
    light: bool,
    trenches: bool = False,
    whatifs: WhatIfs | None = None,
    whatifs_before: dict | None = None,
) -> Plan | Figures | None:
    """The local re-plan (see the module docstring); None where it cannot be made (trench
    geometry the network refuses, a feature left unconnected, circuits whose ends lie on
    separate islands, a trench too shallow, inputs that cannot be assigned: the full plan
    reports why). ``light``: :class:`Figures` only. ``trenches``: the trench layer differs
    from the baseline's.
    ``whatifs``: remedies are computed, their what-ifs re-sized from ``whatifs_before`` (the
    last run's, :class:`routeplan.remedy.WhatIfs`'s ``kept``) and kept in ``whatifs``."""
    t: dict[str, float] = {}
    old = base.plan
    r0 = old.routes
    params = r0.params
    net0 = r0.network
    if trenches and trench_problems(
        site.trenches, params.node_tol_m, params.snap_m, only=_redrawn(old.site, site)
    ):
        return None  # trench geometry the network refuses: the full plan reports it
    net = network if network is not None else site_network(site, params, net0.memo)
    taps0, taps = net0.taps, net.taps
    if not taps["connected"].to_numpy(bool).all() or not len(net.segments):
        return None  # a feature left unconnected: the full plan reports it
    node = taps["node"].to_numpy(np.int64)
    island = net.node_island
    if np.any(island[node[base.tap_from]] != island[node[base.tap_to]]):
        return None  # a circuit's ends on separate islands: the full plan reports it
    assignment = r0.assignment
    if destinations_chosen(r0):  # destinations chosen by route length: chosen again
        assignment = _reassigned(site, net, r0.assignment)
        if assignment is None:
            return None  # a feature's destination changed: other circuits, a full plan
    t["route.network"] = time.perf_counter() - t0
    t1 = time.perf_counter()

    # --- segments: new ↔ old by id (same length), and what no longer exists
    seg0, seg = net0.segments, net.segments
    if trenches and shallow_trenches(seg, base.dp):
        return None  # a trench too shallow for its cables: the full plan reports it
    n_seg = len(seg)
    new_of_old, old_of_new = _segment_map(seg0, seg, geometry=trenches)
    born = old_of_new < 0

    # --- circuits to route again: a changed tap at either end, or a segment gone
    node0 = taps0["node"].to_numpy(np.int64)
    stub0, stub = taps0["stub_m"].to_numpy(float), taps["stub_m"].to_numpy(float)
    tap_changed = (stub0 != stub) | np.any(net0.node_xy[node0] != net.node_xy[node], axis=1)
    tap_changed |= ~shapely.equals_exact(
        np.asarray(taps0.geometry.array), np.asarray(taps.geometry.array), 0.0
    )
    ic0, is0 = r0.incidence_circuit, r0.incidence_segment
    n_c = len(r0.circuits)
    reroute = tap_changed[base.tap_from] | tap_changed[base.tap_to]
    gone = np.flatnonzero(new_of_old < 0)
    if len(gone):
        reroute[ic0[np.isin(is0, gone)]] = True
    if trenches:  # a trench added or redrawn can shorten any route: every route searched
        reroute |= _new_paths(net, node, base.tap_from, base.tap_to, ic0, new_of_old[is0])
    rr = np.flatnonzero(reroute)

    # --- route them (one search per destination)
    pair_key, pair_of = np.unique(
        base.tap_from[rr] * len(taps) + base.tap_to[rr], return_inverse=True
    )
    pair_of = pair_of.reshape(-1)
    p_from, p_to = pair_key // len(taps), pair_key % len(taps)
    paths = shortest_paths(net, node[p_from], node[p_to])
    plen = np.diff(paths.offset)
    pair_route = stub[p_from] + stub[p_to] + paths.trench_m
    t["route.search"] = time.perf_counter() - t1
    t1 = time.perf_counter()

    # --- incidence: the others' (segments renumbered), the rerouted circuits' new routes
    c_len = plen[pair_of]
    within = np.arange(c_len.sum()) - np.repeat(np.cumsum(c_len) - c_len, c_len)
    inc_new_s = paths.segment[np.repeat(paths.offset[:-1][pair_of], c_len) + within]
    inc_c, inc_s, old_rows = _splice_incidence(ic0, is0, new_of_old, rr, c_len, inc_new_s)

    # --- per circuit (routes order)
    c0 = r0.circuits
    route_m = c0["route_m"].to_numpy(float).copy()
    stub_m = c0["stub_m"].to_numpy(float).copy()
    cable_m = c0["cable_m"].to_numpy(float).copy()
    row_run = c0["row_run_m"].to_numpy(float)
    route_m[rr] = pair_route[pair_of]
    stub_m[rr] = (stub[p_from] + stub[p_to])[pair_of]
    cable_m[rr] = (
        route_m[rr] * (1 + params.slack_pct / 100) + 2 * params.termination_m + row_run[rr]
    )

    # --- segment counts (the carried counts less the old routes, plus the new ones)
    kind_code = base.kind_code
    s0 = r0.segments
    old_s = is0[old_rows]
    old_k = kind_code[ic0[old_rows]]
    new_k = kind_code[np.repeat(rr, c_len)]
    carried = np.where(born, 0, s0["circuits"].to_numpy(np.int64)[np.maximum(old_of_new, 0)])
    count0_new = np.where(born, -1, carried)
    count = carried + _delta(old_s, new_of_old, inc_new_s, n_seg)
    t["route.tables"] = time.perf_counter() - t1
    t["route"] = time.perf_counter() - t0
    t1 = time.perf_counter()

    # --- air stretches (stubs and row runs): only a stub's length can change, unless a
    # stub appears or vanishes (zero length)
    air0 = r0.air
    air, air_c, air_s = _air(r0, stub0, stub, base.tap_from, base.tap_to)
    air_old_of_new = np.arange(len(air))  # one stretch per tap and per row, always

    # --- inverter inputs (assigned by route length where not given): those of the inverters
    # a rerouted circuit lands on, each inverter's on its own (as a full assignment does)
    inp0 = base.inp
    own_input = base.own_input
    n_par, dc_group = inp0.strings_in_parallel, inp0.dc_group
    input_rows = None  # circuits landing on the inverters whose inputs were assigned again
    if (reroute & base.free_input).any():
        if base.inputs_given:  # an ``input`` given somewhere: the checks need every circuit
            input_rows = np.arange(n_c)
        else:
            inverters = np.unique(base.to_inverter[reroute & base.free_input])
            input_rows = np.flatnonzero(np.isin(base.to_inverter, inverters))
        frame = base.input_frame.iloc[input_rows].assign(route_m=route_m[input_rows])
        try:
            part = assign_inputs(site, frame, base.load_a[input_rows])
        except DesignError:
            return None
        if np.array_equal(part, base.own_input[input_rows], equal_nan=True):
            input_rows = None
        else:
            own_input = base.own_input.copy()
            own_input[input_rows] = part
            to_id = c0["to_id"].to_numpy(dtype=object)
            n_par, dc_group = input_groups(site, inp0.kind, inp0.parent, to_id, own_input)
    # segment attributes: carried over, those of new segments read (after a trench edit,
    # every segment's: a trench's attributes may have changed, and with them its segments')
    nb = np.arange(n_seg) if trenches else np.flatnonzero(born)
    seg_cols = {}
    attr_changed = np.zeros(n_seg, dtype=bool)
    for name, col in (
        ("seg_depth_m", "depth_m"),
        ("seg_laying", "laying"),
        ("seg_spacing_m", "spacing_m"),
        ("seg_soil_k_m_w", "soil_k_m_w"),
    ):
        v = np.asarray(getattr(inp0, name))[np.maximum(old_of_new, 0)]
        fresh = seg[col].iloc[nb]
        fresh = (fresh == "duct").to_numpy(dtype=np.int8) if col == "laying" else fresh
        if trenches:
            attr_changed |= ~_same_nan(v, fresh) & ~born
        v[nb] = fresh
        seg_cols[name] = v
    inp = dataclasses.replace(
        inp0,
        cable_m=cable_m,
        air_m=stub_m + row_run,
        strings_in_parallel=n_par,
        dc_group=dc_group,
        **seg_cols,
        seg_count=count,
        seg_length_m=seg["length_m"].to_numpy(dtype=float),
        inc_circuit=inc_c,
        inc_segment=inc_s,
        air_count=np.zeros(len(air)),
        air_behind_modules=(air["kind"] == "row run").to_numpy(dtype=bool),
        air_inc_circuit=air_c,
        air_inc_stretch=air_s,
        air_length_m=air["length_m"].to_numpy(dtype=float),
    )

    # --- the affected circuits, closed over their blocks
    affected = reroute.copy()
    count_changed = (count != count0_new) | attr_changed
    if count_changed.any():
        affected[inc_c[count_changed[inc_s]]] = True
    air_n = np.bincount(air_s, minlength=len(air))
    air_n0 = np.bincount(r0.air_incidence_stretch, minlength=len(air0))
    len0 = air0["length_m"].to_numpy(float)
    air_changed = air_old_of_new < 0
    have = ~air_changed
    air_changed[have] = (air_n0[air_old_of_new[have]] != air_n[have]) | (
        len0[air_old_of_new[have]] != air["length_m"].to_numpy(float)[have]
    )
    if air_changed.any():
        affected[air_c[air_changed[air_s]]] = True
    if input_rows is not None:
        affected |= ~_same_nan(own_input, base.own_input)
        affected |= n_par != inp0.strings_in_parallel
        affected |= dc_group != inp0.dc_group

    dp = base.dp
    rules = design.values["rules"]
    edit = _Edit(
        base.block, inc_c, inc_s, air_c, air_s, born | count_changed, air_changed, new_of_old,
        old_of_new, air_old_of_new, affected,
    )  # fmt: skip
    names = _FIGURE_FIELDS if light else None
    result, sub, passes = edit.resize(inp, dp, rules, old.sizing, names=names)
    t["size"] = time.perf_counter() - t1
    t["local.passes"] = float(passes)
    t["local.circuits"] = float(len(sub))
    t1 = time.perf_counter()
    if light:
        out = _figures(base, result, sub, inp, cable_m, count, seg, own_input, input_rows, site)
        t["tables"] = time.perf_counter() - t1
        t["local"] = 1.0
        return dataclasses.replace(out, timings_s=t)

    # --- the route tables
    geom = _route_geometry(net, paths, p_from, p_to)
    seg_ids = seg["segment_id"].to_numpy(dtype=object)
    pair_seg_ids = joined(seg_ids[paths.segment].tolist(), paths.offset)
    c = c0.copy(deep=False)  # copy on write: only the columns set below are new
    c["route_m"] = route_m
    c["stub_m"] = stub_m
    c["cable_m"] = cable_m
    if len(rr):
        c.loc[rr, "trench_m"] = paths.trench_m[pair_of]
        c.loc[rr, "n_segments"] = plen[pair_of]
        c.loc[rr, "segment_ids"] = pair_seg_ids[pair_of]
        geoms = np.asarray(c.geometry.array, dtype=object).copy()
        geoms[rr] = geom[pair_of]
        c = c.set_geometry(gpd.GeoSeries(geoms, index=c.index, crs=c0.crs))
    group = np.zeros(n_c, dtype=np.int64)
    if len(inc_c):
        starts = np.flatnonzero(np.r_[True, inc_c[1:] != inc_c[:-1]])
        group[inc_c[starts]] = np.maximum.reduceat(count[inc_s], starts)
    c["group_max"] = group
    by_kind = []
    for i in range(len(KINDS)):
        col = s0[KINDS_COLUMN[KINDS[i]]].to_numpy(np.int64)
        carried_k = np.where(born, 0, col[np.maximum(old_of_new, 0)])
        by_kind.append(
            carried_k + _delta(old_s[old_k == i], new_of_old, inc_new_s[new_k == i], n_seg)
        )
    touched = np.zeros(n_seg, dtype=bool)
    touched[inc_new_s] = True
    old_touch = new_of_old[old_s]
    touched[old_touch[old_touch >= 0]] = True
    touched |= born
    ids_new = s0["circuit_ids"].to_numpy(dtype=object)[np.maximum(old_of_new, 0)].copy()
    redo = np.flatnonzero(touched)
    if len(redo):
        sel = np.isin(inc_s, redo)
        cc, ss = inc_c[sel], inc_s[sel]
        o = np.lexsort((base.rank[cc], ss))
        cid = c0["circuit_id"].to_numpy(dtype=object)
        b = np.searchsorted(ss[o], np.r_[redo, redo[-1] + 1])
        ids_new[redo] = joined(cid[cc[o]].tolist(), np.r_[b[:-1], b[-1]])
    cap = seg["max_circuits"].to_numpy(float)
    segments = gpd.GeoDataFrame(
        {
            "segment_id": seg_ids,
            "trench_id": seg["trench_id"].to_numpy(dtype=object),
            "length_m": seg["length_m"].to_numpy(float),
            "circuits": count,
            **{KINDS_COLUMN[k]: by_kind[i] for i, k in enumerate(KINDS)},
            "circuit_ids": ids_new,
            **{k: seg[k].to_numpy() for k in TRENCH_ATTRIBUTES},
            "fill": np.where(np.isnan(cap), np.nan, count / np.where(np.isnan(cap), 1.0, cap)),
            "over_capacity": ~np.isnan(cap) & (count > np.nan_to_num(cap, nan=np.inf)),
            **{
                k: seg[k].to_numpy()
                for k in ("node_u", "node_v", "start_m", "end_m", "trench_index")
            },
        },
        geometry=np.asarray(seg.geometry.array, dtype=object),
        crs=net.crs,
    )[list(s0.columns)]
    routes = RoutePlan(
        circuits=c,
        segments=segments,
        incidence_circuit=inc_c,
        incidence_segment=inc_s,
        air=air,
        air_incidence_circuit=air_c,
        air_incidence_stretch=air_s,
        assignment=assignment,
        network=net,
        params=params,
        timings_s={},
    )
    governing = governing_ids(routes, result)
    landing = landing_input(inp.parent, own_input)
    inputs = old.inputs
    if input_rows is not None:
        inputs = input_table(
            site, c, own_input, base.load_a, np.asarray(result.isc_design_a), inp.n_strings
        )
    remedy = None
    if whatifs is not None:  # each what-if re-sized from the last run's, where it has one
        t2 = time.perf_counter()
        whatifs.resize = _whatif_resizer(edit, whatifs_before or {}, old.sizing, inp0, dp, rules)
        remedy = RemedyJob(routes, inp, dp, rules, result, governing, whatifs)
        t["remedy"] = time.perf_counter() - t2
        t1 += t["remedy"]  # the tables' time leaves the remedies out
    circuits, seg_table, quantities, summary = plan_tables(
        site, design, routes, result, inp, inputs, landing, governing, remedy, base.order
    )
    t["tables"] = time.perf_counter() - t1
    if remedy is not None:
        remedy.account(t)
    t["local"] = 1.0
    return Plan(
        site, design, routes, result, circuits, seg_table, quantities, summary, t, None, inputs
    )


def _resized(
    base: Baseline,
    site: Site,
    design: DesignConfig,
    t0: float,
    *,
    memo: NetworkMemo | None,
    whatifs: WhatIfs | None = None,
    whatifs_before: dict | None = None,
) -> Plan | None:
    """The plan of ``site`` under the baseline's design after any edit of the site (rows,
    their strings or modules, attributes of equipment, the module table, the grid, besides
    moves and trench edits): routed in full, as a full plan routes it (on the last network
    where :func:`_same_network`, else with the last noding reused where the trenches are the
    same), and sized locally — only the blocks of the
    circuits whose sizing input differs from the last plan's (a new circuit, another route,
    other electrical values, another input or parent) or that share a trench segment or air
    stretch whose figures differ (count, length, depth, laying, spacing, soil) are sized
    again, by the same fixed point as :func:`replan` (:class:`_Edit`); circuits are matched
    to the last plan's by ``circuit_id``, segments by id, length and geometry, air stretches
    by kind and feature. None where it cannot be made (the routing or the sizing refuses the
    site, ids not unique: the full plan reports why). ``memo``: the last noding
    (:func:`routeplan.network.build_network`); ``whatifs``: as :func:`_local`."""
    t: dict[str, float] = {}
    old = base.plan
    r0 = old.routes
    net = None  # the last network where the edit leaves it as it was (a row's strings …)
    if _same_network(old.site, site):
        net = r0.network
        if net.memo is None and memo is not None:  # the route entry keeps no memo
            net = dataclasses.replace(net, memo=memo)
    try:
        # the same trenches as the last plan's, which had no trench problem: not checked again
        routes = route_site(
            site, r0.params, memo=memo, network=net, trenches_checked=net is not None
        )
    except RoutingError:
        return None
    t["route"] = time.perf_counter() - t0
    t1 = time.perf_counter()
    dp, rules = base.dp, design.values["rules"]
    seg = routes.network.segments
    if shallow_trenches(seg, dp):
        return None
    c0, c = r0.circuits, routes.circuits
    if not len(c0):
        return None
    ids0 = pd.Index(c0["circuit_id"].to_numpy(dtype=object))
    air0, air = r0.air, routes.air
    air_key0, air_key = (
        pd.Index(a["kind"].astype(str) + "\x00" + a["layer"].astype(str) + "\x00"
                 + a["feature_id"].astype(str))
        for a in (air0, air)
    )  # fmt: skip
    if not (ids0.is_unique and air_key0.is_unique):
        return None
    try:
        inp, own_input = sizing_input(site, routes)
    except DesignError:
        return None
    n_c, n_c0 = len(c), len(c0)
    c_old = ids0.get_indexer(c["circuit_id"].to_numpy(dtype=object))  # -1: a new circuit
    has = c_old >= 0
    c_new = np.full(n_c0, -1, dtype=np.int64)
    c_new[c_old[has]] = np.flatnonzero(has)
    routes, c = _kept_geometries(routes, c0, c_old)
    new_of_old, old_of_new = _segment_map(r0.network.segments, seg, geometry=True)
    air_old_of_new = air_key0.get_indexer(air_key)
    air_new_of_old = np.full(len(air0), -1, dtype=np.int64)
    air_new_of_old[air_old_of_new[air_old_of_new >= 0]] = np.flatnonzero(air_old_of_new >= 0)

    # --- circuits whose sizing input differs: new, other per-circuit values, other routes
    inp0 = base.inp
    at = np.maximum(c_old, 0)
    affected = _inputs_differ(inp, inp0, c_old, c_new)
    if affected is None:
        return None  # another set of inputs given: the full plan
    affected |= _routes_differ(
        n_c, routes.incidence_circuit, routes.incidence_segment,
        c_new[r0.incidence_circuit], new_of_old[r0.incidence_segment],
    )  # fmt: skip
    affected |= _routes_differ(
        n_c, routes.air_incidence_circuit, routes.air_incidence_stretch,
        c_new[r0.air_incidence_circuit], air_new_of_old[r0.air_incidence_stretch],
    )  # fmt: skip

    # --- segments and air stretches whose figures differ: their circuits too
    born = old_of_new < 0
    o = np.maximum(old_of_new, 0)
    air_born = air_old_of_new < 0
    a_o = np.maximum(air_old_of_new, 0)
    n_air0 = np.bincount(r0.air_incidence_stretch, minlength=len(air0))[a_o]
    n_air = np.bincount(routes.air_incidence_stretch, minlength=len(air))
    seg_changed, air_changed = born.copy(), air_born | (n_air != n_air0)
    for name in sorted(_NOT_PER_CIRCUIT - _INCIDENCE):  # per-segment and per-stretch values
        a, b = getattr(inp, name), getattr(inp0, name)
        if a is None or b is None:
            if (a is None) != (b is None):
                return None
            continue
        if name.startswith("seg_"):
            seg_changed |= ~_same_nan(a, np.asarray(b, dtype=float)[o])
        else:
            air_changed |= ~_same_nan(a, np.asarray(b, dtype=float)[a_o])
    inc_c, inc_s = routes.incidence_circuit, routes.incidence_segment
    air_c, air_s = routes.air_incidence_circuit, routes.air_incidence_stretch
    affected[inc_c[seg_changed[inc_s]]] = True
    affected[air_c[air_changed[air_s]]] = True

    # --- the last sizing in the new numbering; the affected blocks sized again
    block_ids = inverter_of(c["kind"], c["from_id"], c["to_id"])
    _, block = np.unique(block_ids.astype(str), return_inverse=True)
    edit = _Edit(
        block.reshape(-1).astype(np.int64), inc_c, inc_s, air_c, air_s, seg_changed,
        air_changed, new_of_old, old_of_new, air_old_of_new, affected,
    )  # fmt: skip
    prev = _renumbered(old.sizing, c_old, c_new)
    try:
        result, sub, passes = edit.resize(inp, dp, rules, prev)
    except (calc.InputError, calc.UnknownOptionError, calc.TableRangeError):
        return None
    t["size"] = time.perf_counter() - t1
    t["local.passes"] = float(passes)
    t["local.circuits"] = float(len(sub))
    t1 = time.perf_counter()
    governing = governing_ids(routes, result)
    remedy = None
    if whatifs is not None:
        t2 = time.perf_counter()
        before = {  # the last run's what-ifs in the new circuit numbering
            k: {**v, **{f: np.asarray(v[f])[at] for f in _CIRCUIT_WHATIF_FIELDS}}
            for k, v in (whatifs_before or {}).items()
        }
        whatifs.resize = _whatif_resizer(edit, before, prev, inp0, dp, rules)
        remedy = RemedyJob(routes, inp, dp, rules, result, governing, whatifs)
        t["remedy"] = time.perf_counter() - t2
        t1 += t["remedy"]
    landing = landing_input(inp.parent, own_input)
    inputs = input_table(
        site, c, own_input, inp.imp_a * inp.n_strings, np.asarray(result.isc_design_a),
        inp.n_strings,
    )  # fmt: skip
    key_columns = ["circuit_id", "kind", "from_id", "to_id"]
    order = spliced_order(  # the schedule's order, the last run's for unchanged blocks
        c[key_columns].assign(inverter_id=block_ids),
        c0[key_columns].assign(inverter_id=base.block_ids),
        base.order,
        c_old,
    )
    circuits, seg_table, quantities, summary = plan_tables(
        site, design, routes, result, inp, inputs, landing, governing, remedy, order
    )
    t["tables"] = time.perf_counter() - t1
    if remedy is not None:
        remedy.account(t)
    t["local"] = 0.75
    return Plan(
        site, design, routes, result, circuits, seg_table, quantities, summary, t, None, inputs
    )


def _kept_geometries(
    routes: RoutePlan, c0: gpd.GeoDataFrame, c_old: np.ndarray
) -> tuple[RoutePlan, gpd.GeoDataFrame]:
    """``routes`` with each circuit's route geometry the last plan's object where it is the
    same (exactly: :func:`_equal_geometries`), so that what is keyed by the geometry objects
    (the watching process's row hashes, :class:`routeplan.outputs.reuse.HashMemo`) sees an
    unchanged route as unchanged; and its circuits."""
    c = routes.circuits
    at = np.flatnonzero(c_old >= 0)
    geoms = np.asarray(c.geometry.array, dtype=object)
    old = np.asarray(c0.geometry.array, dtype=object)[c_old[at]]
    same = _equal_geometries(geoms[at], old)
    if not same.any():
        return routes, c
    geoms = geoms.copy()
    geoms[at[same]] = old[same]
    c = c.set_geometry(gpd.GeoSeries(geoms, index=c.index, crs=c.crs))
    return dataclasses.replace(routes, circuits=c), c


def _inputs_differ(
    inp: calc.SizingInput, inp0: calc.SizingInput, c_old: np.ndarray, c_new: np.ndarray
) -> np.ndarray | None:
    """Per circuit of ``inp``, whether its own sizing input differs from that of the circuit it
    was in ``inp0`` (``c_old``: each circuit's old position, -1: new, which differs; ``c_new``:
    each old circuit's new position): any per-circuit value (NaN equals NaN), or its parent
    (compared in the new numbering). None where one gives an optional input the other lacks."""
    at = np.maximum(c_old, 0)
    parent0 = np.asarray(inp0.parent)[at]
    parent0 = np.where(parent0 >= 0, c_new[np.maximum(parent0, 0)], -1)
    differ = (c_old < 0) | (np.asarray(inp.parent) != parent0)
    for f in dataclasses.fields(inp):
        if f.name in _NOT_PER_CIRCUIT:
            continue
        a, b = getattr(inp, f.name), getattr(inp0, f.name)
        if a is None or b is None:
            if (a is None) != (b is None):
                return None
            continue
        a, b = np.asarray(a), np.asarray(b)[at]
        differ |= ~(_same_nan(a, b) if a.dtype.kind == "f" else a == b)
    return differ


def _whatif_resizer(
    edit: _Edit,
    before: dict,
    sizing: calc.SizingResult,
    inp0: calc.SizingInput,
    dp: calc.DesignParams,
    rules: str,
) -> Callable:
    """The ``resize`` of :class:`routeplan.remedy.WhatIfs` for a re-plan: each what-if re-sized
    by ``edit`` from the last run's (``before``, by key). A what-if of the plan's own settings
    (wider spacing: the inputs alone change) that the last run did not make starts from the
    last plan's ``sizing``, the same what-if with no spacing widened (``inp0``'s spacings)."""
    own = {k: getattr(sizing, k) for k in WHATIF_FIELDS}
    own["seg_spacing_m"] = inp0.seg_spacing_m
    dp_text = repr(dp)

    def resize(key: str, i: calc.SizingInput, d: calc.DesignParams):
        return edit.whatif(before.get(key, own if repr(d) == dp_text else None), i, d, rules)

    return resize


#: the what-if fields kept per circuit (the others are per segment or air stretch)
_CIRCUIT_WHATIF_FIELDS = ("ok", "size_mm2", "parallel")


def _renumbered(r: calc.SizingResult, c_old: np.ndarray, c_new: np.ndarray) -> calc.SizingResult:
    """The per-circuit fields of sizing ``r`` in a new circuit numbering (``c_old``: each new
    circuit's old position, -1 for a new one, which takes the first circuit's values until it
    is sized; ``c_new``: each old circuit's new position), notes naming a feeder by its
    position renumbered; per-segment and per-stretch fields and totals as they are."""
    at = np.maximum(c_old, 0)
    out = {}
    for f in dataclasses.fields(r):
        v = getattr(r, f.name)
        if f.name in ("iterations", "rules", "air_count_final") or f.name.startswith(
            ("seg_", "total_")
        ):
            out[f.name] = v
        elif f.name == "note":
            out[f.name] = _global_notes(np.asarray(v)[at], c_new)
        else:
            out[f.name] = np.asarray(v)[at]
    return calc.SizingResult(**out)


#: the trench schedule's count column of each circuit kind
KINDS_COLUMN = {"string": "strings", "array": "arrays", "ac": "ac", "subarray": "subarrays"}


def _new_paths(
    net: TrenchNetwork,
    node: np.ndarray,
    tap_from: np.ndarray,
    tap_to: np.ndarray,
    ic0: np.ndarray,
    is0_new: np.ndarray,
) -> np.ndarray:
    """Which circuits' shortest paths on ``net`` (every circuit's, one Dijkstra search per
    destination, as routing searches) differ from their old routes: other segments, or the
    same in another order (``node``: each tap's node; ``ic0``: the old incidence's circuits,
    by circuit in route order; ``is0_new``: its segments in the new numbering, -1: gone)."""
    n_c, n_taps = len(tap_from), len(node)
    key, pair_of = np.unique(tap_from * n_taps + tap_to, return_inverse=True)
    pair_of = pair_of.reshape(-1)
    paths = shortest_paths(net, node[key // n_taps], node[key % n_taps])
    k = np.diff(paths.offset)[pair_of]
    within = np.arange(k.sum()) - np.repeat(np.cumsum(k) - k, k)
    new_s = paths.segment[np.repeat(paths.offset[:-1][pair_of], k) + within]
    return _sequences_differ(n_c, np.repeat(np.arange(n_c), k), new_s, ic0, is0_new)


def _routes_differ(
    n: int, ic: np.ndarray, s: np.ndarray, ic_old: np.ndarray, s_old: np.ndarray
) -> np.ndarray:
    """Per circuit (of ``n``), whether its route in incidence ``ic``/``s`` differs from its
    old route (``ic_old``/``s_old``: the old incidence in the new numbering of circuits and
    segments or stretches; -1: a circuit gone); :func:`_sequences_differ` after putting the
    old incidence in circuit order, route order kept."""
    keep = ic_old >= 0
    order = np.argsort(ic_old[keep], kind="stable")
    return _sequences_differ(n, ic, s, ic_old[keep][order], s_old[keep][order])


def _sequences_differ(
    n: int, ic_a: np.ndarray, s_a: np.ndarray, ic_b: np.ndarray, s_b: np.ndarray
) -> np.ndarray:
    """Per circuit (of ``n``), whether its sequence in incidence ``a`` (``ic_a``, ``s_a``:
    by circuit, in route order) differs from that in ``b``: another length, or another
    element at some place."""
    n_a, n_b = np.bincount(ic_a, minlength=n), np.bincount(ic_b, minlength=n)
    differ = n_a != n_b
    same_len = ~differ
    bad = ic_a[same_len[ic_a]][s_a[same_len[ic_a]] != s_b[same_len[ic_b]]]
    differ[bad] = True
    return differ


def _segment_map(
    seg0: pd.DataFrame, seg: pd.DataFrame, geometry: bool = False
) -> tuple[np.ndarray, np.ndarray]:
    """Each old segment's index in the new network (-1: gone) and each new one's old index
    (-1: new), matched by id and length (``geometry``: and by geometry, exactly — after a
    trench edit, a trench moved as a whole keeps its segments' ids and lengths). Segments keep
    their order, so an equipment edit shifts the others by at most a few places: ids are
    compared at shifts −2…2 first, and only the few left over are looked up (an id is unique,
    so a match found is the match)."""
    ids0 = seg0["segment_id"].to_numpy(dtype=object)
    ids = seg["segment_id"].to_numpy(dtype=object)
    len0 = seg0["length_m"].to_numpy(float)
    len1 = seg["length_m"].to_numpy(float)
    n0, n = len(ids0), len(ids)
    new_of_old = np.full(n0, -1, dtype=np.int64)
    for d in (0, -1, 1, -2, 2):
        i = np.flatnonzero(new_of_old < 0)
        j = i + d
        inside = (j >= 0) & (j < n)
        i, j = i[inside], j[inside]
        hit = ids0[i] == ids[j]
        new_of_old[i[hit]] = j[hit]
    old_of_new = np.full(n, -1, dtype=np.int64)
    old_of_new[new_of_old[new_of_old >= 0]] = np.flatnonzero(new_of_old >= 0)
    rest_old, rest_new = np.flatnonzero(new_of_old < 0), np.flatnonzero(old_of_new < 0)
    if len(rest_old) and len(rest_new):
        where = {v: k for k, v in zip(rest_new.tolist(), ids[rest_new].tolist(), strict=True)}
        for i in rest_old.tolist():
            j = where.get(ids0[i], -1)
            if j >= 0:
                new_of_old[i], old_of_new[j] = j, i
    ok = new_of_old >= 0
    same = np.zeros(n0, dtype=bool)
    same[ok] = len1[new_of_old[ok]] == len0[ok]
    if geometry:
        g0, g1 = np.asarray(seg0.geometry.array), np.asarray(seg.geometry.array)
        at = np.flatnonzero(same)
        same[at] = _equal_geometries(g0[at], g1[new_of_old[at]])
    old_of_new[new_of_old[ok & ~same]] = -1
    new_of_old[~same] = -1
    return new_of_old, old_of_new


def _splice_incidence(
    ic0: np.ndarray,
    is0: np.ndarray,
    new_of_old: np.ndarray,
    rr: np.ndarray,
    c_len: np.ndarray,
    inc_new_s: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The incidence with the rerouted circuits ``rr`` (sorted) replaced by their new routes
    (``c_len`` segments each, ``inc_new_s``), by circuit and in route order; and the old rows
    removed. Old segments are renumbered (``new_of_old``)."""
    lo = np.searchsorted(ic0, rr, side="left")
    hi = np.searchsorted(ic0, rr, side="right")
    n_old = hi - lo
    old_rows = np.repeat(lo, n_old) + (
        np.arange(n_old.sum()) - np.repeat(np.cumsum(n_old) - n_old, n_old)
    )
    keep = np.ones(len(ic0), dtype=bool)
    keep[old_rows] = False
    kept_c, kept_s = ic0[keep], new_of_old[is0[keep]]
    at = np.searchsorted(kept_c, rr, side="left")  # where each rerouted circuit goes
    inc_c = np.insert(kept_c, np.repeat(at, c_len), np.repeat(rr, c_len))
    inc_s = np.insert(kept_s, np.repeat(at, c_len), inc_new_s)
    return inc_c, inc_s, old_rows


def _delta(old_s: np.ndarray, new_of_old: np.ndarray, new_s: np.ndarray, n_seg: int) -> np.ndarray:
    """Per new segment: the circuits the new routes add less those the old routes leave
    (old segments renumbered; gone ones dropped)."""
    out = np.zeros(n_seg, dtype=np.int64)
    np.add.at(out, new_s, 1)
    o = new_of_old[old_s]
    np.subtract.at(out, o[o >= 0], 1)
    return out


def _air(
    r0: RoutePlan, stub0: np.ndarray, stub: np.ndarray, tap_from: np.ndarray, tap_to: np.ndarray
) -> tuple[pd.DataFrame, np.ndarray, np.ndarray]:
    """The air stretches and their incidence (:func:`routeplan.routing.air_stretches`: one
    stretch per tap, then one per row): the stub lengths updated, and the circuits of a tap
    whose stub appears (length > 0) or vanishes put on or taken off it."""
    air, c, k = r0.air, r0.air_incidence_circuit, r0.air_incidence_stretch
    changed = np.flatnonzero(~_same_nan(stub0, stub))
    if not len(changed):
        return air, c, k
    air = air.copy()
    length = air["length_m"].to_numpy(float).copy()
    length[changed] = np.nan_to_num(stub[changed])
    air["length_m"] = length
    has0, has = np.nan_to_num(stub0) > 0, np.nan_to_num(stub) > 0
    gone, new = changed[has0[changed] & ~has[changed]], changed[~has0[changed] & has[changed]]
    if len(gone):
        keep = ~np.isin(k, gone)
        c, k = c[keep], k[keep]
    if len(new):
        n = len(air)
        add_c = np.concatenate(
            [np.flatnonzero(np.isin(tap_from, new)), np.flatnonzero(np.isin(tap_to, new))]
        )
        add_k = np.concatenate([tap_from[np.isin(tap_from, new)], tap_to[np.isin(tap_to, new)]])
        key = np.unique(add_c * n + add_k)
        at = np.searchsorted(c * n + k, key)
        c = np.insert(c, at, key // n)
        k = np.insert(k, at, key % n)
    return air, c, k


def _figures(base, result, sub, inp, cable_m, count, seg, own_input, input_rows, site) -> Figures:
    """:class:`Figures` from the spliced sizing (the schedule's order and columns); ``sub``:
    the circuits sized again (routes order; the others keep the baseline's sizing)."""
    old = base.plan
    o = base.order
    parallel = np.asarray(result.parallel)
    conductors = conductor_poles(inp.kind, inp.phases) * parallel
    circuits = base.figure_static.copy(deep=False)
    idx = circuits.index
    for name, values in (
        ("material", _materials(base, result.material, sub)[o]),
        ("size_mm2", np.asarray(result.size_mm2)[o]),
        ("parallel", parallel[o]),
        ("cable_m", cable_m[o]),
        ("conductors", conductors[o]),
        ("loss_w", np.asarray(result.loss_w)[o]),
        ("energy_loss_kwh", np.asarray(result.energy_loss_kwh)[o]),
        ("utilisation", np.asarray(result.utilisation)[o]),
        ("vdrop_total_pct", np.asarray(result.vdrop_total_pct)[o]),
        (
            "status",
            pd.Categorical.from_codes(np.asarray(result.ok)[o].astype(np.int8), ["fail", "ok"]),
        ),
    ):
        circuits[name] = pd.Series(values, index=idx, copy=False)
    cap_sets = (
        seg["max_cable_sets"].to_numpy(dtype=float)
        if "max_cable_sets" in seg
        else np.full(len(seg), np.nan)
    )
    _, _, status = segment_fill(
        count.astype(float),
        seg["max_circuits"].to_numpy(float),
        cap_sets,
        np.asarray(result.seg_count_final, dtype=np.int64),
    )
    inputs = old.inputs[["status"]]
    if input_rows is not None:  # the inverters assigned again: their rows anew
        rows = input_rows
        again = input_table(
            site, base.input_frame.iloc[rows], own_input[rows], base.load_a[rows],
            np.asarray(old.sizing.isc_design_a)[rows], inp.n_strings[rows],
        )  # fmt: skip
        others = ~old.inputs["inverter_id"].isin(again["inverter_id"]).to_numpy()
        inputs = pd.DataFrame(
            {"status": np.r_[old.inputs["status"].to_numpy()[others], again["status"].to_numpy()]}
        )
    return Figures(circuits, pd.DataFrame({"status": status}), inputs, {})


#: calc's notes name a circuit by its position in the sizing input (the subset's, here)
_FEEDER = re.compile(r"\(feeder circuit (\d+)\)")


def _materials(base: Baseline, material: np.ndarray, sub: np.ndarray) -> pd.Categorical:
    """Each circuit's conductor material (routes order) as a categorical: the baseline's
    codes with those of the circuits in ``sub`` (sized again) looked up, not the plant's
    texts hashed again; the texts hashed where ``sub`` holds a material the baseline does not."""
    codes, names = base.material_codes
    at = names.get_indexer(np.asarray(material)[sub].astype(object))
    if np.any(at < 0):
        return pd.Categorical(np.asarray(material, dtype=object))
    codes = codes.copy()
    codes[sub] = at
    return pd.Categorical.from_codes(codes, dtype=pd.CategoricalDtype(names))


def _global_notes(notes: np.ndarray, sub: np.ndarray) -> np.ndarray:
    """The subset's notes with each ``(feeder circuit k)`` naming the plan's position ``sub[k]``."""
    out = notes.copy()
    for i in np.flatnonzero(np.char.find(notes.astype(str), "feeder circuit") >= 0).tolist():
        out[i] = _FEEDER.sub(lambda m: f"(feeder circuit {sub[int(m.group(1))]})", notes[i])
    return out


def _reassigned(site: Site, net: TrenchNetwork, before: pd.DataFrame) -> pd.DataFrame | None:
    """The destinations of the features without a ``to``, chosen again on the edited
    network as routing chooses them (:func:`routeplan.circuits.assign_destinations`): their
    report (the plan's ``assignment``: the route lengths change with a move) where every
    feature keeps the destination it had, else None (its circuits change: a full plan)."""
    taps = net.taps
    joined_taps = set(zip(taps["layer"].astype(str), taps["feature_id"].astype(str), strict=True))
    dest, problems = assign_destinations(
        site, _route_lengths_fn(net), lambda layer, fid: (layer, fid) in joined_taps
    )
    if problems:
        return None
    cols = ["layer", "feature_id", "to_layer", "to_id", "rule"]
    now = dest.report
    same = len(now) == len(before) and all(
        np.array_equal(now[k].to_numpy(dtype=object), before[k].to_numpy(dtype=object))
        for k in cols
    )
    return now if same else None


def _same_nan(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    a, b = np.asarray(a, dtype=float), np.asarray(b, dtype=float)
    return (a == b) | (np.isnan(a) & np.isnan(b))


@dataclass(frozen=True, eq=False)
class _Edit:
    """What an edit changed, as the sizing sees it: each circuit's block, the new plan's
    incidences, the segments and air stretches whose figures are recomputed whoever uses them
    (new ones and those whose circuits changed), the segment and stretch numbering (new ↔ old)
    and the circuits whose own input changed."""

    block: np.ndarray
    inc_c: np.ndarray
    inc_s: np.ndarray
    air_c: np.ndarray
    air_s: np.ndarray
    born_seg: np.ndarray
    born_air: np.ndarray
    new_of_old: np.ndarray
    old_of_new: np.ndarray
    air_old_of_new: np.ndarray
    affected: np.ndarray

    def resize(
        self,
        inp: calc.SizingInput,
        dp: calc.DesignParams,
        rules: str,
        prev,
        names: tuple[str, ...] | None = None,
        affected: np.ndarray | None = None,
        born_seg: np.ndarray | None = None,
    ) -> tuple:
        """The whole plan's sizing of ``inp`` from ``prev`` (the same sizing of the plan before
        the edit: a :class:`calc.SizingResult`, or a namespace of ``names`` and the fields the
        fixed point reads), re-sizing only the affected circuits closed over their blocks,
        grown until no outside circuit shares a segment or stretch whose final cable sets
        changed (the grouping's fixed point over the affected segments). Returns the spliced
        result (of ``names`` only, when given), the circuits sized and the passes taken."""
        affected = self.affected if affected is None else affected
        born_seg = self.born_seg if born_seg is None else born_seg
        n_c, n_seg, n_air = len(affected), len(self.old_of_new), len(self.air_old_of_new)
        inc_c, inc_s, air_c, air_s = self.inc_c, self.inc_s, self.air_c, self.air_s
        p_old = np.asarray(prev.parallel, dtype=np.int64)
        final0 = np.asarray(prev.seg_count_final, dtype=float)
        final0_new = np.where(self.old_of_new < 0, np.nan, final0[np.maximum(self.old_of_new, 0)])
        aon = self.air_old_of_new
        air_final0 = np.asarray(prev.air_count_final, dtype=float)
        air_final0_new = np.where(aon < 0, np.nan, air_final0[np.maximum(aon, 0)])
        in_block = np.zeros(int(self.block.max(initial=-1)) + 1, dtype=bool)
        passes = 0
        while True:
            passes += 1
            in_block[:] = False
            in_block[self.block[affected]] = True
            affected = in_block[self.block]
            sub = np.flatnonzero(affected)
            res, seg_sub, air_sub = _size_subset(
                inp, dp, rules, affected, sub, p_old, born_seg, self.born_air
            )
            # outside circuits on a segment or stretch whose final cable sets differ: join them
            # (a segment without a circuit of the subset keeps its count and final sets)
            seg_diff = np.zeros(n_seg, dtype=bool)
            final_sub = np.asarray(res.seg_count_final, dtype=float)
            seg_diff[seg_sub] = final_sub != final0_new[seg_sub]
            air_diff = np.zeros(n_air, dtype=bool)
            air_diff[air_sub] = (
                np.asarray(res.air_count_final, dtype=float) != air_final0_new[air_sub]
            )
            more = np.zeros(n_c, dtype=bool)
            if seg_diff.any():
                more[inc_c[seg_diff[inc_s]]] = True
            if air_diff.any():
                more[air_c[air_diff[air_s]]] = True
            more &= ~affected
            if not more.any():
                break
            affected = affected | more
        result = _splice(
            prev, res, sub, seg_sub, air_sub, self.new_of_old, aon, n_seg, n_air, inp, dp, names
        )
        return result, sub, passes

    def whatif(
        self,
        prev: dict | None,
        inp: calc.SizingInput,
        dp: calc.DesignParams,
        rules: str,
    ):
        """A remedy's what-if sizing (:class:`routeplan.remedy.WhatIfs`) of the edited plan,
        re-sized as the plan itself is from ``prev`` (the same what-if of the last run: its
        :data:`~routeplan.remedy.WHATIF_FIELDS` and ``seg_spacing_m``); None without one.
        Segments whose trench spacing differs from ``prev``'s (a spacing what-if of other
        trenches) are recomputed, and their circuits re-sized."""
        if prev is None:
            return None
        sp_prev, sp = prev.get("seg_spacing_m"), inp.seg_spacing_m
        if (sp_prev is None) != (sp is None):
            return None
        affected, born_seg = self.affected, self.born_seg
        if sp is not None:
            o = self.old_of_new
            before = np.where(o < 0, np.nan, np.asarray(sp_prev, float)[np.maximum(o, 0)])
            differ = before != np.asarray(sp, float)
            if differ.any():
                born_seg = born_seg | differ
                affected = affected.copy()
                affected[self.inc_c[differ[self.inc_s]]] = True
        prev_ns = SimpleNamespace(**{k: prev[k] for k in WHATIF_FIELDS})
        result, _, _ = self.resize(inp, dp, rules, prev_ns, WHATIF_FIELDS, affected, born_seg)
        return result


def _size_subset(
    inp: calc.SizingInput,
    dp: calc.DesignParams,
    rules: str,
    affected: np.ndarray,
    sub: np.ndarray,
    p_old: np.ndarray,
    born_seg: np.ndarray,
    born_air: np.ndarray,
) -> tuple[calc.SizingResult, np.ndarray, np.ndarray]:
    """Size the circuits ``sub`` (closed over their blocks) with the cable sets of the others
    held at ``p_old`` on the segments and stretches they share. ``born_seg``, ``born_air``:
    segments and stretches whose figures are recomputed even where no circuit of the subset
    uses them (new ones, and those whose circuits changed: one left empty has none).
    Returns the result and the segments and stretches of the subset (positions in the whole
    plan)."""
    ic, js = inp.inc_circuit, inp.inc_segment
    ac, ak = inp.air_inc_circuit, inp.air_inc_stretch
    m, r = len(inp.seg_count), len(inp.air_count)
    out_extra = (p_old - 1) * ~affected
    seg_extra = np.bincount(js, weights=out_extra[ic].astype(float), minlength=m)
    air_extra = np.bincount(ak, weights=out_extra[ac].astype(float), minlength=r)
    mine = affected[ic]
    seg_sub = np.union1d(js[mine], np.flatnonzero(born_seg))
    air_mine = affected[ac]
    air_sub = np.union1d(ak[air_mine], np.flatnonzero(born_air))
    local_c = np.full(len(affected), -1, dtype=np.int64)
    local_c[sub] = np.arange(len(sub))
    local_s = np.full(m, -1, dtype=np.int64)
    local_s[seg_sub] = np.arange(len(seg_sub))
    local_a = np.full(r, -1, dtype=np.int64)
    local_a[air_sub] = np.arange(len(air_sub))
    air_all = np.bincount(ak, minlength=r).astype(float)
    parent = inp.parent[sub]
    parent = np.where(parent >= 0, local_c[np.maximum(parent, 0)], -1)
    per_circuit = {
        f.name: np.asarray(getattr(inp, f.name))[sub]
        for f in dataclasses.fields(inp)
        if f.name not in _NOT_PER_CIRCUIT and getattr(inp, f.name) is not None
    }
    sub_inp = calc.SizingInput(
        **per_circuit,
        parent=parent,
        seg_depth_m=inp.seg_depth_m[seg_sub],
        seg_laying=inp.seg_laying[seg_sub],
        seg_spacing_m=inp.seg_spacing_m[seg_sub],
        seg_soil_k_m_w=inp.seg_soil_k_m_w[seg_sub],
        seg_count=(np.asarray(inp.seg_count, dtype=float) + seg_extra)[seg_sub],
        seg_length_m=_part(inp.seg_length_m, seg_sub),
        inc_circuit=local_c[ic[mine]],
        inc_segment=local_s[js[mine]],
        air_count=(air_all + air_extra)[air_sub],
        air_behind_modules=np.asarray(inp.air_behind_modules)[air_sub],
        air_inc_circuit=local_c[ac[air_mine]],
        air_inc_stretch=local_a[ak[air_mine]],
        air_length_m=_part(inp.air_length_m, air_sub),
    )
    return calc.size_circuits(sub_inp, dp, rules=rules), seg_sub, air_sub


def _part(values: np.ndarray | None, which: np.ndarray) -> np.ndarray | None:
    """``values[which]``; None (not given) stays None."""
    return None if values is None else np.asarray(values)[which]


#: the fields of calc.SizingInput that relate circuits, segments and stretches (not values)
_INCIDENCE = {"parent", "inc_circuit", "inc_segment", "air_inc_circuit", "air_inc_stretch"}

_NOT_PER_CIRCUIT = {
    "parent",
    "seg_depth_m",
    "seg_laying",
    "seg_spacing_m",
    "seg_soil_k_m_w",
    "seg_count",
    "seg_length_m",
    "inc_circuit",
    "inc_segment",
    "air_count",
    "air_behind_modules",
    "air_inc_circuit",
    "air_inc_stretch",
    "air_length_m",
}


def _splice(
    r_old: calc.SizingResult,
    res: calc.SizingResult,
    sub: np.ndarray,
    seg_sub: np.ndarray,
    air_sub: np.ndarray,
    new_of_old: np.ndarray,
    air_old_of_new: np.ndarray,
    n_seg: int,
    n_air: int,
    inp: calc.SizingInput,
    dp: calc.DesignParams,
    names: tuple[str, ...] | None = None,
) -> calc.SizingResult:
    """The whole plan's sizing: the baseline's, with the subset's circuits, segments and
    stretches replaced; segment and stretch indices in the new numbering. ``names``: only
    these fields (a namespace of them instead of a :class:`calc.SizingResult`)."""
    fields = {}
    old_of_new = np.full(n_seg, -1, dtype=np.int64)
    ok = new_of_old >= 0
    old_of_new[new_of_old[ok]] = np.flatnonzero(ok)
    for name in names if names is not None else [f.name for f in dataclasses.fields(r_old)]:
        v_old = getattr(r_old, name)
        if name in ("iterations", "rules"):
            fields[name] = getattr(res, name) if name == "rules" else v_old
            continue
        if name.startswith("total_"):
            continue
        v_old, v_sub = np.asarray(v_old), np.asarray(getattr(res, name))
        if name.startswith("seg_"):
            v = np.empty(n_seg, dtype=np.result_type(v_old, v_sub))
            have = old_of_new >= 0
            v[have] = v_old[old_of_new[have]]
            v[seg_sub] = v_sub
        elif name == "air_count_final":
            v = np.empty(n_air, dtype=np.result_type(v_old, v_sub))
            have = air_old_of_new >= 0
            v[have] = v_old[air_old_of_new[have]]
            v[air_sub] = v_sub
        elif name == "governing_segment":
            v = np.where(v_old >= 0, new_of_old[np.maximum(v_old, 0)], -1)
            v[sub] = np.where(v_sub >= 0, seg_sub[np.maximum(v_sub, 0)], -1)
        elif name == "governing_air":
            new_of_air = np.full(len(np.asarray(r_old.air_count_final)), -1, dtype=np.int64)
            have = air_old_of_new >= 0
            new_of_air[air_old_of_new[have]] = np.flatnonzero(have)
            v = np.where(v_old >= 0, new_of_air[np.maximum(v_old, 0)], -1)
            v[sub] = np.where(v_sub >= 0, air_sub[np.maximum(v_sub, 0)], -1)
        elif name == "note":
            v = v_old.copy()
            v[sub] = _global_notes(v_sub, sub)
        else:
            v = (
                v_old.copy()
                if v_old.dtype == np.result_type(v_old, v_sub)
                else v_old.astype(np.result_type(v_old, v_sub))
            )
            v[sub] = v_sub
        fields[name] = v
    if names is not None:
        return SimpleNamespace(**fields)
    # per-kind totals, summed as the engine sums them (over the whole plan)
    kind = np.asarray(inp.kind)
    loss = fields["loss_w"]
    dc = kind != calc.KIND_AC
    pf = np.where(np.isnan(inp.pf), dp.power_factor, inp.pf)
    p_w = np.where(dc, inp.vmp_v * np.asarray(fields["operating_current_a"]), inp.ac_kva * 1e3 * pf)
    n_k = len(calc.KIND_NAMES)
    tot_loss = np.array([loss[kind == k].sum() for k in range(n_k)])
    tot_p = np.array([p_w[kind == k].sum() for k in range(n_k)])
    with np.errstate(invalid="ignore", divide="ignore"):
        tot_pct = np.where(tot_p > 0, 100.0 * tot_loss / tot_p, 0.0)
    fields["total_loss_w"] = tot_loss
    fields["total_loss_pct"] = tot_pct
    fields["total_energy_loss_kwh"] = energy_loss_kwh(tot_loss, dp.loss_hours_h)
    return calc.SizingResult(**fields)


class MoveSearch:
    """Many positions of one inverter or combiner, each a local re-plan of one baseline.

    The network without the feature is built once (the feature set beyond reach of every
    trench); each position then joins it by :func:`routeplan.network.retap` where it can (a
    node of its own), else the network is built with the memo. ``remedies``: the baseline's
    remedies are computed now, in a child process (:class:`routeplan.pipeline.RemedyJob`),
    while the caller goes on: :meth:`plan` then re-sizes their what-ifs locally, as a
    re-plan after an edit re-sizes the last run's (:meth:`cancel` stops the child where no
    plan is asked for)."""

    def __init__(
        self,
        site: Site,
        design: DesignConfig,
        layer: str,
        row: int,
        plan: Plan | None = None,
        remedies: bool = False,
    ) -> None:
        self.base = baseline(site, design, plan)
        self.remedies: RemedyJob | None = None
        if remedies:
            old, rules = self.base.plan, design.values["rules"]
            governing = governing_ids(old.routes, old.sizing)
            self.remedies = RemedyJob(
                old.routes, self.base.inp, self.base.dp, rules, old.sizing, governing,
                WhatIfs(rules),
            )  # fmt: skip
        self.layer, self.row = layer, row
        net = self.base.plan.routes.network
        feature_id = str(site.layer(layer)["id"].iloc[row])
        self.tap = net.tap(layer, feature_id)
        x0, y0 = site.trenches.total_bounds[:2]
        params = self.base.plan.routes.params
        far = _with_anchor(site, layer, row, (x0 - 10 * params.snap_m - 1e3, y0))
        self.minus = site_network(far, params, net.memo)

    def site_at(self, xy: tuple[float, float]) -> Site:
        """The baseline's site with the feature's anchor (a point, a pad's centroid) at ``xy``."""
        return _with_anchor(self.base.plan.site, self.layer, self.row, xy)

    def figures(self, site: Site) -> Figures | Plan:
        """:func:`figures` of ``site`` (the feature moved, nothing else)."""
        return figures(self.base, site, network=self._network(site))

    def plan(self, site: Site) -> Plan:
        """The whole plan of ``site`` (the feature moved, nothing else), its tables and
        remedies included, as :func:`routeplan.pipeline.plan_site` gives it: a local re-plan
        (each remedy's what-if re-sized from the baseline's where they were computed, else
        sized whole), or where one does not apply the full plan."""
        design = self.base.plan.design
        before = None
        if self.remedies is not None:
            self.remedies()  # the child's remedies and what-ifs (computed here if it failed)
            before = self.remedies.whatifs.kept
        whatifs = WhatIfs(design.values["rules"])
        t0 = time.perf_counter()
        net = self._network(site)
        out = _local(
            self.base, site, design, t0, network=net, light=False, whatifs=whatifs,
            whatifs_before=before,
        )  # fmt: skip
        if out is None:
            out = plan_site(site, design, noding_memo=self.base.plan.routes.network.memo)
        return out

    def cancel(self) -> None:
        """Stop the remedies' child, if any, where its what-ifs were not taken."""
        if self.remedies is not None:
            self.remedies.cancel()

    def _network(self, site: Site) -> TrenchNetwork:
        """The network with the feature joined where ``site`` has it."""
        return retap(self.minus, self.tap, site.layer(self.layer).geometry.iloc[self.row])


def _with_anchor(site: Site, layer: str, row: int, xy: tuple[float, float]) -> Site:
    frame = site.layer(layer)
    geom = frame.geometry.iloc[row]
    a = geom if geom.geom_type == "Point" else geom.centroid
    moved = shapely.transform(geom, lambda c: c + np.array([xy[0] - a.x, xy[1] - a.y]))
    geoms = frame.geometry.to_numpy().copy()
    geoms[row] = moved
    new = frame.set_geometry(gpd.GeoSeries(geoms, index=frame.index, crs=frame.crs))
    return dataclasses.replace(site, **{layer: new})
